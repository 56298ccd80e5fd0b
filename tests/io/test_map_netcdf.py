"""Tests of the netCDF map (``riskdiet map --netcdf``): a round trip through xarray
and through an outside reader.

References used below:
NetCDF Climate and Forecast (CF) Metadata Conventions 1.8 (Eaton et al. 2020):
section 3.1 (a ``units`` attribute on every dimensional variable, UDUNITS
strings, "1" for a dimensionless number), 3.5 (flags: ``flag_values`` with a
blank-separated ``flag_meanings``), 2.5.1 (``_FillValue`` marks missing data).
The netCDF classic file format (Unidata): readable by
``scipy.io.netcdf_file``, written independently of xarray. POSIX exit status 2
for a usage problem; common practice that a missing optional dependency is
reported in one line and nothing is written.
"""

from __future__ import annotations

import copy
import importlib.util
import json

import numpy as np
import pytest
import scipy.io
import xarray as xr
from conftest import EXAMPLE
from typer.testing import CliRunner

from riskdiet.analysis.maps import MapRequest, make_map, parse_axis
from riskdiet.analysis.regimes import WHEN_KEYS
from riskdiet.cli import app
from riskdiet.io.map_netcdf import FILL, dimension_name, write_map_netcdf
from riskdiet.validation import build_study

X = "wild boar:encounter_share=0:0.8:4"
Y = "hunting_ability=0.4:1.6:3"


def small_study():
    """The invented demo study (illustrative) on a 24-level grid."""
    raw = copy.deepcopy(json.loads(EXAMPLE.read_text(encoding="utf-8")))
    raw["predator"]["energy_levels"] = 24
    return build_study(raw)


@pytest.fixture(scope="module")
def mapped():
    study = small_study()
    req = MapRequest("baseline", parse_axis(X, study, "--x"), parse_axis(Y, study, "--y"),
                     ("wild boar", "energy_mj"))
    return study, make_map(study, req)


@pytest.fixture(scope="module")
def written(mapped, tmp_path_factory):
    _, result = mapped
    path = tmp_path_factory.mktemp("nc") / "map.nc"
    write_map_netcdf(result, path, study_name="demo", source="demo.json")
    return path


def test_dimension_names_follow_the_axes():
    """Dimension names are the axis inputs with only letters, digits and
    underscores (netCDF classic names; CF section 2.3 recommends these characters)."""
    assert dimension_name("hunting_ability") == "hunting_ability"
    assert dimension_name("wild boar:encounter_share") == "wild_boar_encounter_share"
    assert dimension_name("a b:x", {"a_b_x"}) == "a_b_x_2"


def test_xarray_round_trip_keeps_values_dims_and_units(mapped, written):
    """Read back with xarray, every variable equals the map's numbers (to the bit:
    netCDF stores IEEE doubles), dims are named after the axes, every coordinate
    and numeric variable has ``units`` and ``long_name`` (CF 3.1), the
    when-attacked variables are flags (CF 3.5) and a threshold that does not apply
    reads back as missing (CF 2.5.1)."""
    _, result = mapped
    with xr.open_dataset(written) as ds:
        assert ds["fitness_at_start"].dims == ("hunting_ability", "wild_boar_encounter_share")
        np.testing.assert_array_equal(ds["wild_boar_encounter_share"].values, result.x)
        np.testing.assert_array_equal(ds["hunting_ability"].values, result.y)
        assert ds["wild_boar_encounter_share"].attrs["units"] == "1"
        assert ds["wild_boar_encounter_share"].attrs["riskdiet_target"] == \
            "wild boar:encounter_share"
        np.testing.assert_array_equal(ds["fitness_at_start"].values, result.fitness_at_start)
        np.testing.assert_array_equal(ds["marginal_hunting_ability"].values,
                                      result.marginal_hunting_ability)
        np.testing.assert_array_equal(ds["marginal_wild_boar_energy_mj"].values,
                                      result.marginal_extra)
        assert ds["marginal_wild_boar_energy_mj"].attrs["units"] == "MJ-1"
        for g in result.groups:
            np.testing.assert_array_equal(ds[f"kills_per_year_{g}"].values,
                                          result.kills_per_year[g])
            assert ds[f"kills_per_year_{g}"].attrs["units"] == "year-1"
        assert [str(p) for p in ds["prey"].values] == list(result.prey)
        for k, cond in enumerate(("healthy", "injured")):
            when = ds[f"when_attacked_{cond}"]
            np.testing.assert_array_equal(when.values, result.when_codes[k])
            assert when.attrs["flag_meanings"].split() == list(WHEN_KEYS)
            assert list(when.attrs["flag_values"]) == list(range(len(WHEN_KEYS)))
            np.testing.assert_array_equal(ds[f"reserve_threshold_{cond}"].values,
                                          result.when_threshold[k])
        for name in [*ds.data_vars, *ds.coords]:
            if ds[name].dtype.kind == "f":
                assert "units" in ds[name].attrs and "long_name" in ds[name].attrs, name
        assert ds.attrs["riskdiet_study_y"] == pytest.approx(1.0)


def test_an_outside_reader_sees_units_flags_and_fill_values(mapped, written):
    """scipy's own netCDF reader (no xarray) finds the same dimensions, the units
    as UDUNITS strings, the flag attributes, and the fill value stored where a
    threshold does not apply, never NaN (CF 2.5.1)."""
    _, result = mapped
    f = scipy.io.netcdf_file(written, "r", mmap=False)
    try:
        assert f.dimensions["wild_boar_encounter_share"] == 4
        assert f.dimensions["hunting_ability"] == 3
        assert f.variables["hunting_ability"].units == b"1"
        assert f.variables["kills_per_year_livestock"].units == b"year-1"
        when = f.variables["when_attacked_healthy"]
        assert when.flag_meanings.decode() == " ".join(WHEN_KEYS)
        np.testing.assert_array_equal(when.data, result.when_codes[0])
        threshold = f.variables["reserve_threshold_healthy"]
        assert float(threshold._FillValue) == FILL
        data = threshold.data
        assert not np.isnan(data).any()
        missing = np.isnan(result.when_threshold[0])
        assert (data[missing] == FILL).all()
        np.testing.assert_array_equal(data[~missing], result.when_threshold[0][~missing])
    finally:
        f.close()


runner = CliRunner()


def test_cli_writes_netcdf_and_refuses_to_overwrite(tmp_path):
    """``--netcdf PATH`` writes a file xarray opens; a second run without --force
    exits 2 naming --force and leaves it as it was (POSIX; common practice)."""
    study = tmp_path / "s.json"
    raw = copy.deepcopy(json.loads(EXAMPLE.read_text(encoding="utf-8")))
    raw["predator"]["energy_levels"] = 20
    study.write_text(json.dumps(raw), encoding="utf-8")
    nc = tmp_path / "out" / "map.nc"
    args = ["map", str(study), "--x", "hunting_ability=0.5:1.5:3", "--y",
            "upland ewe:energy_mj=20:40:3", "--quiet", "--netcdf", str(nc)]
    first = runner.invoke(app, args)
    assert first.exit_code == 0, first.stderr
    with xr.open_dataset(nc) as ds:
        assert set(ds.dims) >= {"hunting_ability", "upland_ewe_energy_mj"}
        assert ds["upland_ewe_energy_mj"].attrs["units"] == "MJ"
    before = nc.read_bytes()
    again = runner.invoke(app, args)
    assert again.exit_code == 2 and "--force" in again.stderr
    assert nc.read_bytes() == before


def test_cli_without_xarray_says_so_in_one_line_and_writes_nothing(tmp_path, monkeypatch):
    """When xarray cannot be imported, ``--netcdf`` fails before any work: exit 2,
    one line naming the extra to install, no traceback, and neither the netCDF
    file nor the --out folder is written (common practice for optional extras)."""
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name == "xarray" else real(name, *a))
    nc, out = tmp_path / "map.nc", tmp_path / "figs"
    result = runner.invoke(app, ["map", str(EXAMPLE), "--x", "hunting_ability=0.5:1.5:3",
                                 "--y", "upland ewe:energy_mj=20:40:3", "--quiet",
                                 "--netcdf", str(nc), "--out", str(out)])
    assert result.exit_code == 2
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and "riskdiet[netcdf]" in lines[0], result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    assert not nc.exists() and not out.exists()
