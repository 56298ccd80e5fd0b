"""Tests of the brief's figures: colours, what is drawn, reproducible files.

References used below:
Machado, G. M., Oliveira, M. M. & Fernandes, L. A. F. (2009) A physiologically-
based model for simulation of color vision deficiency. IEEE Transactions on
Visualization and Computer Graphics 15: 1291-1298 (simulation matrices for
severity 1.0, from memory; each row sums to 1, which the test checks).
IEC 61966-2-1 (sRGB transfer function and D65 primaries); CIE 15 (CIELAB,
CIE 1976 colour difference). W3C/ISO/IEC 15948 PNG specification (pHYs and
text chunks). MODEL.md sections 3 and 5 for what the figures must show.
"""

from __future__ import annotations

import itertools
import struct
import zlib

import numpy as np
import pytest
from conftest import INJURY_STUDY, injury_raw

from riskdiet.analysis.study import CONDITIONS, solve
from riskdiet.errors import OutputExistsError
from riskdiet.report import figure_style as style
from riskdiet.report import figures as figs
from riskdiet.validation import build_study

MACHADO_SEVERITY_1 = {
    "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
                   [-0.003882, -0.048116, 1.051998]],
    "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
                     [-0.011820, 0.042940, 0.968881]],
    "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
                   [0.004733, 0.691367, 0.303900]],
}
SRGB_TO_XYZ = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                        [0.0193, 0.1192, 0.9505]])
D65_WHITE = np.array([0.95047, 1.0, 1.08883])


def linear_rgb(hex_colour: str) -> np.ndarray:
    """sRGB hex colour to linear RGB (IEC 61966-2-1)."""
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def cielab(rgb_linear: np.ndarray) -> np.ndarray:
    """Linear RGB to CIELAB under D65 (CIE 15)."""
    t = (SRGB_TO_XYZ @ np.clip(rgb_linear, 0, 1)) / D65_WHITE
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


@pytest.fixture(scope="module")
def injury_result():
    """The invented three-prey injury study of conftest, with one extra scenario."""
    raw = injury_raw()
    raw["scenarios"] = [{"name": "more boar", "changes": [
        {"prey": "boar", "field": "encounters_per_day", "change": "scale", "value": 2}]}]
    return solve(build_study(raw))


@pytest.fixture(scope="module")
def season_result():
    """The same invented study in the season currency (30 days)."""
    raw = injury_raw(currency="season", season_days=30)
    raw["scenarios"] = [{"name": "healthier", "changes": [
        {"prey": None, "field": "injured_extra_mortality", "change": "set", "value": 0}]}]
    return solve(build_study(raw))


def test_machado_matrices_preserve_white():
    """The recalled simulation matrices map white to white: every row sums to 1
    (Machado et al. 2009, property of their Table 1 matrices)."""
    for matrix in MACHADO_SEVERITY_1.values():
        assert np.allclose(np.sum(matrix, axis=1), 1.0, atol=2e-6)


@pytest.mark.parametrize("deficiency", sorted(MACHADO_SEVERITY_1))
def test_palette_colours_stay_apart_for_colour_blind_readers(deficiency):
    """Every pair of palette colours differs by at least 20 CIE 1976 ΔE units
    after simulating full protanopia, deuteranopia or tritanopia (Machado et al.
    2009 matrices applied in linear sRGB, IEC 61966-2-1; CIELAB per CIE 15).
    20 units is far above the just-noticeable difference of about 2.3
    (common practice)."""
    matrix = np.array(MACHADO_SEVERITY_1[deficiency])
    labs = [cielab(matrix @ linear_rgb(c)) for c in style.PALETTE]
    smallest = min(np.linalg.norm(a - b) for a, b in itertools.combinations(labs, 2))
    assert smallest >= 20, smallest


def test_palette_reads_in_greyscale_with_hatching():
    """Printed in greyscale, two colours whose CIELAB lightness differs by less
    than 10 units look alike (common practice), so they must carry different
    hatches; and the first 72 (colour, hatch) styles are all different."""
    lightness = [cielab(linear_rgb(c))[0] for c in style.PALETTE]
    for i, j in itertools.combinations(range(len(style.PALETTE)), 2):
        if abs(lightness[i] - lightness[j]) < 10:
            assert style.prey_style(i)[1] != style.prey_style(j)[1], (i, j)
    styles = [style.prey_style(i) for i in range(72)]
    assert len(set(styles)) == 72


def test_hatch_lines_contrast_with_their_fill():
    """Hatch lines are light on dark fills and dark on light ones: the contrast
    ratio (L1 + 0.05)/(L2 + 0.05) of WCAG 2.1 between hatch and fill is at least
    3 for every palette colour."""
    def luminance(c):
        return float(linear_rgb(c) @ np.array([0.2126, 0.7152, 0.0722]))

    for colour in style.PALETTE:
        a, b = sorted([luminance(colour), luminance(style.hatch_colour(colour))])
        assert (b + 0.05) / (a + 0.05) >= 3, colour


def covered_levels(collection, n: int) -> set[int]:
    """Levels j whose reserves j/n lie inside one of the bars of a collection."""
    spans = [(p.vertices[:, 0].min(), p.vertices[:, 0].max()) for p in collection.get_paths()]
    return {j for j in range(n + 1) if any(lo < j / n < hi for lo, hi in spans)}


def test_decision_bars_are_exactly_the_attacked_levels(injury_result):
    """For every condition and prey the bars cover exactly the levels at which
    the optimal policy attacks it when met, read directly from the solver's
    priority array (priority >= 0; MODEL.md section 3)."""
    for s in injury_result.scenarios:
        fig = figs.decision_figure(s)
        bands = fig.axes[0]
        by_gid = {c.get_gid(): c for c in bands.collections}
        n = s.grid.n
        for k, cond in enumerate(CONDITIONS):
            for i, name in enumerate(s.prey_names):
                expected = {int(j) for j in np.flatnonzero(s.solution.priority[k, :, i] >= 0)}
                drawn = covered_levels(by_gid[f"{cond}:{name}"], n) if (
                    f"{cond}:{name}" in by_gid) else set()
                assert drawn == expected, (s.name, cond, name)


def test_fitness_curves_are_the_solution(injury_result):
    """The lower panel draws V(j, k) of the solver at every level (MODEL.md
    section 3) against reserves j/n."""
    s = injury_result.scenarios[0]
    curve = figs.decision_figure(s).axes[1]
    lines = {ln.get_gid(): ln for ln in curve.get_lines()}
    for k, cond in enumerate(CONDITIONS):
        line = lines[f"fitness:{cond}"]
        assert np.allclose(line.get_xdata(), np.arange(s.grid.n + 1) / s.grid.n)
        assert np.allclose(line.get_ydata(), s.solution.fitness[k])


def test_kill_bars_are_the_predicted_kills(injury_result):
    """Each bar's length is the predicted kills per predator per year of its
    scenario and prey (SteadyStateKills, MODEL.md section 5)."""
    ax = figs.kills_figure(injury_result, "breeding").axes[0]
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels == [p["name"] for p in INJURY_STUDY["prey"]]
    for s in injury_result.scenarios:
        bars = [p for p in ax.patches if p.get_gid() == f"kills:{s.name}"]
        widths = [b.get_width() for b in sorted(bars, key=lambda b: -b.get_y())]
        expected = [s.kills.kills_per_predator_per_year[n] for n in reversed(labels)]
        assert np.allclose(widths, expected)
    assert figs.kills_figure(injury_result, "season") is None


def test_kill_chart_sums_by_group_when_bars_would_crowd(monkeypatch, injury_result):
    """Above MAX_BARS bars the chart shows prey groups; each bar is the group's
    sum of kills (common practice for legible charts)."""
    monkeypatch.setattr(figs, "MAX_BARS", 3)
    ax = figs.kills_figure(injury_result, "breeding").axes[0]
    assert [t.get_text() for t in ax.get_yticklabels()] == ["wild"]
    base = injury_result.scenarios[0]
    bar = [p for p in ax.patches if p.get_gid() == f"kills:{base.name}"]
    assert bar[0].get_width() == pytest.approx(
        sum(base.kills.kills_per_predator_per_year.values()))


def test_season_figure_draws_survival_and_reserves(season_result):
    """Season currency: the lines are SeasonKills.survival_by_day and
    mean_reserves_fraction_by_day for days 0..T (MODEL.md section 5)."""
    fig = figs.season_figure(season_result)
    left, right = fig.axes[:2]
    for s in season_result.scenarios:
        surv = next(ln for ln in left.get_lines() if ln.get_gid() == f"survival:{s.name}")
        res = next(ln for ln in right.get_lines() if ln.get_gid() == f"reserves:{s.name}")
        assert np.allclose(surv.get_ydata(), s.season_kills.survival_by_day)
        assert np.allclose(res.get_ydata(), s.season_kills.mean_reserves_fraction_by_day)
        assert len(surv.get_xdata()) == s.grid.season_days + 1
    keys = [f.key for f in figs.brief_figures(season_result)]
    assert keys == ["01-decisions-baseline", "02-decisions-healthier", "03-kills-season",
                    "04-season-outlook"]


def png_chunks(data: bytes) -> dict[bytes, list[bytes]]:
    """Chunks of a PNG file by type (PNG specification, section 5)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    chunks: dict[bytes, list[bytes]] = {}
    pos = 8
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        crc = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])[0]
        assert zlib.crc32(kind + body) == crc
        chunks.setdefault(kind, []).append(body)
        pos += 12 + length
    return chunks


def test_png_is_reproducible_and_carries_only_its_resolution(injury_result):
    """Two renderings give the same bytes; the file has no creation-software or
    time chunk, and its pHYs chunk gives the resolution asked for in pixels per
    metre (200 dpi = 7874 px/m; PNG specification, pHYs and tEXt chunks)."""
    fig = figs.decision_figure(injury_result.scenarios[0])
    a, b = style.png_bytes(fig), style.png_bytes(fig)
    assert a == b
    chunks = png_chunks(a)
    assert b"tIME" not in chunks
    assert all(b"Software" not in t for t in chunks.get(b"tEXt", []))
    x, y, unit = struct.unpack(">IIB", chunks[b"pHYs"][0])
    assert unit == 1 and x == y == round(style.DPI_BRIEF / 0.0254)
    (width, height) = struct.unpack(">II", chunks[b"IHDR"][0][:8])
    w_in, h_in = fig.get_size_inches()
    assert (width, height) == (round(w_in * style.DPI_BRIEF), round(h_in * style.DPI_BRIEF))


def test_svg_is_reproducible_and_undated(injury_result):
    """SVG output has no date and fixed element ids, so two renderings are
    identical (common practice for reproducible documents)."""
    fig = figs.kills_figure(injury_result)
    a, b = style.svg_bytes(fig), style.svg_bytes(fig)
    assert a == b
    assert b"<svg" in a and b"<dc:date>" not in a


def test_write_figures_writes_png_and_svg_and_never_overwrites(tmp_path, injury_result):
    """Every figure is written as a 300 dpi PNG and an SVG; a second run without
    force refuses before writing anything and leaves the files as they were
    (common practice for tools that write files)."""
    brief_figs = figs.brief_figures(injury_result)
    written = figs.write_figures(brief_figs, tmp_path / "figs")
    names = sorted(p.name for p in written)
    assert names == sorted(f"{f.key}{ext}" for f in brief_figs for ext in (".png", ".svg"))
    png = (tmp_path / "figs" / f"{brief_figs[0].key}.png").read_bytes()
    x, _, _ = struct.unpack(">IIB", png_chunks(png)[b"pHYs"][0])
    assert x == round(300 / 0.0254)
    before = {p.name: p.read_bytes() for p in (tmp_path / "figs").iterdir()}
    (tmp_path / "figs" / names[0]).unlink()
    with pytest.raises(OutputExistsError):
        figs.write_figures(brief_figs, tmp_path / "figs")
    after = {p.name: p.read_bytes() for p in (tmp_path / "figs").iterdir()}
    assert names[0] not in after
    assert all(after[k] == before[k] for k in after)
    assert len(figs.write_figures(brief_figs, tmp_path / "figs", force=True)) == len(names)


def test_long_prey_names_are_shortened_on_axes_only():
    """Axis labels shorten names longer than 26 characters with an ellipsis;
    short names stay as they are (common practice; tables carry names in full)."""
    assert style.short_label("forest deer") == "forest deer"
    long = "prey type number 1 with a rather long descriptive name"
    short = style.short_label(long)
    assert len(short) <= 26 and short.endswith("…") and long.startswith(short[:-1].strip())
