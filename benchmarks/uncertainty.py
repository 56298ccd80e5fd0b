"""Benchmark of the uncertainty analysis (run: ``python benchmarks/uncertainty.py``).

Two targets of issue 12, on the invented, illustrative demo study (n = 100
energy levels, 5 prey, 4 scenarios, 6 uncertain inputs):

1. propagation: 1,000 Latin hypercube draws x 4 scenarios (4,000 complete solves
   with long-run and cohort kills), without Sobol indices, on 2 worker
   processes -- target at most 30 s;
2. Sobol indices on the baseline with N = 1024 (8,192 solves) on 2 workers --
   target at most 90 s.

Each is also timed inline (1 process) for the ratio. Medians of ``--repeats``
runs are printed with their ratios to the targets; the numbers of 1 and 2
workers are checked to be identical. Nothing here is asserted by the test
suite; timings depend on the machine.

Options: ``--draws N`` (default 1000), ``--sobol-n N`` (default 1024),
``--repeats R`` (default 1), ``--skip-inline``.
"""

from __future__ import annotations

import argparse
import platform
import statistics
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

from riskdiet.analysis.uncertainty import (
    BASELINE,
    _ranges,
    draw_cells,
    outcome_matrix,
    run_uncertainty,
    sobol_outcomes,
    solve_all,
    study_goal,
)
from riskdiet.core.stats.sensitivity import sobol_analysis
from riskdiet.io.load import load_study

DEMO = Path(__file__).resolve().parent.parent / "examples" / "harrow-vale.json"
TARGET_PROPAGATION = 30.0
TARGET_SOBOL = 90.0


def propagation(study, draws: int, executor):
    """Draws x scenarios without Sobol indices or elasticities."""
    t = time.perf_counter()
    result = run_uncertainty(study, draws=draws, executor=executor, sobol=False)
    return time.perf_counter() - t, result


def sobol(study, n: int, executor):
    """Sobol indices alone on the baseline: N (d + 2) solves plus the bootstrap."""
    goal = study_goal(study)
    outcomes = sobol_outcomes(study, goal)

    def model(x):
        cells = draw_cells(study, x.T, BASELINE, "Sobol point")
        return outcome_matrix(study, outcomes, solve_all(study, cells, executor))

    t = time.perf_counter()
    analysis = sobol_analysis(model, _ranges(study), n, study.settings.seed)
    return time.perf_counter() - t, analysis


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--draws", type=int, default=1000)
    parser.add_argument("--sobol-n", type=int, default=1024)
    parser.add_argument("--repeats", type=int, default=1)
    parser.add_argument("--skip-inline", action="store_true")
    args = parser.parse_args()
    study = load_study(DEMO)
    assert all(u.scenario is None for u in study.uncertainty)
    print(f"machine: {platform.processor() or platform.machine()}, python "
          f"{platform.python_version()}")
    print(f"demo: n = {study.predator.energy_levels}, {len(study.prey)} prey, "
          f"{len(study.scenarios)} scenarios, {len(study.uncertainty)} uncertain inputs")
    rows = []
    with ProcessPoolExecutor(2) as pool:
        for name, func, size, target in (
                ("propagation", propagation, args.draws, TARGET_PROPAGATION),
                ("Sobol", sobol, args.sobol_n, TARGET_SOBOL)):
            two, one = [], []
            r2 = r1 = None
            for _ in range(args.repeats):
                t, r2 = func(study, size, pool)
                two.append(t)
                if not args.skip_inline:
                    t, r1 = func(study, size, None)
                    one.append(t)
            if r1 is not None:
                same = (r1.to_dict() == r2.to_dict()) if name == "propagation" else (r1 == r2)
                print(f"{name}: 1 and 2 workers give identical numbers: {same}")
            med2 = statistics.median(two)
            solves = (size * len(study.scenarios) if name == "propagation"
                      else size * (len(study.uncertainty) + 2))
            row = (f"{name:12s} {solves:6d} solves  2 workers {med2:7.1f} s "
                   f"(target {target:.0f} s, ratio {med2 / target:.2f}, "
                   f"{'met' if med2 <= target else 'MISSED'})")
            if one:
                med1 = statistics.median(one)
                row += f"  1 worker {med1:7.1f} s  speed-up {med1 / med2:.2f}"
            rows.append(row)
            print(row, flush=True)
    print("\n".join(["", "summary:", *rows]))


if __name__ == "__main__":
    main()
