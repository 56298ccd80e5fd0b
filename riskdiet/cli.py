"""Command line: thin wrappers that parse, call the library and format.

Heavy libraries (scipy, pandas, openpyxl, reportlab, matplotlib) are imported
inside the commands so that ``riskdiet --help`` stays fast.
"""

from __future__ import annotations

import json
from pathlib import Path

import typer
from rich.console import Console

import riskdiet
from riskdiet.errors import RiskdietError, StudyError

app = typer.Typer(
    name="riskdiet",
    help="What a predator will kill, and at what risk to itself: state-dependent diet "
    "predictions for wildlife managers.",
    pretty_exceptions_enable=False,
    no_args_is_help=True,
    add_completion=False,
)

STUDY_HELP = "Study file: a filled workbook (.xlsx) or a study file (.json)."


def _stdout() -> Console:
    return Console(highlight=False, soft_wrap=True)


def _fail(exc: RiskdietError) -> typer.Exit:
    """Print a library error to stderr (no traceback) and return the exit to raise."""
    err = Console(stderr=True, highlight=False, soft_wrap=True)
    if isinstance(exc, StudyError):
        heading = f"riskdiet: {len(exc.problems)} problem(s)"
        if exc.source:
            heading += f" in {exc.source}"
        err.print(heading + ":", markup=False)
        for p in exc.problems:
            err.print(f"  {p}", markup=False)
    else:
        err.print(f"riskdiet: {exc}", markup=False)
    return typer.Exit(2)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"riskdiet {riskdiet.__version__}")
        raise typer.Exit()


@app.callback()
def _main(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                 help="Print the version and exit."),
) -> None:
    """riskdiet command line."""


@app.command()
def solve(
    study: Path = typer.Argument(..., help=STUDY_HELP),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document to stdout."),
) -> None:
    """Solve every scenario and print the decisions by reserves.

    Example: riskdiet solve examples/harrow-vale.json --json
    """
    from riskdiet.analysis import solve as solve_study
    from riskdiet.io import load_study

    try:
        loaded = load_study(study)
        result = solve_study(loaded)
    except RiskdietError as exc:
        raise _fail(exc) from None
    if as_json:
        typer.echo(json.dumps(result.to_dict(), indent=1, allow_nan=False))
        return
    from riskdiet.report.text import solve_summary

    _stdout().print(solve_summary(result), markup=False)


def main() -> None:
    """Console-script entry point."""
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
