"""``mdsim virial`` and ``mdsim inversion``: the fast virial answers of a study.

``mdsim virial STUDY [--json]`` solves every state point of the study with
the virial equation of state of its own pair potential, truncated after B2
and after B3, in seconds.  ``--json`` prints :func:`mdsim.pipeline.summary.run_summary`
(the record shape of ``mdsim run --json``, each state point with its
``virial`` coefficients).

``mdsim inversion STUDY [--json] [--simulate]`` prints two different things,
labelled apart: the Joule (free-expansion, constant-energy) inversion curve
T (dp/dT)_rho = p with its zero-density end (the maximum of B2), and the
zero-pressure Joule-Thomson (throttling, constant-enthalpy) inversion
temperature (T dB2/dT = B2).  The virial curve runs from zero density to
where the B2 + B3 series stops converging (the third-virial term above
``VirialGas.check_converged``'s limit of Z) unless ``--max-density`` says
otherwise.  ``--simulate`` adds points from NVT Monte Carlo samples on a
small (T, rho) grid around the virial curve, by the canonical fluctuation
formula (:func:`analysis.inversion.fluctuation_estimate`).
"""
import json
import logging
import math
import sys

import numpy as np

from mdsim.cli import _nonnegative_int, _positive_int, command
from mdsim.errors import StudyError

log = logging.getLogger(__name__)

# Virial inversion curve: points on (0, rho_max].
DEFAULT_CURVE_POINTS = 8
# --simulate defaults: a small grid, a modest system (the test suite runs it).
SIM_DEFAULTS = {"densities": 2, "temperatures": 3, "particles": 128, "samples": 3000,
                "equilibration": 300, "spread": 0.3}


# -- mdsim virial --------------------------------------------------------------------------

def _virial_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--json", action="store_true",
                   help="print the run-summary JSON (state_points with initial, final, "
                   "delta_T_K, entropy_generated_J_molK, virial, warnings)")


def _g(x, fmt=".6g", unit=""):
    return "unavailable" if x is None else f"{x:{fmt}}{(' ' + unit) if unit else ''}"


def virial_records(study):
    """The state-point records of a study with the virial routes only.

    Raises StudyError (before any output) when an initial pressure cannot
    be turned into a density: the virial routes have nothing to say there.
    """
    from mdsim.study.statepoints import resolve_initial_density
    from mdsim.pipeline.summary import state_point_record, virial_summary
    points = study.state_points()
    for sp in points:
        resolve_initial_density(study, sp)
    return [state_point_record(study, sp, {}, virial=virial_summary(study, sp)) for sp in points]


def format_virial_table(summary):
    """Plain-text lines for ``mdsim virial``."""
    lines = [f"study {summary['study']}: virial routes (B2 only, and B2 + B3; "
             "SI units, Delta T = T_final - T_initial)"]
    for rec in summary["state_points"]:
        sp, ini, fin, v = rec["state_point"], rec["initial"], rec["final"], rec["virial"]
        state = (f"p = {sp['pressure_Pa'] / 1e5:.6g} bar" if sp["pressure_Pa"] is not None
                 else f"rho = {sp['density_mol_m3']:.6g} mol/m^3")
        lines.append(f"state point {rec['index']}: T = {sp['temperature_K']:.6g} K, {state}, "
                     f"volume ratio {sp['volume_ratio']:.6g}")
        how = f" ({ini['density_from']})" if ini.get("density_from") else ""
        lines.append(f"  initial density        {_g(ini['density_mol_m3'])} mol/m^3{how}")
        p_i = ini["pressure_Pa"]
        lines.append(f"  initial pressure       {_g(None if p_i is None else p_i / 1e5)} bar")
        q = " (with quantum correction)" if v["quantum_correction"] else ""
        lines.append(f"  B2, dB2/dT at T_i      {_g(v['B2_m3_mol'], '.5g')} m^3/mol, "
                     f"{_g(v['dB2_dT_m3_molK'], '.5g')} m^3/(mol K){q}")
        lines.append(f"  B3, dB3/dT at T_i      {_g(v['B3_m6_mol2'], '.5g')} m^6/mol^2, "
                     f"{_g(v['dB3_dT_m6_mol2K'], '.5g')} m^6/(mol^2 K)")
        for route, label in (("virial_b2", "Delta T, B2 only"), ("virial_b2b3", "Delta T, B2 + B3")):
            entry = rec["delta_T_K"].get(route)
            lines.append(f"  {label:<22} {_g(entry['value'] if entry else None, '.5g', 'K')}")
        if fin["source"] is not None:
            p_f = fin["pressure_Pa"]
            lines.append(f"  final state ({fin['source']})  T = {_g(fin['temperature_K'])} K, "
                         f"p = {_g(None if p_f is None else p_f / 1e5)} bar, "
                         f"rho = {_g(fin['density_mol_m3'])} mol/m^3")
        lines.append(f"  entropy generated      {_g(rec['entropy_generated_J_molK'], '.5g')} "
                     "J/(mol K)")
        for w in rec["warnings"]:
            lines.append(f"  warning: {w}")
    for w in summary.get("warnings", []):
        lines.append(f"warning: {w}")
    return lines


@command("virial", "the virial routes only (B2, B2 + B3) for every state point of a study, "
         "in seconds", _virial_arguments)
def run_virial(args):
    from mdsim.study.reader import read_study
    from mdsim.pipeline.summary import run_summary
    study = read_study(args.study)
    summary = run_summary(study, virial_records(study))
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print("\n".join(format_virial_table(summary)))
    return 0


# -- mdsim inversion -----------------------------------------------------------------------

def _inversion_arguments(p):
    p.add_argument("study", help="study file (TOML); only [gas] and [potential] are used")
    p.add_argument("--json", action="store_true",
                   help="print JSON: joule_inversion_zero_density_K, "
                   "joule_thomson_inversion_zero_pressure_K, joule_inversion_curve")
    p.add_argument("--max-density", help='largest density of the virial curve, for example '
                   '"5000 mol/m^3" (default: where the B2 + B3 series stops converging)')
    p.add_argument("--points", type=_positive_int("--points"), default=DEFAULT_CURVE_POINTS,
                   help=f"virial curve points above zero density (default {DEFAULT_CURVE_POINTS})")
    p.add_argument("--simulate", action="store_true",
                   help="add points from NVT Monte Carlo samples on a small (T, rho) grid "
                   "around the virial curve")
    p.add_argument("--sim-densities", type=_positive_int("--sim-densities"),
                   default=SIM_DEFAULTS["densities"],
                   help=f"densities sampled with --simulate (default {SIM_DEFAULTS['densities']})")
    p.add_argument("--sim-temperatures", type=_positive_int("--sim-temperatures"),
                   default=SIM_DEFAULTS["temperatures"],
                   help="temperatures per density, at least 2, spread +/- 30 %% around the "
                   f"virial inversion temperature (default {SIM_DEFAULTS['temperatures']})")
    p.add_argument("--particles", type=_positive_int("--particles"),
                   default=SIM_DEFAULTS["particles"],
                   help=f"particles per simulation (default {SIM_DEFAULTS['particles']})")
    p.add_argument("--samples", type=_positive_int("--samples"), default=SIM_DEFAULTS["samples"],
                   help=f"Monte Carlo samples per state, one sweep apart "
                   f"(default {SIM_DEFAULTS['samples']})")
    p.add_argument("--seed", type=_nonnegative_int("--seed"), default=None,
                   help="random seed (default: the study's [simulation] seed)")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")


def default_max_density_mol_m3(gas, temperature_K, rho_cap_mol_m3):
    """Density where the B2 + B3 series stops converging at a temperature.

    The root of z_ratio(T, rho) = limit (|C rho^2| / |1 + B rho|, the
    criterion of ``VirialGas.check_converged``) on (0, rho_cap]; rho_cap
    when the series converges all the way.
    """
    from analysis.virial_eos import DEFAULT_CONVERGENCE_LIMIT
    from scipy.optimize import brentq

    def excess(rho):
        return float(np.max(gas.series_convergence(temperature_K, rho)["z_ratio"])) \
            - DEFAULT_CONVERGENCE_LIMIT
    if excess(rho_cap_mol_m3) <= 0.0:
        return float(rho_cap_mol_m3)
    return float(brentq(excess, 1e-9 * rho_cap_mol_m3, rho_cap_mol_m3, xtol=1e-9 * rho_cap_mol_m3))


def virial_inversion_curve(study, max_density_mol_m3=None, points=DEFAULT_CURVE_POINTS):
    """The Joule inversion of a study's gas from its virial series.

    Returns
    -------
    inversion : analysis.inversion.JouleInversion
        B2 + B3 curve on ``points`` densities up to ``max_density_mol_m3``,
        points where the series does not converge at their own (T, rho)
        dropped (and listed in ``notes``).
    densities_mol_m3 : ndarray
    """
    from analysis.inversion import (joule_inversion, joule_inversion_curve_virial,
                                    zero_density_joule_inversion_K)
    from analysis.virial_eos import DEFAULT_CONVERGENCE_LIMIT
    from mdsim.study.statepoints import virial_gas
    from mdsim.study.reader import close_packed_density_mol_m3

    gas = virial_gas(study)
    rho_cp = close_packed_density_mol_m3(study.gas)
    if max_density_mol_m3 is None:
        # the inversion temperature falls with density, and the series converges less well
        # there: move the limit to the curve's own temperature (a fixed point, a few steps)
        T = zero_density_joule_inversion_K(gas)
        for _ in range(4):
            rho = default_max_density_mol_m3(gas, T, 0.5 * rho_cp)
            pts, _ = joule_inversion_curve_virial(gas, [rho], order=3)
            if len(pts) < 2:
                break
            T = pts[-1]["temperature_K"]
        max_density_mol_m3 = rho * (1.0 - 1e-6)
    elif not (0.0 < max_density_mol_m3 <= rho_cp):
        raise StudyError(f"option --max-density = {max_density_mol_m3:.6g} mol/m^3: allowed "
                         f"above 0 and at most close packing, {rho_cp:.6g} mol/m^3 for this gas")
    densities = np.linspace(max_density_mol_m3 / points, max_density_mol_m3, points)
    inv = joule_inversion(gas, densities, order=3)
    kept, dropped = [], []
    for pt in inv.joule_inversion_curve:
        if pt["density_mol_m3"] > 0.0:
            z = float(np.max(gas.series_convergence(pt["temperature_K"],
                                                    pt["density_mol_m3"])["z_ratio"]))
            if z > DEFAULT_CONVERGENCE_LIMIT * (1.0 + 1e-6):
                dropped.append(pt["density_mol_m3"])
                continue
        kept.append(pt)
    inv.joule_inversion_curve[:] = kept
    if dropped:
        inv.notes.append("virial points dropped where the B2 + B3 series does not converge at "
                         "the inversion temperature: densities "
                         + ", ".join(f"{d:.6g}" for d in dropped) + " mol/m^3")
    return inv, densities


def simulation_grid(curve, n_densities, n_temperatures, spread):
    """(T_K, rho_mol_m3) pairs around the virial curve for --simulate.

    The densities are ``n_densities`` of the virial points, spread evenly
    over the curve from its densest point down (the dilute end has the
    weakest signal, T dp/dT - p ~ rho^2); at each, ``n_temperatures`` temperatures evenly
    from (1 - spread) to (1 + spread) times the virial inversion temperature.
    """
    pts = [p for p in curve if p["density_mol_m3"] > 0.0 and p["source"] == "virial"]
    if not pts:
        raise StudyError("--simulate: the virial curve has no point above zero density to "
                         "sample around; give --max-density")
    if n_temperatures < 2:
        raise StudyError(f"option --sim-temperatures = {n_temperatures}: at least 2 are needed "
                         "to bracket the inversion")
    picks = np.unique(np.round(np.linspace(len(pts) - 1, 0, min(n_densities, len(pts))
                                           + 1)[:-1]).astype(int)) if n_densities < len(pts) \
        else np.arange(len(pts))
    grid = []
    for k in sorted(picks):
        T0, rho = pts[k]["temperature_K"], pts[k]["density_mol_m3"]
        for f in np.linspace(1.0 - spread, 1.0 + spread, n_temperatures):
            grid.append((float(T0 * f), float(rho)))
    return grid


def sample_inversion_grid(study, grid, particles, samples, equilibration, seed, progress=None):
    """Fluctuation estimates from NVT Monte Carlo at each (T_K, rho_mol_m3).

    The energy series is ``u_trunc``, the truncated energy whose Boltzmann
    factor the Monte Carlo sampler uses; ``pressure_conf`` is the virial
    pressure of the same truncated pairs plus the analytic tail (a constant
    at fixed density, so it shifts <P_conf> and leaves the covariance).
    """
    from analysis.inversion import fluctuation_estimate
    from mdsim.sampling.state_point import sample_state_point
    from mdsim.study.statepoints import ideal_heat_capacity

    units = study.units
    cv_ig = ideal_heat_capacity(study)
    out = []
    for k, (T_K, rho) in enumerate(grid):
        if progress:
            progress(k, len(grid), T_K, rho)
        system = study.system(particles, rho, seed=seed + k)
        T_red = units.temperature_to_reduced(T_K)
        res = sample_state_point(system, "mc-nvt", T_red, n_equilibration=equilibration,
                                 n_samples=samples, interval=1, seed=[seed, k])
        est = fluctuation_estimate(res.samples["u_trunc"], res.samples["pressure_conf"],
                                   system.n_particles, T_red, system.density,
                                   cv_ig_red=float(cv_ig.cv(T_K)) / _R())
        out.append(est)
    return out


def _R():
    from mdsim.units import R_GAS
    return R_GAS


def inversion_summary(study, max_density_mol_m3=None, points=DEFAULT_CURVE_POINTS,
                      simulate=False, sim=None, progress=None):
    """The JSON of ``mdsim inversion``.

    Returns
    -------
    dict
        ``study``; ``joule_inversion_zero_density_K`` (free expansion,
        maximum of B2); ``joule_thomson_inversion_zero_pressure_K``
        (throttling, T dB2/dT = B2: a different process);
        ``joule_inversion_curve``: list of ``{temperature_K,
        density_mol_m3, pressure_Pa, source}`` (source "virial" or
        "simulation", the latter with ``stderr_K``);
        ``densities_without_inversion_mol_m3``; ``labels`` (what each
        number means); ``notes``; ``simulation`` (the grid settings, or
        None).
    """
    from analysis.results import to_plain
    inv, _ = virial_inversion_curve(study, max_density_mol_m3, points)
    curve = list(inv.joule_inversion_curve)
    missing = list(inv.densities_without_inversion_mol_m3)
    notes = list(inv.notes)
    sim_info = None
    if simulate:
        from analysis.inversion import joule_inversion_curve_samples
        s = dict(SIM_DEFAULTS, **(sim or {}))
        seed = study.simulation.get("seed", 1) if s.get("seed") is None else s["seed"]
        grid = simulation_grid(curve, s["densities"], s["temperatures"], s["spread"])
        estimates = sample_inversion_grid(study, grid, s["particles"], s["samples"],
                                          s["equilibration"], seed, progress)
        u = study.units
        pts, miss = joule_inversion_curve_samples(estimates, u.epsilon_K, u.sigma_m * 1e10)
        curve.extend(pts)
        if miss:
            notes.append("simulation: no sign change bracketed at densities "
                         + ", ".join(f"{m:.6g}" for m in miss)
                         + " mol/m^3 (sample a wider temperature range or longer)")
            missing.extend(miss)
        sim_info = {"method": "mc-nvt", "particles": s["particles"], "samples": s["samples"],
                    "equilibration_sweeps": s["equilibration"], "seed": seed,
                    "grid": [{"temperature_K": T, "density_mol_m3": rho,
                              "joule_sign_red": est.joule_sign_red,
                              "joule_sign_stderr_red": est.joule_sign_stderr_red}
                             for (T, rho), est in zip(grid, estimates)]}
    return to_plain({
        "study": study.name,
        "joule_inversion_zero_density_K": inv.joule_inversion_zero_density_K,
        "joule_thomson_inversion_zero_pressure_K": inv.joule_thomson_inversion_zero_pressure_K,
        "joule_inversion_curve": curve,
        "densities_without_inversion_mol_m3": missing,
        "virial_order": inv.virial_order,
        "labels": {
            "joule_inversion_zero_density_K": "free expansion into vacuum (constant internal "
            "energy): zero-density end of the Joule inversion curve, the maximum of B2(T); "
            "above it a free expansion warms the gas",
            "joule_thomson_inversion_zero_pressure_K": "throttling through a valve (constant "
            "enthalpy), a DIFFERENT process: zero-pressure Joule-Thomson inversion, "
            "T dB2/dT = B2",
            "joule_inversion_curve": "free-expansion inversion T (dp/dT)_rho = p; below a "
            "point's temperature a free expansion at that density cools the gas",
        },
        "notes": notes,
        "simulation": sim_info,
    })


def format_inversion_table(out):
    lines = [f"study {out['study']}: inversion temperatures (SI)",
             f"  Joule (free expansion) inversion, zero density      "
             f"{out['joule_inversion_zero_density_K']:.6g} K   (maximum of B2)",
             f"  Joule-Thomson (throttling) inversion, zero pressure "
             f"{out['joule_thomson_inversion_zero_pressure_K']:.6g} K   (T dB2/dT = B2; "
             "a different process)",
             "  Joule (free-expansion) inversion curve, T (dp/dT)_rho = p:",
             f"    {'T [K]':>12} {'rho [mol/m^3]':>14} {'p [bar]':>12}  source"]
    for pt in out["joule_inversion_curve"]:
        err = f" +/- {pt['stderr_K']:.3g} K" if pt.get("stderr_K") is not None else ""
        p = pt["pressure_Pa"]
        lines.append(f"    {pt['temperature_K']:12.6g} {pt['density_mol_m3']:14.6g} "
                     f"{(p / 1e5 if p is not None else math.nan):12.6g}  {pt['source']}{err}")
    for n in out["notes"]:
        lines.append(f"  note: {n}")
    return lines


@command("inversion", "the Joule (free-expansion) inversion curve and, apart, the zero-pressure "
         "Joule-Thomson inversion temperature", _inversion_arguments)
def run_inversion(args):
    from mdsim.study.reader import read_study
    from mdsim.units import parse_quantity
    study = read_study(args.study)
    rho_max = None
    if args.max_density is not None:
        rho_max = parse_quantity(args.max_density, "molar_density", "option --max-density")
    show = sys.stderr.isatty() and not args.quiet

    def progress(k, n, T_K, rho):
        if show:
            print(f"\rsampling {k + 1}/{n}: T = {T_K:.5g} K, rho = {rho:.5g} mol/m^3 ",
                  end="" if k + 1 < n else "\n", file=sys.stderr, flush=True)
        log.debug("inversion grid %d/%d: T = %g K, rho = %g mol/m^3", k + 1, n, T_K, rho)

    sim = {"densities": args.sim_densities, "temperatures": args.sim_temperatures,
           "particles": args.particles, "samples": args.samples, "seed": args.seed}
    out = inversion_summary(study, rho_max, args.points, simulate=args.simulate, sim=sim,
                            progress=progress)
    if args.json:
        print(json.dumps(out, indent=2))
    else:
        print("\n".join(format_inversion_table(out)))
    return 0
