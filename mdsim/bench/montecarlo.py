"""Monte Carlo throughput: trial moves per second on one core.

Two states: the Lennard-Jones liquid near its triple point (N = 4000,
rho* = 0.8442, rc = 2.5, T* = 0.72) and a dilute gas (N = 100000,
rho* = 0.03, rc = 3, T* = 2).  Targets: 200000 trial moves/s for the
liquid, 500000 for the gas.  Timings on a shared machine are noisy; the
figures are a guide, not a test.

Run ``python -m mdsim.bench.montecarlo`` (``--quick`` for a short run).
"""
import sys
import time

from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.engine.system import System

CASES = {
    # name: (particles, density_red, cutoff_red, temperature_red, target moves/s)
    "liquid": (4000, 0.8442, 2.5, 0.72, 200000.0),
    "gas": (100000, 0.03, 3.0, 2.0, 500000.0),
}


def _measure(n, density, cutoff, temperature, tune_sweeps, timed_sweeps):
    t0 = time.perf_counter()
    system = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], cutoff), [n], density)
    system.place_on_lattice(seed=1)
    sampler = MCSampler(system, temperature=temperature, seed=1)
    setup_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    sampler.equilibrate(tune_sweeps)
    tune_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    out = sampler.run(1, timed_sweeps)
    run_s = time.perf_counter() - t0
    moves = timed_sweeps * n
    return {
        "particles": n,
        "setup_s": setup_s,
        "tune_s": tune_s,
        "timed_moves": moves,
        "moves_per_s": moves / run_s,
        "acceptance": float(out["acceptance"][0]),
        "max_displacement_red": sampler.max_displacement,
        "cells_per_edge": int(sampler.ncell_i[0]),
        "cell_reach": int(sampler.ncell_i[3]),
    }


def mc_figures(quick=False):
    """Measure Monte Carlo trial moves per second for the benchmark states.

    Parameters
    ----------
    quick : bool
        Short runs (a smoke test of the benchmark itself).

    Returns
    -------
    dict
        One entry per case ("liquid", "gas") with "moves_per_s", "target",
        "meets_target", the tuned "max_displacement_red", "acceptance",
        set-up and tuning times in seconds (the first set-up includes the
        numba compilation or cache load).
    """
    # the gas needs about 12 tuning sweeps for its step to reach the cap (half the box)
    sweeps = {"liquid": (3, 5) if quick else (20, 50), "gas": (1, 2) if quick else (12, 5)}
    figures = {}
    for name, (n, rho, rc, temp, target) in CASES.items():
        fig = _measure(n, rho, rc, temp, *sweeps[name])
        fig["target"] = target
        fig["meets_target"] = bool(fig["moves_per_s"] >= target)
        figures[name] = fig
    return figures


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    quick = "--quick" in argv
    figures = mc_figures(quick=quick)
    for name, fig in figures.items():
        mark = "meets" if fig["meets_target"] else "BELOW"
        print(f"{name:7s} N={fig['particles']:6d}  {fig['moves_per_s']:11.0f} trial moves/s "
              f"({mark} target {fig['target']:.0f})  acceptance {fig['acceptance']:.2f}  "
              f"step {fig['max_displacement_red']:.3f}  set-up {fig['setup_s']:.2f} s")
    return 0



def bench_rows(quick=False):
    """Monte Carlo rows for ``python -m mdsim.bench`` (label, value, unit, target)."""
    rows = []
    for name, fig in mc_figures(quick=quick).items():
        label = (f"MC trial moves, LJ {name} N={fig['particles']} "
                 f"(step {fig['max_displacement_red']:.3g}, acceptance {fig['acceptance']:.2f}), 1 thread")
        rows.append((label, fig["moves_per_s"], "moves/s", f">= {fig['target']:.0f}"))
    return rows


if __name__ == "__main__":
    sys.exit(main())
