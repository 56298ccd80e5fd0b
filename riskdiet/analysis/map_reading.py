"""A map read in words: plain sentences generated from a map's numbers."""

from __future__ import annotations

import numpy as np

from riskdiet.analysis.maps import MapResult


def _share(mask: np.ndarray) -> str:
    return f"{100 * mask.mean():.0f} %"


def _where(result: MapResult, mask: np.ndarray) -> str:
    """Where a set of cells lies, naming only the axes it does not span whole."""
    parts = []
    for label, values, hit in ((result.request.x.label, result.x, mask.any(axis=0)),
                               (result.request.y.label, result.y, mask.any(axis=1))):
        if not hit.all():
            lo, hi = values[hit].min(), values[hit].max()
            parts.append(f"{label} is {lo:.3g}" if lo == hi else
                         f"{label} is between {lo:.3g} and {hi:.3g}")
    return " and ".join(parts) if parts else "all over the map"


def _at(result: MapResult, iy: int, ix: int) -> str:
    return (f"{result.request.x.label} = {result.x[ix]:.3g}, "
            f"{result.request.y.label} = {result.y[iy]:.3g}")


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
            text += (f" Next ({_share(grid == second)}), where "
                     f"{_where(result, grid == second)}: {second}.")
        out.append(text)
    z = result.marginal_hunting_ability
    iy, ix = np.unravel_index(np.nanargmax(z), z.shape)
    text = (f"Better hunting pays most ({z[iy, ix]:+.3f} per unit of ability) at "
            f"{_at(result, iy, ix)}")
    if (z <= 0).any():
        text += f"; it does not pay at all in {_share(z <= 0)} of the map"
    else:
        text += "; it pays everywhere on the map"
    out.append(text + ".")
    k = result.kills_per_year[group]
    per = "year" if result.currency == "breeding" else "season"
    lo = np.unravel_index(np.nanargmin(k), k.shape)
    hi = np.unravel_index(np.nanargmax(k), k.shape)
    out.append(f"Predicted {group} kills range from {k[lo]:.2g} per predator per {per} (at "
               f"{_at(result, *lo)}) to {k[hi]:.2g} (at {_at(result, *hi)}).")
    return out
