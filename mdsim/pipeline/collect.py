"""Gathering a run directory's tasks: finished results, failures and what is missing.

Missing and failed tasks are listed, never dropped: every output of the
report (:mod:`mdsim.pipeline.report`) shows them.
"""
import json
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.pipeline.summary import state_point_record
from mdsim.pipeline.taskfile import read_task_result

__all__ = ["gather_tasks", "task_state_point", "state_point_records"]


def task_state_point(task):
    """The state-point index of a planned task, or None when the entry has none."""
    sp = task.get("state_point")
    if isinstance(sp, dict) and "index" in sp:
        return int(sp["index"])
    return None


def _failure_message(path):
    try:
        info = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        return f"failure note '{path.name}' unreadable ({exc})"
    if isinstance(info, dict) and "error" in info:
        return str(info["error"])
    return json.dumps(info)


def gather_tasks(run_dir):
    """Read the planned tasks and whatever results exist.

    Parameters
    ----------
    run_dir : mdsim.pipeline.rundir.RunDir

    Returns
    -------
    dict
        ``planned``: the task list; ``results``: {index: (task, result,
        series)} for finished tasks; ``failed``: list of {index, route,
        state_point_index, error}; ``missing``: list of {index, route,
        state_point_index, state} for tasks not finished ("pending" or
        "partial", the latter with a checkpoint to resume).
    """
    planned = run_dir.read_tasks()
    results, failed, missing = {}, [], []
    for task in planned:
        k = int(task["index"])
        ident = {"index": k, "route": task.get("route"),
                 "state_point_index": task_state_point(task)}
        state = run_dir.task_state(k)
        if state == "done":
            try:
                results[k] = read_task_result(run_dir.task_file(k))
                continue
            except (OSError, KeyError, ValueError, StudyError) as exc:
                failed.append({**ident, "error": f"task file '{run_dir.task_file(k).name}' "
                               f"unreadable ({exc}); delete it and run again"})
                continue
        if state == "failed":
            failed.append({**ident, "error": _failure_message(run_dir.failure_file(k))})
        else:
            missing.append({**ident, "state": state})
    return {"planned": planned, "results": results, "failed": failed, "missing": missing}


def state_point_records(study, points, gathered):
    """The record of every state point (:func:`mdsim.pipeline.summary.state_point_record`).

    Parameters
    ----------
    study : mdsim.study.reader.Study
    points : list of StatePoint
    gathered : dict
        :func:`gather_tasks`.

    Returns
    -------
    list of dict
        One record per state point, in the order of ``points``, with the
        finished simulation routes of each.
    """
    by_sp = {}
    for task, result, _ in gathered["results"].values():
        by_sp.setdefault(task_state_point(task), {})[task.get("route")] = result
    return [state_point_record(study, sp, by_sp.get(sp.index, {})) for sp in points]
