"""Damage detection of run, stage and task files: checksums, verification, moving aside.

A finished file carries a completion marker and a SHA-256 checksum of every
attribute and dataset (``checksum_sha256``); a checkpoint group carries its
own.  :func:`verify` and :func:`check_checkpoint` detect a file or
checkpoint that was cut short or altered; a damaged file is renamed
``NAME.corrupt-<time>`` with a :class:`CorruptFileWarning`
(:func:`move_aside`) and its work is done again; nothing is deleted.
"""
import hashlib
import logging
import os
import time
import warnings
from pathlib import Path

import numpy as np

from mdsim.errors import SimulationError
from mdsim.sampling.h5values import h5py_module, plain

__all__ = ["CHECKSUM_ATTR", "CORRUPT_SUFFIX", "CorruptFileWarning", "checksum", "verify",
           "check_checkpoint", "move_aside", "check_finished"]

CHECKSUM_ATTR = "checksum_sha256"
CORRUPT_SUFFIX = ".corrupt-"

log = logging.getLogger(__name__)


class CorruptFileWarning(UserWarning):
    """A damaged run, stage, task or checkpoint file was moved aside (its work is redone)."""


def _hash_value(h, value):
    if isinstance(value, np.ndarray):
        if value.dtype.kind == "O":
            value = np.array([v.decode("utf-8") if isinstance(v, bytes) else str(v)
                              for v in value.ravel()])
        h.update(f"{value.dtype.str}{value.shape}".encode())
        h.update(np.ascontiguousarray(value).tobytes())
    elif isinstance(value, bytes):
        h.update(b"b" + value)
    else:
        h.update(f"{type(value).__name__}:{value!r}".encode("utf-8"))


def checksum(group):
    """SHA-256 (hex) of an open HDF5 group: every attribute and dataset below it.

    The group's own ``checksum_sha256`` attribute is left out; names are
    taken in sorted order, datasets by dtype, shape and bytes.
    """
    h5py = h5py_module()
    h = hashlib.sha256()

    def walk(g, prefix):
        for key in sorted(g.attrs):
            if prefix == "" and key == CHECKSUM_ATTR:
                continue
            h.update(f"@{prefix}/{key}=".encode("utf-8"))
            _hash_value(h, plain(g.attrs[key]) if not isinstance(g.attrs[key], np.ndarray)
                        else g.attrs[key])
        for key in sorted(g):
            item = g[key]
            if isinstance(item, h5py.Group):
                h.update(f"<{prefix}/{key}>".encode("utf-8"))
                walk(item, f"{prefix}/{key}")
            else:
                if item.dtype.kind not in "biuf":
                    raise SimulationError(f"dataset '{item.name}' has dtype {item.dtype}; this "
                                          "tool writes and reads only numeric datasets")
                h.update(f"#{prefix}/{key}=".encode("utf-8"))
                _hash_value(h, np.asarray(item[()]))

    walk(group, "")
    return h.hexdigest()


def verify(path):
    """Why a finished file at ``path`` cannot be trusted, or None if it is sound.

    Sound means: it opens as HDF5, its ``complete`` marker is set, and its
    ``checksum_sha256`` matches its contents.
    """
    h5py = h5py_module()
    path = Path(path)
    try:
        with h5py.File(path, "r") as f:
            if not bool(plain(f.attrs.get("complete", False))):
                return "its completion marker is not set"
            stored = f.attrs.get(CHECKSUM_ATTR)
            if stored is None:
                return "it has no checksum"
            if plain(stored) != checksum(f):
                return "its checksum does not match its contents"
    except (OSError, KeyError, ValueError, RuntimeError) as exc:
        return f"it cannot be read as HDF5 ({' '.join(str(exc).split())})"
    return None


def check_checkpoint(g, where):
    """Raise SimulationError if the open checkpoint group ``g`` fails its checksum."""
    stored = g.attrs.get(CHECKSUM_ATTR)
    if stored is None or plain(stored) != checksum(g):
        raise SimulationError(f"the checkpoint in '{where}' is damaged (checksum "
                              f"{'missing' if stored is None else 'mismatch'})")


def move_aside(path, reason):
    """Rename a damaged file to ``NAME.corrupt-<time>`` and warn; returns the new path."""
    path = Path(path)
    stamp = time.strftime("%Y%m%d-%H%M%S")
    target = path.with_name(f"{path.name}{CORRUPT_SUFFIX}{stamp}")
    k = 1
    while target.exists():
        target = path.with_name(f"{path.name}{CORRUPT_SUFFIX}{stamp}-{k}")
        k += 1
    os.replace(path, target)
    msg = f"'{path}' is damaged ({reason}); moved aside to '{target.name}', its work is done again"
    log.warning(msg)
    warnings.warn(msg, CorruptFileWarning, stacklevel=2)
    return target


def check_finished(path):
    """True if ``path`` is a sound finished file; a damaged one is moved aside (False)."""
    path = Path(path)
    if not path.is_file():
        return False
    reason = verify(path)
    if reason is None:
        return True
    move_aside(path, reason)
    return False
