"""Tests of the map figures and the map read in words.

References used below:
CIE 15 (CIELAB; CIE 1976 colour difference ΔE, about 2.3 just noticeable) and
IEC 61966-2-1 (sRGB), as in test_figures.py; a chroma C*ab below 3 reads as a
neutral grey (common practice). What the figures must show comes from the
issue that asked for them: one colour per prey in every figure and separate
schemes for scenarios and regimes, a marker at the study's own values, axis
labels in words, readable contour labels (at least 7 pt on a 6.7 in figure:
common practice for print), a gradient figure with a sentence when asked for.
Expected sentences below are worked by hand from synthetic values set in the test.
"""

from __future__ import annotations

import copy
import dataclasses
import itertools
import json

import matplotlib.colors as mcolors
import numpy as np
import pytest
from conftest import EXAMPLE
from test_figures import MACHADO_SEVERITY_1, cielab, linear_rgb

from riskdiet.analysis.map_reading import gradient_sentence, read_map
from riskdiet.analysis.maps import MapRequest, make_map, parse_axis
from riskdiet.report import figure_style as style
from riskdiet.report import map_figures as mf
from riskdiet.validation import build_study

X = "wild boar:encounter_share=0:0.8:5"
Y = "hunting_ability=0.5:1.5:3"


@pytest.fixture(scope="module")
def result():
    """A 5 x 3 map of the invented demo study (illustrative) on 24 levels, with a
    further gradient; the study sits at hunting ability 1 (on the map)."""
    raw = copy.deepcopy(json.loads(EXAMPLE.read_text(encoding="utf-8")))
    raw["predator"]["energy_levels"] = 24
    study = build_study(raw)
    req = MapRequest("baseline", parse_axis(X, study, "--x"), parse_axis(Y, study, "--y"),
                     ("wild boar", "energy_mj"))
    return make_map(study, req)


def _stars(ax):
    return [line for line in ax.get_lines() if line.get_marker() == "*"]


def test_every_map_panel_marks_the_study(result):
    """Each panel of every map figure has one star at the study's own values: the
    boar's share of all encounters (0.5 / (1.2 + 0.5 + 0.24 + 1.5 + 0.6), from the
    demo's encounters per day, the ewe's 12 km² a day x 0.02 per km²) and hunting
    ability 1, labelled "study"."""
    share = 0.5 / (1.2 + 0.5 + 12 * 0.02 + 1.5 + 0.6)
    assert result.study_x == pytest.approx(share)
    assert result.study_y == 1.0
    figures = mf.map_figures(result)
    assert len(figures) == 4
    for f in figures:
        panels = [ax for ax in f.figure.axes if ax.get_visible() and ax.get_label()
                  != "<colorbar>"]
        for ax in panels:
            stars = _stars(ax)
            assert len(stars) == 1, f.key
            assert stars[0].get_xdata()[0] == pytest.approx(share)
            assert stars[0].get_ydata()[0] == 1.0
            assert "study" in [t.get_text() for t in ax.texts]


def test_when_panels_are_the_prey_that_matter_in_their_own_colours(result):
    """One panel per risky, livestock or protected prey (wild boar, upland ewe,
    heath grouse in the demo), each with a band in that prey's colour of every
    other figure (its place in the study's list), and a key of the five
    categories in words."""
    fig = mf.when_figure(result)
    visible = [ax for ax in fig.axes if ax.get_visible()]
    conditions = len(mf.shown_conditions(result))
    assert len(visible) == 3 * conditions
    titles = [ax.get_title().split("\n")[0].split(" — ")[0] for ax in visible]
    assert titles[:3] == ["wild boar", "upland ewe", "heath grouse"]
    for ax, name in zip(visible, titles, strict=True):
        index = list(result.prey).index(name)
        bands = [p for p in ax.patches if p.get_gid() == f"prey:{name}"]
        assert mcolors.to_hex(bands[0].get_facecolor()) == style.prey_colour(index)
    key = fig.legends[0]
    assert [t.get_text().split(":")[0].split(" (")[0] for t in key.get_texts()] == [
        "never", "at all reserves", "only when reserves are low",
        "only when reserves are high", "other"]


def test_axis_labels_are_words_not_field_names(result):
    """Axis labels say what the axis is in words with units in words — never a
    field key with underscores or a bracketed unit."""
    for f in mf.map_figures(result):
        for ax in f.figure.axes:
            for label in (ax.get_xlabel(), ax.get_ylabel()):
                assert "_" not in label and "[" not in label, label
    assert result.request.x.label == "Wild boar: share of all encounters"
    assert result.request.y.label == "Hunting ability"


def test_contour_labels_are_readable(result):
    """Contour labels on the continuous maps are at least 7 pt with a white halo."""
    fig = mf.marginal_figure(result)
    ax = fig.axes[0]
    labels = [t for t in ax.texts if t.get_text() not in ("study",)]
    assert labels
    for t in labels:
        assert t.get_fontsize() >= 7
        assert t.get_path_effects()


def test_gradient_figure_only_when_asked(result):
    """The gradient figure is drawn, with the sentence in its caption, only when a
    further gradient is asked for."""
    keys = [f.key for f in mf.map_figures(result)]
    assert keys[-1] == "04-map-gradient-wild-boar-energy-mj"
    caption = mf.map_figures(result)[-1].caption
    assert gradient_sentence(result) in caption
    plain = dataclasses.replace(result, marginal_extra=None,
                                request=dataclasses.replace(result.request, gradient=None))
    assert [f.key for f in mf.map_figures(plain)] == keys[:3]
    assert not any("energy per capture" in s for s in read_map(plain, "livestock"))


def test_gradient_sentence_says_where_it_is_largest_and_where_the_sign_changes(result):
    """Synthetic values: z = share - 0.4 on shares 0, 0.2, 0.4, 0.6, 0.8 (every row
    alike). Worked by hand: largest in size at share 0 (-0.4, lowers); below zero
    at shares 0 and 0.2 (2 of 5 columns = 40 % of the map); zero at 0.4 (20 %)."""
    z = np.tile(result.x - 0.4, (len(result.y), 1))
    synthetic = dataclasses.replace(result, marginal_extra=z)
    text = gradient_sentence(synthetic)
    assert text.startswith("A higher energy per capture of wild boar lowers the chance of "
                           "reaching breeding condition most (-0.4 per MJ) at share of all "
                           "encounters of wild boar = 0")
    assert ("almost no difference (under 1 % of that) in 20 % of the map, where share of all "
            "encounters of wild boar is 0.4") in text
    assert ("it lowers it in 40 % of the map, where share of all encounters of wild boar is "
            "between 0 and 0.2, and raises it elsewhere") in text
    flat = dataclasses.replace(result, marginal_extra=np.zeros_like(z))
    assert "does not change" in gradient_sentence(flat)


def test_regime_colours_differ_from_every_prey_colour():
    """The when-attacked key never looks like a prey colour: every fill is at least
    20 CIE 1976 ΔE units from every prey colour (normal vision); two fills closer
    than 20 units after simulating protanopia, deuteranopia or tritanopia
    (Machado et al. 2009) carry different hatches."""
    for (fill, _), prey in itertools.product(style.REGIME_STYLE, style.PALETTE):
        assert np.linalg.norm(cielab(linear_rgb(fill)) - cielab(linear_rgb(prey))) >= 20
    for matrix in [np.eye(3), *map(np.array, MACHADO_SEVERITY_1.values())]:
        for (f1, h1), (f2, h2) in itertools.combinations(style.REGIME_STYLE, 2):
            d = np.linalg.norm(cielab(matrix @ linear_rgb(f1)) - cielab(matrix @ linear_rgb(f2)))
            if d < 20:
                assert h1 != h2, (f1, f2)


def test_scenarios_are_grey_and_prey_are_coloured():
    """Scenario fills and lines are neutral greys (chroma C*ab below 3), prey
    colours are not (chroma above 10), so a colour never means a scenario in one
    figure and a prey in another (CIELAB, CIE 15)."""
    def chroma(c):
        lab = cielab(linear_rgb(c))
        return float(np.hypot(lab[1], lab[2]))

    for grey in (*style.SCENARIO_GREYS, *style.SCENARIO_LINE_GREYS):
        assert chroma(grey) < 3
    for colour in style.PALETTE:
        assert chroma(colour) > 10
    assert style.scenario_bar_style(5)["facecolor"] in style.SCENARIO_GREYS
    assert style.scenario_line_style(2)["color"] in style.SCENARIO_LINE_GREYS


@pytest.fixture(scope="module")
def solved_demo():
    """The demo study (illustrative) on 24 levels solved whole, and a 3 x 3 map whose
    middle cell is the study's own values (forest deer energy 45 MJ, hunting ability 1)."""
    from riskdiet.analysis.study import solve

    raw = copy.deepcopy(json.loads(EXAMPLE.read_text(encoding="utf-8")))
    raw["predator"]["energy_levels"] = 24
    raw["settings"].pop("map_x", None)
    raw["settings"].pop("map_y", None)
    study = build_study(raw)
    req = MapRequest("baseline", parse_axis("forest deer:energy_mj=35:55:3", study, "--x"),
                     parse_axis("hunting_ability=0.5:1.5:3", study, "--y"))
    return solve(study), make_map(study, req)


def test_map_and_findings_read_the_study_alike(solved_demo):
    """At the study's own values the map's category of every prey and condition is
    the findings' attack pattern of the solved study (one reading, MODEL.md
    section 7 per prey), with the same threshold."""
    from riskdiet.analysis.findings import attack_pattern

    solved, surface = solved_demo
    assert (surface.study_x, surface.study_y) == (45.0, 1.0)
    base = solved.scenarios[0]
    kinds = {"never": "never", "all": "all_reserves", "below": "low_reserves",
             "above": "high_reserves", "mixed": "other"}
    from riskdiet.analysis.regimes import WHEN_KEYS
    for k, cond in enumerate(("healthy", "injured")):
        for i, name in enumerate(surface.prey):
            pattern = attack_pattern(base, name, cond)
            assert WHEN_KEYS[surface.when_codes[k, i, 1, 1]] == kinds[pattern.kind]
            t = surface.when_threshold[k, i, 1, 1]
            if pattern.kind == "below":
                assert t == pytest.approx(pattern.upper)
            elif pattern.kind == "above":
                assert t == pytest.approx(pattern.lower)


def test_a_prey_has_one_colour_and_scenarios_none_of_the_prey_colours(solved_demo):
    """The decision figure's bars of a prey have that prey's colour
    (prey_colour of its place in the study), the colour its map panel carries;
    the kills chart colours scenarios, in greys only."""
    from riskdiet.report import figures as figs

    solved, _ = solved_demo
    base = solved.scenarios[0]
    fig = figs.decision_figure(base)
    for i, name in enumerate(base.prey_names):
        bars = [c for c in fig.axes[0].collections if c.get_gid() == f"healthy:{name}"]
        for bar in bars:
            assert mcolors.to_hex(bar.get_facecolor()[0]) == style.prey_colour(i)
    kills = figs.kills_figure(solved)
    fills = {mcolors.to_hex(p.get_facecolor()) for p in kills.axes[0].patches}
    assert fills <= set(style.SCENARIO_GREYS)
    assert not fills & set(style.PALETTE)
