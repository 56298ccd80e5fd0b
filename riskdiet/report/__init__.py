"""Formatting results for people: plain text, figures and the PDF brief."""
