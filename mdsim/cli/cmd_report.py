"""``mdsim report RUN_DIR`` and ``mdsim demo``.

``mdsim report`` rebuilds a run directory's tables, plots and report.md
from its files (after an array job, or to redraw).  ``mdsim demo`` runs the
demo study ``configs/demo.toml`` (an invented heavy monatomic gas, opened
from 10 to 60 bar into an equal evacuated volume) through the normal
``mdsim run`` path and says where the report is.
"""
import json
import logging
import sys
import time
from pathlib import Path

from mdsim.cli import COMMANDS, command
from mdsim.errors import StudyError

log = logging.getLogger(__name__)

DEMO_STUDY = "demo.toml"
DEFAULT_DEMO_OUT = Path("runs") / "demo"


def demo_study_path():
    """Path of the demo study file, ``configs/demo.toml`` beside the package.

    Raises
    ------
    StudyError
        When the file is not there (an installation without the repository's
        ``configs/`` folder).
    """
    path = Path(__file__).resolve().parents[2] / "configs" / DEMO_STUDY
    if not path.is_file():
        raise StudyError(f"the demo study '{path}' is missing; 'mdsim demo' needs the source "
                         "tree: clone the repository and install it with "
                         "'python -m pip install -e .'")
    return path


def _say(text, quiet=False):
    if not quiet:
        print(text, file=sys.stderr)


# -- mdsim report -------------------------------------------------------------------------

def _report_arguments(p):
    p.add_argument("run_dir", metavar="RUN_DIR", help="a run directory made by 'mdsim run'")
    p.add_argument("--json", action="store_true",
                   help="print the summary (the JSON of 'mdsim run --json') to stdout")
    p.add_argument("--no-plots", action="store_true", help="write the tables and report only")
    p.add_argument("--quiet", action="store_true", help="no messages on stderr")


@command("report", "rebuild the tables, plots and report.md of a run directory from its files",
         _report_arguments)
def run_report(args):
    from mdsim.pipeline.report import build_report
    run_dir = Path(args.run_dir)
    if not run_dir.is_dir():
        raise StudyError(f"RUN_DIR '{run_dir}' is not a directory; give a run directory made "
                         "by 'mdsim run STUDY --out DIR'")
    summary = build_report(run_dir, plots=not args.no_plots)
    if args.json:
        print(json.dumps(summary, indent=2))
    tasks = summary["tasks"]
    n_done = len(tasks["done"])
    n_all = n_done + len(tasks["failed"]) + len(tasks["missing"])
    _say(f"report: {run_dir / 'report.md'} ({n_done} of {n_all} simulation tasks done"
         + (f", {len(tasks['failed'])} failed" if tasks["failed"] else "")
         + (f", {len(tasks['missing'])} not finished" if tasks["missing"] else "") + ")",
         args.quiet)
    return 0


# -- mdsim demo ---------------------------------------------------------------------------

def _demo_arguments(p):
    p.add_argument("--out", default=str(DEFAULT_DEMO_OUT),
                   help=f"run directory (default {DEFAULT_DEMO_OUT}); an existing one is "
                   "resumed, finished tasks are kept")
    p.add_argument("--json", action="store_true",
                   help="print the run summary as JSON to stdout (as 'mdsim run --json')")
    p.add_argument("--quiet", action="store_true", help="no progress or messages on stderr")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


def demo_run_argv(out, json_out=False, quiet=False, verbose=False):
    """The ``mdsim run`` command line the demo runs (a list of arguments)."""
    argv = ["run", str(demo_study_path()), "--out", str(out)]
    for flag, on in (("--json", json_out), ("--quiet", quiet), ("--verbose", verbose)):
        if on:
            argv.append(flag)
    return argv


@command("demo", "run the demo study (an invented heavy gas opened into an equal evacuated "
         "volume from 10 to 60 bar) and write its report", _demo_arguments)
def run_demo(args):
    from mdsim.cli import build_parser
    if "run" not in COMMANDS:
        raise StudyError("the 'run' command is not available in this installation; "
                         "reinstall with 'python -m pip install -e .'")
    _say("demo: 'Noctium', an INVENTED heavy monatomic gas (Lennard-Jones, epsilon/k = 175 K, "
         "sigma = 3.9 angstrom, 157 g/mol: made-up parameters, not a real substance), "
         "charged at 295.15 K to 10, 20, 40 and 60 bar and opened into an equal evacuated "
         "volume; virial B2 and B2+B3 estimates against the energy route (one to two minutes)",
         args.quiet)
    argv = demo_run_argv(args.out, args.json, args.quiet, args.verbose)
    run_args = build_parser().parse_args(argv)
    start = time.monotonic()
    status = int(COMMANDS["run"][2](run_args) or 0)
    wall = time.monotonic() - start
    out = Path(args.out)
    _say(f"demo finished in {wall:.0f} s; read {out / 'report.md'} (plots in {out / 'plots'}, "
         f"numbers in {out / 'results.csv'} and {out / 'results.json'})", args.quiet)
    return status
