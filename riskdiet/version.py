"""The version of riskdiet (one place; the package, its results and its builds read it)."""

__version__ = "0.1.0"
