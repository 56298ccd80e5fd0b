"""What one policy evaluation of a map cell costs in LAPACK (run: ``python benchmarks/band_lu.py``).

The 200 x 200 breeding map of ``benchmarks/map.py`` (invented, illustrative
three-prey study) evaluates every cell's policies exactly, each with one banded
LU factorisation of the cell's I - P (:mod:`riskdiet.core.banded`: 198 unknowns,
level-major). This script takes the systems of a few cells of that map under
their optimal policies and times, on one BLAS thread:

* LAPACK's banded LU (dgbtrf) of the same matrix stored with several band
  widths (the tightest band that holds it and wider ones), medians of
  ``--repeats`` x ``--calls`` calls;
* a two-column banded solve (dgbtrs), as each round solves for V and U;
* eight cells stacked into one block-diagonal band, factorised in one call;
* the dense LU (dgetrf) and :func:`numpy.linalg.solve` on a stack of 64 cells;
* how fast a neighbouring cell's factors, used as a preconditioner, would
  converge (spectral radius of I - M^-1 A);

and prints the floor these set for the map: cells x mean policy-iteration
rounds (from the batched solve of a sample of cells) x (factorisation + solves).
Nothing here is asserted by the test suite; timings depend on the machine.

Options: ``--repeats R`` (default 5), ``--calls C`` (default 300).

References
----------
.. [1] Anderson, E. et al. (1999). LAPACK Users' Guide, 3rd ed., SIAM
   (band storage, dgbtrf and dgbtrs).
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import time

import numpy as np
from map import illustrative_study, map_request
from scipy.linalg.lapack import dgbtrf, dgbtrs, dgetrf
from threadpoolctl import threadpool_limits

from riskdiet.analysis.maps import cell_inputs, map_cells
from riskdiet.core.banded import band_layout
from riskdiet.core.batch import solve_breeding_batch
from riskdiet.core.grid import attack_probabilities, make_grid, outcomes, stack_grids, targets
from riskdiet.model import BASELINE

MAP_CELLS = 40_000


def cell_systems(study, request, flats: list[int]):
    """Dense I - P of the map cells ``flats`` under their optimal policies, and their rounds."""
    base = study.inputs_for(study.scenario(BASELINE))
    grids = []
    for flat in flats:
        iy, ix = divmod(flat, request.x.steps)
        grids.append(make_grid(*cell_inputs(study, request, request.x.values[ix],
                                            request.y.values[iy], base)))
    grid = stack_grids(grids)
    solution = solve_breeding_batch(grid)
    tg = targets(grid)
    parts = outcomes(grid, tg, attack_probabilities(grid.encounter_prob, solution.priority))
    layout = band_layout(grid, parts)
    band = layout.assemble(parts)                       # (B, 2m, rows), band[b].T is LAPACK's
    dense = np.stack([from_band(band[b].T, layout.kl, layout.ku) for b in range(len(flats))])
    return dense, solution.iterations


def _band_index(n: int, kl: int, ku: int):
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    inside = (i - j <= kl) & (j - i <= ku)
    return i[inside], j[inside]


def from_band(ab: np.ndarray, kl: int, ku: int) -> np.ndarray:
    """The dense matrix held in LAPACK band storage ``ab``."""
    n = ab.shape[1]
    i, j = _band_index(n, kl, ku)
    a = np.zeros((n, n))
    a[i, j] = ab[kl + ku + i - j, j]
    return a


def to_band(a: np.ndarray, kl: int, ku: int) -> np.ndarray:
    """LAPACK band storage with room for the pivots' fill-in (Fortran order)."""
    n = a.shape[0]
    i, j = _band_index(n, kl, ku)
    ab = np.zeros((2 * kl + ku + 1, n), order="F")
    ab[kl + ku + i - j, j] = a[i, j]
    return ab


def tightest(a: np.ndarray) -> tuple[int, int]:
    rows, cols = np.nonzero(a)
    return int((rows - cols).max()), int((cols - rows).max())


def median_us(fn, prepare, repeats: int, calls: int) -> float:
    """Median over ``repeats`` of the mean time of ``calls`` calls of fn(prepared input) [µs]."""
    times = []
    for _ in range(repeats):
        inputs = [prepare() for _ in range(calls)]
        t0 = time.perf_counter()
        for x in inputs:
            fn(x)
        times.append((time.perf_counter() - t0) / calls * 1e6)
    return statistics.median(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=5, help="timing repeats (default 5)")
    parser.add_argument("--calls", type=int, default=300, help="calls per repeat (default 300)")
    args = parser.parse_args()
    study = illustrative_study()
    request = map_request(study, 200)
    print(f"python {platform.python_version()}, numpy {np.__version__}, {os.cpu_count()} CPUs, "
          f"{platform.machine()}; load average before: {os.getloadavg()[0]:.2f}")

    rng = np.random.default_rng(20261202)
    sample = sorted(rng.choice(len(map_cells(request)), 256, replace=False).tolist())
    dense, rounds = cell_systems(study, request, sample)
    mean_rounds = float(np.mean(rounds))
    print(f"policy-iteration rounds over {len(sample)} random cells of the map: mean "
          f"{mean_rounds:.2f} (from the default policy, MODEL.md section 3)")
    # the cell whose system has the narrowest band: LAPACK's time hardly follows the band
    widths = [tightest(a) for a in dense]
    pick = min(range(len(dense)), key=lambda b: widths[b][0] * sum(widths[b]))
    a = dense[pick]
    n = a.shape[0]
    kl0, ku0 = widths[pick]
    klw, kuw = max(w[0] for w in widths), max(w[1] for w in widths)
    print(f"\nthe sampled cell with the narrowest band: {n} unknowns, {np.count_nonzero(a)} "
          f"non-zeros, kl = {kl0}, ku = {ku0}; the batched solve stores every cell in the "
          f"widest band of its batch (here kl = {klw}, ku = {kuw})")
    with threadpool_limits(limits=1):
        print("dgbtrf of the same matrix in several bands (median µs; operations ~ kl (kl + ku)):")
        bands = sorted({(kl0, ku0), (max(kl0, 32), ku0), (klw, kuw), (max(klw, 48), kuw),
                        (max(klw, 64), kuw + 20)})
        lu_us = {}
        for kl, ku in bands:
            ab = to_band(a, kl, ku)
            lu_us[kl, ku] = median_us(lambda x, kl=kl, ku=ku: dgbtrf(x, kl, ku, overwrite_ab=1),
                                      lambda ab=ab: ab.copy(order="F"), args.repeats, args.calls)
            print(f"  kl = {kl:3d}, ku = {ku:3d}: {lu_us[kl, ku]:7.1f} µs  "
                  f"(operations x{kl * (kl + ku) / (kl0 * (kl0 + ku0)):.1f})")
        # from here on in the batched solve's band
        ab = to_band(a, klw, kuw)
        lu, piv, _ = dgbtrf(ab.copy(order="F"), klw, kuw)
        rhs = np.ones((n, 2))
        solve_us = median_us(lambda x: dgbtrs(lu, klw, kuw, x, piv), lambda: rhs,
                             args.repeats, args.calls)
        print(f"dgbtrs, two columns (kl = {klw}, ku = {kuw}): {solve_us:.1f} µs")
        stacked = to_band(np.kron(np.eye(8), a), klw, kuw)
        stack_us = median_us(lambda x: dgbtrf(x, klw, kuw, overwrite_ab=1),
                             lambda: stacked.copy(order="F"), args.repeats,
                             max(1, args.calls // 8)) / 8
        one_us = lu_us[klw, kuw]
        print(f"8 cells in one block-diagonal band: {stack_us:.1f} µs a cell "
              f"(x{stack_us / one_us:.2f} one cell alone)")
        dense_us = median_us(lambda x: dgetrf(x, overwrite_a=1),
                             lambda: np.asfortranarray(a), args.repeats, args.calls)
        stack = np.broadcast_to(a, (64, n, n)).copy()
        rhs64 = np.ones((64, n, 2))
        numpy_us = median_us(lambda x: np.linalg.solve(x, rhs64), lambda: stack,
                             args.repeats, max(1, args.calls // 30)) / 64
        print(f"dense: dgetrf {dense_us:.1f} µs; numpy.linalg.solve on a stack of 64 cells "
              f"{numpy_us:.1f} µs a cell")

    # a neighbouring cell's factors as a preconditioner: the iteration
    # x <- x + M^-1 (b - A x) contracts by the spectral radius of I - M^-1 A
    print("\na neighbouring cell's factors as a preconditioner (optimal policies):")
    for flat in (50 * 200 + 50, 100 * 200 + 120, 150 * 200 + 30):
        trio, _ = cell_systems(study, request, [flat, flat + 1, flat + request.x.steps])
        for name, other in (("next along x", trio[1]), ("next along y", trio[2])):
            rho = float(np.abs(np.linalg.eigvals(np.eye(n) - np.linalg.solve(trio[0], other)))
                        .max())
            steps = int(np.ceil(np.log(1e-13) / np.log(rho))) if 0 < rho < 1 else None
            print(f"  cell {flat}, {name}: contraction {rho:.1e} a step, "
                  + (f"{steps} steps of a solve and a product to 1e-13" if steps
                     else "does not converge"))

    per_round = one_us + 2 * solve_us   # V and U, then the transposed rows
    floor = MAP_CELLS * mean_rounds * per_round * 1e-6
    print(f"\nfloor of the {MAP_CELLS}-cell map from LAPACK alone: {MAP_CELLS} x "
          f"{mean_rounds:.2f} rounds x {per_round:.0f} µs = {floor:.1f} s of CPU, "
          f"{floor / 2:.1f} s on 2 perfectly shared workers (target 15 s for everything)")
    print(f"load average after: {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
