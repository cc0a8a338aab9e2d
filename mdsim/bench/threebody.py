"""Axilrod-Teller partner lists: the all-pairs build against the linked-cell build.

Random atoms at rho* = 0.5 (uniform in the box, seed 1) for N = 500, 2000
and 8000, cut-off rc = min(3, L/4) sigma (500 atoms: L = 10 sigma, so
rc = 2.5).  Per N: the time of one build of the partner lists by all
pairs (:func:`mdsim.engine.threebody.partner_lists`, O(N^2)) and by linked
cells (:func:`mdsim.engine.threebody.partner_lists_cells`, O(N)), their
ratio, whether the two lists agree entry for entry, the build that
:func:`mdsim.engine.threebody.build_partner_lists` picks (cells from
``CELL_LIST_MIN_ATOMS`` atoms on), and the triplet sum over the lists
(:func:`mdsim.engine.threebody.triplet_energy`) for scale.  Times are
medians of repeated calls (at least 0.3 s of calls, compiled first); on a
shared machine they are a guide, not a test.

Run ``python -m mdsim.bench.threebody``.
"""
import sys
import time

import numpy as np

from mdsim.engine.mc_cells import cell_grid
from mdsim.engine.threebody import (CELL_LIST_MIN_ATOMS, partner_lists, partner_lists_cells,
                                    triplet_energy)

DENSITY = 0.5
SIZES = (500, 2000, 8000)
CUTOFF = 3.0


def _median_ms(fn, least_s=0.3):
    fn()
    times = []
    start = time.perf_counter()
    while time.perf_counter() - start < least_s or len(times) < 3:
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * float(np.median(times))


def _same(a, b):
    """Whether two (partner_nk, count_n, d_nki) lists agree entry for entry."""
    if not np.array_equal(a[1], b[1]):
        return False
    return all(np.array_equal(a[0][i, :m], b[0][i, :m]) and np.array_equal(a[2][i, :m],
                                                                           b[2][i, :m])
               for i, m in enumerate(a[1]))


def measure(n, density=DENSITY, seed=1):
    """One row of the benchmark: times in ms of both builds and of the triplet sum."""
    box = (n / density) ** (1.0 / 3.0)
    rc = min(CUTOFF, 0.25 * box)
    r = np.random.default_rng(seed).uniform(0.0, box, (n, 3))
    grid = cell_grid(np.full(3, box), rc, n)
    lists = partner_lists(r, box, rc * rc)
    cells = partner_lists_cells(r, box, rc * rc, grid)
    return {"n": n, "box": box, "rc": rc, "grid": grid[:3].tolist(), "reach": int(grid[3]),
            "mean_partners": float(lists[1].mean()), "same": _same(lists, cells),
            "all_pairs_ms": _median_ms(lambda: partner_lists(r, box, rc * rc)),
            "cells_ms": _median_ms(lambda: partner_lists_cells(r, box, rc * rc, grid)),
            "triplets_ms": _median_ms(lambda: triplet_energy(cells[1], cells[2], rc * rc, 1.0))}


def main():
    print(f"Axilrod-Teller partner lists, random atoms at rho* = {DENSITY}, rc = min({CUTOFF}, "
          f"L/4) sigma; build_partner_lists uses cells from {CELL_LIST_MIN_ATOMS} atoms on")
    for n in SIZES:
        m = measure(n)
        used = "cells" if n >= CELL_LIST_MIN_ATOMS else "all pairs"
        print(f"N = {n:5d}: rc = {m['rc']:.3g}, {m['mean_partners']:.1f} partners per atom, "
              f"cells {'x'.join(map(str, m['grid']))} reach {m['reach']}; all pairs "
              f"{m['all_pairs_ms']:.3g} ms, cells {m['cells_ms']:.3g} ms "
              f"({m['all_pairs_ms'] / m['cells_ms']:.2g}x), lists "
              f"{'identical' if m['same'] else 'DIFFER'}, used: {used}; triplet sum "
              f"{m['triplets_ms']:.3g} ms")
    return 0


if __name__ == "__main__":
    sys.exit(main())
