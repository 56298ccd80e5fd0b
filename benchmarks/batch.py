"""Benchmark of the batched entry point (run: ``python benchmarks/batch.py``).

Two workloads of the invented, illustrative demo study (``examples/harrow-vale.json``,
n = 100 energy levels, five prey, injuries on):

* a season-currency map of 21 x 21 cells (the demo switched to the season
  currency, 120 days, over its own map axes), through
  :func:`riskdiet.analysis.maps.make_map` inline and on two worker processes,
  against a loop of single season solves (:func:`riskdiet.core.solver.solve_season`
  and :func:`riskdiet.core.season_chain.season_outlook` per cell, timed on a sample and
  extrapolated, labelled so);
* 4,000 complete solves (1,000 draws x 4 scenarios, breeding currency: policy,
  value of hunting ability, long-run kills, the released cohort over 365 days,
  the classic diet) through :func:`riskdiet.analysis.cells.solve_cells` inline and
  on two worker processes.

Medians of ``--repeats`` runs and ratios are printed; the figures go into
DEVELOPERS.md. Nothing here is asserted by the test suite.
Targets (issue on speed): season map <= 5 s on 2 workers and >= 10x the loop;
4,000 complete solves <= 20 s on 2 workers.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import platform
import statistics
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

from riskdiet.analysis.cells import BASELINE_STAGE, Cell, InputChange, solve_cells
from riskdiet.analysis.maps import cell_inputs, make_map, request_from_settings
from riskdiet.core.grid import make_grid
from riskdiet.core.season_chain import season_outlook
from riskdiet.core.solver import solve_season
from riskdiet.io import load_study

DEMO = Path(__file__).resolve().parent.parent / "examples" / "harrow-vale.json"


def median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def season_study(size: int):
    study = load_study(DEMO)
    predator = dataclasses.replace(study.predator, currency="season", season_days=120)
    settings = study.settings
    x = settings.map_x.rsplit(":", 1)[0] + f":{size}"
    y = settings.map_y.rsplit(":", 1)[0] + f":{size}"
    return dataclasses.replace(study, predator=predator,
                               settings=dataclasses.replace(settings, map_x=x, map_y=y))


def draws(study, count: int, seed: int = 1) -> list[Cell]:
    """``count`` random draws of two inputs, every scenario on the same draws."""
    rng = np.random.default_rng(seed)
    ability = rng.uniform(0.5, 1.3, count)
    injury = rng.uniform(0.2, 0.5, count)
    return [Cell(sc.name, (InputChange(None, "hunting_ability", float(a), BASELINE_STAGE),
                           InputChange("wild boar", "injury_chance", float(q), BASELINE_STAGE)),
                 f"draw {i}")
            for i, (a, q) in enumerate(zip(ability, injury, strict=True))
            for sc in study.scenarios]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--draws", type=int, default=1000)
    parser.add_argument("--size", type=int, default=21)
    parser.add_argument("--sample", type=int, default=20)
    args = parser.parse_args()
    print(f"riskdiet batch benchmark (Python {platform.python_version()}, numpy {np.__version__}, "
          f"{os.cpu_count()} CPUs; load average before {os.getloadavg()[0]:.2f}; "
          f"median of {args.repeats} runs)\n")

    study = season_study(args.size)
    request = request_from_settings(study)
    cells = args.size * args.size
    with ProcessPoolExecutor(2) as pool:
        make_map(study, request, pool)  # warm the workers
        t_pool = median_time(lambda: make_map(study, request, pool), args.repeats)
    t_inline = median_time(lambda: make_map(study, request), args.repeats)
    rng = np.random.default_rng(2)
    sample = rng.choice(cells, size=min(args.sample, cells), replace=False)
    base = study.inputs_for(study.scenario(request.scenario))
    t0 = time.perf_counter()
    for c in sample:
        iy, ix = divmod(int(c), args.size)
        grid = make_grid(*cell_inputs(study, request, request.x.values[ix],
                                      request.y.values[iy], base))
        season_outlook(grid, solve_season(grid))
    per_cell = (time.perf_counter() - t0) / len(sample)
    loop = per_cell * cells
    print(f"Season map {args.size} x {args.size} ({cells} cells, 120 days, n = 100):")
    print(f"  inline            {t_inline:8.2f} s")
    print(f"  2 workers         {t_pool:8.2f} s   (target <= 5 s)")
    print(f"  loop of single solves, EXTRAPOLATED from {len(sample)} cells: {loop:8.2f} s "
          f"({1e3 * per_cell:.0f} ms a cell)")
    print(f"  speed-up: inline {loop / t_inline:.1f}x, 2 workers {loop / t_pool:.1f}x "
          "(target >= 10x)\n")

    demo = load_study(DEMO)
    demo = dataclasses.replace(demo, settings=dataclasses.replace(demo.settings, map_x=None,
                                                                  map_y=None))
    work = draws(demo, args.draws)
    with ProcessPoolExecutor(2) as pool:
        solve_cells(demo, work[:8], pool)
        t_pool = median_time(lambda: solve_cells(demo, work, pool, chunk=256), args.repeats)
    t_inline = median_time(lambda: solve_cells(demo, work), 1)
    print(f"{len(work)} complete solves ({args.draws} draws x {len(demo.scenarios)} scenarios, "
          "breeding, n = 100, cohort over 365 days):")
    print(f"  inline            {t_inline:8.2f} s   ({1e3 * t_inline / len(work):.2f} ms a solve)")
    print(f"  2 workers         {t_pool:8.2f} s   (target <= 20 s)")
    print(f"\nload average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
