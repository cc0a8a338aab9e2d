"""``mdsim task RUN_DIR --index K``: run one task of a run directory (what an array element does)."""
import sys

from mdsim.cli.options import nonnegative_int, print_json, verbose_logging
from mdsim.numbers import value_with_error

HELP = "run one task of a run directory (what an array-job element does)"
OPTION_FOR_SETTING = {"index": "--index"}


def add_arguments(p):
    p.add_argument("run_dir", help="run directory made by 'mdsim run'")
    p.add_argument("--index", required=True, type=nonnegative_int("--index"),
                   help="task index (0-based, as in tasks.json)")
    p.add_argument("--json", action="store_true", help="print the task result as JSON")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


def run(args):
    from mdsim.pipeline.coexistence_route import coexistence_text
    from mdsim.pipeline.run_study import run_logged_task
    with verbose_logging(args.verbose):
        result = run_logged_task(args.run_dir, args.index)
    if args.json:
        print_json(result)
    else:
        d = result["delta_T_K"]
        print(f"task {args.index:04d} ({result['route']}): Delta T = "
              f"{value_with_error(d['value'], d['stderr'], 'K')}, stopped by "
              f"{result['stopped_by']}, {result['cpu_seconds']:.1f} s CPU", file=sys.stderr)
        if result.get("two_phase"):
            print("mdsim: warning: TWO-PHASE final state: "
                  + "; ".join(result["phase_check"]["evidence"]), file=sys.stderr)
            text = coexistence_text(result.get("coexistence"))
            if text:
                print(f"mdsim: {text}", file=sys.stderr)
    return 0
