"""How expected counts read in sentences and summaries (one rule for every output)."""

from __future__ import annotations


def amount(x: float | None) -> str:
    """An expected count for people: whole numbers from 10 up, one decimal below,
    "fewer than 0.1" for tiny positive values, a dash when there is none."""
    if x is None:
        return "—"
    if x >= 10:
        return f"{x:,.0f}"
    if 0 < x < 0.05:
        return "fewer than 0.1"
    return f"{x:.1f}"
