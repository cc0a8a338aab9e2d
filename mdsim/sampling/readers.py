"""Readers of run files: attributes, samples, checkpoint, final configuration.

Every reader opens the file read-only, returns plain numbers, strings and
arrays (:mod:`mdsim.sampling.h5values`) and says in a :class:`~mdsim.errors.StudyError`
when a path is missing or not HDF5.  The layout is described in
:mod:`mdsim.sampling.store`.
"""
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.sampling.h5values import group_attrs, h5py_module, numeric, read_tree
from mdsim.sampling.integrity import CHECKSUM_ATTR, check_checkpoint, verify

__all__ = ["is_complete", "read_attrs", "read_samples", "read_checkpoint", "read_final",
           "read_run"]


def _open_for_reading(path):
    h5py = h5py_module()
    path = Path(path)
    if not path.exists():
        raise StudyError(f"run file '{path}' does not exist")
    try:
        return h5py.File(path, "r")
    except OSError as exc:
        raise StudyError(f"run file '{path}' is not a readable HDF5 file ({exc})") from None


def is_complete(path):
    """True if ``path`` is a finished, sound run file (marker set, checksum matches)."""
    path = Path(path)
    return path.is_file() and verify(path) is None


def read_attrs(path):
    """The root attributes of a run file, as plain numbers, strings and arrays."""
    with _open_for_reading(path) as f:
        return group_attrs(f)


def read_samples(path):
    """All observables of a run file: {name: ndarray, shape=(n_samples,)}."""
    with _open_for_reading(path) as f:
        return {k: numeric(v) for k, v in f["samples"].items()}


def read_checkpoint(path):
    """(state, info) from a run file's checkpoint group, or None."""
    with _open_for_reading(path) as f:
        if "checkpoint" not in f or "state" not in f["checkpoint"]:
            return None
        check_checkpoint(f["checkpoint"], path)
        info = group_attrs(f["checkpoint"])
        info.pop(CHECKSUM_ATTR, None)
        return read_tree(f["checkpoint"]["state"]), info


def read_final(path):
    """The final configuration: {"positions", "box"[, "velocities"]}, or {} if absent."""
    with _open_for_reading(path) as f:
        return read_tree(f["final"]) if "final" in f else {}


def read_run(path):
    """Everything in a run file as plain data.

    Returns
    -------
    dict
        "attrs" (dict), "samples" (dict of ndarray), "final" (dict),
        "checkpoint" ((state, info) or None), "complete" (bool).
    """
    with _open_for_reading(path) as f:
        out = {"attrs": group_attrs(f),
               "samples": {k: numeric(v) for k, v in f["samples"].items()},
               "final": read_tree(f["final"]) if "final" in f else {},
               "checkpoint": None}
        if "checkpoint" in f and "state" in f["checkpoint"]:
            info = group_attrs(f["checkpoint"])
            info.pop(CHECKSUM_ATTR, None)
            out["checkpoint"] = (read_tree(f["checkpoint"]["state"]), info)
    out["complete"] = bool(out["attrs"].get("complete", False))
    return out
