"""A map as an xarray Dataset, written as a netCDF file (``riskdiet map --netcdf``).

For people who post-process in Python (xarray) or R (ncdf4, stars, terra): the two
map axes are dimensions named after their inputs, with coordinate values, units and
long names; every number of map.csv is a data variable with ``units`` and
``long_name``; when each prey is attacked is a flag variable (CF conventions,
``flag_values`` and ``flag_meanings``). The detailed attack sequences stay in
map.csv. Files are netCDF-3 (64-bit offset), written with xarray's scipy engine,
so no compiled netCDF library is needed.

References
----------
.. [1] Eaton, B. et al. (2020). NetCDF Climate and Forecast (CF) Metadata
   Conventions, version 1.8 (sections 3.1 units, 3.5 flags).
"""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

import numpy as np

from riskdiet.analysis.maps import CONDITION_NAMES, SHARE, MapResult
from riskdiet.analysis.regimes import WHEN_KEYS
from riskdiet.errors import RiskdietError
from riskdiet.fields import field_specs
from riskdiet.io.atomic import OutputSet, write_atomic
from riskdiet.model import Predator, Prey
from riskdiet.version import __version__

UDUNITS = {"MJ": "MJ", "MJ/day": "MJ day-1", "1/day": "day-1", "day": "day",
           "km²/day": "km2 day-1", "1/km²": "km-2", "kg": "kg", "fraction of R": "1",
           "probability": "1", "ratio": "1", "count": "1"}
"""Units of the study's fields written as UDUNITS strings (CF section 3.1)."""
PER_UNIT = {"MJ": "MJ-1", "MJ/day": "day MJ-1", "1/day": "day", "day": "day-1",
            "km²/day": "day km-2", "1/km²": "km2", "kg": "kg-1"}
"""Units of a marginal value d(fitness)/d(field): the inverse of the field's unit."""
FILL = -1.0
"""Stored where a reserve threshold does not apply (CF ``_FillValue``; read back as NaN)."""
MISSING_XARRAY = "--netcdf needs xarray: pip install \"riskdiet[netcdf]\""


def xarray_available() -> bool:
    """Whether xarray can be imported (checked before any work)."""
    return importlib.util.find_spec("xarray") is not None


def require_xarray() -> None:
    """Raise a one-line error when xarray is missing."""
    if not xarray_available():
        raise RiskdietError(MISSING_XARRAY)


def dimension_name(target: str, taken: set[str] = frozenset()) -> str:
    """A netCDF-safe name for an axis: ``wild boar:encounter_share`` ->
    ``wild_boar_encounter_share`` (letters, digits and underscores)."""
    name = re.sub(r"[^A-Za-z0-9_]+", "_", target).strip("_") or "axis"
    if not re.match(r"[A-Za-z]", name):
        name = "v_" + name
    out, k = name, 2
    while out in taken:
        out, k = f"{name}_{k}", k + 1
    return out


def _field_unit(prey: str | None, field: str) -> str:
    if field == SHARE:
        return "1"
    return field_specs(Prey if prey else Predator)[field].unit


def map_dataset(result: MapResult, study_name: str = "", source: str = ""):
    """The map as an :class:`xarray.Dataset` (dims named after the axes, units on every
    coordinate and variable; reserve thresholds use :data:`FILL` where they do not apply)."""
    import xarray as xr

    req = result.request
    xdim = dimension_name(req.x.target)
    ydim = dimension_name(req.y.target, {xdim})
    fitness = ("chance of reaching breeding condition" if result.currency == "breeding"
               else "chance of ending the season alive and in condition")
    coords = {
        xdim: (xdim, np.asarray(result.x, dtype=float),
               {"units": UDUNITS.get(req.x.unit, "1"), "long_name": req.x.label,
                "riskdiet_target": req.x.target,
                "riskdiet_unit": _field_unit(req.x.prey, req.x.field)}),
        ydim: (ydim, np.asarray(result.y, dtype=float),
               {"units": UDUNITS.get(req.y.unit, "1"), "long_name": req.y.label,
                "riskdiet_target": req.y.target,
                "riskdiet_unit": _field_unit(req.y.prey, req.y.field)}),
        "prey": ("prey", np.array(result.prey, dtype=str), {"long_name": "prey type"}),
        "prey_group": ("prey", np.array(result.prey_groups, dtype=str),
                       {"long_name": "prey group"}),
    }
    cell = (ydim, xdim)
    data = {
        "fitness_at_start": (cell, result.fitness_at_start,
                             {"units": "1", "long_name": f"{fitness}, healthy animal at the "
                              "start reserves"}),
        "marginal_hunting_ability": (cell, result.marginal_hunting_ability, {
            "units": "1", "long_name": f"change in the {fitness} per unit of hunting "
            "ability, policy held fixed (selection gradient)"}),
    }
    if result.marginal_extra is not None:
        prey, field = req.gradient
        unit = _field_unit(prey, field)
        target = f"{prey}:{field}" if prey else field
        data[dimension_name("marginal_" + target, set(data))] = (cell, result.marginal_extra, {
            "units": PER_UNIT.get(unit, "1"), "riskdiet_target": target,
            "long_name": f"change in the {fitness} per unit of {target}, policy held fixed"})
    per = "year" if result.currency == "breeding" else "season"
    for g in result.groups:
        name = dimension_name(f"kills_per_{per}_{g}", set(data))
        data[name] = (cell, result.kills_per_year[g], {
            "units": "year-1" if per == "year" else "1", "riskdiet_group": g,
            "long_name": f"{g} kills per predator per {per}"
            + (" (long run, every death replaced)" if per == "year" else "")})
    for k, cond in enumerate(CONDITION_NAMES):
        data[f"when_attacked_{cond}"] = (("prey", *cell), result.when_codes[k].astype(np.int8), {
            "long_name": f"when a {cond} animal attacks each prey, read from low to high "
            "reserves", "flag_values": np.arange(len(WHEN_KEYS), dtype=np.int8),
            "flag_meanings": " ".join(WHEN_KEYS)})
        data[f"reserve_threshold_{cond}"] = (("prey", *cell), result.when_threshold[k], {
            "units": "1", "long_name": f"{cond} animal: highest reserves at which a prey "
            "attacked only when reserves are low is still attacked, or lowest reserves at "
            "which a prey attacked only when reserves are high is attacked (fraction of "
            "reserve capacity)"})
    ds = xr.Dataset(data, coords=coords)
    ds.attrs = {
        "title": f"riskdiet map of scenario {req.scenario}",
        "Conventions": "CF-1.8",
        "source": f"riskdiet {__version__}",
        "riskdiet_study": study_name,
        "riskdiet_input_file": source,
        "riskdiet_scenario": req.scenario,
        "riskdiet_currency": result.currency,
        "riskdiet_study_x": float(result.study_x) if np.isfinite(result.study_x) else FILL,
        "riskdiet_study_y": float(result.study_y) if np.isfinite(result.study_y) else FILL,
        "riskdiet_max_bellman_residual": float(result.max_residual),
        "comment": "Illustrative unless the study's inputs are field data. The study's own "
                   "values of the two axes are riskdiet_study_x and riskdiet_study_y. The "
                   "detailed attack sequences of every cell are in map.csv.",
    }
    for cond in CONDITION_NAMES:
        ds[f"reserve_threshold_{cond}"].encoding["_FillValue"] = FILL
    return ds


def write_map_netcdf(result: MapResult, path: str | Path, force: bool = False,
                     outputs: OutputSet | None = None, study_name: str = "",
                     source: str = "") -> Path:
    """Write the map's Dataset as a netCDF-3 file, atomically, never overwriting without
    ``force``.

    Raises
    ------
    RiskdietError
        When xarray is not installed (one line; nothing is written).
    """
    require_xarray()
    ds = map_dataset(result, study_name, source)

    def write(tmp: Path) -> None:
        ds.to_netcdf(tmp, engine="scipy", format="NETCDF3_64BIT")

    return write_atomic(Path(path), write, force, outputs=outputs)
