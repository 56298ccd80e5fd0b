"""A map read in words: plain sentences generated from a map's numbers."""

from __future__ import annotations

import numpy as np

from riskdiet.maps import MapResult


def _share(mask: np.ndarray) -> str:
    return f"{100 * mask.mean():.0f} %"


def _where(result: MapResult, mask: np.ndarray) -> str:
    """Axis ranges covered by a set of cells, e.g. ``x from 0 to 0.4``."""
    xs = result.x[mask.any(axis=0)]
    ys = result.y[mask.any(axis=1)]
    return (f"{result.request.x.label} {xs.min():.3g}–{xs.max():.3g} and "
            f"{result.request.y.label} {ys.min():.3g}–{ys.max():.3g}")


def read_map(result: MapResult, group: str) -> list[str]:
    """Sentences describing the regimes, the value of hunting skill and the kills."""
    out = []
    req = result.request
    out.append(f"The map varies {req.x.label} from {req.x.start:g} to {req.x.stop:g} "
               f"({req.x.steps} values) and {req.y.label} from {req.y.start:g} to "
               f"{req.y.stop:g} ({req.y.steps} values) in scenario “{req.scenario}”.")
    for cond, grid in (("healthy", result.regime_healthy), ("injured", result.regime_injured)):
        names, counts = np.unique(grid, return_counts=True)
        order = np.argsort(-counts, kind="stable")
        main = names[order[0]]
        article = "an" if cond == "injured" else "a"
        text = (f"For {article} {cond} animal the most common pattern "
                f"({_share(grid == main)} of the map) is: {main}.")
        if len(names) > 1:
            second = names[order[1]]
            text += (f" Next ({_share(grid == second)}): {second}, found at "
                     f"{_where(result, grid == second)}.")
        out.append(text)
    z = result.marginal_hunting_ability
    iy, ix = np.unravel_index(np.nanargmax(z), z.shape)
    text = (f"Better hunting pays most ({z[iy, ix]:+.3f} per unit of ability) at "
            f"{req.x.label} {result.x[ix]:.3g} and {req.y.label} {result.y[iy]:.3g}")
    if (z <= 0).any():
        text += f"; it does not pay at all in {_share(z <= 0)} of the map"
    out.append(text + ".")
    k = result.kills_per_year[group]
    per = "year" if result.currency == "breeding" else "season"
    lo = np.unravel_index(np.nanargmin(k), k.shape)
    hi = np.unravel_index(np.nanargmax(k), k.shape)
    out.append(f"Predicted {group} kills range from {k[lo]:.2g} per predator per {per} (at "
               f"{req.x.label} {result.x[lo[1]]:.3g}, {req.y.label} {result.y[lo[0]]:.3g}) "
               f"to {k[hi]:.2g} (at {req.x.label} {result.x[hi[1]]:.3g}, {req.y.label} "
               f"{result.y[hi[0]]:.3g}).")
    return out
