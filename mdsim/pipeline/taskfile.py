"""Task files and failure files: what a task leaves in ``tasks/``.

A finished task writes ``tasks/NNNN.h5`` (as ``NNNN.h5.part``, marked
complete with its checksum, synced, then renamed) with the attributes
``format``, ``task_json`` (its entry of ``tasks.json``), ``result_json``
(the result, see :func:`mdsim.pipeline.runner.run_task`), the package
versions, and a group ``series/`` of plain float64 arrays for the plots
(suffix ``_t``: a time series; ``_tz``: time by bin along z).  A failed task
writes ``tasks/NNNN.failed.json`` with its error (and, for a bug, the traceback).
"""
import json
import os
import time
import traceback
from pathlib import Path

import numpy as np

from analysis.results import to_plain
from mdsim.errors import StudyError
from mdsim.files import atomic_write_text, fsync_path
from mdsim.sampling import store

__all__ = ["write_task_file", "write_failure", "read_task_result", "FORMAT"]

FORMAT = "mdsim-task-1"


def write_failure(rd, index, exc, user):
    """Write ``tasks/NNNN.failed.json``: the error in one line, a traceback unless ``user``."""
    info = {"index": int(index), "error": " ".join(str(exc).split()),
            "type": type(exc).__name__, "time": time.time()}
    if not user:
        info["traceback"] = traceback.format_exc()
    path = rd.failure_file(index)
    path.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_text(path, json.dumps(info, indent=1))


def write_task_file(rd, index, task, result, series):
    """Write ``NNNN.h5.part``, mark it complete with its checksum, sync, rename to ``NNNN.h5``.

    If writing fails (disk full), the ``.part`` file is removed: no
    half-written task file is left, and the stage files keep the work.
    """
    import h5py
    final = rd.task_file(index)
    part = rd.partial_file(index)
    try:
        with h5py.File(part, "w") as f:
            f.attrs["format"] = FORMAT
            f.attrs["task_json"] = json.dumps(to_plain(task))
            f.attrs["result_json"] = json.dumps(to_plain(result))
            for k, v in store.package_versions().items():
                f.attrs[f"version_{k}"] = v
            g = f.create_group("series")
            for name, arr in series.items():
                g.create_dataset(name, data=np.asarray(arr, dtype=np.float64))
            f.attrs["complete"] = True
            f.attrs[store.CHECKSUM_ATTR] = store.checksum(f)
        fsync_path(part)
    except BaseException:
        part.unlink(missing_ok=True)
        raise
    os.replace(part, final)


def read_task_result(path):
    """Read a task file.

    Parameters
    ----------
    path : str or Path
        ``tasks/NNNN.h5``.

    Returns
    -------
    task : dict
    result : dict
    series : dict of ndarray, float64

    Raises
    ------
    StudyError
        When the file is absent, damaged, not a task file or unreadable.
    """
    import h5py
    path = Path(path)
    if not path.is_file():
        raise StudyError(f"task file '{path}' does not exist; run its task first "
                         "('mdsim run', or 'mdsim task' for one task)")
    reason = store.verify(path)
    if reason is not None:
        raise StudyError(f"task file '{path}' is damaged ({reason}); run 'mdsim run' or "
                         "'mdsim task' again: it is moved aside and the task re-run")
    try:
        with h5py.File(path, "r") as f:
            if f.attrs.get("format") != FORMAT:
                raise StudyError(f"'{path}' is not a task file of this tool "
                                 f"(format {f.attrs.get('format')!r})")
            task = json.loads(f.attrs["task_json"])
            result = json.loads(f.attrs["result_json"])
            series = {k: np.array(v[()], dtype=np.float64) for k, v in f["series"].items()}
    except OSError as exc:
        raise StudyError(f"task file '{path}' cannot be read ({exc}); delete it and run "
                         "the task again") from None
    return task, result, series
