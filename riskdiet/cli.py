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
from riskdiet.errors import Problem, RiskdietError, StudyError

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
    out: Path | None = typer.Option(None, "--out", help="Write the results workbook (.xlsx)."),
    csv_dir: Path | None = typer.Option(None, "--csv", help="Write the result tables as CSV "
                                        "files into this folder."),
    force: bool = typer.Option(False, "--force", help="Replace existing output files."),
) -> None:
    """Solve every scenario and print the decisions by reserves.

    Example: riskdiet solve examples/harrow-vale.xlsx --out results.xlsx
    """
    from riskdiet.analysis import solve as solve_study
    from riskdiet.io import load_study

    try:
        loaded = load_study(study)
        if out is not None and out.suffix.lower() != ".xlsx":
            raise StudyError([Problem(f"--out {out}", "a file name ending in .xlsx",
                                      f'"{out.suffix or "no ending"}"')])
        result = solve_study(loaded)
        written = []
        if out is not None:
            from riskdiet.io.results_workbook import write_results_workbook

            written.append(write_results_workbook(result, out, force))
        if csv_dir is not None:
            from riskdiet.io.results_workbook import write_results_csv

            written += write_results_csv(result, csv_dir, force)
    except RiskdietError as exc:
        raise _fail(exc) from None
    if as_json:
        typer.echo(json.dumps(result.to_dict(), indent=1, allow_nan=False))
    else:
        from riskdiet.report.text import solve_summary

        _stdout().print(solve_summary(result), markup=False)
    for path in written:
        typer.echo(f"wrote {path}", err=as_json)


@app.command()
def rank(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Print the classic prey model per scenario: profitability ranking and diets.

    Example: riskdiet rank examples/harrow-vale.xlsx
    """
    from riskdiet.analysis import solve as solve_study
    from riskdiet.io import load_study
    from riskdiet.report.text import classic_summary

    try:
        result = solve_study(load_study(study))
    except RiskdietError as exc:
        raise _fail(exc) from None
    _stdout().print(classic_summary(result), markup=False)


@app.command()
def compare(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Compare scenarios in one table, with changes against the baseline.

    Example: riskdiet compare examples/harrow-vale.xlsx
    """
    from riskdiet.analysis import solve as solve_study
    from riskdiet.compare import comparison_table
    from riskdiet.io import load_study
    from riskdiet.report.text import comparison_renderables

    try:
        result = solve_study(load_study(study))
    except RiskdietError as exc:
        raise _fail(exc) from None
    console = _stdout()
    for table in comparison_renderables(comparison_table(result), max(console.width, 100)):
        console.print(table)
    for s in result.scenarios:
        console.print(f"\n{s.name}:", markup=False)
        for line in s.findings:
            console.print(f"  - {line}", markup=False)


@app.command()
def template(
    path: Path = typer.Argument(..., help="Workbook to write (.xlsx)."),
    force: bool = typer.Option(False, "--force", help="Replace an existing file."),
) -> None:
    """Write a blank study workbook to fill in (a Read me sheet explains every field).

    Example: riskdiet template my-study.xlsx
    """
    from riskdiet.io.template import write_template

    try:
        written = write_template(path, force=force)
    except RiskdietError as exc:
        raise _fail(exc) from None
    typer.echo(f"wrote {written}; fill it in, then run: riskdiet check {written}")


@app.command()
def check(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Check a study file and print what riskdiet read from it (exit 2 if invalid).

    Example: riskdiet check my-study.xlsx
    """
    from riskdiet.io import load_study
    from riskdiet.report.check import check_text

    try:
        loaded = load_study(study)
    except RiskdietError as exc:
        raise _fail(exc) from None
    _stdout().print(check_text(loaded), markup=False, end="")


def main() -> None:
    """Console-script entry point."""
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
