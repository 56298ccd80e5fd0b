"""Benchmark of two-input maps (run: ``python benchmarks/map.py``).

Times a SIZE x SIZE map (default 200 x 200 = 40,000 cells) of an invented,
illustrative three-prey study (derived from the demo: breeding currency,
breeding_threshold 1, 100 energy levels, injuries on), solved

* inline (one process, :func:`riskdiet.analysis.maps.make_map` without an executor), and
* with two worker processes (``concurrent.futures.ProcessPoolExecutor(2)``,
  4 bands of rows, as `riskdiet map --workers 2` uses),

and compares both with the plain approach of solving every cell on its own
(:func:`riskdiet.core.solver.solve_grid` on :func:`riskdiet.core.grid.make_grid`). That
loop over all cells takes many minutes, so it is timed on a fixed random
sample of cells and extrapolated (labelled as such). The sampled cells' results
are compared with the map's: fitness, marginal value of hunting ability and
the attack sets by level (through the regime detail, which names every change
of the attack set).

Nothing here is asserted by the test suite; timings depend on the machine.
Targets: at most 15 s with two workers at 200 x 200, and at least 5x faster
than the plain loop.

It also prints the CPU time per cell of the batched entry point alone
(:func:`riskdiet.analysis.cells.solve_cells` as maps call it) on sub-batches of
128 random cells of the map: the figure to compare on a busy machine.

Options: ``--size N`` (default 200), ``--sample K`` (cells of the plain loop,
default 400), ``--repeats R`` (map timings, default 1; medians are printed),
``--cpu-runs C`` (random sub-batches for the CPU per cell, default 5).
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import statistics
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

from riskdiet.analysis.cells import solve_cells
from riskdiet.analysis.maps import MapRequest, cell_inputs, make_map, map_cells, parse_axis
from riskdiet.analysis.regimes import classify
from riskdiet.core.grid import make_grid
from riskdiet.core.solver import solve_grid
from riskdiet.model import BASELINE
from riskdiet.validation import build_study

DEMO = Path(__file__).resolve().parent.parent / "examples" / "harrow-vale.json"
PREY = ("forest deer", "wild boar", "upland ewe")
TARGET_SECONDS = 15.0
TARGET_SPEEDUP = 5.0


def illustrative_study():
    """Three prey of the invented demo study, breeding currency, threshold 1 (illustrative)."""
    raw = json.loads(DEMO.read_text(encoding="utf-8"))
    raw["predator"].update(energy_levels=100, currency="breeding", breeding_threshold=1.0)
    raw["prey"] = [p for p in raw["prey"] if p["name"] in PREY]
    raw["scenarios"] = []
    raw["uncertainty"] = []
    raw["settings"] = {"study_name": "map benchmark (illustrative)"}
    study = build_study(raw)
    assert any(p.injury_chance > 0 for p in study.prey), "injuries must be on"
    return study


def map_request(study, size: int) -> MapRequest:
    return MapRequest(BASELINE,
                      parse_axis(f"wild boar:encounter_share=0:1:{size}", study, "--x"),
                      parse_axis(f"hunting_ability=0.2:1.6:{size}", study, "--y"))


def timed(fn, repeats: int):
    times, result = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), times, result


def cpu_per_cell(study, request, runs: int, cells: int = 128) -> list[float]:
    """CPU seconds per cell of solve_cells on ``runs`` random sub-batches of the map."""
    every = map_cells(request)
    rng = np.random.default_rng(20261202)
    out = []
    for _ in range(runs):
        pick = [every[i] for i in np.sort(rng.choice(len(every), cells, replace=False))]
        t0 = time.process_time()
        solve_cells(study, pick, keep_policy=True, cohort=False)
        out.append((time.process_time() - t0) / cells)
    return out


def regime_details(prey, grid, solution) -> tuple[str, str]:
    attacked = solution.living_priority(grid) >= 0
    risky = np.array([p.risky for p in prey])
    names = [p.name for p in prey]
    return tuple(classify(attacked[k], risky, names, grid.living / grid.n).detail
                 for k in (0, 1))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--size", type=int, default=200, help="cells per axis (default 200)")
    parser.add_argument("--sample", type=int, default=400,
                        help="cells solved one by one for the plain loop (default 400)")
    parser.add_argument("--repeats", type=int, default=1,
                        help="repeats of each map timing (default 1)")
    parser.add_argument("--cpu-runs", type=int, default=5,
                        help="random 128-cell sub-batches for the CPU per cell (default 5)")
    args = parser.parse_args()

    study = illustrative_study()
    request = map_request(study, args.size)
    cells = args.size * args.size
    print(f"riskdiet map benchmark: {args.size} x {args.size} = {cells} cells, "
          f"{study.predator.energy_levels} energy levels, prey {', '.join(PREY)} "
          "(invented, illustrative), breeding currency, injuries on")
    print(f"python {platform.python_version()}, numpy {np.__version__}, "
          f"{os.cpu_count()} CPUs, {platform.machine()}; load average before: "
          f"{os.getloadavg()[0]:.2f} (other work on the machine slows the timings)")

    # warm-up outside the timings: imports, caches, first LAPACK call
    make_map(study, map_request(study, 4))

    per_cell = cpu_per_cell(study, request, args.cpu_runs)
    print(f"\nsolve_cells alone, CPU per cell on {len(per_cell)} random sub-batches of 128 "
          f"cells: median {1e3 * statistics.median(per_cell):.2f} ms "
          f"({', '.join(f'{1e3 * t:.2f}' for t in per_cell)})")

    cpu0 = time.process_time()
    t_inline, runs, inline = timed(lambda: make_map(study, request), args.repeats)
    cpu_inline = (time.process_time() - cpu0) / len(runs)
    print(f"\n1 worker (inline, 1 band):         {t_inline:8.2f} s  "
          f"{cells / t_inline:9.0f} cells/s" + (f"  (median of {len(runs)})"
                                                 if len(runs) > 1 else "")
          + f"  CPU {cpu_inline:.1f} s")

    def with_pool():
        with ProcessPoolExecutor(2) as pool:
            return make_map(study, request, pool, bands=4)

    children0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t_pool, runs, pooled = timed(with_pool, args.repeats)
    children = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu_pool = ((children.ru_utime + children.ru_stime)
                - (children0.ru_utime + children0.ru_stime)) / len(runs)
    print(f"2 workers (process pool, 4 bands): {t_pool:8.2f} s  "
          f"{cells / t_pool:9.0f} cells/s" + (f"  (median of {len(runs)})"
                                                if len(runs) > 1 else "")
          + f"  CPU {cpu_pool:.1f} s in the workers  [wall time includes starting the pool]")
    print("(CPU seconds do not depend on other work on the machine; wall time does)")
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    workers = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"peak memory: {own:.0f} MiB in this process (inline map), {workers:.0f} MiB in the "
          "largest worker (target <= 2048 MiB)")
    same = (np.array_equal(inline.fitness_at_start, pooled.fitness_at_start)
            and np.array_equal(inline.regime_healthy_detail, pooled.regime_healthy_detail)
            and np.array_equal(inline.regime_injured_detail, pooled.regime_injured_detail))
    worst = np.abs(inline.fitness_at_start - pooled.fitness_at_start).max()
    print(f"2 workers vs inline: identical fitness and regimes in every cell: {same}; "
          f"max |fitness diff| {worst:.1e}")

    # plain loop on a fixed random sample, extrapolated
    rng = np.random.default_rng(20261201)
    sample = rng.choice(cells, size=min(args.sample, cells), replace=False)
    base = study.inputs_for(study.scenario(BASELINE))
    per_cell = []
    fit_diff = marg_diff = 0.0
    policy_mismatch = 0
    t0 = time.perf_counter()
    for flat in sample:
        iy, ix = divmod(int(flat), args.size)
        c0 = time.perf_counter()
        pred, prey = cell_inputs(study, request, request.x.values[ix], request.y.values[iy], base)
        grid = make_grid(pred, prey)
        sol = solve_grid(grid)
        per_cell.append(time.perf_counter() - c0)
        fit_diff = max(fit_diff, abs(sol.fitness_at_start - inline.fitness_at_start[iy, ix]))
        marg_diff = max(marg_diff, abs(sol.marginal_hunting_ability
                                       - inline.marginal_hunting_ability[iy, ix]))
        healthy, injured = regime_details(prey, grid, sol)
        policy_mismatch += (healthy != inline.regime_healthy_detail[iy, ix]
                            or injured != inline.regime_injured_detail[iy, ix])
    t_sample = time.perf_counter() - t0
    t_loop = sum(per_cell) / len(per_cell) * cells
    print(f"\nplain loop, solve_grid(make_grid(...)) per cell, timed on {len(sample)} random "
          f"cells: {t_sample:.2f} s, median {1e3 * statistics.median(per_cell):.1f} ms/cell, "
          f"mean {1e3 * sum(per_cell) / len(per_cell):.1f} ms/cell")
    print(f"plain loop over all {cells} cells, EXTRAPOLATED from the sample (mean): "
          f"{t_loop:8.1f} s  {cells / t_loop:9.0f} cells/s")
    print(f"\nspeed-up over the plain loop: 1 worker {t_loop / t_inline:5.1f}x, "
          f"2 workers {t_loop / t_pool:5.1f}x; 2 workers over 1 worker {t_inline / t_pool:4.2f}x")
    print(f"sampled cells vs map: max |fitness diff| {fit_diff:.1e}, max |marginal hunting "
          f"ability diff| {marg_diff:.1e}, cells whose attack sets differ: {policy_mismatch} "
          f"of {len(sample)}")
    print(f"largest Bellman residual over the map: {inline.max_residual:.1e}")
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    if args.size == 200:
        print(f"\ntargets: 2 workers <= {TARGET_SECONDS:.0f} s: "
              f"{'met' if t_pool <= TARGET_SECONDS else 'NOT met'} ({t_pool:.1f} s); "
              f">= {TARGET_SPEEDUP:.0f}x the plain loop: "
              f"{'met' if t_loop / t_pool >= TARGET_SPEEDUP else 'NOT met'} "
              f"({t_loop / t_pool:.1f}x)")


if __name__ == "__main__":
    main()
