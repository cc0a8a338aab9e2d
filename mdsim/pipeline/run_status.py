"""The state of a run directory's tasks: done, running, failed, left; CPU time; the scheduler's view.

Read from the run directory's files only (task files, failure files,
progress files, CPU ledgers) and, when a job array was submitted from it,
from the scheduler; safe to call while a run works in the directory.  It
changes nothing: a damaged task file is reported, not moved aside.
"""
import json
import time

from mdsim.errors import SimulationError, StudyError
from mdsim.pipeline.prepare import as_run_dir
from mdsim.pipeline.rundir import RunDir

__all__ = ["RUNNING_WITHIN_S", "run_status"]

#: A task whose progress file is younger than this (s) counts as running.
RUNNING_WITHIN_S = 120.0


def _failure_text(rd, k):
    try:
        return json.loads(rd.failure_file(k).read_text(encoding="utf-8"))["error"]
    except (OSError, ValueError, KeyError):
        return "(the failure file cannot be read)"


def _cpu_spent(ledger):
    """CPU seconds in the ledger of an unfinished task (0 when absent or unreadable)."""
    if not ledger.is_file():
        return 0.0
    try:
        return sum(v["cpu_s"] for v in json.loads(ledger.read_text()).values())
    except (OSError, ValueError, KeyError):
        return 0.0


def _task_row(rd, task, sched):
    """One task's status row, and its state for the counts."""
    from mdsim.execute.progress import read_progress
    from mdsim.pipeline import read_task_result
    k = task["index"]
    paths = as_run_dir(rd)
    state, damage = rd.task_look(k)
    row = {"index": k, "route": task["route"], "state_point_index": task["state_point"]["index"],
           "state": state}
    if state == "damaged":
        # left as it is: only running the task moves the file aside and redoes the work
        row["damage"] = damage
        row["cpu_seconds"] = _cpu_spent(paths.cpu_ledger(k))
        return row, "left"
    if state == "done":
        _, res, _ = read_task_result(rd.task_file(k))
        row.update({"cpu_seconds": res["cpu_seconds"], "delta_T_K": res["delta_T_K"],
                    "stopped_by": res["stopped_by"]})
        return row, "done"
    if state == "failed":
        row["error"] = _failure_text(rd, k)
        return row, "failed"
    info = read_progress(paths.progress_file(k))
    row["cpu_seconds"] = _cpu_spent(paths.cpu_ledger(k))
    ended = k in sched and sched[k]["state"] in ("done", "failed")
    if info is not None and time.time() - float(info.get("time", 0)) < RUNNING_WITHIN_S \
            and not ended:
        row["state"] = "running"
        row["progress"] = info
        return row, "running"
    return row, "left"


def _scheduler_view_or_error(rd):
    """(scheduler view of the run's array elements, None) or ({}, the error text)."""
    from mdsim.execute import slurm
    try:
        return slurm.scheduler_view(as_run_dir(rd).jobs_file), None
    except (StudyError, SimulationError) as exc:
        return {}, str(exc)


def _scheduler_fields(rows, sched, error):
    """Add each row's 'scheduler' entry; return the run-level scheduler fields."""
    from mdsim.execute import slurm
    if not sched and error is None:
        return {}
    counts = {"pending": 0, "running": 0, "done": 0, "failed": 0, "unknown": 0}
    for row in rows:
        view = sched.get(row["index"])
        row["scheduler"] = view
        if view is not None:
            counts[view["state"]] += 1
    jobs = sorted({v["job_id"].split("_")[0] for v in sched.values()}, key=int)
    return {"scheduler": {"job_ids": jobs, "counts": counts, "error": error,
                          "active": sum(counts[s] for s in slurm.ACTIVE)}}


def run_status(run_dir):
    """States and times of a run directory's tasks.

    Parameters
    ----------
    run_dir : path-like

    Returns
    -------
    dict
        JSON-ready: ``run_dir``; ``tasks``, one row per task (``index``,
        ``route``, ``state_point_index``, ``state`` done/running/failed/
        pending/partial/damaged, ``cpu_seconds``; done: ``delta_T_K``,
        ``stopped_by``; failed: ``error``; damaged: ``damage``, why the
        task file cannot be trusted; running: ``progress``; with a
        job array ``scheduler``, the element's view); ``counts`` (done,
        running, failed, left: a damaged task counts as left, for it is
        run again); ``cpu_seconds_total``; ``locked``; and,
        with a job array, ``scheduler`` (``job_ids``, ``counts``,
        ``error``, ``active``).
    """
    rd = RunDir(run_dir)
    tasks = rd.read_tasks()
    sched, sched_error = _scheduler_view_or_error(rd)
    rows = []
    counts = {"done": 0, "running": 0, "failed": 0, "left": 0}
    cpu_total = 0.0
    for task in tasks:
        row, kind = _task_row(rd, task, sched)
        counts[kind] += 1
        cpu_total += float(row.get("cpu_seconds", 0.0))
        rows.append(row)
    return {"run_dir": str(rd.path), "tasks": rows, "counts": counts,
            "cpu_seconds_total": cpu_total, "locked": as_run_dir(rd).lock_file.is_file(),
            **_scheduler_fields(rows, sched, sched_error)}
