"""``mdsim report RUN_DIR``: rebuild a run directory's tables, plots and report.md from its files.

For after a job array, or to redraw.
"""
from pathlib import Path

from mdsim.cli.options import print_json, say
from mdsim.errors import StudyError

HELP = "rebuild the tables, plots and report.md of a run directory from its files"


def add_arguments(p):
    p.add_argument("run_dir", metavar="RUN_DIR", help="a run directory made by 'mdsim run'")
    p.add_argument("--json", action="store_true",
                   help="print the summary (the JSON of 'mdsim run --json') to stdout")
    p.add_argument("--no-plots", action="store_true", help="write the tables and report only")
    p.add_argument("--quiet", action="store_true", help="no messages on stderr")


def run(args):
    from mdsim.pipeline import build_report
    from mdsim.pipeline.prepare import as_run_dir
    run_dir = Path(args.run_dir)
    if not run_dir.is_dir():
        raise StudyError(f"RUN_DIR '{run_dir}' is not a directory; give a run directory made "
                         "by 'mdsim run STUDY --out DIR'")
    summary = build_report(run_dir, plots=not args.no_plots)
    if args.json:
        print_json(summary)
    tasks = summary["tasks"]
    n_done = len(tasks["done"])
    n_all = n_done + len(tasks["failed"]) + len(tasks["missing"])
    say(f"report: {as_run_dir(run_dir).report_md} ({n_done} of {n_all} simulation tasks done"
        + (f", {len(tasks['failed'])} failed" if tasks["failed"] else "")
        + (f", {len(tasks['missing'])} not finished" if tasks["missing"] else "") + ")",
        args.quiet)
    return 0
