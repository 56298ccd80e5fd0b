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


def _solved(path: Path):
    """Load and solve a study, turning library errors into exit code 2."""
    from riskdiet.analysis import solve as solve_study
    from riskdiet.io import load_study

    try:
        return solve_study(load_study(path))
    except RiskdietError as exc:
        raise _fail(exc) from None


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
    from riskdiet.report.text import classic_summary

    _stdout().print(classic_summary(_solved(study)), markup=False)


@app.command()
def compare(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Compare scenarios in one table, with changes against the baseline.

    Example: riskdiet compare examples/harrow-vale.xlsx
    """
    from riskdiet.compare import comparison_table
    from riskdiet.report.text import comparison_renderables

    result = _solved(study)
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
        from riskdiet.maps import request_from_settings

        request_from_settings(loaded)
    except RiskdietError as exc:
        raise _fail(exc) from None
    _stdout().print(check_text(loaded), markup=False, end="")


@app.command()
def brief(
    study: Path = typer.Argument(..., help=STUDY_HELP),
    out: Path | None = typer.Option(None, "--out", help="PDF to write (default: the study's "
                                    "name with -brief.pdf, beside the study)."),
    paper: str = typer.Option("a4", "--paper", help="Paper size: a4 or letter."),
    date: str | None = typer.Option(None, "--date", help="Date printed on the brief, "
                                    "YYYY-MM-DD (default: the study's report_date setting, "
                                    "else the study file's modification date)."),
    figures: Path | None = typer.Option(None, "--figures", help="Also write every figure "
                                        "as PNG (300 dpi) and SVG into this folder."),
    force: bool = typer.Option(False, "--force", help="Replace existing output files."),
) -> None:
    """Write the PDF brief: findings, inputs, decisions, predicted kills, cautions.

    Example: riskdiet brief examples/harrow-vale.xlsx --out harrow-vale-brief.pdf
    """
    from riskdiet.analysis import solve as solve_study
    from riskdiet.io import load_study
    from riskdiet.io.atomic import check_writable
    from riskdiet.report.brief import write_brief

    target = out if out is not None else study.with_name(f"{study.stem}-brief.pdf")
    try:
        if target.suffix.lower() != ".pdf":
            raise StudyError([Problem(f"--out {target}", "a file name ending in .pdf",
                                      f'"{target.suffix or "no ending"}"')])
        check_writable(target, force, (study,))
        result = solve_study(load_study(study))
        written = write_brief(result, target, paper=paper.strip().lower(), date=date,
                              force=force, figures_dir=figures)
    except RiskdietError as exc:
        raise _fail(exc) from None
    typer.echo(f"wrote {written[0]}")
    if figures is not None:
        typer.echo(f"wrote {len(written) - 1} figure files into {figures}")


@app.command()
def demo(
    out: Path = typer.Option(Path("riskdiet-demo"), "--out", help="Folder to write into."),
    force: bool = typer.Option(False, "--force", help="Replace files of an earlier demo."),
) -> None:
    """Write the invented demo study as a workbook, with its results workbook and brief.

    Example: riskdiet demo --out riskdiet-demo
    """
    from riskdiet.demo import write_demo

    try:
        files = write_demo(out, force)
    except RiskdietError as exc:
        raise _fail(exc) from None
    typer.echo(f"Demo study (invented, illustrative):  {files.workbook}")
    typer.echo(f"Its results:                          {files.results}")
    typer.echo(f"Its brief:                            {files.brief}")
    typer.echo(f"Next: open the brief, then edit the workbook and run "
               f"riskdiet brief {files.workbook} --force")


@app.command("map")
def map_command(
    study: Path = typer.Argument(..., help=STUDY_HELP),
    x: str = typer.Option(..., "--x", help="Horizontal axis TARGET=START:STOP:STEPS; TARGET is "
                          "a predator field, PREY:FIELD or PREY:encounter_share."),
    y: str = typer.Option(..., "--y", help="Vertical axis, same form as --x."),
    scenario: str = typer.Option("baseline", "--scenario", help="Scenario to vary."),
    out: Path | None = typer.Option(None, "--out", help="Folder for the figures (PNG and SVG) "
                                    "and map.csv."),
    gradient: str | None = typer.Option(None, "--gradient", help="Also map the marginal value "
                                        "of this input (FIELD or PREY:FIELD), policy fixed."),
    group: str | None = typer.Option(None, "--group", help="Prey group of the kills map "
                                     "(default: the first group that is not wild)."),
    workers: int = typer.Option(1, "--workers", min=1, help="Local worker processes."),
    scheduler: str | None = typer.Option(None, "--scheduler", help="Address of a running Dask "
                                         "distributed scheduler (needs riskdiet[cluster])."),
    quiet: bool = typer.Option(False, "--quiet", help="No progress bar."),
    force: bool = typer.Option(False, "--force", help="Replace existing output files."),
) -> None:
    """Map the decision rule, the value of hunting skill and kills over two inputs.

    Example: riskdiet map examples/harrow-vale.xlsx --x "wild boar:encounter_share=0:1:41"
    --y "hunting_ability=0.2:1.6:41" --out maps/
    """
    from riskdiet.io import load_study

    try:
        loaded = load_study(study)
        request = _map_request(loaded, x, y, scenario, gradient)
        chosen = _map_group(loaded, group)
        if out is not None:
            from riskdiet.io.map_files import check_map_files

            # refuse existing outputs before the (possibly long) computation
            check_map_files(loaded, request, out, chosen, force)
        result = _run_map(loaded, request, workers, scheduler, quiet)
        from riskdiet.map_reading import read_map
        from riskdiet.report.map_figures import default_group

        chosen = chosen or default_group(result)
        written = []
        if out is not None:
            from riskdiet.io.map_files import write_map_files

            written = write_map_files(result, out, chosen, force)
    except RiskdietError as exc:
        raise _fail(exc) from None
    console = _stdout()
    for line in read_map(result, chosen):
        console.print(line, markup=False)
    console.print(f"Largest Bellman residual over the map: {result.max_residual:.1e}",
                  markup=False)
    for path in written:
        typer.echo(f"wrote {path}")


def _map_request(study, x: str, y: str, scenario: str, gradient: str | None):
    from riskdiet.maps import MapRequest, parse_axis, parse_target

    problems = []
    axes = []
    for spec, where in ((x, "--x"), (y, "--y")):
        try:
            axes.append(parse_axis(spec, study, where))
        except StudyError as exc:
            problems += exc.problems
    if scenario not in {s.name for s in study.scenarios}:
        problems.append(Problem("--scenario", "a scenario of the study (" + ", ".join(
            s.name for s in study.scenarios) + ")", f'"{scenario}"'))
    target = None
    if gradient:
        try:
            target = parse_target(gradient, study, "--gradient")
        except StudyError as exc:
            problems += exc.problems
    if problems:
        raise StudyError(problems)
    return MapRequest(scenario, axes[0], axes[1], target)


def _map_group(study, group: str | None) -> str | None:
    if group is None:
        return None
    groups = sorted({p.group for p in study.prey})
    if group not in groups:
        raise StudyError([Problem("--group", "a prey group of the study (" + ", ".join(groups)
                                  + ")", f'"{group}"')])
    return group


def _run_map(study, request, workers: int, scheduler: str | None, quiet: bool):
    import os

    from rich.progress import Progress

    from riskdiet.maps import make_map

    console = Console(stderr=True)
    silent = quiet or not console.is_interactive or bool(os.environ.get("CI"))
    with Progress(console=console, disable=silent, transient=True) as bar:
        task = bar.add_task("solving map rows", total=request.y.steps)

        def progress(done: int, total: int) -> None:
            bar.update(task, completed=done)

        if scheduler:
            try:
                from distributed import Client
            except ImportError:
                raise RiskdietError("--scheduler needs Dask distributed: pip install "
                                    "'riskdiet[cluster]'") from None
            with Client(scheduler) as client:
                return make_map(study, request, client.get_executor(),
                                bands=max(8, 4 * len(client.nthreads())), progress=progress)
        if workers > 1:
            from concurrent.futures import ProcessPoolExecutor

            with ProcessPoolExecutor(max_workers=workers) as pool:
                return make_map(study, request, pool, bands=2 * workers, progress=progress)
        return make_map(study, request, progress=progress)


def main() -> None:
    """Console-script entry point."""
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
