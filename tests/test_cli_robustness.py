"""The command line keeps its promise under mistakes and interruptions (issue 10).

Every test reproduces a report first: operating-system errors on output paths,
partial outputs, CSV name collisions, Ctrl-C, dead map workers, bad scheduler
addresses, help text and verbatim user text. The contract checked (exit 2 with a
located message and no traceback; nothing written; exit 130 after Ctrl-C, the
shell's 128 + SIGINT convention) is the project's rule set (common practice).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from riskdiet.cli import app

ROOT = Path(__file__).resolve().parent.parent
DEMO_JSON = ROOT / "examples" / "harrow-vale.json"


def study(tmp_path: Path, scenarios: list | None = None, **settings) -> Path:
    """The demo study without its settings map and with 8 uncertainty draws (fast), as a
    JSON file in tmp_path/in."""
    raw = json.loads(DEMO_JSON.read_text())
    raw["settings"] = {"study_name": "test", "report_date": "2026-12-01", "draws": 8,
                       **settings}
    if scenarios is not None:
        raw["scenarios"] = scenarios
    folder = tmp_path / "in"
    folder.mkdir(exist_ok=True)
    path = folder / "study.json"
    path.write_text(json.dumps(raw))
    return path


def run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def listing(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def failed_cleanly(result, code: int = 2) -> str:
    assert result.exit_code == code, (result.output, result.exception)
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.stderr
    return result.stderr


def test_output_path_under_a_file_is_refused_before_computing(tmp_path, monkeypatch):
    """A file where the folder should be was a traceback after the whole computation; now a
    message naming the path, before solving anything."""
    path = study(tmp_path)
    (tmp_path / "afile").write_text("x")
    import riskdiet.analysis.study

    def never(*a, **k):
        raise AssertionError("solved although the output path is unusable")
    monkeypatch.setattr(riskdiet.analysis.study, "solve", never)
    before = listing(tmp_path)
    err = failed_cleanly(run("solve", path, "--out", tmp_path / "afile" / "r.xlsx"))
    assert "afile is a file, not a folder" in err
    err = failed_cleanly(run("brief", path, "--out", tmp_path / "b.pdf", "--figures",
                             tmp_path / "afile" / "figs"))
    assert "afile is a file, not a folder" in err
    err = failed_cleanly(run("solve", path, "--out", "/proc/riskdiet-results.xlsx"))
    assert "/proc/riskdiet-results.xlsx: cannot write" in err
    assert listing(tmp_path) == before


def test_unwritable_folder_is_refused(tmp_path):
    """A folder where no file can be created (read-only or immutable) is refused; the check
    creates a probe file, so it also holds for root (skipped where the folder stays
    writable)."""
    path = study(tmp_path)
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        try:
            (locked / "probe").write_text("x")
        except OSError:
            pass
        else:
            pytest.skip("this user can write into read-only folders")
        err = failed_cleanly(run("solve", path, "--out", locked / "r.xlsx"))
        assert "cannot write into" in err
    finally:
        locked.chmod(0o700)


def test_csv_names_never_collide(tmp_path):
    """"deer small" and "deer_small" wrote one file (the second replacing the first with
    --force, "wrote" printed twice); now every table has its own file."""
    change = {"prey": "forest deer", "field": "energy_mj", "change": "set"}
    path = study(tmp_path, [{"name": "deer small", "changes": [dict(change, value=40)]},
                            {"name": "deer_small", "changes": [dict(change, value=30)]}])
    result = run("solve", path, "--csv", tmp_path / "csv")
    assert result.exit_code == 0, result.output
    wrote = re.findall(r"^wrote (.*)$", result.stdout, re.M)
    assert len(wrote) == len(set(wrote))
    assert {Path(w).name for w in wrote} >= {"deer_small.csv", "deer_small-2.csv"}
    first = (tmp_path / "csv" / "deer_small.csv").read_text()
    second = (tmp_path / "csv" / "deer_small-2.csv").read_text()
    assert first != second


def test_outputs_appear_together_or_not_at_all(tmp_path):
    """The results workbook stayed when --csv then failed; now neither is written."""
    path = study(tmp_path)
    (tmp_path / "csv").mkdir()
    (tmp_path / "csv" / "kills.csv").write_text("mine")
    failed_cleanly(run("solve", path, "--out", tmp_path / "r.xlsx", "--csv", tmp_path / "csv"))
    assert not (tmp_path / "r.xlsx").exists()
    assert (tmp_path / "csv" / "kills.csv").read_text() == "mine"
    assert listing(tmp_path / "csv") == ["kills.csv"]


def test_brief_pdf_not_left_when_figures_fail(tmp_path, monkeypatch):
    """The PDF stayed when --figures failed; now a failure while writing figures leaves
    neither the PDF nor any figure."""
    path = study(tmp_path)
    import riskdiet.report.figures as figures

    def broken(figure, dpi=None):
        raise OSError(28, "No space left on device")
    monkeypatch.setattr(figures, "png_bytes", broken)
    err = failed_cleanly(run("brief", path, "--out", tmp_path / "b.pdf", "--figures",
                             tmp_path / "figs"))
    assert "No space left on device" in err
    assert not (tmp_path / "b.pdf").exists()
    assert not (tmp_path / "figs").exists()


def test_ctrl_c_says_so_and_writes_nothing(tmp_path, monkeypatch):
    """Ctrl-C exited silently; now it says so, exits 130 and leaves no output, also for a
    map with --out."""
    path = study(tmp_path)
    import riskdiet.analysis.maps
    import riskdiet.analysis.study

    def interrupted(*a, **k):
        raise KeyboardInterrupt
    monkeypatch.setattr(riskdiet.analysis.study, "solve", interrupted)
    monkeypatch.setattr(riskdiet.analysis.maps, "make_map", interrupted)
    before = listing(tmp_path)
    err = failed_cleanly(run("solve", path, "--out", tmp_path / "r.xlsx"), 130)
    assert "interrupted; nothing was written" in err
    err = failed_cleanly(run("map", path, "--x", "hunting_ability=0.5:1:3", "--y",
                             "wild boar:energy_mj=10:50:3", "--out", tmp_path / "maps"), 130)
    assert "interrupted" in err
    assert listing(tmp_path) == before


def test_ctrl_c_stops_map_workers(tmp_path, monkeypatch):
    """Interrupting map --workers 2 leaves no worker processes: they are terminated, not
    waited for."""
    import multiprocessing

    path = study(tmp_path)
    import riskdiet.analysis.maps

    real = riskdiet.analysis.maps.make_map

    def interrupt_after_submitting(study, request, executor=None, **kw):
        executor.submit(sum, [1, 2]).result()  # workers are running
        raise KeyboardInterrupt
    monkeypatch.setattr(riskdiet.analysis.maps, "make_map", interrupt_after_submitting)
    failed_cleanly(run("map", path, "--x", "hunting_ability=0.5:1:3", "--y",
                       "wild boar:energy_mj=10:50:3", "--workers", "2", "--out",
                       tmp_path / "maps"), 130)
    assert multiprocessing.active_children() == []
    assert not (tmp_path / "maps").exists()
    assert real is not None


def test_dead_worker_is_an_error_not_a_traceback(tmp_path, monkeypatch):
    """A map worker that dies gave BrokenProcessPool; now a plain message, exit 2."""
    from concurrent.futures.process import BrokenProcessPool

    path = study(tmp_path)
    import riskdiet.analysis.maps

    def dies(*a, **k):
        raise BrokenProcessPool("a child process terminated abruptly")
    monkeypatch.setattr(riskdiet.analysis.maps, "make_map", dies)
    err = failed_cleanly(run("map", path, "--x", "hunting_ability=0.5:1:3", "--y",
                             "wild boar:energy_mj=10:50:3", "--workers", "2"))
    assert "a map worker process died" in err


@pytest.mark.parametrize(("address", "fragment"), [
    ("tcp://127.0.0.1:1", "nothing answers there"),
    ("tcp://[::1", "not a host:port address"),
    ("tcp://localhost:notaport", "not a host:port address"),
    ("http:/x", "not a host:port address"),
])
def test_bad_scheduler_address_fails_fast_and_located(tmp_path, address, fragment):
    """map --scheduler tcp://127.0.0.1:1 waited 30 s and printed an 81-line traceback; a
    malformed address crashed. Now a located message (--scheduler)."""
    path = study(tmp_path)
    err = failed_cleanly(run("map", path, "--x", "hunting_ability=0.5:1:3", "--y",
                             "wild boar:energy_mj=10:50:3", "--scheduler", address))
    assert '--scheduler: expected the address of a running Dask scheduler' in err
    assert fragment in err


def test_user_text_is_printed_verbatim(tmp_path):
    """A map axis typed hunting_ability=1:zero:5 came back as "1️⃣5" (the console turned
    :zero: into an emoji); user text is printed as typed, markup included."""
    path = study(tmp_path)
    err = failed_cleanly(run("map", path, "--x", "hunting_ability=1:zero:5", "--y",
                             "wild boar:energy_mj=[b]1:5:3"))
    assert 'found "1:zero:5"' in err
    assert "[b]1:5:3" in err


def test_help_shows_plain_flags_escaped_brackets_and_runnable_examples():
    """Flags showed <bool> (inviting --json true); --scheduler's help lost "[cluster]"; the
    top-level help had no examples; examples pointed at examples/, which only a git
    checkout has (they now use the folder riskdiet demo writes)."""
    top = run("--help").stdout
    assert "riskdiet demo" in top and "riskdiet solve riskdiet-demo/harrow-vale.xlsx" in top
    solve = run("solve", "--help").stdout
    assert "<bool>" not in solve
    assert re.search(r"--json\s+Print one JSON", solve)
    assert "riskdiet-demo/harrow-vale.xlsx" in solve and "examples/" not in solve
    assert "riskdiet[cluster]" in run("map", "--help").stdout


def test_brief_with_long_unbroken_texts(tmp_path):
    """Notes of 3000 characters without a space (a pasted link) made the brief's table
    layout give other columns a negative width (ValueError); the brief is now written."""
    raw = json.loads(DEMO_JSON.read_text())
    raw["settings"] = {"report_date": "2026-12-01", "study_name": "S" * 450, "draws": 8}
    raw["prey"][0]["note"] = "N" * 3000
    raw["scenarios"][0]["note"] = "Q" * 3000
    path = tmp_path / "study.json"
    path.write_text(json.dumps(raw))
    result = run("brief", path, "--out", tmp_path / "b.pdf")
    assert result.exit_code == 0, (result.output, result.exception)
    assert (tmp_path / "b.pdf").read_bytes().startswith(b"%PDF")
