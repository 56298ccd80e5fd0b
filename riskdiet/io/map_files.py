"""Writing a map: its figures (PNG and SVG) and map.csv, one row per cell."""

from __future__ import annotations

import csv
from pathlib import Path

from riskdiet.analysis.maps import MapResult
from riskdiet.io.atomic import OutputSet, check_writable, write_atomic


def write_map_csv(result: MapResult, path: Path, force: bool = False, outputs=None) -> Path:
    """map.csv, one row per cell: the two axis columns named after their inputs (e.g.
    ``wild boar:encounter_share``, ``hunting_ability``), the regimes with their detailed
    sequences, ``when_attacked_<condition>:<prey>`` and ``reserve_threshold_<condition>:<prey>``
    for every prey, fitness, marginal values and kills by group (README, "Maps")."""
    def write(tmp: Path) -> None:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            out = csv.writer(fh)
            out.writerow(result.columns())
            out.writerows(result.rows())

    return write_atomic(Path(path), write, force, outputs=outputs)


def map_file_paths(study, request, folder: str | Path, group: str | None) -> list[Path]:
    """map.csv and the figure files a map writes into ``folder``."""
    from riskdiet.report.map_figures import figure_keys, first_unwanted_group

    folder = Path(folder)
    if group is None:
        _, prey = study.inputs_for(study.scenario(request.scenario))
        group = first_unwanted_group([p.group for p in prey])
    return [folder / "map.csv"] + [folder / f"{k}{s}"
                                   for k in figure_keys(group, gradient=request.gradient)
                                   for s in (".png", ".svg")]


def check_map_files(study, request, folder: str | Path, group: str | None,
                    force: bool = False, outputs: OutputSet | None = None) -> None:
    """Refuse, before any work, outputs of a map that exist already (without ``force``) or
    cannot be created; with ``outputs``, plan them in that set."""
    for path in map_file_paths(study, request, folder, group):
        if outputs is not None:
            outputs.plan(path)
        else:
            check_writable(path, force)


def write_map_files(result: MapResult, folder: str | Path, group: str, force: bool = False,
                    outputs: OutputSet | None = None) -> list[Path]:
    """Write map.csv and the map figures into ``folder``, together or not at all."""
    from riskdiet.report.figures import write_figures
    from riskdiet.report.map_figures import map_figures

    folder = Path(folder)
    figures = map_figures(result, group)
    own = outputs is None
    outputs = outputs or OutputSet(force)
    try:
        written = [write_map_csv(result, folder / "map.csv", force, outputs)]
        written += write_figures(figures, folder, force, outputs)
        return outputs.commit() if own else written
    finally:
        if own:
            outputs.discard()
