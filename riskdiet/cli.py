"""Command line: thin wrappers that parse, call the library and format.

Heavy libraries (scipy, pandas, openpyxl, reportlab, matplotlib) are imported
inside the commands so that ``riskdiet --help`` stays fast.
"""

from __future__ import annotations

import contextlib
import json
from collections.abc import Iterator
from pathlib import Path

import typer
from rich.console import Console
from typer.core import TyperOption

import riskdiet
from riskdiet.errors import Problem, RiskdietError, StudyError

HELP = """What a predator will kill, and at what risk to itself: state-dependent diet
predictions for wildlife managers.

Examples (riskdiet demo writes riskdiet-demo/harrow-vale.xlsx, an invented study):

  riskdiet demo

  riskdiet check riskdiet-demo/harrow-vale.xlsx

  riskdiet solve riskdiet-demo/harrow-vale.xlsx --out results.xlsx

  riskdiet brief riskdiet-demo/harrow-vale.xlsx --out brief.pdf

  riskdiet template my-study.xlsx
"""

app = typer.Typer(
    name="riskdiet",
    help=HELP,
    pretty_exceptions_enable=False,
    no_args_is_help=True,
    add_completion=False,
)

STUDY_HELP = "Study file: a filled workbook (.xlsx) or a study file (.json)."


def _workers_option():
    """``--workers``, the same for every command that solves batches."""
    return typer.Option(1, "--workers", min=1, help="Local worker processes.")


def _scheduler_option():
    """``--scheduler``, the same for every command that can use a Dask cluster."""
    return typer.Option(None, "--scheduler", help="Address of a running Dask distributed "
                        "scheduler, e.g. tcp://10.0.0.5:8786 (needs riskdiet\\[cluster]).")
DEMO = "riskdiet-demo/harrow-vale.xlsx"
"""The study every example uses: written by ``riskdiet demo`` (so examples run after pip)."""

INTERRUPTED = 130
"""Exit status after Ctrl-C (128 + SIGINT, the shell convention)."""

_type_column = TyperOption.display_type_rich


def _flag_type(self: TyperOption, ctx) -> str | None:
    # a flag takes no value: "<bool>" in help invites "--json true", which fails
    return None if self.is_flag else _type_column(self, ctx)


TyperOption.display_type_rich = _flag_type


def _stdout() -> Console:
    # user text is printed verbatim: no markup, no emoji codes (":zero:"), no highlighting
    return Console(highlight=False, soft_wrap=True, markup=False, emoji=False)


def _stderr() -> Console:
    return Console(stderr=True, highlight=False, soft_wrap=True, markup=False, emoji=False)


@contextlib.contextmanager
def _guard(outputs=None) -> Iterator[None]:
    """Run a command body: library errors exit 2, Ctrl-C exits 130; staged outputs go away."""
    try:
        yield
    except RiskdietError as exc:
        if outputs is not None:
            outputs.discard()
        raise _fail(exc) from None
    except KeyboardInterrupt:
        if outputs is not None:
            outputs.discard()
        _stderr().print("riskdiet: interrupted; nothing was written.")
        raise typer.Exit(INTERRUPTED) from None
    except OSError as exc:  # last resort: an operating-system error is never a traceback
        if outputs is not None:
            outputs.discard()
        where = exc.filename or "riskdiet"
        _stderr().print(f"riskdiet: {where}: {exc.strerror or exc}; nothing was written.")
        raise typer.Exit(2) from None
    finally:
        if outputs is not None:
            outputs.discard()


def _load(path: Path, warn: bool = True):
    """Load a study; its warnings go to stderr (every command shows what check shows)."""
    from riskdiet.io import load_study

    study = load_study(path)
    if warn and study.notices:
        _stderr().print(warnings_text(study))
    return study


def warnings_text(study) -> str:
    """The study's warnings, one per line, each with its place."""
    return "\n".join([f"Warnings ({len(study.notices)}):",
                      *(f"  {n}" for n in study.notices)])


def _fail(exc: RiskdietError) -> typer.Exit:
    """Print a library error to stderr (no traceback) and return the exit to raise."""
    err = _stderr()
    if isinstance(exc, StudyError):
        heading = f"riskdiet: {len(exc.problems)} problem(s)"
        if exc.source:
            heading += f" in {exc.source}"
        err.print(heading + ":")
        for p in exc.problems:
            err.print(f"  {p}")
    else:
        err.print(f"riskdiet: {exc}")
    return typer.Exit(2)


def _solved(path: Path):
    """Load and solve a study, turning library errors into exit code 2."""
    with _guard():
        return _solve_showing_progress(_load(path))


def _solve_showing_progress(study):
    """Solve a study with a progress bar on stderr, shown only on an interactive terminal.

    Quiet in CI (the ``CI`` variable) and when output is piped, so logs stay clean.
    """
    import os

    from rich.progress import Progress

    from riskdiet.analysis.study import solve as solve_study

    console = Console(stderr=True)
    silent = not console.is_interactive or bool(os.environ.get("CI"))
    with Progress(console=console, disable=silent, transient=True) as bar:
        task = bar.add_task("solving scenarios and maps", total=None)

        def progress(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        return solve_study(study, progress=progress)


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

    Example (after riskdiet demo): riskdiet solve riskdiet-demo/harrow-vale.xlsx --out
    results.xlsx
    """
    from riskdiet.io.atomic import OutputSet

    outputs = OutputSet(force, (study,))
    with _guard(outputs):
        if out is not None and out.suffix.lower() != ".xlsx":
            raise StudyError([Problem(f"--out {out}", "a file name ending in .xlsx",
                                      f'"{out.suffix or "no ending"}"')])
        loaded = _load(study, warn=as_json)
        # every output path is checked before the (possibly long) computation
        if out is not None:
            outputs.plan(out)
        if csv_dir is not None:
            from riskdiet.io.results_workbook import csv_paths

            for path in csv_paths(loaded, csv_dir):
                outputs.plan(path)
        result = _solve_showing_progress(loaded)
        if out is not None:
            from riskdiet.io.results_workbook import write_results_workbook

            write_results_workbook(result, out, force, outputs=outputs)
        if csv_dir is not None:
            from riskdiet.io.results_workbook import write_results_csv

            write_results_csv(result, csv_dir, force, outputs=outputs)
        if as_json:
            text = json.dumps(result.to_dict(), indent=1, allow_nan=False)
        else:
            from riskdiet.report.text import solve_summary

            text = solve_summary(result)
            if loaded.notices:
                text = warnings_text(loaded) + "\n\n" + text
        written = outputs.commit()
    _emit(text, as_json, written)


@app.command()
def rank(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Print the classic prey model per scenario: profitability ranking and diets.

    Example (after riskdiet demo): riskdiet rank riskdiet-demo/harrow-vale.xlsx
    """
    from riskdiet.report.text import classic_summary

    _stdout().print(classic_summary(_solved(study)))


@app.command()
def compare(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Compare scenarios in one table, with changes against the baseline.

    Example (after riskdiet demo): riskdiet compare riskdiet-demo/harrow-vale.xlsx
    """
    from riskdiet.analysis.compare import comparison_table
    from riskdiet.report.text import comparison_renderables

    result = _solved(study)
    console = _stdout()
    for table in comparison_renderables(comparison_table(result), max(console.width, 100)):
        console.print(table)
    for s in result.scenarios:
        console.print(f"\n{s.name}:")
        for line in s.findings:
            console.print(f"  - {line}")


@app.command()
def template(
    path: Path = typer.Argument(..., help="Workbook to write (.xlsx)."),
    force: bool = typer.Option(False, "--force", help="Replace an existing file."),
) -> None:
    """Write a blank study workbook to fill in (a Read me sheet explains every field).

    Example: riskdiet template my-study.xlsx
    """
    from riskdiet.io.template import write_template

    with _guard():
        written = write_template(path, force=force)
    typer.echo(f"wrote {written}; fill it in, then run: riskdiet check {written}")


@app.command()
def check(study: Path = typer.Argument(..., help=STUDY_HELP)) -> None:
    """Check a study file and print what riskdiet read from it (exit 2 if invalid).

    Example: riskdiet check my-study.xlsx
    """
    from riskdiet.report.check import check_text

    with _guard():
        # load_study runs every validation the other commands run (map settings included)
        loaded = _load(study, warn=False)
        text = check_text(loaded)
    _stdout().print(text, end="")


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

    Example (after riskdiet demo): riskdiet brief riskdiet-demo/harrow-vale.xlsx --out
    brief.pdf
    """
    from riskdiet.io.atomic import OutputSet
    from riskdiet.report.brief import brief_date, write_brief

    target = out if out is not None else study.with_name(f"{study.stem}-brief.pdf")
    outputs = OutputSet(force, (study,))
    with _guard(outputs):
        if target.suffix.lower() != ".pdf":
            raise StudyError([Problem(f"--out {target}", "a file name ending in .pdf",
                                      f'"{target.suffix or "no ending"}"')])
        loaded = _load(study)
        brief_date(loaded, date)  # a bad --date fails before the computation
        outputs.plan(target)
        if figures is not None:
            from riskdiet.report.figures import decision_figure_keys

            for key in decision_figure_keys(loaded):
                for suffix in (".png", ".svg"):
                    outputs.plan(figures / f"{key}{suffix}")
        result = _solve_showing_progress(loaded)
        fitted = None
        if loaded.observations and loaded.settings.fit:
            # the brief's "Fit to field records" section (MODEL.md section 10)
            fitted = _run_fit(loaded, 1)
        # a study with ranges gets its intervals and sensitivity (settings draws and seed)
        unc = (_run_uncertainty(loaded, None, None, 1, None, False, True)
               if loaded.uncertainty else None)
        written = write_brief(result, target, paper=paper.strip().lower(), date=date,
                              force=force, figures_dir=figures, outputs=outputs, fit=fitted,
                              uncertainty=unc)
        outputs.commit()
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

    with _guard():
        files = write_demo(out, force)
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
    workers: int = _workers_option(),
    scheduler: str | None = _scheduler_option(),
    quiet: bool = typer.Option(False, "--quiet", help="No progress bar."),
    force: bool = typer.Option(False, "--force", help="Replace existing output files."),
    netcdf: Path | None = typer.Option(None, "--netcdf", help="Also write the map as a "
                                       "netCDF file (xarray Dataset with units; needs "
                                       "riskdiet\\[netcdf])."),
) -> None:
    """Map the decision rule, the value of hunting skill and kills over two inputs.

    Example (after riskdiet demo): riskdiet map riskdiet-demo/harrow-vale.xlsx --x "wild
    boar:encounter_share=0:1:41" --y "hunting_ability=0.2:1.6:41" --out maps/ --netcdf map.nc
    """
    from riskdiet.io.atomic import OutputSet

    outputs = OutputSet(force, (study,))
    with _guard(outputs):
        loaded = _load(study)
        request = _map_request(loaded, x, y, scenario, gradient)
        chosen = _map_group(loaded, group)
        if netcdf is not None:
            from riskdiet.io.map_netcdf import require_xarray

            require_xarray()  # one line and nothing written when xarray is missing
            outputs.plan(netcdf)
        if out is not None:
            from riskdiet.io.map_files import check_map_files

            # refuse existing or unwritable outputs before the (possibly long) computation
            check_map_files(loaded, request, out, chosen, force, outputs)
        result = _run_map(loaded, request, workers, scheduler, quiet)
        from riskdiet.analysis.map_reading import read_map
        from riskdiet.report.map_figures import default_group

        chosen = chosen or default_group(result)
        if out is not None:
            from riskdiet.io.map_files import write_map_files

            write_map_files(result, out, chosen, force, outputs)
        if netcdf is not None:
            from riskdiet.io.map_netcdf import write_map_netcdf

            write_map_netcdf(result, netcdf, force, outputs, loaded.name, str(study))
        written = outputs.commit()
    from riskdiet.analysis.wording import technical

    console = _stdout()
    for line in read_map(result, chosen):
        console.print(line)
    console.print("Largest Bellman residual over the map (a check on the solver): "
                  f"{technical(result.max_residual)}")
    for path in written:
        typer.echo(f"wrote {path}")


def _map_request(study, x: str, y: str, scenario: str, gradient: str | None):
    from riskdiet.analysis.maps import MapRequest, parse_axis, parse_target

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

    from riskdiet.analysis.maps import make_map

    console = Console(stderr=True)
    silent = quiet or not console.is_interactive or bool(os.environ.get("CI"))
    with Progress(console=console, disable=silent, transient=True) as bar:
        task = bar.add_task("solving map rows", total=request.y.steps)

        def progress(done: int, total: int) -> None:
            bar.update(task, completed=done)

        if scheduler:
            with _scheduler_client(scheduler) as client:
                return make_map(study, request, client.get_executor(),
                                bands=max(8, 4 * len(client.nthreads())), progress=progress)
        if workers > 1:
            return _in_pool(lambda pool: make_map(study, request, pool, bands=2 * workers,
                                                  progress=progress), workers,
                            "a map worker process", " or a smaller map")
        return make_map(study, request, progress=progress)


def _ignore_interrupt() -> None:
    # workers leave Ctrl-C to the main process, which stops them (no tracebacks from workers)
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)


SCHEDULER_EXPECTED = "the address of a running Dask scheduler, e.g. tcp://10.0.0.5:8786"


@contextlib.contextmanager
def _scheduler_client(address: str):
    """Connect to a Dask scheduler, or fail fast with a located message (no 30 s wait)."""
    import socket
    from urllib.parse import urlsplit

    try:
        from distributed import Client
    except ImportError:
        raise RiskdietError("--scheduler needs Dask distributed: pip install "
                            "'riskdiet[cluster]'") from None
    text = address.strip()
    url = text if "://" in text else "tcp://" + text
    try:
        parts = urlsplit(url)
        host, port = parts.hostname, parts.port
    except ValueError:
        host, port, parts = None, None, None
    if parts is None or parts.scheme not in ("tcp", "tls") or not host or port is None:
        raise StudyError([Problem("--scheduler", SCHEDULER_EXPECTED,
                                  f'"{address}" (not a host:port address)')])
    try:
        socket.create_connection((host, port), timeout=5).close()
    except OSError as exc:
        reason = exc.strerror or str(exc) or "no answer"
        raise StudyError([Problem("--scheduler", SCHEDULER_EXPECTED,
                                  f'"{address}": nothing answers there ({reason})')]) from None
    try:
        client = Client(url, timeout="10s")
    except Exception as exc:  # any failure to connect is the address's fault for the user
        raise StudyError([Problem("--scheduler", SCHEDULER_EXPECTED,
                                  f'"{address}": no Dask scheduler answered '
                                  f"({type(exc).__name__})")]) from None
    with client:
        yield client


@app.command()
def uncertainty(
    study: Path = typer.Argument(..., help=STUDY_HELP),
    draws: int | None = typer.Option(None, "--draws", min=2, help="Latin hypercube draws "
                                     "(default: the study's draws setting, 1000)."),
    seed: int | None = typer.Option(None, "--seed", min=0, help="Seed of the draws (default: "
                                    "the study's seed setting, 1)."),
    workers: int = _workers_option(),
    scheduler: str | None = _scheduler_option(),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document to stdout."),
    out: Path | None = typer.Option(None, "--out", help="Write the results workbook (.xlsx) "
                                    "with the uncertainty sheets."),
    no_sobol: bool = typer.Option(False, "--no-sobol", help="Skip the Sobol indices (faster)."),
    quiet: bool = typer.Option(False, "--quiet", help="No progress bar."),
    force: bool = typer.Option(False, "--force", help="Replace existing output files."),
) -> None:
    """How sure: intervals, chances each scenario beats baseline, what to measure next.

    Example (after riskdiet demo): riskdiet uncertainty riskdiet-demo/harrow-vale.xlsx
    --draws 200
    """
    from riskdiet.io.atomic import OutputSet

    outputs = OutputSet(force, (study,))
    with _guard(outputs):
        if out is not None and out.suffix.lower() != ".xlsx":
            raise StudyError([Problem(f"--out {out}", "a file name ending in .xlsx",
                                      f'"{out.suffix or "no ending"}"')])
        loaded = _load(study)
        if not loaded.uncertainty:
            raise StudyError([Problem("Uncertainty", "at least one range (a row of the "
                                      "Uncertainty sheet, or the uncertainty list)", "none")],
                             loaded.source or None)
        if out is not None:
            outputs.plan(out)
        result = _run_uncertainty(loaded, draws, seed, workers, scheduler, quiet, not no_sobol)
        if out is not None:
            from riskdiet.analysis.study import solve as solve_study
            from riskdiet.io.results_workbook import write_results_workbook
            from riskdiet.io.uncertainty_tables import uncertainty_tables

            write_results_workbook(solve_study(loaded), out, force, outputs=outputs,
                                   extra_tables=uncertainty_tables(result))
        if as_json:
            text = json.dumps(result.to_dict(), indent=1, allow_nan=False)
        else:
            from riskdiet.report.uncertainty_text import uncertainty_summary

            text = uncertainty_summary(result)
        written = outputs.commit()
    _emit(text, as_json, written)


def _emit(text: str, as_json: bool, written, note: str = "") -> None:
    """Print a command's document, then the files it wrote (to stderr beside JSON)."""
    if as_json:
        typer.echo(text)
    else:
        _stdout().print(text)
    for path in written:
        typer.echo(f"wrote {path}{note}", err=as_json)


def _quiet_progress(quiet: bool):
    """A progress bar on a terminal only: not with --quiet, in CI, or when output is piped."""
    import os

    from rich.progress import Progress

    console = Console(stderr=True)
    silent = quiet or not console.is_interactive or bool(os.environ.get("CI"))
    return Progress(console=console, disable=silent, transient=True)


def _run_uncertainty(study, draws, seed, workers: int, scheduler: str | None, quiet: bool,
                     sobol: bool):
    from riskdiet.analysis.uncertainty import run_uncertainty

    with _quiet_progress(quiet) as bar:
        task = bar.add_task("solving draws", total=None)

        def progress(done: int, total: int) -> None:
            bar.update(task, completed=done, total=total)

        def run(executor):
            return run_uncertainty(study, draws, seed, executor, sobol, progress=progress)

        if scheduler:
            with _scheduler_client(scheduler) as client:
                return run(client.get_executor())
        if workers > 1:
            return _in_pool(run, workers)
        return run(None)


def _in_pool(run, workers: int, who: str = "a worker process", smaller: str = ""):
    """Run with a local process pool; Ctrl-C or a dead worker stops every worker."""
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    pool = ProcessPoolExecutor(max_workers=workers, initializer=_ignore_interrupt)
    try:
        return run(pool)
    except BrokenProcessPool:
        raise RiskdietError(f"{who} died (out of memory, or killed); nothing was written. "
                            f"Try fewer --workers{smaller}.") from None
    except BaseException:
        # stop promptly: do not wait for the work still being done
        for process in list((getattr(pool, "_processes", None) or {}).values()):
            process.terminate()
        raise
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


@app.command("fit")
def fit_command(
    study: Path = typer.Argument(..., help=STUDY_HELP),
    out: Path | None = typer.Option(None, "--out", help="Write a new study workbook (.xlsx) "
                                    "with the fitted values in place."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON document to stdout."),
    workers: int = _workers_option(),
    force: bool = typer.Option(False, "--force", help="Replace an existing output file."),
) -> None:
    """Fit the inputs named in the fit setting to the Observations sheet (field diet records).

    Example: riskdiet fit my-study.xlsx --out fitted.xlsx
    """
    from riskdiet.io.atomic import OutputSet

    outputs = OutputSet(force, (study,))
    with _guard(outputs):
        if out is not None and out.suffix.lower() != ".xlsx":
            raise StudyError([Problem(f"--out {out}", "a file name ending in .xlsx",
                                      f'"{out.suffix or "no ending"}"')])
        loaded = _load(study)
        from riskdiet.analysis.fit_data import fit_data

        fit_data(loaded)  # a study without records or fit setting fails before any solve
        if out is not None:
            outputs.plan(out)
        result = _run_fit(loaded, workers)
        if out is not None:
            from riskdiet.io.fitted_study import write_fitted_study

            write_fitted_study(out, loaded, result, outputs)
        if as_json:
            text = json.dumps(result.to_dict(), indent=1, allow_nan=False)
        else:
            from riskdiet.report.fit_text import fit_summary

            text = fit_summary(result)
        written = outputs.commit()
    _emit(text, as_json, written, " (the fitted study; the input is unchanged)")


def _run_fit(study, workers: int):
    """Fit with a progress bar on a terminal (none in CI or when piped)."""
    from riskdiet.analysis.fit import fit_study

    with _quiet_progress(False) as bar:
        task = bar.add_task("fitting", total=1.0)

        def progress(stage: str, done: float) -> None:
            bar.update(task, completed=done, description=stage)

        if workers > 1:  # Ctrl-C or a dead worker stops every worker, as for maps
            return _in_pool(lambda pool: fit_study(study, pool, progress), workers)
        return fit_study(study, progress=progress)


def main() -> None:
    """Console-script entry point."""
    app()


if __name__ == "__main__":  # pragma: no cover
    main()
