"""The ``mdsim`` command line (also ``python -m mdsim``).

Subcommands live in one table, :data:`COMMANDS`, that maps a name to the
function adding its arguments and the function running it; a new subcommand
is one :func:`command` decorator away.  Bad input (a :class:`StudyError` or a
bad argument) prints one line ``mdsim: error: ...`` to stderr and exits with
status 2; a simulation that cannot go on prints one line and exits with 1.
"""
import argparse
import errno
import json
import math
import sys

from mdsim.errors import ConvergenceError, SimulationError, StudyError

PROG = "mdsim"
EXIT_USAGE = 2
EXIT_FAILED = 1

# name -> (help, add_arguments(parser), run(args) -> int)
COMMANDS = {}


def command(name, help, add_arguments=None):
    """Register a subcommand: decorate its ``run(args) -> int`` with this.

    ``add_arguments(parser)`` adds the subcommand's options.
    """
    def wrap(run):
        COMMANDS[name] = (help, add_arguments, run)
        return run
    return wrap


class _Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line and raise StudyError."""

    def error(self, message):
        raise StudyError(f"{message} (see '{self.prog} --help')")


def _int_at_least(name, minimum):
    """argparse type: a whole number >= minimum, with a message naming the option."""
    def parse(text):
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{name} = {text!r} is not a whole number") from None
        if value < minimum:
            limit = "must be at least 1" if minimum == 1 else f"must be {minimum} or more"
            raise argparse.ArgumentTypeError(f"{name} = {value} {limit}")
        return value
    return parse


def _positive_int(name):
    return _int_at_least(name, 1)


def _nonnegative_int(name):
    return _int_at_least(name, 0)


# -- mdsim sample -----------------------------------------------------------------------

SAMPLE_DEFAULTS = {"particles": 256, "samples": 2000, "equilibration": 500}
DEFAULT_INTERVAL = {"mc": 1, "md": 10}


def _sample_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--temperature", help='temperature with unit, for example "150 K" '
                   "(canonical methods; md-nve uses it for the start velocities)")
    p.add_argument("--density", required=True, help='molar density with unit, for example '
                   '"500 mol/m^3"')
    p.add_argument("--energy", help='total energy per mole with unit, kinetic plus '
                   'configurational, for example "1500 J/mol" (mc-nve only)')
    p.add_argument("--method", default="mc-nvt", choices=("mc-nvt", "md-nvt", "mc-nve", "md-nve"),
                   help="sampler (default mc-nvt)")
    p.add_argument("--particles", type=_positive_int("--particles"),
                   default=SAMPLE_DEFAULTS["particles"],
                   help=f"number of particles (default {SAMPLE_DEFAULTS['particles']})")
    p.add_argument("--samples", type=_positive_int("--samples"), default=SAMPLE_DEFAULTS["samples"],
                   help=f"production samples (default {SAMPLE_DEFAULTS['samples']})")
    p.add_argument("--interval", type=_positive_int("--interval"),
                   help="MC sweeps or MD steps between samples (default 1 for MC, 10 for MD)")
    p.add_argument("--equilibration", type=_nonnegative_int("--equilibration"),
                   default=SAMPLE_DEFAULTS["equilibration"],
                   help=f"equilibration sweeps or steps (default {SAMPLE_DEFAULTS['equilibration']})")
    p.add_argument("--seed", type=_nonnegative_int("--seed"), default=1,
                   help="random seed (default 1)")
    p.add_argument("--out", help="run file FILE.h5 (resumed if FILE.h5.part exists)")
    p.add_argument("--json", action="store_true",
                   help="print JSON: energy_J_mol, pressure_Pa, heat_capacity_res_J_molK as "
                   "{value, stderr} in SI, and 'reduced' holding the same keys in reduced units")


def _fmt(value, stderr, digits=4):
    if not math.isfinite(value):
        return "unavailable"
    if stderr == 0.0:
        return f"{value:.{digits}g} (set)"
    return f"{value:.{digits}g} +/- {stderr:.2g}"


@command("sample", "sample one state point of a study and print energy, pressure and heat capacity",
         _sample_arguments)
def run_sample(args):
    from mdsim.sampling.state_point import sample_state_point
    from mdsim.study.reader import read_study
    from mdsim.units import parse_quantity

    study = read_study(args.study)
    units = study.units
    rho = parse_quantity(args.density, "molar_density", "option --density")
    if rho <= 0:
        raise StudyError(f"option --density = {args.density!r}: must be positive "
                         '(for example "500 mol/m^3")')
    T_red = energy_red = None
    if args.method == "mc-nve":
        if args.energy is None:
            raise StudyError('option --energy is required for --method mc-nve (total energy per '
                             'mole, for example "1500 J/mol"); --temperature is not used')
        if args.temperature is not None:
            raise StudyError("option --temperature does not apply to --method mc-nve; "
                             "give --energy instead")
        energy_red = units.energy_to_reduced(parse_quantity(args.energy, "molar_energy",
                                                            "option --energy"))
    else:
        if args.energy is not None:
            raise StudyError(f"option --energy applies to --method mc-nve only, not {args.method}")
        if args.temperature is None:
            raise StudyError(f'option --temperature is required for --method {args.method} '
                             '(for example "150 K")')
        T_K = parse_quantity(args.temperature, "temperature", "option --temperature")
        if T_K <= 0:
            raise StudyError(f"option --temperature = {args.temperature!r}: must be above 0 K")
        T_red = units.temperature_to_reduced(T_K)
    interval = args.interval or DEFAULT_INTERVAL[args.method[:2]]
    system = study.system(args.particles, rho, seed=args.seed)
    attrs = {"study_name": study.name, "study_file": str(study.path),
             **{f"units_{k}": v for k, v in units.as_dict().items()},
             "density_mol_m3": rho}
    result = sample_state_point(system, args.method, T_red, energy_red,
                                n_equilibration=args.equilibration, n_samples=args.samples,
                                interval=interval, seed=args.seed, path=args.out, attrs=attrs)
    s = result.summary
    si = {
        "energy_J_mol": (units.energy_to_J_mol, s["u_full"]),
        "pressure_Pa": (units.pressure_to_Pa, s["pressure"]),
        "heat_capacity_res_J_molK": (units.heat_capacity_to_J_molK, s["c_v_res"]),
    }

    def entry(value, stderr, est):
        if not est.available:
            return {"value": None, "stderr": None, "unavailable": est.reason}
        return {"value": value, "stderr": stderr}

    out = {key: entry(conv(e.value), conv(e.stderr), e) for key, (conv, e) in si.items()}
    out["reduced"] = {key: entry(e.value, e.stderr, e) for key, (_, e) in si.items()}
    T_est = s["temperature"]
    out["temperature_K"] = {"value": units.temperature_to_K(T_est.value),
                            "stderr": units.temperature_to_K(T_est.stderr)}
    out["reduced"]["temperature"] = {"value": T_est.value, "stderr": T_est.stderr}
    out["density_mol_m3"] = rho
    out["reduced"]["density"] = units.density_to_reduced(rho)
    # The reduced block repeats the SI keys so that a reader finds each quantity under
    # one name; its numbers are in the Lennard-Jones units of species 0, said here.
    out["reduced"]["units"] = (f"reduced: energy per particle / epsilon, pressure * sigma^3 / "
                               f"epsilon, heat capacity per particle / k, with epsilon/k = "
                               f"{units.epsilon_K:g} K and sigma = {units.sigma_m * 1e10:g} angstrom")
    out.update({"study": study.name, "method": args.method, "particles": system.n_particles,
                "samples": args.samples, "interval": interval, "seed": args.seed,
                "run_file": str(result.path) if result.path else None,
                "resumed": result.resumed})
    if args.json:
        print(json.dumps(out, indent=2))
        return 0
    lines = [
        f"study {study.name}: {args.method}, {system.n_particles} particles, "
        f"{args.samples} samples every {interval} {'sweeps' if args.method[:2] == 'mc' else 'steps'}",
        f"  temperature             {_fmt(out['temperature_K']['value'], out['temperature_K']['stderr'], 6)} K"
        f"   (reduced {_fmt(T_est.value, T_est.stderr)})",
        f"  density                 {rho:.6g} mol/m^3   (reduced {units.density_to_reduced(rho):.6g})",
    ]
    labels = {"energy_J_mol": ("configurational energy", "J/mol"),
              "pressure_Pa": ("pressure", "Pa"),
              "heat_capacity_res_J_molK": ("residual heat capacity", "J/(mol K)")}
    for key, (label, unit) in labels.items():
        e = si[key][1]
        if not e.available:
            lines.append(f"  {label:<23} unavailable: {e.reason}")
            continue
        lines.append(f"  {label:<23} {_fmt(out[key]['value'], out[key]['stderr'])} {unit}"
                     f"   (reduced {_fmt(e.value, e.stderr)})")
    lines.append("  (energy: full potential, tail included; errors: one standard error from the "
                 "statistical inefficiency)")
    if result.path:
        lines.append(f"  run file {result.path}" + ("  (resumed)" if result.resumed else ""))
    print("\n".join(lines))
    return 0



from mdsim.cli import cmd_report
from mdsim.cli import cmd_virial
from mdsim.cli import cmd_run
from mdsim.cli import cmd_check
from mdsim.cli import cmd_table


# -- entry point ----------------------------------------------------------------------------

def build_parser():
    """The argument parser with every registered subcommand."""
    parser = _Parser(prog=PROG, description="Free-expansion temperature change of a gas from its "
                     "pair potential, by simulation and virial theory.")
    from importlib.metadata import PackageNotFoundError, version
    try:
        ver = version("free-expansion")
    except PackageNotFoundError:
        ver = "unknown"
    parser.add_argument("--version", action="version", version=f"{PROG} {ver}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (help_text, add_arguments, _) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if add_arguments is not None:
            add_arguments(p)
    return parser


def main(argv=None):
    """Run the command line; returns the exit status (0 ok, 1 failed run, 2 bad input)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if args.command is None:
            raise StudyError(f"give a command: {', '.join(COMMANDS)} (see '{PROG} --help')")
        return int(COMMANDS[args.command][2](args) or 0)
    except StudyError as exc:
        print(f"{PROG}: error: {_one_line(exc)}", file=sys.stderr)
        return EXIT_USAGE
    except (SimulationError, ConvergenceError) as exc:
        print(f"{PROG}: error: {_one_line(exc)}", file=sys.stderr)
        return EXIT_FAILED
    except OSError as exc:
        if exc.errno not in (errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EFBIG):
            raise
        # a full or read-only disk part way through: finished work is kept and resumes
        print(f"{PROG}: error: cannot write '{exc.filename or '?'}': {exc.strerror}; free space "
              "and run the same command again to resume", file=sys.stderr)
        return EXIT_FAILED
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted; run the same command again to resume from the last "
              "checkpoint (when --out was given)", file=sys.stderr)
        return 130


def _one_line(exc):
    return " ".join(str(exc).split())

