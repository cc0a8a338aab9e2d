"""Run a study into a run directory on an executor, and report: the whole pipeline in one call.

:func:`run_study` makes (or reopens) the run directory, writes the resolved
study and the task list, runs the tasks not yet complete (complete tasks
are skipped, interrupted ones resume from their stage files, failed ones
are tried again) on a local process pool, a Dask cluster or a Slurm job
array, then builds the report.  The run directory's lock keeps a second
run out while it works; its ``log.txt`` gets the run's log.
:func:`run_logged_task` runs one task of a run directory (what an element
of a job array does).
"""
import contextlib
import dataclasses
import functools
import logging
from pathlib import Path

from mdsim.checks import count
from mdsim.errors import SettingError
from mdsim.pipeline.array_jobs import choose_executor, refuse_while_array_runs, run_array
from mdsim.pipeline.prepare import check_run_dir_place, prepare_run_dir
from mdsim.pipeline.rundir import LOG_FORMAT, RunDir

__all__ = ["StudyRun", "default_run_dir", "run_study", "execute_tasks", "package_log_to",
           "run_dir_logging", "run_logged_task"]

log = logging.getLogger(__name__)

#: Tasks at once on a Dask LocalCluster when the caller does not say.
DASK_DEFAULT_WORKERS = 2


@dataclasses.dataclass
class StudyRun:
    """What :func:`run_study` did.

    Attributes
    ----------
    run_dir : Path
    tasks : list of dict
        The planned tasks (``tasks.json``).
    skipped : int
        Tasks already complete before this run.
    on : str
        The executor used: "local", "dask" or "array".
    failed : dict
        ``{task index: error text}`` of the tasks without a result.
    summary : dict or None
        The report's run summary (``results.json``); None when the run
        ended at the job array (written, submitted, or still running).
    array_state : str or None
        With the array, what :func:`mdsim.pipeline.array_jobs.run_array` did:
        "active", "submitted", "resubmitted", "written" or "gathered".
    array_info : dict or None
        With the array, its JSON-ready description (script, job ids).
    """

    run_dir: Path
    tasks: list
    skipped: int
    on: str
    failed: dict
    summary: dict = None
    array_state: str = None
    array_info: dict = None


def default_run_dir(study):
    """``runs/<study name>``, relative to the working directory."""
    return Path("runs") / study.name


@contextlib.contextmanager
def package_log_to(handler, level=logging.INFO):
    """Send the package's log (``mdsim.*``) to a handler for the duration of a ``with`` block.

    Parameters
    ----------
    handler : logging.Handler
        Closed at the end.
    level : int
        The lowest level passed on; a lower level set already is kept (a
        caller that asked for debug output keeps it).
    """
    root = logging.getLogger("mdsim")
    old = root.level
    if old == logging.NOTSET or old > level:
        root.setLevel(level)
    root.addHandler(handler)
    try:
        yield
    finally:
        root.removeHandler(handler)
        handler.close()
        root.setLevel(old)


def run_dir_logging(log_file):
    """The package's log, INFO and above, appended to a run directory's log file (``with`` block)."""
    handler = logging.FileHandler(log_file, encoding="utf-8")
    handler.setFormatter(logging.Formatter(LOG_FORMAT))
    return package_log_to(handler, logging.INFO)


def execute_tasks(rd, indices, n_total, on="local", workers=None, cluster=None, quiet=False):
    """Run task indices of a run directory on an executor, with a progress line on stderr.

    Parameters
    ----------
    rd : RunDir
    indices : list of int
    n_total : int
        All tasks of the directory (for the progress line).
    on : {"local", "dask"}
    workers : int, optional
        Tasks at once (local: default the cores; Dask: default 2).
    cluster : dict, optional
        The study's ``[cluster]`` table (Dask: scheduler address, batch jobs).
    quiet : bool
        No progress line.

    Returns
    -------
    dict
        ``{index: None or error text}``.
    """
    from mdsim.execute.dask import run_dask
    from mdsim.execute.local import run_local
    from mdsim.execute.progress import ProgressLine
    from mdsim.pipeline import task_job
    if on not in ("local", "dask"):
        raise SettingError("on", on, "allowed local, dask (a job array runs through run_array)")
    job = functools.partial(task_job, str(rd.path))
    n_workers = workers or (DASK_DEFAULT_WORKERS if on == "dask" else None)
    line = ProgressLine(rd.progress_file, indices, n_total, enabled=False if quiet else None,
                        workers=n_workers or 1)
    try:
        if on == "local":
            return run_local(job, indices, workers=workers, on_done=line.done, on_tick=line.draw)
        return run_dask(job, indices, address=(cluster or {}).get("address"), workers=n_workers,
                        cluster_settings=cluster, log_directory=rd.logs_dir,
                        on_done=line.done, on_tick=line.draw)
    finally:
        line.close()


def _run_tasks(study, rd, tasks, on, workers, submit, resubmit_failed, quiet, say):
    """Run the tasks not yet complete; return the StudyRun (summary not yet built)."""
    todo = [t["index"] for t in tasks if rd.task_state(t["index"]) != "done"]
    skipped = len(tasks) - len(todo)
    if skipped:
        say(f"{skipped} of {len(tasks)} tasks already complete; skipped")
    on = choose_executor(rd, on, submit=submit, resubmit_failed=resubmit_failed)
    run = StudyRun(run_dir=rd.path, tasks=tasks, skipped=skipped, on=on, failed={})
    if on == "array":
        run.array_state, run.array_info, failed = run_array(
            rd, len(tasks), todo, study.cluster, submit=submit, resubmit_failed=resubmit_failed)
        run.failed = failed or {}
        return run
    refuse_while_array_runs(rd)
    outcome = execute_tasks(rd, todo, len(tasks), on, workers, study.cluster, quiet=quiet)
    run.failed = {k: e for k, e in outcome.items() if e is not None}
    return run


def run_study(study, out_dir=None, on=None, workers=None, submit=False, resubmit_failed=False,
              quiet=False, say=None, plots=True):
    """Run a study into a run directory and build its report.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    out_dir : path-like, optional
        The run directory (default :func:`default_run_dir`); an existing
        one with the same plan is resumed.
    on : {"local", "dask", "array"} or None
        The executor; None: the job array when one was submitted from the
        directory, else the local process pool.
    workers : int, optional
        Tasks at once (local: default the cores; Dask LocalCluster: 2).
    submit : bool
        With the array: submit it (sbatch) and record the job id.
    resubmit_failed : bool
        With the array: submit again the elements whose tasks have no result.
    quiet : bool
        No progress line on stderr.
    say : callable, optional
        ``say(text)`` receives the run's messages for the user (tasks
        skipped, tasks failed); they go to the log as well.
    plots : bool
        Draw the report's ``plots/`` (True by default; False writes the
        tables and report only, as ``mdsim report --no-plots``).

    Returns
    -------
    StudyRun
        ``summary`` is None when the run ended at the job array (written,
        submitted, or elements still pending or running).

    Raises
    ------
    StudyError
        Before anything is written, for a bad setting or place; or when the
        directory is locked, holds another plan, or a job array still runs
        its tasks.
    """
    from mdsim.pipeline import build_report
    say = say or (lambda text: None)
    if workers is not None:
        count("workers", workers)
    out = Path(out_dir) if out_dir is not None else default_run_dir(study)
    rd = check_run_dir_place(study, out)  # every setting, and the place, before any write
    rd.create()
    rd.acquire_lock()
    try:
        with run_dir_logging(rd.log_file):
            rd, tasks = prepare_run_dir(study, out)
            log.info("run directory %s: %d tasks", rd.path, len(tasks))
            run = _run_tasks(study, rd, tasks, on, workers, submit, resubmit_failed, quiet, say)
            if run.array_state not in (None, "gathered"):
                return run
            for k, err in sorted(run.failed.items()):
                say(f"task {k:04d} ({tasks[k]['route']}, state point "
                    f"{tasks[k]['state_point']['index']}) failed: {err}")
                log.error("task %04d failed: %s", k, err)
            run.summary = build_report(rd.path, plots=plots)
            return run
    finally:
        rd.release_lock()


def run_logged_task(run_dir, index):
    """Run one task of a run directory, logging to its ``log.txt``; return the task result.

    Parameters
    ----------
    run_dir : path-like
    index : int
        The task (0-based, as in ``tasks.json``).

    Returns
    -------
    dict
        The task result (:func:`mdsim.pipeline.run_task`).
    """
    from mdsim.pipeline import run_task
    rd = RunDir(run_dir)
    tasks = rd.read_tasks()
    count("index", index, minimum=0)
    if index >= len(tasks):
        raise SettingError("index", index, f"'{rd.path}' has tasks 0 to {len(tasks) - 1}")
    with run_dir_logging(rd.log_file):
        return run_task(rd.path, index)
