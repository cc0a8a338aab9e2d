"""``mdsim inversion STUDY [--json] [--simulate]``: the Joule inversion curve; Joule-Thomson apart.

The work is :func:`mdsim.pipeline.inversion_study.inversion_summary`: the
Joule (free-expansion) inversion curve from the virial series, with its
zero-density end, and, labelled as a different process, the zero-pressure
Joule-Thomson (throttling) inversion temperature; ``--simulate`` adds
points from NVT Monte Carlo samples on a small grid around the curve.
"""
import logging
import math
import sys

from mdsim.cli.options import (add_renamed_option, add_state_options, nonnegative_int,
                               positive_int, print_json, quantity, state_overrides)
from mdsim.numbers import value_with_error
from mdsim.pipeline.inversion_study import DEFAULT_CURVE_POINTS, SIMULATION_DEFAULTS

HELP = ("the Joule (free-expansion) inversion curve and, apart, the zero-pressure "
        "Joule-Thomson inversion temperature")
OPTION_FOR_SETTING = {"max_density_mol_m3": "--max-density", "points": "--points",
                      "density_count": "--simulated-density-count",
                      "temperature_count": "--simulated-temperature-count",
                      "particles": "--particles", "samples": "--samples", "seed": "--seed",
                      "temperature_K": "--temperature", "pressure_Pa": "--pressure",
                      "density_mol_m3": "--density"}

log = logging.getLogger(__name__)


def add_arguments(p):
    d = SIMULATION_DEFAULTS
    p.add_argument("study", help="study file (TOML); only [gas] and [potential] are used")
    p.add_argument("--json", action="store_true",
                   help="print JSON: joule_inversion_zero_density_K, "
                   "joule_thomson_inversion_zero_pressure_K, joule_inversion_curve")
    p.add_argument("--max-density", help='largest density of the virial curve, for example '
                   '"5000 mol/m^3" (default: where the B2 + B3 series stops converging)')
    p.add_argument("--points", type=positive_int("--points"), default=DEFAULT_CURVE_POINTS,
                   help=f"virial curve points above zero density (default {DEFAULT_CURVE_POINTS})")
    p.add_argument("--simulate", action="store_true",
                   help="add points from NVT Monte Carlo samples on a small (T, rho) grid "
                   "around the virial curve")
    p.add_argument("--simulated-density-count", type=positive_int("--simulated-density-count"),
                   default=d["density_count"], metavar="N",
                   help=f"how many densities to sample with --simulate (default "
                   f"{d['density_count']})")
    p.add_argument("--simulated-temperature-count",
                   type=positive_int("--simulated-temperature-count"),
                   default=d["temperature_count"], metavar="N",
                   help="how many temperatures per density, at least 2, spread +/- 30 %% "
                   f"around the virial inversion temperature (default {d['temperature_count']})")
    add_renamed_option(p, "--sim-densities", "--simulated-density-count")
    add_renamed_option(p, "--sim-temperatures", "--simulated-temperature-count")
    p.add_argument("--particles", type=positive_int("--particles"), default=d["particles"],
                   help=f"particles per simulation (default {d['particles']})")
    p.add_argument("--samples", type=positive_int("--samples"), default=d["samples"],
                   help=f"Monte Carlo samples per state, one sweep apart (default {d['samples']})")
    p.add_argument("--seed", type=nonnegative_int("--seed"), default=None,
                   help="random seed (default: the study's [simulation] seed)")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    add_state_options(p)


def format_inversion_table(out):
    """Plain-text lines for ``mdsim inversion``.

    A simulated point's temperature is written with its standard error
    (two figures, the value rounded to match); virial points without one.
    """
    lines = [f"study {out['study']}: inversion temperatures",
             f"  Joule (free expansion) inversion, zero density      "
             f"{value_with_error(out['joule_inversion_zero_density_K'], None, 'K', 6)}   "
             "(maximum of B2)",
             f"  Joule-Thomson (throttling) inversion, zero pressure "
             f"{value_with_error(out['joule_thomson_inversion_zero_pressure_K'], None, 'K', 6)}"
             "   (T dB2/dT = B2; a different process)",
             "  Joule (free-expansion) inversion curve, T (dp/dT)_rho = p:",
             f"    {'T [K]':>18} {'rho [mol/m^3]':>14} {'p [bar]':>12}  source"]
    for pt in out["joule_inversion_curve"]:
        T = value_with_error(pt["temperature_K"], pt.get("stderr_K"), digits=6)
        p = pt["pressure_Pa"]
        lines.append(f"    {T:>18} {pt['density_mol_m3']:14.6g} "
                     f"{(p / 1e5 if p is not None else math.nan):12.6g}  {pt['source']}")
    st = out.get("initial_state")
    if st:
        lines.append(f"  from T = {st['temperature_K']:.6g} K, rho = {st['density_mol_m3']:.6g} "
                     f"mol/m^3 (p = {st['pressure_Pa'] / 1e5:.6g} bar) a free expansion "
                     f"{st['free_expansion']}: Joule coefficient (dT/dV)_U = "
                     f"{st['joule_coefficient_K_mol_m3']:.6g} K mol/m^3 (B2 + B3)")
    lines += [f"  note: {n}" for n in out["notes"]]
    lines += [f"  warning: {w}" for w in out.get("warnings", [])]
    return lines


def _progress_printer(quiet):
    show = sys.stderr.isatty() and not quiet

    def progress(k, n, T_K, rho):
        if show:
            print(f"\rsampling {k + 1}/{n}: T = {T_K:.5g} K, rho = {rho:.5g} mol/m^3 ",
                  end="" if k + 1 < n else "\n", file=sys.stderr, flush=True)
        log.debug("inversion grid %d/%d: T = %g K, rho = %g mol/m^3", k + 1, n, T_K, rho)
    return progress


def run(args):
    from mdsim.pipeline.inversion_study import inversion_summary
    from mdsim.study.reader import read_study
    study = read_study(args.study)
    overrides = state_overrides(args)
    if overrides:
        from mdsim.study import with_initial_state
        study = with_initial_state(study, **overrides)
    rho_max = quantity(args.max_density, "molar_density", "--max-density")
    simulation = {"density_count": args.simulated_density_count,
                  "temperature_count": args.simulated_temperature_count,
                  "particles": args.particles, "samples": args.samples, "seed": args.seed}
    out = inversion_summary(study, rho_max, args.points, simulate=args.simulate,
                            simulation=simulation, progress=_progress_printer(args.quiet),
                            initial_state=overrides is not None)
    if args.json:
        print_json(out)
    else:
        print("\n".join(format_inversion_table(out)))
    return 0
