"""``mdsim sample STUDY``: sample one state point and print energy, pressure and heat capacity.

The work is :func:`mdsim.pipeline.single_state.sample_single_state`; this
module reads the options and prints, in SI with the reduced values beside.
"""
import math

from mdsim.cli.options import nonnegative_int, positive_int, print_json, quantity
from mdsim.numbers import value_with_error
from mdsim.pipeline.single_state import DEFAULTS, METHODS

HELP = "sample one state point of a study and print energy, pressure and heat capacity"
OPTION_FOR_SETTING = {"density_mol_m3": "--density", "temperature_K": "--temperature",
                      "energy_J_mol": "--energy", "method": "--method",
                      "particles": "--particles", "samples": "--samples",
                      "interval": "--interval", "equilibration": "--equilibration",
                      "seed": "--seed", "out": "--out"}
LABELS = {"energy_J_mol": ("configurational energy", "J/mol"),
          "pressure_Pa": ("pressure", "Pa"),
          "heat_capacity_res_J_molK": ("residual heat capacity", "J/(mol K)")}


def add_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--temperature", help='temperature with unit, for example "150 K" '
                   "(canonical methods; md-nve uses it for the start velocities)")
    p.add_argument("--density", required=True, help='molar density with unit, for example '
                   '"500 mol/m^3"')
    p.add_argument("--energy", help='total energy per mole with unit, kinetic plus '
                   'configurational, for example "1500 J/mol" (mc-nve only)')
    p.add_argument("--method", default="mc-nvt", choices=METHODS,
                   help="sampler (default mc-nvt)")
    p.add_argument("--particles", type=positive_int("--particles"), default=DEFAULTS["particles"],
                   help=f"number of particles (default {DEFAULTS['particles']})")
    p.add_argument("--samples", type=positive_int("--samples"), default=DEFAULTS["samples"],
                   help=f"production samples (default {DEFAULTS['samples']})")
    p.add_argument("--interval", type=positive_int("--interval"),
                   help="MC sweeps or MD steps between samples (default 1 for MC, 10 for MD)")
    p.add_argument("--equilibration", type=nonnegative_int("--equilibration"),
                   default=DEFAULTS["equilibration"],
                   help=f"equilibration sweeps or steps (default {DEFAULTS['equilibration']})")
    p.add_argument("--seed", type=nonnegative_int("--seed"), default=1,
                   help="random seed (default 1)")
    p.add_argument("--out", help="run file FILE.h5 (resumed if FILE.h5.part exists)")
    p.add_argument("--json", action="store_true",
                   help="print JSON: energy_J_mol, pressure_Pa, heat_capacity_res_J_molK as "
                   "{value, stderr} in SI, and 'reduced' holding the same keys in reduced units")


def _fmt(value, stderr, digits=5):
    """'value ± error' by the two-figure rule; a set value (zero error) marked so."""
    if value is None or not math.isfinite(value):
        return "unavailable"
    if stderr == 0.0:
        return f"{value_with_error(value, None, digits=digits)} (set)"
    return value_with_error(value, stderr, digits=digits)


def format_sample(out):
    """Plain-text lines for ``mdsim sample`` from its JSON."""
    red = out["reduced"]
    T, T_red = out["temperature_K"], red["temperature"]
    every = "sweeps" if out["method"].startswith("mc") else "steps"
    lines = [
        f"study {out['study']}: {out['method']}, {out['particles']} particles, "
        f"{out['samples']} samples every {out['interval']} {every}",
        f"  temperature             {_fmt(T['value'], T['stderr'], 6)} K"
        f"   (reduced {_fmt(T_red['value'], T_red['stderr'])})",
        f"  density                 {out['density_mol_m3']:.6g} mol/m^3   "
        f"(reduced {red['density']:.6g})",
    ]
    for key, (label, unit) in LABELS.items():
        if "unavailable" in out[key]:
            lines.append(f"  {label:<23} unavailable: {out[key]['unavailable']}")
            continue
        lines.append(f"  {label:<23} {_fmt(out[key]['value'], out[key]['stderr'])} {unit}"
                     f"   (reduced {_fmt(red[key]['value'], red[key]['stderr'])})")
    lines.append("  (energy: full potential, tail included; errors: one standard error from the "
                 "statistical inefficiency)")
    if out.get("quantum_potential") == "feynman-hibbs":
        lines.append("  (pair potential: quadratic Feynman-Hibbs at the set temperature; energy: "
                     "its thermodynamic estimator <u + 2 beta c>, heat capacity with its extra "
                     "term; docs/physics.md section 3.5)")
    if out["run_file"]:
        lines.append(f"  run file {out['run_file']}" + ("  (resumed)" if out["resumed"] else ""))
    return lines


def run(args):
    from mdsim.pipeline.single_state import sample_single_state
    from mdsim.study.reader import read_study
    study = read_study(args.study)
    out = sample_single_state(
        study, quantity(args.density, "molar_density", "--density"), method=args.method,
        temperature_K=quantity(args.temperature, "temperature", "--temperature"),
        energy_J_mol=quantity(args.energy, "molar_energy", "--energy"),
        particles=args.particles, samples=args.samples, interval=args.interval,
        equilibration=args.equilibration, seed=args.seed, out=args.out)
    if args.json:
        print_json(out)
    else:
        print("\n".join(format_sample(out)))
    return 0
