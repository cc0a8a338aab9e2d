"""``mdsim run STUDY``: plan a study's tasks, run them on an executor, write the report.

The work is :func:`mdsim.pipeline.run_study.run_study`; this module reads
the options and prints.  ``--on array`` writes the Slurm job array;
``--submit`` submits it (the job id goes to ``RUN_DIR/jobs.json``); a later
``mdsim run`` on that directory runs nothing while elements are pending or
running, and afterwards only gathers and reports; ``--resubmit-failed``
submits again the elements whose tasks have no result.  ``--plan`` prints
the tasks it would run (state point, route, particles, expected CPU time
from a short pilot in memory) and writes nothing.

JSON goes to stdout, messages and progress to stderr.
"""
from mdsim.cli.options import (add_renamed_option, positive_int, print_json, say,
                               verbose_logging)
from mdsim.cli.run_output import print_study_run
from mdsim.errors import StudyError
from mdsim.pipeline.array_jobs import EXECUTORS

HELP = "run a study: plan its tasks, run them, write the run directory and report"
OPTION_FOR_SETTING = {"workers": "--workers", "on": "--on", "out_dir": "--out",
                      "resubmit_failed": "--resubmit-failed", "submit": "--submit"}


def add_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--out", help="run directory (default runs/<study name>)")
    p.add_argument("--on", default=None, choices=EXECUTORS,
                   help="where the tasks run: a local process pool (default), a Dask cluster, "
                   "or a scheduler job array (default array when a job array was submitted "
                   "from the run directory)")
    add_renamed_option(p, "--executor", "--on")
    p.add_argument("--submit", action="store_true",
                   help="with --on array: submit the job array with sbatch and record its "
                   "job id; run again after it finished to gather and report")
    p.add_argument("--resubmit-failed", action="store_true",
                   help="submit again the array elements that failed or were killed (the tasks "
                   "not done); the others are kept")
    p.add_argument("--workers", type=positive_int("--workers"),
                   help="tasks at once (local: default the number of cores; dask LocalCluster: "
                   "default 2)")
    p.add_argument("--plan", action="store_true",
                   help="print the tasks it would run (state point, route, particles, expected "
                   "CPU time from a short pilot in memory) and write nothing")
    p.add_argument("--json", action="store_true",
                   help="print the run summary (with --plan: the task list) as JSON on stdout")
    p.add_argument("--no-plots", action="store_true",
                   help="write the tables and report without drawing plots/ ('mdsim report' "
                   "draws them later)")
    p.add_argument("--quiet", action="store_true", help="no progress line or messages")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


def _check_combinations(args):
    """--submit and --resubmit-failed go with the job array; --plan runs and writes nothing."""
    if args.plan:
        for flag, given in (("--out", args.out), ("--on", args.on), ("--submit", args.submit),
                            ("--resubmit-failed", args.resubmit_failed),
                            ("--workers", args.workers)):
            if given:
                raise StudyError(f"option {flag} runs or writes, but --plan only prints the "
                                 f"tasks; leave {flag} out, or --plan")
    for flag, given in (("--resubmit-failed", args.resubmit_failed), ("--submit", args.submit)):
        if given and args.on not in (None, "array"):
            raise StudyError(f"option {flag} goes with --on array, not --on {args.on}; leave "
                             "--on out or give array")


def run(args):
    from mdsim.pipeline.run_study import run_study
    from mdsim.study.reader import read_study
    _check_combinations(args)
    study = read_study(args.study)
    if args.plan:
        return _print_plan(study, args.json)
    with verbose_logging(args.verbose):
        result = run_study(study, args.out, on=args.on, workers=args.workers,
                           submit=args.submit, resubmit_failed=args.resubmit_failed,
                           quiet=args.quiet, plots=not args.no_plots,
                           say=None if args.quiet else say)
    return print_study_run(result, args.study, json_out=args.json, quiet=args.quiet)


def _print_plan(study, json_out):
    """``--plan``: one line per task (stdout), or the list as JSON; nothing written."""
    from mdsim.pipeline.plan_preview import describe_task, preview_plan
    entries = preview_plan(study)
    if json_out:
        print_json(entries)
    else:
        for entry in entries:
            print(describe_task(entry))
    if not entries:
        say(f"study '{study.path}' plans no simulation task ([simulation] routes is empty)")
    return 0
