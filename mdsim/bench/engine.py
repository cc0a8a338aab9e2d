"""Engine benchmark: ``python -m mdsim.bench [--quick]``.

Prints, for this machine: ns per pair of the force kernel (1 and 2
threads), MD steps per second for the LJ liquid and a hot dilute gas,
neighbour-list rebuild cost, first-call (compile) and cached start-up time,
the speed-up over a plain NumPy all-pairs evaluation, time per
particle-step against system size, and peak memory per particle.  Each line
states the target it is meant to meet.

Other samplers add their figures through :data:`EXTRA_BENCHMARKS`: a list of
functions ``f(quick: bool) -> list of (label, value, unit, target_text)``,
run after the MD figures.
"""
import argparse
import os
import subprocess
import sys
import tempfile
import time
import tracemalloc

import numba
import numpy as np

#: Further benchmark functions (for example Monte Carlo): f(quick) -> rows.
EXTRA_BENCHMARKS = []

LIQUID = dict(density=0.8442, temperature=0.72, cutoff=2.5)
GAS = dict(density=0.03, temperature=2.0, cutoff=3.0)


def _system(n, density, cutoff, seed=1):
    from mdsim.engine.potentials import LennardJones, PairMatrix
    from mdsim.engine.system import System
    pairs = PairMatrix([LennardJones(1.0, 1.0)], cutoff)
    return System.cubic(pairs, [n], density).place_on_lattice(seed)


def _sampler(n, state, n_threads=1, warm=0):
    from mdsim.engine.md import MDSampler
    system = _system(n, state["density"], state["cutoff"])
    md = MDSampler(system, temperature=state["temperature"], seed=1, n_threads=n_threads)
    if warm:
        md.equilibrate(warm)
    return md


def _best_time(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def bench_force_kernel(quick):
    from mdsim.engine.forces import forces_half, forces_half_parallel
    md = _sampler(4000, LIQUID, warm=100 if quick else 300)
    pairs, nl = md.pairs, md.nlist
    args = (md.r_ni, md.box_i, md.species_n, pairs.params_ab, pairs.form, pairs.table,
            nl.nb_nk, nl.count_n, md.f_ni)
    n_listed = nl.n_listed
    repeat = 10 if quick else 40
    t1 = _best_time(lambda: forces_half(*args), repeat)
    rows = [("force kernel, LJ liquid N=4000, 1 thread", 1e9 * t1 / n_listed, "ns/pair",
             "<= 13")]
    old = numba.get_num_threads()
    try:
        threads = min(2, numba.config.NUMBA_NUM_THREADS)
        numba.set_num_threads(threads)
        f_cni = np.zeros((threads, md.n, 3))
        forces_half_parallel(*args, f_cni)
        t2 = _best_time(lambda: forces_half_parallel(*args, f_cni), repeat)
    finally:
        numba.set_num_threads(old)
    rows.append((f"force kernel, {threads} threads", 1e9 * t2 / n_listed, "ns/pair", ""))
    rows.append(("force kernel speed-up, 2 threads / 1", t1 / t2, "x", ">= 1.8"))
    return rows


def _steps_per_second(n, state, warm, steps, n_threads=1):
    md = _sampler(n, state, warm=warm, n_threads=n_threads)
    builds = md.nlist.n_builds
    t0 = time.perf_counter()
    md.equilibrate(steps)
    dt = time.perf_counter() - t0
    return steps / dt, (md.nlist.n_builds - builds) / steps, md.skin


def bench_md(quick):
    rows = []
    cases = [(4000, LIQUID, 200, 300 if quick else 1500, ">= 450"),
             (32000, LIQUID, 30 if quick else 100, 40 if quick else 200, ">= 55"),
             (100000, GAS, 20 if quick else 50, 50 if quick else 200, ">= 120")]
    for n, state, warm, steps, target in cases:
        sps, rebuild_rate, skin = _steps_per_second(n, state, warm, steps)
        kind = "liquid" if state is LIQUID else "dilute gas"
        rows.append((f"MD {kind} N={n} (skin {skin:.2f}, rebuild every "
                     f"{1 / max(rebuild_rate, 1e-9):.0f} steps), 1 thread", sps, "steps/s", target))
    threads = min(2, numba.config.NUMBA_NUM_THREADS)
    sps, _, _ = _steps_per_second(32000, LIQUID, 20, 40 if quick else 200, threads)
    rows.append((f"MD liquid N=32000, {threads} threads", sps, "steps/s", ""))
    return rows


def bench_rebuild(quick):
    rows = []
    for n, state in ((32000, LIQUID), (100000, GAS)):
        md = _sampler(n, state, warm=10)

        def rebuild():
            md.rebuild_list()
        t = _best_time(rebuild, 3 if quick else 10)
        kind = "liquid" if state is LIQUID else "dilute gas"
        rows.append((f"list rebuild (sort + build), {kind} N={n}", 1e9 * t / n,
                     "ns/particle", ""))
    return rows


_START = """
import time
t0 = time.perf_counter()
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.engine.system import System
from mdsim.engine.md import MDSampler
s = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], 2.5), [300], 0.8).place_on_lattice(1)
MDSampler(s, temperature=1.0, seed=1).run(2, 2)
print(time.perf_counter() - t0)
"""


def bench_startup(quick):
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache)

        def once():
            out = subprocess.run([sys.executable, "-c", _START], env=env, check=True,
                                 capture_output=True, text=True)
            return float(out.stdout.strip().splitlines()[-1])
        first = once()
        cached = min(once() for _ in range(1 if quick else 3))
    return [("first call (compile, import, tiny run)", first, "s", ""),
            ("cached start-up (import, tiny run)", cached, "s", "< 1.5")]


def numpy_all_pairs(r_ni, box_i, rc, rows=256):
    """Plain NumPy LJ energy and forces over all pairs (the baseline), in row blocks."""
    n = r_ni.shape[0]
    f_ni = np.zeros((n, 3))
    u = 0.0
    for a in range(0, n, rows):
        d = r_ni[a:a + rows, None, :] - r_ni[None, :, :]
        d -= box_i * np.round(d / box_i)
        r2 = (d * d).sum(axis=-1)
        idx = np.arange(a, min(a + rows, n))
        r2[idx - a, idx] = np.inf
        inside = r2 < rc * rc
        inv6 = np.where(inside, 1.0 / r2 ** 3, 0.0)
        u += 0.5 * np.sum(4.0 * (inv6 * inv6 - inv6))
        fr = np.where(inside, 24.0 * (2.0 * inv6 * inv6 - inv6) / r2, 0.0)
        f_ni[a:a + rows] = (fr[:, :, None] * d).sum(axis=1)
    return f_ni, u


def bench_vs_numpy(quick):
    from mdsim.engine.forces import forces_half
    rows = []
    for n in (1000, 4000):
        md = _sampler(n, LIQUID, warm=20)
        pairs, nl = md.pairs, md.nlist
        t_np = _best_time(lambda: numpy_all_pairs(md.r_ni, md.box_i, 2.5), 1 if quick else 2)
        # a fair comparison includes the list upkeep: one rebuild per 10 steps
        t_k = _best_time(lambda: forces_half(md.r_ni, md.box_i, md.species_n, pairs.params_ab,
                                             pairs.form, pairs.table, nl.nb_nk, nl.count_n,
                                             md.f_ni), 10)
        t_b = _best_time(md.rebuild_list, 3)
        rows.append((f"speed-up over NumPy all pairs, N={n}", t_np / (t_k + t_b / 10), "x",
                     ">= 500" if n == 4000 else ""))
    return rows


def bench_scaling(quick):
    sizes = (1000, 10000, 100000) if quick else (1000, 10000, 100000, 1000000)
    rows = []
    per = []
    for n in sizes:
        steps = max(3, int(2e6 / n)) if quick else max(5, int(1e7 / n))
        md = _sampler(n, LIQUID, warm=10)
        md.equilibrate(steps)  # settle the rebuild rhythm
        t0 = time.perf_counter()
        md.equilibrate(steps)
        t = (time.perf_counter() - t0) / (steps * n)
        per.append(t)
        rows.append((f"time per particle-step, liquid N={n}", 1e9 * t, "ns", ""))
    rows.append(("spread of time per particle-step over N", max(per) / min(per) - 1, "",
                 "<= 0.25"))
    return rows


def bench_memory(quick):
    n = 100000 if quick else 1000000
    tracemalloc.start()
    try:
        md = _sampler(n, LIQUID)
        md.equilibrate(2)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    del md
    return [(f"peak traced memory per particle, N={n}", peak / n, "B", "< 1000")]


MD_BENCHMARKS = [bench_force_kernel, bench_md, bench_rebuild, bench_startup, bench_vs_numpy,
                 bench_scaling, bench_memory]


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python -m mdsim.bench",
                                     description="Time the simulation engine on this machine.")
    parser.add_argument("--quick", action="store_true", help="short runs (about a minute)")
    args = parser.parse_args(argv)
    print(f"# numba {numba.__version__}, {numba.config.NUMBA_NUM_THREADS} threads available, "
          f"{'quick' if args.quick else 'full'} run")
    from mdsim.bench.montecarlo import bench_rows as mc_rows
    for fn in MD_BENCHMARKS + [mc_rows] + list(EXTRA_BENCHMARKS):
        for label, value, unit, target in fn(args.quick):
            goal = f"   (target {target})" if target else ""
            print(f"{label:<72s} {value:10.3g} {unit}{goal}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
