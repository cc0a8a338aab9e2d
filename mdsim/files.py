"""Writing files so that a reader never sees half of one.

The base of the package beside :mod:`mdsim.errors` and :mod:`mdsim.units`:
every layer that writes a text file it may be asked to read back (the run
directory's JSON files, the job-array records, the corresponding-states
plan) writes it through :func:`atomic_write_text`.
"""
import os
from pathlib import Path

__all__ = ["atomic_write_text", "fsync_path"]


def atomic_write_text(path, text):
    """Write a text file under a temporary name and rename it into place.

    A reader never sees a half-written file; if the write fails (a full
    disk), the temporary file is removed and the error raised.

    Parameters
    ----------
    path : path-like
        The file to write (its folder must exist).
    text : str
        The whole content, written as UTF-8.
    """
    path = Path(path)
    tmp = path.with_name(path.name + f".tmp{os.getpid()}")
    try:
        tmp.write_text(text, encoding="utf-8")
    except BaseException:
        tmp.unlink(missing_ok=True)  # disk full: leave no half-written file behind
        raise
    os.replace(tmp, path)


def fsync_path(path):
    """Flush a closed file's data to the disk (before it is renamed into place)."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
