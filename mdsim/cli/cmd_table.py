"""``mdsim table build STUDY`` and ``mdsim table show FILE.h5``: corresponding-states tables.

``build`` samples the grid of the study's ``[table]`` (one resumable run
file per point in ``FILE.h5.points/``, on a local process pool or a Dask
cluster) and writes the table file with its provenance and measured
interpolation error; run it again after an interruption to finish.
``show`` prints what a table holds, and with ``--at T_STAR RHO_STAR`` the
tabulated values at one reduced state.
"""
from pathlib import Path

from mdsim.cli.options import add_renamed_option, positive_int, print_json
from mdsim.errors import StudyError
from mdsim.numbers import value_with_error

HELP = "build or show a corresponding-states table u_res*(T*, rho*)"
# build_table's settings (its executor argument under either name) and the options giving them
OPTION_FOR_SETTING = {"on": "--on", "out_path": "--out",
                      "workers": "--workers", "dask_address": "--address"}
QUANTITIES = ("u_res", "du_res_dT", "cv_res", "Z")


def add_arguments(p):
    sub = p.add_subparsers(dest="table_action", metavar="ACTION")
    b = sub.add_parser("build", help="build (or finish) the table of a study's [table] grid")
    b.add_argument("study", help="study file (TOML) with a pure LJ or Mie gas and a [table]")
    b.add_argument("--out", help="table file FILE.h5 (default: runs/NAME_table.h5, NAME the "
                   "study name)")
    b.add_argument("--on", default="local", choices=("local", "dask"),
                   help="where the grid points run (default local: a process pool)")
    add_renamed_option(b, "--executor", "--on")
    b.add_argument("--workers", type=positive_int("--workers"),
                   help="worker processes (default: the number of cores)")
    b.add_argument("--address", help="an existing Dask scheduler, tcp://host:8786 (dask only)")
    b.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    s = sub.add_parser("show", help="print the grid, provenance and interpolation error of a table")
    s.add_argument("table", help="table file FILE.h5")
    s.add_argument("--at", nargs=2, type=float, metavar=("T_STAR", "RHO_STAR"),
                   help="also print u_res, its T-derivative, c_v,res and Z at one reduced state: "
                   "T_STAR the reduced temperature kT/epsilon, RHO_STAR the reduced density "
                   "rho sigma^3")
    s.add_argument("--json", action="store_true", help="print JSON")


def _build(args):
    from mdsim.cstable import build_table
    if args.address and args.on != "dask":
        raise StudyError("option --address applies to --on dask only")
    out = args.out
    if out is None:
        from mdsim.study.reader import read_study
        out = Path("runs") / f"{read_study(args.study).name}_table.h5"
        out.parent.mkdir(parents=True, exist_ok=True)
    path = build_table(args.study, out, on=args.on, workers=args.workers,
                       progress=not args.quiet, dask_address=args.address)
    print(path)
    return 0


def _values_at(table, T, rho):
    at = {"temperature_red": T, "density_red": rho}
    for key, (v, e) in {"u_res": table.u_res(T, rho),
                        "du_res_dT": table.u_res(T, rho, derivative=1),
                        "cv_res": table.cv_res(T, rho),
                        "Z": table.compressibility(T, rho)}.items():
        at[key] = {"value": v, "stderr": e}
    return at


def _table_json(table, at):
    out = {"form": table.form, "shape": table.shape, "cutoff_sigma": table.cutoff_red,
           "temperature_red": table.temperature_red.tolist(),
           "density_red": table.density_red.tolist(),
           "virial_below": table.virial_below, "simulation_above": table.simulation_above,
           "interpolation_error": table.interpolation_error,
           "coexistence_temperature_red": table.coexistence_T_red.tolist(),
           "provenance": {k: (v.item() if hasattr(v, "item") else v)
                          for k, v in table.provenance.items()}}
    if at is not None:
        out["at"] = at
    return out


def _show(args):
    from mdsim.cstable import CorrespondingStatesTable
    table = CorrespondingStatesTable.load(args.table)
    at = _values_at(table, *args.at) if args.at is not None else None
    if args.json:
        print_json(_table_json(table, at), default=str)
        return 0
    print(table.describe())
    if at is not None:
        print(f"  at T* = {at['temperature_red']:g}, rho* = {at['density_red']:g}:")
        for key in QUANTITIES:
            print(f"    {key:<10} {value_with_error(at[key]['value'], at[key]['stderr'])}")
    return 0


def run(args):
    action = getattr(args, "table_action", None)
    if action is None:
        raise StudyError("give an action: 'mdsim table build STUDY' or 'mdsim table show "
                         "FILE.h5' (see 'mdsim table --help')")
    return _build(args) if action == "build" else _show(args)
