"""A study's task as a job for the executors of :mod:`mdsim.execute`."""
from mdsim.errors import ConvergenceError, SimulationError, StudyError

__all__ = ["task_job"]


def task_job(run_dir, index, on_tick=None):
    """Run task ``index`` of a run directory; None on success, else the error text.

    The executors' job contract (:mod:`mdsim.execute.local`): use it as
    ``functools.partial(task_job, str(run_dir))``.  While it runs the task
    writes ``tasks/NNNN.progress.json`` (:class:`mdsim.execute.progress.TaskProgressFile`).
    User errors and numerical failures come back as text; other exceptions
    (bugs) propagate, after the task has written their traceback to
    ``tasks/NNNN.failed.json``.
    """
    from mdsim.execute.progress import TaskProgressFile
    from mdsim.pipeline.rundir import RunDir
    from mdsim.pipeline.runner import run_task
    rd = RunDir(run_dir)
    reporter = TaskProgressFile(rd.progress_file(index), on_tick)
    try:
        run_task(run_dir, index, progress=reporter)
        return None
    except (StudyError, SimulationError, ConvergenceError) as exc:
        return str(exc)
    finally:
        reporter.remove()
