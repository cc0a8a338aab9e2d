"""A study's tasks as a scheduler job array: write the script, submit, wait, gather.

The array lives in the run directory (``array.sh``, the submissions record
``jobs.json``, the elements' output under ``logs/``); element k runs task
k.  Submitting is one step and gathering another, possibly days apart:
:func:`run_array` does whichever the directory is ready for, and says which
in its answer.
"""
import json
import logging

from mdsim.errors import SettingError, StudyError
from mdsim.pipeline.prepare import as_run_dir

__all__ = ["EXECUTORS", "choose_executor", "refuse_while_array_runs", "run_array"]

log = logging.getLogger(__name__)

#: Where the tasks of a study can run: a local process pool, a Dask cluster, a job array.
EXECUTORS = ("local", "dask", "array")


def choose_executor(rd, on=None, submit=False, resubmit_failed=False):
    """Where a run's tasks go: ``on`` as given; by default the array when one was submitted.

    Parameters
    ----------
    rd : RunDir
    on : {"local", "dask", "array"} or None
        None: ``"array"`` when a job array was submitted from the directory
        (or ``submit`` asks for one), else ``"local"``.
    submit, resubmit_failed : bool
        Submit the job array; submit again the elements whose tasks have
        no result.  Both need the array.

    Returns
    -------
    str
        One of :data:`EXECUTORS`.
    """
    from mdsim.execute import slurm
    if on is not None and on not in EXECUTORS:
        raise SettingError("on", on, f"allowed {', '.join(EXECUTORS)}")
    if (submit or resubmit_failed) and on not in (None, "array"):
        raise SettingError("on", on, "submitting a job array needs the array executor, 'array'")
    submitted = bool(slurm.read_submissions(as_run_dir(rd).jobs_file))
    if resubmit_failed and not submitted:
        raise SettingError("resubmit_failed", None, f"nothing was submitted from '{rd.path}' "
                           "(no jobs.json); submit the job array first")
    if on is None:
        return "array" if (submitted or submit or resubmit_failed) else "local"
    return on


def _active_jobs(view):
    """(task indices whose elements are pending or running, their job ids sorted)."""
    from mdsim.execute import slurm
    active = sorted(k for k, v in view.items() if v["state"] in slurm.ACTIVE)
    jobs = sorted({view[k]["job_id"].split("_")[0] for k in active}, key=int)
    return active, jobs


def refuse_while_array_runs(rd):
    """Refuse a local or Dask run while elements of a job array run the same tasks."""
    from mdsim.execute import slurm
    jobs_file = as_run_dir(rd).jobs_file
    if not slurm.read_submissions(jobs_file):
        return
    active, jobs = _active_jobs(slurm.scheduler_view(jobs_file))
    if active:
        jobs = ", ".join(jobs)
        raise StudyError(f"run directory '{rd.path}': {len(active)} element(s) of job array "
                         f"{jobs} are still pending or running; wait for them (mdsim status "
                         f"{rd.path}) or cancel them (scancel {jobs}) before running here")


def _element_error(rd, k, sched):
    """Why task k has no result after its array element ended: its own error, or the scheduler's."""
    path = rd.failure_file(k)
    if path.is_file():
        try:
            return json.loads(path.read_text(encoding="utf-8"))["error"]
        except (OSError, ValueError, KeyError, UnicodeDecodeError):
            return "(the failure file cannot be read)"
    if sched is None:
        return "not submitted"
    state = sched.get("slurm_state") or "unknown to the scheduler"
    code = f", exit code {sched['exit_code']}" if sched.get("exit_code") else ""
    return f"array element {sched['job_id']} ended {state}{code} without a result"


def run_array(rd, n_tasks, todo, cluster=None, submit=False, resubmit_failed=False):
    """Write the job array of a run directory; submit, resubmit, or gather.

    Parameters
    ----------
    rd : RunDir
    n_tasks : int
        All tasks of the directory (one element each).
    todo : list of int
        The tasks without a result.
    cluster : dict, optional
        The study's ``[cluster]`` table.
    submit : bool
        Submit the array, when nothing was submitted yet.
    resubmit_failed : bool
        Submit again the elements of ``todo``.

    Returns
    -------
    state : str
        ``"active"`` (elements still pending or running: nothing done),
        ``"submitted"``, ``"resubmitted"``, ``"written"`` (the script only)
        or ``"gathered"`` (the array ended: the results can be reported).
    info : dict
        JSON-ready: ``run_dir``, ``array_script``, ``tasks``; with
        ``job_ids`` and ``active`` when active, ``job_id`` and ``submitted``
        (the indices) when submitted.
    failed : dict or None
        When gathered, ``{index: error}`` of the tasks without a result.
    """
    from mdsim.execute import slurm
    from mdsim.execute.array import write_array_script
    paths = as_run_dir(rd)
    script = write_array_script(paths.array_script, paths.logs_dir, rd.path, n_tasks, cluster)
    submitted = slurm.read_submissions(paths.jobs_file)
    view = slurm.scheduler_view(paths.jobs_file) if submitted else {}
    active, jobs = _active_jobs(view)
    info = {"run_dir": str(rd.path), "array_script": str(script), "tasks": n_tasks}
    if active:
        return "active", {**info, "job_ids": jobs, "active": active}, None
    if (resubmit_failed or (submit and not submitted)) and todo:
        job = slurm.submit_tasks(paths.jobs_file, todo, script)
        log.info("submitted array job %s: elements %s", job, slurm.array_spec(todo))
        state = "resubmitted" if submitted else "submitted"
        return state, {**info, "job_id": job, "submitted": list(todo)}, None
    if not submitted:
        return "written", info, None
    return "gathered", info, {k: _element_error(rd, k, view.get(k)) for k in todo}
