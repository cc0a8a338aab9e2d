"""``mdsim demo``: run the demo study and say where its report is.

The demo study, ``configs/demo.toml``, is an invented heavy monatomic gas
opened from 10 to 60 bar into an equal evacuated volume.  It runs through
:func:`mdsim.pipeline.run_study.run_study`, the library function behind
``mdsim run``, and is reported the same way.
"""
import time
from pathlib import Path

from mdsim.cli.options import say, verbose_logging
from mdsim.cli.run_output import print_study_run
from mdsim.errors import StudyError

HELP = ("run the demo study (an invented heavy gas opened into an equal evacuated volume from "
        "10 to 60 bar) and write its report")
OPTION_FOR_SETTING = {"out_dir": "--out"}

DEMO_STUDY = "demo.toml"
DEFAULT_DEMO_OUT = Path("runs") / "demo"
INTRODUCTION = ("demo: 'Noctium', an INVENTED heavy monatomic gas (Lennard-Jones, epsilon/k = "
                "175 K, sigma = 3.9 angstrom, 157 g/mol: made-up parameters, not a real "
                "substance), charged at 295.15 K to 10, 20, 40 and 60 bar and opened into an "
                "equal evacuated volume; virial B2 and B2+B3 estimates against the energy route "
                "(one to two minutes)")


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


def add_arguments(p):
    p.add_argument("--out", default=str(DEFAULT_DEMO_OUT),
                   help=f"run directory (default {DEFAULT_DEMO_OUT}); an existing one is "
                   "resumed, finished tasks are kept")
    p.add_argument("--json", action="store_true",
                   help="print the run summary as JSON to stdout (as 'mdsim run --json')")
    p.add_argument("--quiet", action="store_true", help="no progress or messages on stderr")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


def run(args):
    from mdsim.pipeline.prepare import as_run_dir
    from mdsim.pipeline.run_study import run_study
    from mdsim.study.reader import read_study
    path = demo_study_path()
    say(INTRODUCTION, args.quiet)
    study = read_study(path)
    start = time.monotonic()
    with verbose_logging(args.verbose):
        result = run_study(study, args.out, quiet=args.quiet, say=None if args.quiet else say)
    status = print_study_run(result, str(path), json_out=args.json, quiet=args.quiet)
    paths = as_run_dir(result.run_dir)
    say(f"demo finished in {time.monotonic() - start:.0f} s; read {paths.report_md} (plots in "
        f"{paths.plots_dir}, numbers in {paths.results_csv} and {paths.results_json})",
        args.quiet)
    return status
