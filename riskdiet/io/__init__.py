"""Reading studies and writing results: JSON and workbooks."""

from riskdiet.io.load import load_study

__all__ = ["load_study"]
