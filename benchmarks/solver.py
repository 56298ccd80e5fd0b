"""Benchmark of the state-dependent solver (run: ``python benchmarks/solver.py``).

Prints median solve times, how solve time grows with the number of energy
levels, and the speed-up over a plain per-state Python loop of the same
Bellman step, written the way textbooks code it. The study is invented and
illustrative (four made-up prey types), not species data. Nothing here is
asserted by the test suite; timings depend on the machine. Times are CPU time
of this process (``time.process_time``), which a busy machine disturbs less
than wall-clock time.

Options: ``--repeats N`` (default 11), ``--loop-seconds S`` (default 60; how
long the plain loop may run before its time to converge is extrapolated),
``--json-only`` (only the plain loop at n = 1000 and the work of ``solve
--json``, whole and by part).
"""

from __future__ import annotations

import argparse
import math
import platform
import statistics
import time

import numpy as np

from riskdiet.analysis.predictions import cohort_kills, steady_state_kills
from riskdiet.analysis.study import _numbers, grid_check, solve_scenario
from riskdiet.core import solver
from riskdiet.core.choice import choice_values, greedy_sets, set_values
from riskdiet.core.classic import classic_prey_model
from riskdiet.core.grid import make_grid, targets
from riskdiet.core.solver import solve_grid
from riskdiet.validation import build_study

TOLERANCE = 1e-10


def illustrative_study(levels: int, currency: str = "breeding", days: int = 120):
    """An invented four-prey study (illustrative values only), discretised."""
    study = build_study(illustrative_raw(levels, currency, days))
    return make_grid(study.predator, study.prey)


def illustrative_raw(levels: int, currency: str = "breeding", days: int = 120) -> dict:
    """The invented four-prey study in the JSON layout."""
    return {
        "predator": {
            "name": "benchmark predator (illustrative)", "reserve_capacity_mj": 100.0,
            "energy_levels": levels, "daily_cost_mj": 6.5, "background_mortality": 0.001,
            "injured_capture_factor": 0.5, "injured_extra_cost_mj": 1.5,
            "injured_extra_mortality": 0.003, "recovery_days": 8.0, "currency": currency,
            "breeding_threshold": 1.0, "season_days": days, "season_reserve_threshold": 0.6,
            "start_reserves": 0.5,
        },
        "prey": [
            {"name": "large browser", "encounters_per_day": 0.6, "energy_mj": 45.0,
             "handling_days": 2.0, "capture_success": 0.3, "injury_chance": 0.15,
             "injury_energy_mj": 8.0, "fatality_chance": 0.01},
            {"name": "medium grazer", "encounters_per_day": 0.5, "energy_mj": 21.5,
             "handling_days": 1.0, "capture_success": 0.45},
            {"name": "small mammal", "encounters_per_day": 2.5, "energy_mj": 1.3,
             "handling_days": 0.05, "capture_success": 0.5},
            {"name": "armoured forager", "encounters_per_day": 0.4, "energy_mj": 52.0,
             "handling_days": 2.5, "capture_success": 0.3, "injury_chance": 0.4,
             "injury_energy_mj": 12.0, "fatality_chance": 0.04},
        ],
    }


def median_time(fn, repeats: int) -> float:
    fn()  # warm-up: imports, caches
    times = []
    for _ in range(repeats):
        t0 = time.process_time()
        fn()
        times.append(time.process_time() - t0)
    return statistics.median(times)


# --------------------------------------------------------------------------- vectorised step

def vectorised_bellman(grid, tg, v_full):
    """One Bellman evaluation with the solver's own vectorised pieces."""
    caps = (grid.n_prey, *v_full.shape)
    u_full = 1.0 - v_full
    cv = choice_values(grid, tg, v_full, u_full, np.broadcast_to(v_full, caps),
                       np.broadcast_to(u_full, caps))
    return set_values(grid, cv, greedy_sets(cv))[0]


# --------------------------------------------------------------------------- plain loop

class PlainLoop:
    """The Bellman step of MODEL.md section 3, one state and one prey at a time."""

    def __init__(self, grid):
        self.top = grid.top
        self.cost = [float(x) for x in grid.cost]
        self.mort = [float(x) for x in grid.mortality]
        self.meet = [float(x) for x in grid.encounter_prob]
        self.gain = [float(x) for x in grid.gain]
        self.hand = [float(x) for x in grid.handling]
        self.succ = [[float(x) for x in row] for row in grid.capture]
        self.q = [float(x) for x in grid.injury_chance]
        self.loss = [float(x) for x in grid.injury_loss]
        self.f = [float(x) for x in grid.fatality]
        self.r = float(grid.recovery)
        self.prey = range(grid.n_prey)

    def interp(self, row, y):
        if y <= 0.0:
            return row[0]
        if y >= self.top:
            return row[self.top]
        low = math.floor(y)
        w = y - low
        return (1.0 - w) * row[low] + w * row[low + 1]

    def carry(self, v, k, y, days):
        """Value at reserves y after a step of ``days`` days, with recovery if injured."""
        if k == 0:
            return self.interp(v[0], y)
        rec = 1.0 - (1.0 - self.r) ** days
        return rec * self.interp(v[0], y) + (1.0 - rec) * self.interp(v[1], y)

    def state_value(self, v_next, v_caps, k, j):
        c, mu = self.cost[k], self.mort[k]
        ignore = self.carry(v_next, k, j - c, 1.0)
        worth = []
        for i in self.prey:
            h = self.hand[i]
            s = self.succ[k][i]
            won = self.carry(v_caps[i], k, j + self.gain[i] - c * (1.0 + h), 1.0 + h)
            won *= (1.0 - mu) ** h
            hurt = self.interp(v_next[1], j - c - self.loss[i])
            failed = self.q[i] * hurt + (1.0 - self.q[i]) * ignore
            value = (1.0 - self.f[i]) * (s * won + (1.0 - s) * failed)
            if value > ignore + 1e-12 * max(1.0, ignore):
                worth.append((value, i))
        worth.sort(key=lambda t: -t[0])  # stable: ties keep listing order
        total, none_better = ignore, 1.0
        for value, i in worth:
            total += self.meet[i] * none_better * (value - ignore)
            none_better *= 1.0 - self.meet[i]
        return (1.0 - mu) * total

    def sweep(self, v):
        """One value-iteration sweep of the breeding currency (Jacobi: reads the old V)."""
        new = [row[:] for row in v]
        caps = [v] * len(self.prey)
        for k in (0, 1):
            for j in range(1, self.top):
                new[k][j] = self.state_value(v, caps, k, j)
        return new

    def season(self, days, terminal):
        """Backward induction over the season, one day at a time."""
        values = [None] * (days + 1)
        values[days] = [list(terminal), list(terminal)]
        for t in range(days - 1, -1, -1):
            caps = [values[min(t + 1 + int(h), days)] for h in self.hand]
            row = [[0.0] * (self.top + 1), [0.0] * (self.top + 1)]
            for k in (0, 1):
                for j in range(1, self.top + 1):
                    row[k][j] = self.state_value(values[t + 1], caps, k, j)
            values[t] = row
        return values[0]


def loop_to_convergence(grid, target, budget):
    """Jacobi value iteration from V = 0 until within TOLERANCE of ``target``.

    Returns (seconds per sweep, sweeps, seconds, extrapolated) where
    extrapolated is True when the budget ran out and the remaining sweeps were
    estimated from the observed geometric rate of convergence.
    """
    loop = PlainLoop(grid)
    v = [[0.0] * (grid.top + 1) for _ in range(2)]
    v[0][grid.top] = v[1][grid.top] = 1.0
    errors, start, sweeps = [], time.process_time(), 0
    while True:
        v = loop.sweep(v)
        sweeps += 1
        err = float(np.max(np.abs(np.array(v)[:, 1:grid.top] - target[:, 1:grid.top])))
        errors.append(err)
        elapsed = time.process_time() - start
        if err < TOLERANCE:
            return elapsed / sweeps, sweeps, elapsed, False
        if elapsed > budget and sweeps >= 20:
            rate = (errors[-1] / errors[-11]) ** 0.1
            more = math.log(TOLERANCE / err) / math.log(rate) if 0 < rate < 1 else math.inf
            total = sweeps + math.ceil(more)
            return elapsed / sweeps, total, elapsed / sweeps * total, True


# --------------------------------------------------------------------------- report

def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=11)
    parser.add_argument("--loop-seconds", type=float, default=60.0)
    parser.add_argument("--json-only", action="store_true",
                        help="only the plain loop at n = 1000 and the `solve --json` work")
    args = parser.parse_args()
    if args.json_only:
        grid = illustrative_study(1000)
        _, _, loop_1000, _ = loop_to_convergence(grid, solve_grid(grid).fitness,
                                                 args.loop_seconds)
        json_work(max(5, args.repeats), loop_1000)
        return
    print(f"riskdiet solver benchmark  (Python {platform.python_version()}, numpy "
          f"{np.__version__}, {platform.machine()}; median of {args.repeats} runs)")
    print("Study: invented 4-prey example (illustrative), breeding threshold = capacity.\n")

    cases = [("breeding", 100, illustrative_study(100)),
             ("breeding", 1000, illustrative_study(1000)),
             ("season 120 d", 100, illustrative_study(100, "season", 120))]
    print(f"{'case':<14}{'n':>6}{'unknowns':>10}{'solve [ms]':>12}{'goal [ms]':>11}"
          f"{'rounds':>8}  linear solver")
    solved = {}
    for label, n, grid in cases:
        sol = solve_grid(grid)
        solved[label, n] = sol
        t = median_time(lambda grid=grid: solve_grid(grid), args.repeats)
        target = {("breeding", 100): 10, ("breeding", 1000): 100, ("season 120 d", 100): 50}
        print(f"{label:<14}{n:>6}{2 * grid.n_living:>10}{1e3 * t:>12.2f}"
              f"{'<= ' + str(target[label, n]):>11}{sol.iterations:>8}  {sol.linear_solver}")

    sizes = [100, 200, 400, 800, 1600]
    paths = {"default": solver.DIRECT_LIMIT, "sparse LU only": 10**9, "BiCGSTAB first": 0}
    growth = {}
    for path, limit in paths.items():
        solver.DIRECT_LIMIT = limit
        try:
            growth[path] = [median_time(lambda g=illustrative_study(n): solve_grid(g),
                                        max(3, args.repeats // 2)) for n in sizes]
        finally:
            solver.DIRECT_LIMIT = paths["default"]
    print(f"\nGrowth with n (breeding; default = sparse LU up to {paths['default']} unknowns, "
          "then BiCGSTAB)")
    print(f"{'linear solver':<16}" + "".join(f"{'n=' + str(n):>11}" for n in sizes)
          + "   fit: time ~ n^k")
    for path, times in growth.items():
        slope, _ = np.polyfit(np.log(sizes), np.log(times), 1)
        print(f"{path:<16}" + "".join(f"{_ms(t):>11}" for t in times) + f"   k = {slope:.2f}")

    print("\nPlain per-state Python loop vs vectorised numpy (same equations)")
    print(f"{'case':<14}{'n':>6}{'loop sweep':>12}{'numpy step':>12}{'ratio':>7}"
          f"{'loop total':>12}{'solve':>10}{'ratio':>8}  loop total is")
    for label, n, grid in cases:
        sol = solved[label, n]
        tg = targets(grid)
        if grid.currency == "breeding":
            v_full = sol.fitness[:, :grid.top + 1].copy()
            per_sweep, sweeps, loop_total, extrapolated = loop_to_convergence(
                grid, sol.fitness, args.loop_seconds)
            note = (f"{sweeps} Jacobi sweeps to within 1e-10 of the solver's fitness"
                    + (" (EXTRAPOLATED from the observed convergence rate)"
                       if extrapolated else ""))
        else:
            days = grid.season_days
            v_full = sol.fitness_by_day[1]
            t0 = time.process_time()
            loop_v0 = PlainLoop(grid).season(days, sol.fitness_by_day[days, 0])
            loop_total = time.process_time() - t0
            per_sweep = loop_total / days
            gap = float(np.max(np.abs(np.array(loop_v0) - sol.fitness)))
            note = f"{days} backward days (exact; max gap to solver {gap:.1e})"
        t_vec = median_time(lambda g=grid, tg=tg, v=v_full: vectorised_bellman(g, tg, v),
                            args.repeats)
        t_solve = median_time(lambda g=grid: solve_grid(g), max(3, args.repeats // 2))
        print(f"{label:<14}{n:>6}{_ms(per_sweep):>12}{_ms(t_vec):>12}"
              f"{per_sweep / t_vec:>7.0f}{loop_total:>10.2f} s{_ms(t_solve):>10}"
              f"{loop_total / t_solve:>8.0f}  {note}")
        if label == "breeding" and n == 1000:
            loop_1000 = loop_total
    print("\nloop sweep: one Bellman sweep over all states, scalar Python; numpy step: "
          "solver.step_values + ranking + attack probabilities; solve: whole exact solve.")

    json_work(max(5, args.repeats), loop_1000)


def json_parts(repeats: int) -> dict[str, float]:
    """Median seconds of each part of `solve --json` for one scenario (n = 1000)."""
    study = build_study(illustrative_raw(1000))
    scenario = study.scenarios[0]
    predator, prey = study.inputs_for(scenario)
    horizon = study.settings.horizon_days
    grid = make_grid(predator, prey)
    sol = solve_grid(grid)
    numbers = _numbers(predator, prey, horizon)
    classic = (lambda p=prey, r=predator, g=grid: classic_prey_model(
        [x.name for x in p], [x.encounters(r) for x in p], [x.energy_mj for x in p],
        [x.handling_days for x in p], g.capture[0], [x.fatality_chance for x in p],
        r.background_mortality, r.effective_daily_cost_mj))
    parts = {
        "whole": lambda: solve_scenario(study, scenario),
        "policy solve": lambda: solve_grid(grid),
        "long-run kills": lambda: steady_state_kills(predator, prey, grid, sol),
        "cohort 365 d": lambda: cohort_kills(predator, prey, grid, sol, horizon),
        "classic": classic,
        "grid check": lambda: grid_check(predator, prey, horizon, numbers),
    }
    return {name: median_time(fn, repeats) for name, fn in parts.items()}


def json_work(repeats: int, loop_1000: float) -> None:
    """Everything `riskdiet solve --json` computes for a scenario: policy, marginal value,
    long-run kills and lifetimes, the released cohort over 365 days, the classic model
    and the grid check (a second solve at n/2), whole and by part."""
    times = json_parts(repeats)
    t_whole = times.pop("whole")
    rest = t_whole - sum(times.values())
    print(f"\nWhole scenario as `solve --json` computes it, n = 1000, 4 prey, injuries: "
          f"{_ms(t_whole)}; the plain loop's policy solve alone takes {loop_1000:.2f} s: "
          f"{loop_1000 / t_whole:.0f}x (target >= 20x)")
    print("  by part: " + ", ".join(f"{name} {_ms(t)}" for name, t in times.items())
          + f", the rest (names, results) {_ms(rest)}")


def _ms(seconds: float) -> str:
    return f"{1e3 * seconds:.2f} ms" if seconds < 1 else f"{seconds:.2f} s"


if __name__ == "__main__":
    main()
