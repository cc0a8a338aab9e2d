"""Gibbs-ensemble coexistence of the Lennard-Jones fluid: figures and throughput.

Runs :func:`mdsim.sampling.coexistence.coexistence_point` for the
Lennard-Jones fluid (rc = 3 sigma, analytic tail per box, the default model
of every route) at T* = 0.9, 1.0 and 1.1 and prints the coexisting
densities, energies and vapour pressure with their standard errors, the
Thol et al. (J. Phys. Chem. Ref. Data 45, 023101, 2016) reference values
when teqp is installed (a test dependency; the product never uses it), and
the cycles per second.  A guide, not a test: timings on a shared machine
are noisy.

Run ``python -m mdsim.bench.gibbs`` (``--quick`` for short runs,
``--particles N``, ``--cycles C`` production cycles, ``--temperatures``).
``--seeds K`` runs each temperature with seeds 1 to K instead and prints,
per quantity, the scatter of the K means against the root mean square of
their reported standard errors (near 1 when the errors are right; its
own relative uncertainty about 1 / sqrt(2 (K - 1))).
"""
import argparse
import time

from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.numbers import value_with_error
from mdsim.sampling.coexistence import coexistence_point

TEMPERATURES = (0.9, 1.0, 1.1)
GUESS = {0.9: (0.015, 0.75), 1.0: (0.03, 0.70), 1.1: (0.055, 0.64)}


def thol_reference(T_red):
    """(rho_vap, rho_liq, u_vap, u_liq, p_sat) of the Thol 2016 EOS via teqp, or None."""
    try:
        import numpy as np
        import teqp
    except ImportError:
        return None
    model = teqp.make_model({"kind": "LJ126_TholJPCRD2016", "model": {}})
    guess_v, guess_l = GUESS.get(T_red, (0.03, 0.70))
    rho_l, rho_v = model.pure_VLE_T(T_red, guess_l, guess_v, 20)
    z = np.array([1.0])
    p = rho_v * T_red * (1.0 + model.get_Ar01(T_red, rho_v, z))
    return (rho_v, rho_l, T_red * model.get_Ar10(T_red, rho_v, z),
            T_red * model.get_Ar10(T_red, rho_l, z), p)


def main(argv=None):
    ap = argparse.ArgumentParser(prog="python -m mdsim.bench.gibbs")
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--particles", type=int, default=300)
    ap.add_argument("--cycles", type=int, default=10000)
    ap.add_argument("--equilibration", type=int, default=None)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--temperatures", type=float, nargs="+", default=list(TEMPERATURES))
    ap.add_argument("--seeds", type=int, default=None)
    args = ap.parse_args(argv)
    if args.seeds:
        return seed_spread(args)
    prod = 400 if args.quick else args.cycles
    equil = prod // 2 if args.equilibration is None else args.equilibration
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    for T in args.temperatures:
        t0, c0 = time.perf_counter(), time.process_time()
        pt = coexistence_point(pairs, T, n_particles=args.particles, equilibration_cycles=equil,
                               production_cycles=prod, sample_interval=5, seed=args.seed)
        dt, cpu = time.perf_counter() - t0, time.process_time() - c0
        print(f"T* = {T}: N = {pt.n_particles}, rc = {pt.cutoff_red}, {equil} + {prod} cycles "
              f"in {dt:.0f} s wall, {cpu:.0f} s CPU ({(equil + prod) / cpu:.0f} cycles per CPU "
              "second)")
        for name in ("rho_vap", "rho_liq", "u_vap", "u_liq", "p_sat", "p_liq"):
            print(f"  {name:8s} {value_with_error(getattr(pt, name), getattr(pt, name + '_err'))}")
        ref = thol_reference(T)
        if ref is not None:
            print("  Thol 2016 (teqp): rho_vap {:.5f} rho_liq {:.4f} u_vap {:.4f} u_liq {:.4f} "
                  "p_sat {:.5f}".format(*ref))
        print(f"  moves: {pt.moves}", flush=True)


def seed_spread(args):
    """Scatter of independent runs (seeds 1 to --seeds) against their reported errors."""
    import numpy as np
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    prod = 400 if args.quick else args.cycles
    equil = prod // 2 if args.equilibration is None else args.equilibration
    names = ("rho_vap", "rho_liq", "u_vap", "u_liq", "p_sat")
    for T in args.temperatures:
        pts = [coexistence_point(pairs, T, n_particles=args.particles, equilibration_cycles=equil,
                                 production_cycles=prod, sample_interval=5, seed=s)
               for s in range(1, args.seeds + 1)]
        print(f"T* = {T}: {args.seeds} seeds, N = {args.particles}, {equil} + {prod} cycles")
        for name in names:
            m = np.array([getattr(p, name) for p in pts])
            e = np.array([getattr(p, name + "_err") for p in pts])
            rms = float(np.sqrt(np.mean(e * e)))
            print(f"  {name:8s} mean {m.mean():.5g}, scatter {m.std(ddof=1):.2g}, rms error "
                  f"{rms:.2g}, ratio {m.std(ddof=1) / rms:.2f}", flush=True)
        ref = thol_reference(T)
        if ref is not None:
            print("  Thol 2016 (teqp): rho_vap {:.5f} rho_liq {:.4f} u_vap {:.4f} u_liq {:.4f} "
                  "p_sat {:.5f}".format(*ref))


if __name__ == "__main__":
    main()
