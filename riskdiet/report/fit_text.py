"""``riskdiet fit`` in words: fitted values, shares, statistics and the verdict."""

from __future__ import annotations

from riskdiet.analysis.fit import FitResult
from riskdiet.analysis.glossary import input_words
from riskdiet.analysis.wording import number, percent, probability, value


def fitted_value_words(f) -> str:
    """One fitted input in words, e.g. ``hunting_ability = 0.732 (95 % interval 0.547–0.963)``."""
    pieces = " or ".join(f"{value(p.low, 3)}–{value(p.high, 3)}" for p in f.interval.pieces)
    name = input_words(f.name)
    if not f.identified:
        return (f"{name}: cannot be identified from the records (the 95 % interval spans the "
                f"whole search range {value(f.search[0])}–{value(f.search[1])}; the likelihood "
                "is flat)")
    text = f"{name} = {value(f.value, 3)} (95 % profile-likelihood interval {pieces})"
    if f.interval.at_lower_bound:
        text += (f"; the records do not bound it from below: the interval reaches the search "
                 f"range's lower end {value(f.search[0])}")
    if f.interval.at_upper_bound:
        text += (f"; the records do not bound it from above: the interval reaches the search "
                 f"range's upper end {value(f.search[1])}")
    if len(f.interval.pieces) > 1:
        text += " (the interval falls apart where the predator's decisions switch)"
    return text


def statistics_words(r: FitResult) -> list[str]:
    """The fit statistics as sentences."""
    lines = []
    g = r.g_test
    if g is None:
        lines.append(r.g_test_reason or "No G-test.")
    else:
        text = (f"G-test of fit: G = {number(g.g_williams)} (Williams-corrected; uncorrected "
                f"{number(g.g)}) on {g.df} degrees of freedom, p = "
                f"{probability(g.p_williams, 3)}")
        if r.p_bootstrap is not None:
            text += (f"; an expected count is below 5 ({number(g.smallest_expected, 2)}), so "
                     f"the parametric bootstrap p-value ({probability(r.p_bootstrap, 3)}, 199 "
                     "refitted "
                     "replicates) is the one to read")
        lines.append(text + ".")
    if r.aicc_state is not None:
        classic = ("infinite" if r.aicc_classic is None and r.aicc_reason
                   and "infinite" in r.aicc_reason else
                   "undefined" if r.aicc_classic is None else number(r.aicc_classic, 4))
        lines.append(f"AICc: state-dependent model {number(r.aicc_state, 4)}, well-fed (classic) "
                     f"model {classic} (lower is better).")
    if r.aicc_reason:
        lines.append(r.aicc_reason)
    if r.concentration is not None:
        lines.append(f"Overdispersion: fitted Dirichlet-multinomial concentration "
                     f"{number(r.concentration)} (small values mean compositions vary much more "
                     "than chance; the multinomial is the limit of large values).")
    return lines


def fit_summary(r: FitResult) -> str:
    """The readable output of ``riskdiet fit``."""
    out = []
    for h in r.homogeneity:
        out.append("Before fitting: " + h.words)
    if r.homogeneity:
        out.append("")
    out.append(f"Fitted to {r.data.observations} records "
               f"(maximum log-likelihood {number(r.log_likelihood, 4)}):")
    for f in r.fitted:
        out.append(f"  {fitted_value_words(f)}")
        out.append(f"    searched {value(f.search[0], 3)}–{value(f.search[1], 3)} ({f.origin})")
    out.append("")
    if r.observed:
        width = max(len(n) for n in r.observed)
        out.append("Share of records, all compositions pooled:")
        out.append(f"  {'prey':<{width}}  observed  predicted")
        for name in r.observed:
            out.append(f"  {name:<{width}}  {percent(r.observed[name], 1):>8}"
                       f"  {percent(r.predicted[name], 1):>9}")
        out.append("")
        for label, observed, expected in r.by_composition:
            cells = ", ".join(f"{n} {int(o)} / {number(e, floor=0.1)}" for n, o, e in
                              zip(r.data.prey_names, observed, expected, strict=True))
            out.append(f"  {label}: observed / expected records: {cells}")
        out.append("")
    out += statistics_words(r)
    out.append("")
    out.append("Verdict: " + r.verdict)
    return "\n".join(out)
