"""Tests of ``riskdiet map`` through typer's test runner.

References used below:
POSIX utility conventions (exit status 0 on success, 2 for usage and input
errors; diagnostics on standard error, no program internals such as a Python
traceback). RFC 4180 (CSV: a header record, then one record per line),
read back with Python's csv module. PNG specification (W3C, 2003; ISO/IEC
15948), section 5.2: every PNG file starts with the 8-byte signature
89 50 4E 47 0D 0A 1A 0A. SVG 1.1 (W3C, 2011): the root element is ``svg`` in
the namespace http://www.w3.org/2000/svg. Python float repr round-trips
exactly (Python language reference, floating point), so CSV numbers can be
compared with the library's map to the last bit.
"""

from __future__ import annotations

import copy
import csv
import json
import xml.etree.ElementTree as ET

import pytest
from conftest import EXAMPLE
from typer.testing import CliRunner

from riskdiet.analysis.maps import MapRequest, make_map, parse_axis
from riskdiet.cli import app
from riskdiet.io import load_study

runner = CliRunner()

X = "wild boar:encounter_share=0:0.8:6"
Y = "hunting_ability=0.3:1.5:5"
GRADIENT = "wild boar:energy_mj"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
SVG_ROOT = "{http://www.w3.org/2000/svg}svg"


@pytest.fixture(scope="module")
def small_study(tmp_path_factory):
    """The invented demo study (illustrative) on a 24-level grid, as a JSON file."""
    raw = json.loads(EXAMPLE.read_text(encoding="utf-8"))
    raw = copy.deepcopy(raw)
    raw["predator"]["energy_levels"] = 24
    path = tmp_path_factory.mktemp("study") / "small.json"
    path.write_text(json.dumps(raw), encoding="utf-8")
    return path


def run_map(study, out, *extra):
    return runner.invoke(app, ["map", str(study), "--x", X, "--y", Y, "--quiet",
                               "--out", str(out), *extra])


@pytest.fixture(scope="module")
def written(small_study, tmp_path_factory):
    """One map written with one worker (the reference for the other tests)."""
    out = tmp_path_factory.mktemp("map1")
    result = run_map(small_study, out, "--gradient", GRADIENT)
    assert result.exit_code == 0, result.stderr
    return out, result


def read_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        reader = csv.DictReader(fh)
        return reader.fieldnames, list(reader)


def test_map_writes_one_csv_row_per_cell_with_the_documented_columns(small_study, written):
    """map.csv has a header and one record per cell (RFC 4180) with the columns
    documented in README "Maps": the two axes named after their inputs
    (``wild boar:encounter_share``, ``hunting_ability``; never ``x``/``y``), the
    regimes and their detailed sequences, ``when_attacked_<condition>:<prey>``
    and ``reserve_threshold_<condition>:<prey>`` for every prey, fitness, the
    marginal values (with the --gradient column) and kills_per_year_<group>;
    its numbers are the library's map to the last bit (float repr round-trip)."""
    out, result = written
    header, rows = read_rows(out / "map.csv")
    study = load_study(small_study)
    groups = sorted({p.group for p in study.prey})
    xkey, ykey = "wild boar:encounter_share", "hunting_ability"
    required = [xkey, ykey, "regime_healthy", "regime_injured", "regime_healthy_detail",
                "regime_injured_detail", "fitness_at_start", "marginal_hunting_ability",
                f"marginal_{GRADIENT}", *[f"kills_per_year_{g}" for g in groups],
                *[f"{kind}_{cond}:{p.name}" for kind in ("when_attacked", "reserve_threshold")
                  for cond in ("healthy", "injured") for p in study.prey]]
    assert set(required) <= set(header)
    assert "x" not in header and "y" not in header
    assert header[:2] == [xkey, ykey]
    assert len(rows) == 6 * 5
    request = MapRequest("baseline", parse_axis(X, study, "--x"), parse_axis(Y, study, "--y"),
                         ("wild boar", "energy_mj"))
    expected = make_map(study, request)
    cells = {(float(r[xkey]), float(r[ykey])) for r in rows}
    assert cells == {(float(x), float(y)) for x in expected.x for y in expected.y}
    keys = ("never", "all_reserves", "low_reserves", "high_reserves", "other")
    for n, row in enumerate(rows):
        iy, ix = divmod(n, 6)
        assert float(row[xkey]) == expected.x[ix] and float(row[ykey]) == expected.y[iy]
        assert float(row["fitness_at_start"]) == expected.fitness_at_start[iy, ix]
        assert float(row["marginal_hunting_ability"]) == expected.marginal_hunting_ability[iy, ix]
        assert float(row[f"marginal_{GRADIENT}"]) == expected.marginal_extra[iy, ix]
        assert row["regime_healthy"] == expected.regime_healthy[iy, ix]
        assert row["regime_injured"] == expected.regime_injured[iy, ix]
        for g in groups:
            assert float(row[f"kills_per_year_{g}"]) == expected.kills_per_year[g][iy, ix]
        for k, cond in enumerate(("healthy", "injured")):
            for i, p in enumerate(study.prey):
                code = expected.when_codes[k, i, iy, ix]
                assert row[f"when_attacked_{cond}:{p.name}"] == keys[code]
                threshold = row[f"reserve_threshold_{cond}:{p.name}"]
                if keys[code] in ("low_reserves", "high_reserves"):
                    assert 0 < float(threshold) <= 1
                else:
                    assert threshold == ""
    assert "wrote" in result.stdout


def test_map_writes_png_and_svg_figures(written):
    """The regime, hunting-ability, kills and (asked for with --gradient) gradient maps
    are written as PNG (8-byte
    signature, PNG spec section 5.2) and SVG (root element svg in the SVG
    namespace, SVG 1.1)."""
    out, _ = written
    pngs = sorted(out.glob("*.png"))
    svgs = sorted(out.glob("*.svg"))
    assert len(pngs) == 4 and len(svgs) == 4
    assert {p.stem for p in pngs} == {p.stem for p in svgs}
    stems = " ".join(p.stem for p in pngs)
    for part in ("regimes", "hunting-ability", "kills", "gradient-wild-boar-energy-mj"):
        assert part in stems
    for p in pngs:
        assert p.read_bytes()[:8] == PNG_SIGNATURE
    for s in svgs:
        assert ET.parse(s).getroot().tag == SVG_ROOT


def test_map_refuses_to_overwrite_without_force(small_study, tmp_path):
    """A second run into the same folder exits 2 with a message naming --force
    and leaves the files untouched; with --force it replaces them (POSIX exit
    status 2 for an input problem; common practice for output safety)."""
    first = run_map(small_study, tmp_path)
    assert first.exit_code == 0, first.stderr
    before = (tmp_path / "map.csv").read_bytes()
    (tmp_path / "map.csv").write_bytes(before + b"marker")
    again = run_map(small_study, tmp_path)
    assert again.exit_code == 2
    assert "--force" in again.stderr
    assert "Traceback" not in again.stderr + again.stdout
    assert (tmp_path / "map.csv").read_bytes() == before + b"marker"
    forced = run_map(small_study, tmp_path, "--force")
    assert forced.exit_code == 0, forced.stderr
    assert (tmp_path / "map.csv").read_bytes() == before


@pytest.mark.parametrize(("option", "spec", "fragment"), [
    ("--x", "wingspan_m=0:1:3", "predator field"),
    ("--x", "wild boar:tusk_length=0:1:3", "prey field"),
    ("--x", "currency=0:1:3", "numeric field"),
    ("--y", "name=0:1:3", "numeric field"),
    ("--x", "wild boar:group=0:1:3", "numeric field"),
    ("--x", "wild boar:name=0:1:3", "numeric field"),
    ("--y", "hunting_ability=0.2:1.6:1", "steps"),
    ("--x", "hunting_ability=0.5:0.5:4", "different"),
    ("--y", "hunting_ability", "TARGET=START:STOP:STEPS"),
    ("--x", "snow leopard:energy_mj=1:2:3", "prey name"),
    ("--x", "wild boar:encounter_share=0:1.5:4", "shares from 0 to 1"),
    ("--y", "wild boar:encounter_share=-0.2:0.5:4", "shares from 0 to 1"),
    ("--x", "hunting_ability=low:high:4", "numbers"),
    ("--y", "hunting_ability=0:1", "three numbers"),
])
def test_bad_axis_exits_2_naming_the_option(small_study, tmp_path, option, spec, fragment):
    """A bad axis spec exits with status 2 and a message on stderr that names
    the option (--x or --y) and what was expected, with no traceback and no
    files written (POSIX utility conventions)."""
    x, y = (spec, Y) if option == "--x" else (X, spec)
    result = runner.invoke(app, ["map", str(small_study), "--x", x, "--y", y, "--quiet",
                                 "--out", str(tmp_path / "out")])
    assert result.exit_code == 2, result.stdout
    assert f"{option}:" in result.stderr
    assert fragment in result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    assert not (tmp_path / "out").exists()


def test_axis_values_that_make_inputs_invalid_exit_2(small_study, tmp_path):
    """An axis reaching an invalid input (capture success 1.5 > 1, MODEL.md
    section 1: capture_success in [0, 1]) exits 2 and names the field and the
    value found, without a traceback (POSIX utility conventions)."""
    result = runner.invoke(app, ["map", str(small_study), "--x",
                                 "wild boar:capture_success=0.2:1.5:4", "--y", Y, "--quiet",
                                 "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "capture_success" in result.stderr and "1.5" in result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    assert not (tmp_path / "out" / "map.csv").exists()


def test_whole_number_gradient_is_refused(small_study, tmp_path):
    """--gradient of a whole-number field (energy_levels) exits 2: a marginal value needs
    an input that can change by a small amount (definition of a derivative)."""
    result = runner.invoke(app, ["map", str(small_study), "--x", X, "--y", Y, "--quiet",
                                 "--gradient", "energy_levels", "--out", str(tmp_path / "o")])
    assert result.exit_code == 2
    assert "--gradient" in result.stderr and "whole-number" in result.stderr
    assert not (tmp_path / "o").exists()


def test_invalid_cell_message_names_the_axes(small_study, tmp_path):
    """An axis value that makes an input invalid is reported against --x/--y (located
    errors; common practice)."""
    result = runner.invoke(app, ["map", str(small_study), "--x",
                                 "wild boar:capture_success=0.2:1.5:4", "--y", Y, "--quiet"])
    assert result.exit_code == 2
    assert "--x/--y" in result.stderr


def test_two_workers_write_the_same_map_as_one(small_study, written, tmp_path):
    """--workers 2 (a local process pool, bands of rows solved independently)
    writes a map.csv byte for byte equal to the one-worker run: the optimal
    policy, and so each cell's linear system, does not depend on the starting
    guess (Puterman 1994, Markov Decision Processes, ch. 7)."""
    out, _ = written
    result = run_map(small_study, tmp_path, "--gradient", GRADIENT, "--workers", "2")
    assert result.exit_code == 0, result.stderr
    assert (tmp_path / "map.csv").read_bytes() == (out / "map.csv").read_bytes()


def test_map_prints_when_each_prey_is_attacked_and_the_gradient_in_words(written):
    """The command's text output reads the map in words: when each prey that
    matters (the risky wild boar, livestock upland ewe, protected heath grouse of
    the demo) is attacked, where the study sits, and — asked for with --gradient —
    one sentence on the value of a higher energy per capture of wild boar."""
    _, result = written
    out = result.stdout
    for name in ("wild boar", "upland ewe", "heath grouse"):
        assert f"For a healthy animal, {name} is attacked" in out
    assert "For a healthy animal, forest deer" not in out
    assert "The study itself has share of all encounters of wild boar" in out
    assert out.count("A higher energy per capture of wild boar") == 1
    assert "A higher hunting ability" in out
