"""Preparing a run directory for a study: check the place, write the plan, copy the inputs.

:func:`prepare_run_dir` makes a new run directory (the resolved study
``study.toml``, copies of the data files it names under ``inputs/``, the
task list ``tasks.json``) or reopens one that holds the same plan.
:func:`check_run_dir_place` refuses, before anything is written, a study
whose resolved form cannot be written or a place that cannot hold the run.
:func:`as_run_dir` takes a RunDir or a path; every file of the run directory
is named by :class:`~mdsim.pipeline.rundir.RunDir` (``docs/run-directory.md``).
"""
import json
import shutil

from mdsim.errors import StudyError
from mdsim.files import atomic_write_text
from mdsim.pipeline.rundir import RunDir
from mdsim.study.writer import dumps_toml, resolved_study_document

__all__ = ["as_run_dir", "check_run_dir_place", "prepare_run_dir", "EXTENDABLE"]

EXTENDABLE = {"target_stderr_K": "target_stderr", "max_cpu_time_s": "max_cpu_time"}
"""Task settings a rerun may change (extending the tasks), with their study-file keys."""


def as_run_dir(run_dir):
    """A :class:`~mdsim.pipeline.rundir.RunDir` from a RunDir or a path."""
    return run_dir if isinstance(run_dir, RunDir) else RunDir(run_dir)


def check_run_dir_place(study, out):
    """Refuse a study or a run-directory place before anything is written.

    Every setting of the study must be writable to its resolved form, and
    the place must be writable with room for the planned tasks
    (:meth:`RunDir.preflight`).

    Returns
    -------
    RunDir
    """
    from mdsim.pipeline import plan_tasks
    dumps_toml(resolved_study_document(study))
    return RunDir(out).preflight(len(plan_tasks(study)))


def prepare_run_dir(study, out):
    """Create or reopen a run directory for a study.

    A new directory gets ``study.toml``, the copies of its data files and
    ``tasks.json``.  An existing one must hold the same task list (the same
    study and settings), otherwise nothing is touched.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    out : path-like
        The run directory.

    Returns
    -------
    rd : RunDir
    tasks : list of dict
        The planned tasks, as in ``tasks.json``.

    Raises
    ------
    StudyError
        When the directory holds another plan, naming the first setting that
        differs and cannot be extended.
    """
    from mdsim.pipeline import plan_tasks
    rd = RunDir(out)
    tasks = json.loads(json.dumps(plan_tasks(study)))
    copies = {}
    text = dumps_toml(resolved_study_document(study, copies))
    if rd.exists():
        old = rd.read_tasks()
        if old != tasks:
            _extend_plan(rd, old, tasks, text)
        return rd, tasks
    rd.create()
    for dest, src in copies.items():  # the data files the study names, next to its copy
        target = rd.path / dest
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(src, target)
    rd.study_file.write_text(text, encoding="utf-8")
    rd.write_tasks(tasks)
    return rd, tasks


def _without_extendable(task):
    return {k: v for k, v in task.items() if k not in EXTENDABLE}


def _extend_plan(rd, old, tasks, text):
    """Take a new plan that differs from the old one only in :data:`EXTENDABLE` settings.

    Raises
    ------
    StudyError
        Naming the first other setting that differs (one line).
    """
    from mdsim.pipeline.collect import first_difference
    keep = ", ".join(f"[simulation] {key}" for key in EXTENDABLE.values())
    if len(old) != len(tasks):
        raise StudyError(f"run directory '{rd.path}' holds {len(old)} tasks, but the study now "
                         f"plans {len(tasks)}: a rerun may change only {keep}; choose another "
                         "run directory, or delete this one to start over")
    for was, now in zip(old, tasks):
        found = first_difference(_without_extendable(was), _without_extendable(now))
        if found is not None:
            field, a, b = found
            raise StudyError(f"run directory '{rd.path}': task {was.get('index')} has {field} = "
                             f"{a!r} there, but the study now gives {b!r}, which its sampling "
                             f"cannot be extended to (a rerun may change only {keep}); restore "
                             "it, or run the study into a new run directory")
    atomic_write_text(rd.study_file, text)
    rd.write_tasks(tasks)
    for was, now in zip(old, tasks):
        path = rd.task_file(int(now["index"]))
        if was != now and path.is_file():
            path.replace(path.with_name(path.name + ".earlier"))
