"""Writing a map: its figures (PNG and SVG) and map.csv, one row per cell."""

from __future__ import annotations

import csv
from pathlib import Path

from riskdiet.io.atomic import check_writable, write_atomic
from riskdiet.maps import MapResult


def write_map_csv(result: MapResult, path: Path, force: bool = False) -> Path:
    """map.csv: columns x, y, regime_healthy, regime_injured, ..., kills_per_year_<group>."""
    def write(tmp: Path) -> None:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            out = csv.writer(fh)
            out.writerow(result.columns())
            out.writerows(result.rows())

    return write_atomic(Path(path), write, force)


def check_map_files(study, request, folder: str | Path, group: str | None,
                    force: bool = False) -> None:
    """Refuse, before any work, outputs of a map that exist already (without ``force``)."""
    from riskdiet.report.map_figures import figure_keys, first_unwanted_group

    folder = Path(folder)
    if group is None:
        _, prey = study.inputs_for(study.scenario(request.scenario))
        group = first_unwanted_group([p.group for p in prey])
    for name in ["map.csv"] + [f"{k}{s}" for k in figure_keys(group) for s in (".png", ".svg")]:
        check_writable(folder / name, force)


def write_map_files(result: MapResult, folder: str | Path, group: str, force: bool = False
                    ) -> list[Path]:
    """Write map.csv and the three map figures into ``folder``; refuse existing files first."""
    from riskdiet.report.figures import write_figures
    from riskdiet.report.map_figures import map_figures

    folder = Path(folder)
    figures = map_figures(result, group)
    check_writable(folder / "map.csv", force)
    for f in figures:
        for suffix in (".png", ".svg"):
            check_writable(folder / f"{f.key}{suffix}", force)
    written = [write_map_csv(result, folder / "map.csv", force)]
    written += write_figures(figures, folder, force)
    return written
