"""``riskdiet fit`` in words: fitted values, shares, statistics and the verdict."""

from __future__ import annotations

from riskdiet.analysis.fit import FitResult


def fitted_value_words(f) -> str:
    """One fitted input in words, e.g. ``hunting_ability = 0.732 (95 % interval 0.547–0.963)``."""
    pieces = " or ".join(f"{p.low:.3g}–{p.high:.3g}" for p in f.interval.pieces)
    if not f.identified:
        return (f"{f.name}: cannot be identified from the records (the 95 % interval spans the "
                f"whole search range {f.search[0]:g}–{f.search[1]:g}; the likelihood is flat)")
    text = f"{f.name} = {f.value:.3g} (95 % profile-likelihood interval {pieces})"
    if f.interval.at_lower_bound:
        text += (f"; the records do not bound it from below: the interval reaches the search "
                 f"range's lower end {f.search[0]:g}")
    if f.interval.at_upper_bound:
        text += (f"; the records do not bound it from above: the interval reaches the search "
                 f"range's upper end {f.search[1]:g}")
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
        text = (f"G-test of fit: G = {g.g_williams:.2f} (Williams-corrected; uncorrected "
                f"{g.g:.2f}) on {g.df} degrees of freedom, p = {g.p_williams:.3g}")
        if r.p_bootstrap is not None:
            text += (f"; an expected count is below 5 ({g.smallest_expected:.2g}), so the "
                     f"parametric bootstrap p-value ({r.p_bootstrap:.3g}, 199 refitted "
                     "replicates) is the one to read")
        lines.append(text + ".")
    if r.aicc_state is not None:
        classic = ("infinite" if r.aicc_classic is None and r.aicc_reason
                   and "infinite" in r.aicc_reason else
                   "undefined" if r.aicc_classic is None else f"{r.aicc_classic:.1f}")
        lines.append(f"AICc: state-dependent model {r.aicc_state:.1f}, well-fed (classic) "
                     f"model {classic} (lower is better).")
    if r.aicc_reason:
        lines.append(r.aicc_reason)
    if r.concentration is not None:
        lines.append(f"Overdispersion: fitted Dirichlet-multinomial concentration "
                     f"{r.concentration:.3g} (small values mean compositions vary much more "
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
               f"(maximum log-likelihood {r.log_likelihood:.3f}):")
    for f in r.fitted:
        out.append(f"  {fitted_value_words(f)}")
        out.append(f"    searched {f.search[0]:.3g}–{f.search[1]:.3g} ({f.origin})")
    out.append("")
    if r.observed:
        width = max(len(n) for n in r.observed)
        out.append("Share of records, all compositions pooled:")
        out.append(f"  {'prey':<{width}}  observed  predicted")
        for name in r.observed:
            out.append(f"  {name:<{width}}  {100 * r.observed[name]:7.1f} %"
                       f"  {100 * r.predicted[name]:7.1f} %")
        out.append("")
        for label, observed, expected in r.by_composition:
            cells = ", ".join(f"{n} {int(o)} / {e:.1f}" for n, o, e in
                              zip(r.data.prey_names, observed, expected, strict=True))
            out.append(f"  {label}: observed / expected records: {cells}")
        out.append("")
    out += statistics_words(r)
    out.append("")
    out.append("Verdict: " + r.verdict)
    return "\n".join(out)
