"""The brief's *Maps* section, drawn when the study's settings ask for a map."""

from __future__ import annotations

from riskdiet.analysis.map_reading import read_map
from riskdiet.report.layout import esc
from riskdiet.report.map_figures import default_group
from riskdiet.report.sections import MAPS, Builder


def map_section(b: Builder) -> None:
    """Heading, a paragraph that reads the map in words, and the three map figures."""
    surface = b.result.map
    req = surface.request
    b.heading(MAPS)
    b.para(
        "A map repeats the whole calculation over a grid of two inputs while everything else "
        f"stays as in scenario “{esc(req.scenario)}”: {esc(req.x.words)} across, "
        f"{esc(req.y.words)} up; a star marks the study's own values. It shows when each prey "
        "that matters to the plan (risky prey, livestock and protected groups) is attacked — "
        "never, at all reserves, only when reserves are low or only when they are high, read "
        "from low to high reserves, the same reading as the findings — where better hunting "
        "would pay, and how the predicted kills respond. The full sequence of attacked prey "
        "in every cell is in the results workbook's Map sheet (and map.csv).")
    group = default_group(surface)
    lines = read_map(surface, group)
    # when each prey is attacked in one paragraph, the values of skill and the kills in another
    split = next((k for k, line in enumerate(lines) if line.startswith("A higher")), len(lines))
    b.para(" ".join(esc(line) for line in lines[:split]))
    if lines[split:]:
        b.para(" ".join(esc(line) for line in lines[split:]))
    for key in [k for k in b.figure_order if "-map-" in k]:
        b.figure(key)
    b.para(f"All {surface.x.size * surface.y.size:,} cells passed the solver's accuracy checks "
           "(the technical appendix gives the largest residual).", b.s.small)
