"""A map read in words: plain sentences generated from a map's numbers.

The per-prey sentences use the categories of
:func:`riskdiet.analysis.regimes.when_attacked` (the reading the findings use),
so the brief's first page, its findings and its maps say the same thing.
"""

from __future__ import annotations

import numpy as np

from riskdiet.analysis.maps import UNIT_PHRASES, MapResult
from riskdiet.analysis.regimes import WHEN_HIGH, WHEN_LOW
from riskdiet.fields import field_specs, words
from riskdiet.model import Predator, Prey

TINY = 1e-12
"""A marginal value smaller than this in size counts as zero [fitness per unit]."""


def _share(mask: np.ndarray) -> str:
    share = 100 * mask.mean()
    return "under 1 %" if 0 < share < 0.5 else f"{share:.0f} %"


SENTENCE_WORDS = ("never", "at all reserves", "only when reserves are low",
                  "only when reserves are high", "in a mixed pattern (several ranges of reserves)")
"""The when-attacked categories as they read after "is attacked", by code."""


def _pct(x: float) -> str:
    return f"{100 * x:.0f} %"


def _where(result: MapResult, mask: np.ndarray) -> str:
    """Where a set of cells lies, naming only the axes it does not span whole."""
    parts = []
    for axis, values, hit in ((result.request.x, result.x, mask.any(axis=0)),
                              (result.request.y, result.y, mask.any(axis=1))):
        if not hit.all():
            lo, hi = values[hit].min(), values[hit].max()
            parts.append(f"{axis.words} is {lo:.3g}" if lo == hi else
                         f"{axis.words} is between {lo:.3g} and {hi:.3g}")
    return " and ".join(parts) if parts else "all over the map"


def _at(result: MapResult, iy: int, ix: int) -> str:
    return (f"{result.request.x.words} = {result.x[ix]:.3g}, "
            f"{result.request.y.words} = {result.y[iy]:.3g}")


def what_fitness(result: MapResult) -> str:
    """The fitness of the map's currency in words."""
    return ("chance of reaching breeding condition" if result.currency == "breeding"
            else "chance of ending the season alive and in condition")


def gradient_words(result: MapResult) -> tuple[str, str]:
    """The further gradient input in words, and "per <unit>" for its marginal value."""
    prey, field = result.request.gradient
    spec = field_specs(Prey if prey else Predator)[field]
    unit = UNIT_PHRASES.get(spec.unit)
    what = f"{words(field)} of {prey}" if prey else words(field)
    return what, f"per {unit}" if unit else "per unit"


def gradient_sentence(result: MapResult, hunting: bool = False) -> str:
    """Where raising an input helps most and where the sign of its value changes.

    The marginal value of hunting ability (``hunting``) or of the input asked for
    with ``--gradient`` / ``map_gradient``, policy held fixed.
    """
    if hunting:
        z, what, per = result.marginal_hunting_ability, "hunting ability", "per unit of ability"
    else:
        z = result.marginal_extra
        what, per = gradient_words(result)
    fit = what_fitness(result)
    if np.max(np.abs(z)) < TINY:
        return (f"A higher {what} does not change the {fit} anywhere on the map (policy held "
                "fixed).")
    iy, ix = np.unravel_index(np.argmax(np.abs(z)), z.shape)
    verb = "raises" if z[iy, ix] > 0 else "lowers"
    text = (f"A higher {what} {verb} the {fit} most ({z[iy, ix]:+.3g} {per}) at "
            f"{_at(result, iy, ix)}")
    up, down = z > TINY, z < -TINY
    flat = np.abs(z) < 0.01 * np.max(np.abs(z))
    if flat.any():
        text += (f"; it makes almost no difference (under 1 % of that) in {_share(flat)} of "
                 f"the map, where {_where(result, flat)}")
    if up.any() and down.any():
        text += (f"; it lowers it in {_share(down)} of the map, where {_where(result, down)}, "
                 "and raises it elsewhere")
    else:
        verb = "lowers" if down.any() else "raises"
        text += (f"; elsewhere it {verb} it" if flat.any()
                 else f"; it {verb} it everywhere on the map")
    return text + " (policy held fixed)."


def _nearest(values: np.ndarray, v: float) -> int:
    return int(np.argmin(np.abs(values - v)))


def prey_sentence(result: MapResult, i: int, k: int) -> str:
    """When one prey is attacked across the map, by a healthy (k=0) or injured animal."""
    codes = result.when_codes[k, i]
    thresholds = result.when_threshold[k, i]
    found, counts = np.unique(codes, return_counts=True)
    order = np.argsort(-counts, kind="stable")
    parts = []
    for rank, pos in enumerate(order):
        code = int(found[pos])
        mask = codes == code
        part = f"{SENTENCE_WORDS[code]} in {_share(mask)} of the map"
        if code in (WHEN_LOW, WHEN_HIGH):
            t = thresholds[mask]
            side = "below" if code == WHEN_LOW else "above"
            span = (_pct(t.min()) if t.max() - t.min() < 0.005
                    else f"{100 * t.min():.0f}–{_pct(t.max())}")
            part += f" ({side} {span} of capacity)"
        if rank == 1:  # where the second pattern lies; the rest stay short
            part += f", where {_where(result, mask)}"
        parts.append(part)
    who = "a healthy" if k == 0 else "an injured"
    text = f"For {who} animal, {result.prey[i]} is attacked " + "; ".join(parts)
    sx, sy = result.study_x, result.study_y
    if np.isfinite(sx) and np.isfinite(sy) and _on_map(result):
        ix, iy = _nearest(result.x, sx), _nearest(result.y, sy)
        code = int(codes[iy, ix])
        here = SENTENCE_WORDS[code]
        if code in (WHEN_LOW, WHEN_HIGH):
            here += f" ({'below' if code == WHEN_LOW else 'above'} {_pct(thresholds[iy, ix])})"
        text += f". Near the study's own values: {here}"
    return text + "."


def _on_map(result: MapResult) -> bool:
    return (min(result.x[0], result.x[-1]) <= result.study_x <= max(result.x[0], result.x[-1])
            and min(result.y[0], result.y[-1]) <= result.study_y
            <= max(result.y[0], result.y[-1]))


def read_map(result: MapResult, group: str) -> list[str]:
    """Sentences on when each prey that matters is attacked, the value of hunting skill
    (and of the further input, when asked for) and the kills."""
    out = []
    req = result.request
    where = ""
    if np.isfinite(result.study_x) and np.isfinite(result.study_y):
        where = (f" The study itself has {req.x.words} = {result.study_x:.3g} and "
                 f"{req.y.words} = {result.study_y:.3g}"
                 + ("." if _on_map(result) else ", outside the map."))
    out.append(f"The map varies {req.x.words} from {req.x.start:g} to {req.x.stop:g} "
               f"({req.x.steps} values) and {req.y.words} from {req.y.start:g} to "
               f"{req.y.stop:g} ({req.y.steps} values) in scenario “{req.scenario}”." + where)
    focus = list(result.focus)
    for i in focus:
        out.append(prey_sentence(result, i, 0))
    for i in focus:
        if not np.array_equal(result.when_codes[0, i], result.when_codes[1, i]):
            out.append(prey_sentence(result, i, 1))
    out.append(gradient_sentence(result, hunting=True))
    if result.marginal_extra is not None:
        out.append(gradient_sentence(result))
    k = result.kills_per_year[group]
    per = "year" if result.currency == "breeding" else "season"
    lo = np.unravel_index(np.argmin(k), k.shape)
    hi = np.unravel_index(np.argmax(k), k.shape)
    out.append(f"Predicted {group} kills range from {k[lo]:.2g} per predator per {per} (at "
               f"{_at(result, *lo)}) to {k[hi]:.2g} (at {_at(result, *hi)}).")
    return out
