"""Gathering a run directory's tasks: finished results, failures and what is missing.

Missing and failed tasks are listed, never dropped: every output of the
report (:mod:`mdsim.pipeline.report`) shows them.  A run that mixes two
plans is refused instead (:func:`check_plan_consistent`): the run
directory's ``study.toml`` must still plan the tasks of ``tasks.json``, and
each task file must carry its own entry of ``tasks.json``.
"""
import json
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.pipeline.summary import state_point_record
from mdsim.pipeline.taskfile import read_task_result

__all__ = ["gather_tasks", "task_state_point", "state_point_records", "first_difference",
           "check_plan_consistent"]


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


def first_difference(a, b, where=""):
    """The first place where two JSON-like values differ, or None when they are equal.

    Parameters
    ----------
    a, b : dict, list or scalar
        Plain JSON values (dicts are walked key by key in sorted order, lists
        item by item).
    where : str
        The dotted name of ``a`` and ``b`` (prefix of the answer).

    Returns
    -------
    tuple (str, object, object) or None
        The dotted field name (``state_point.volume_ratio``; ``seed[1]``) and
        the two values there.

    Examples
    --------
    >>> first_difference({"state_point": {"volume_ratio": 2.0}},
    ...                  {"state_point": {"volume_ratio": 3.0}})
    ('state_point.volume_ratio', 2.0, 3.0)
    >>> first_difference([1, 2], [1, 2]) is None
    True
    """
    if isinstance(a, dict) and isinstance(b, dict):
        for key in sorted(set(a) | set(b)):
            name = f"{where}.{key}" if where else str(key)
            if key not in a or key not in b:
                return name, a.get(key, "(absent)"), b.get(key, "(absent)")
            found = first_difference(a[key], b[key], name)
            if found is not None:
                return found
        return None
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return f"{where} (length)", len(a), len(b)
        for k, (x, y) in enumerate(zip(a, b)):
            found = first_difference(x, y, f"{where}[{k}]")
            if found is not None:
                return found
        return None
    # JSON round trips keep floats exactly; 2 and 2.0 are the same number, True is not 1
    same = a == b and isinstance(a, bool) == isinstance(b, bool)
    return None if same else (where, a, b)


def check_plan_consistent(run_dir, fresh_plan, gathered):
    """Refuse a run directory whose files come from more than one plan.

    Parameters
    ----------
    run_dir : mdsim.pipeline.rundir.RunDir
    fresh_plan : list of dict
        :func:`mdsim.pipeline.plan.plan_tasks` of the run directory's
        ``study.toml`` as it is now.
    gathered : dict
        :func:`gather_tasks` (its ``planned``: ``tasks.json``; its
        ``results``: the task description stored in each finished task file).

    Raises
    ------
    StudyError
        Naming the task, the field and both values: when ``study.toml`` now
        plans other tasks than ``tasks.json`` holds (it was edited after the
        run was planned), or when a task file was made for another task than
        its entry of ``tasks.json``.
    """
    planned = json.loads(json.dumps(gathered["planned"]))
    fresh = json.loads(json.dumps(fresh_plan))
    study_name, tasks_name = run_dir.study_file.name, run_dir.tasks_file.name
    for old, new in zip(planned, fresh):
        found = first_difference(old, new)
        if found is not None:
            field, was, now = found
            raise StudyError(
                f"run directory '{run_dir.path}': task {old.get('index')} has {field} = {was!r} "
                f"in {tasks_name}, but {study_name} now plans {now!r}; {study_name} was edited "
                "after the run was planned and a report would mix the two: restore "
                f"{study_name}, or run the edited study into a new run directory")
    if len(planned) != len(fresh):
        raise StudyError(
            f"run directory '{run_dir.path}': {tasks_name} holds {len(planned)} tasks, but "
            f"{study_name} now plans {len(fresh)}; {study_name} was edited after the run was "
            f"planned: restore {study_name}, or run the edited study into a new run directory")
    by_index = {int(t["index"]): t for t in planned}
    for k, (stored, _, _) in sorted(gathered["results"].items()):
        found = first_difference(json.loads(json.dumps(stored)), by_index[k])
        if found is not None:
            field, was, now = found
            raise StudyError(
                f"task file '{run_dir.task_file(k).name}' was made for another task: its "
                f"{field} = {was!r}, but {tasks_name} has {now!r} for task {k}; a report would "
                "mix two plans: move the task file aside and run the task again, or run the "
                "study into a new run directory")
