"""One HDF5 file per run: settings, samples as they arrive, checkpoints, final state.

Layout of a run file::

    /                      attributes: settings, units, seed, initial random
                           stream state, package versions, format version,
                           ``complete`` (the completion marker)
    /samples/NAME          one resizable, chunked float64 dataset per observable,
                           shape=(n_samples,), grown block by block
    /checkpoint            the sampler state (``get_state()``): arrays as datasets,
                           numbers and strings as attributes; attribute
                           ``n_samples_done`` says how many samples it belongs to
    /final/positions       final configuration, shape=(n_particles, 3)
    /final/velocities      final velocities (MD only)
    /final/box             box edges, shape=(3,)

A run is written under ``NAME.h5.part`` with the file kept open, samples
appended in blocks and the checkpoint rewritten in place; :meth:`RunWriter.complete`
sets the marker, stores a SHA-256 checksum of every attribute and dataset
(``checksum_sha256``), closes and syncs the file and renames it to ``NAME.h5``,
so a file with the final name is never half-written.  The checkpoint group
carries its own checksum, rewritten with it.

Damage is detected on read: :func:`verify` checks the completion marker and
the checksum of a finished file, :func:`open_resumable` the checkpoint of an
interrupted one.  A damaged file is moved aside as ``NAME.corrupt-<time>``
with a :class:`CorruptFileWarning` (:func:`move_aside`) and its work is done
again; nothing is deleted.

Everything is stored as plain numbers, strings and arrays (no object or
pickled data), and the readers only read those.
"""
import hashlib
import importlib.metadata
import logging
import os
import time
import warnings
from pathlib import Path

import numpy as np

from mdsim.files import fsync_path
from mdsim.errors import SimulationError, StudyError

FORMAT_VERSION = 2
PART_SUFFIX = ".part"
PACKAGE = "free-expansion"
CHECKSUM_ATTR = "checksum_sha256"
CORRUPT_SUFFIX = ".corrupt-"

log = logging.getLogger(__name__)


class CorruptFileWarning(UserWarning):
    """A damaged run, stage, task or checkpoint file was moved aside (its work is redone)."""


# -- checksums and damaged files ------------------------------------------------------

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
    h5py = _h5py()
    h = hashlib.sha256()

    def walk(g, prefix):
        for key in sorted(g.attrs):
            if prefix == "" and key == CHECKSUM_ATTR:
                continue
            h.update(f"@{prefix}/{key}=".encode("utf-8"))
            _hash_value(h, _plain(g.attrs[key]) if not isinstance(g.attrs[key], np.ndarray)
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
    h5py = _h5py()
    path = Path(path)
    try:
        with h5py.File(path, "r") as f:
            if not bool(_plain(f.attrs.get("complete", False))):
                return "its completion marker is not set"
            stored = f.attrs.get(CHECKSUM_ATTR)
            if stored is None:
                return "it has no checksum"
            if _plain(stored) != checksum(f):
                return "its checksum does not match its contents"
    except (OSError, KeyError, ValueError, RuntimeError) as exc:
        return f"it cannot be read as HDF5 ({' '.join(str(exc).split())})"
    return None


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


def part_path(path):
    """The temporary name ``NAME.h5.part`` of a run file ``NAME.h5``."""
    path = Path(path)
    return path.with_name(path.name + PART_SUFFIX)


def package_versions():
    """Versions of the packages that shape the numbers (for file attributes)."""
    out = {}
    for name in ("numpy", "numba", "h5py", "scipy", PACKAGE):
        try:
            out[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _h5py():
    import h5py
    return h5py


def _attr_value(value, name):
    """A value HDF5 can hold as an attribute, or a clear error."""
    if isinstance(value, (bool, np.bool_)):
        return np.bool_(value)
    if isinstance(value, (int, np.integer)):
        return np.int64(value)
    if isinstance(value, (float, np.floating)):
        return np.float64(value)
    if isinstance(value, str):
        return value
    if value is None:
        return "none"
    if isinstance(value, (list, tuple, np.ndarray)):
        arr = np.asarray(value)
        if arr.dtype.kind in "biuf":
            return arr
        if arr.dtype.kind == "U":
            return [str(v) for v in arr.ravel()]
    raise TypeError(f"attribute '{name}' = {value!r} ({type(value).__name__}) cannot be stored; "
                    "use numbers, strings or numeric arrays")


def _plain(value):
    """An attribute or dataset value as a plain Python/NumPy value."""
    if isinstance(value, bytes):
        return value.decode("utf-8")
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating):
        return float(value)
    if isinstance(value, np.ndarray) and value.dtype.kind in "OS":
        return [v.decode("utf-8") if isinstance(v, bytes) else str(v) for v in value.ravel()]
    return value


def _write_attrs(obj, attrs):
    for key, value in attrs.items():
        obj.attrs[str(key)] = _attr_value(value, key)


def _read_attrs(obj):
    return {k: _plain(v) for k, v in obj.attrs.items()}


def _write_tree(group, state):
    """Write a state dictionary: arrays as datasets (in place if same shape), scalars as attributes."""
    for key, value in state.items():
        key = str(key)
        if isinstance(value, dict):
            sub = group.require_group(key)
            _write_tree(sub, value)
            continue
        if isinstance(value, np.ndarray):
            if value.dtype.kind not in "biuf":
                raise TypeError(f"state entry '{key}' has dtype {value.dtype}; only numeric "
                                "arrays can be checkpointed")
            if key in group.attrs:
                del group.attrs[key]
            ds = group.get(key)
            if ds is not None and ds.shape == value.shape and ds.dtype == value.dtype:
                ds[...] = value
            else:
                if ds is not None:
                    del group[key]
                group.create_dataset(key, data=value)
        else:
            if key in group:
                del group[key]
            group.attrs[key] = _attr_value(value, key)


def _numeric(dataset):
    """A dataset's values, refusing anything but numbers (no object or string data)."""
    if dataset.dtype.kind not in "biuf":
        raise StudyError(f"dataset '{dataset.name}' in '{dataset.file.filename}' has dtype "
                         f"{dataset.dtype}; this tool reads only numeric datasets (the file was "
                         "not written by it)")
    return np.array(dataset[()])


def _read_tree(group):
    h5py = _h5py()
    out = {}
    for key, item in group.items():
        if isinstance(item, h5py.Group):
            out[key] = _read_tree(item)
        else:
            out[key] = _numeric(item)
    for key, value in group.attrs.items():
        out[key] = _plain(value)
    return out


class RunWriter:
    """Writes one run file under its temporary name, keeping it open.

    Use :meth:`create` for a new run and :meth:`reopen` to continue an
    interrupted one.  Samples go through :meth:`append` (one call per block
    of samples), the sampler state through :meth:`write_checkpoint`, and
    :meth:`complete` finishes the file.

    Parameters
    ----------
    path : str or Path
        The final file name (``NAME.h5``); the file being written is
        ``NAME.h5.part``.
    h5file : h5py.File
        The open temporary file.
    """

    def __init__(self, path, h5file, chunk=256):
        self.path = Path(path)
        self.part = part_path(self.path)
        self.file = h5file
        self.chunk = int(chunk)

    # -- opening ----------------------------------------------------------------------
    @classmethod
    def create(cls, path, attrs, chunk=256):
        """Start a new run file (replacing a stale ``.part``) with its attributes.

        Parameters
        ----------
        path : str or Path
            Final name ``NAME.h5``.
        attrs : dict
            Settings, units, seed, random state: numbers, strings or numeric arrays.
        chunk : int
            Chunk length of the sample datasets.
        """
        h5py = _h5py()
        path = Path(path)
        path.parent.mkdir(parents=True, exist_ok=True)
        part = part_path(path)
        f = h5py.File(part, "w")
        try:
            _write_attrs(f, attrs)
            _write_attrs(f, {f"version_{k}": v for k, v in package_versions().items()})
            f.attrs["format_version"] = FORMAT_VERSION
            f.attrs["complete"] = False
            f.create_group("samples")
            f.flush()
        except BaseException:
            f.close()
            raise
        return cls(path, f, chunk)

    @classmethod
    def reopen(cls, path, chunk=256):
        """Open an interrupted ``NAME.h5.part`` to continue writing it.

        Raises
        ------
        SimulationError
            If the temporary file cannot be opened as HDF5 (for example cut
            short while its metadata was being written).
        """
        h5py = _h5py()
        part = part_path(path)
        try:
            f = h5py.File(part, "r+")
        except OSError as exc:
            raise SimulationError(f"interrupted run file '{part}' cannot be opened ({exc}); "
                                  "delete it to start the run again") from None
        return cls(path, f, chunk)

    # -- contents ---------------------------------------------------------------------
    @property
    def attrs(self):
        return _read_attrs(self.file)

    @property
    def n_samples(self):
        """Samples stored so far (the length of the shortest observable)."""
        g = self.file["samples"]
        return min((g[k].shape[0] for k in g), default=0)

    def append(self, samples):
        """Append a block of samples, one array of equal length per observable."""
        g = self.file["samples"]
        lengths = {k: np.asarray(v).shape for k, v in samples.items()}
        sizes = {s[0] if len(s) == 1 else -1 for s in lengths.values()}
        if len(sizes) != 1 or -1 in sizes:
            raise ValueError(f"a block of samples needs 1-D arrays of one length; got {lengths}")
        if len(g) and set(g) != set(samples):
            raise ValueError(f"observables {sorted(samples)} differ from those in the file "
                             f"{sorted(g)}")
        for key, value in samples.items():
            value = np.asarray(value, dtype=np.float64)
            if key not in g:
                g.create_dataset(key, shape=(0,), maxshape=(None,), dtype=np.float64,
                                 chunks=(self.chunk,))
            ds = g[key]
            n0 = ds.shape[0]
            ds.resize((n0 + value.size,))
            ds[n0:] = value

    def truncate(self, n_samples):
        """Drop samples beyond ``n_samples`` (those written after the last checkpoint)."""
        g = self.file["samples"]
        for key in g:
            if g[key].shape[0] > n_samples:
                g[key].resize((int(n_samples),))

    def write_checkpoint(self, state, n_samples_done, **info):
        """Rewrite the checkpoint group with a sampler state and flush the file.

        Parameters
        ----------
        state : dict
            From the sampler's ``get_state()``: numeric arrays, numbers, strings.
        n_samples_done : int
            Production samples already stored that this state follows.
        **info
            Extra numbers or strings kept beside it (for example the phase).
        """
        g = self.file.require_group("checkpoint")
        stale = set(g) | set(g.attrs)
        _write_tree(g.require_group("state"), state)
        for key in set(g["state"]) | set(g["state"].attrs):
            if key not in state:
                if key in g["state"]:
                    del g["state"][key]
                else:
                    del g["state"].attrs[key]
        g.attrs["n_samples_done"] = np.int64(n_samples_done)
        _write_attrs(g, info)
        for key in stale - set(info) - {"state", "n_samples_done", CHECKSUM_ATTR}:
            if key in g.attrs:
                del g.attrs[key]
        g.attrs[CHECKSUM_ATTR] = checksum(g)
        self.file.flush()

    def read_checkpoint(self):
        """The saved (state, info) pair, or None if no checkpoint was written.

        Raises
        ------
        SimulationError
            If the checkpoint's checksum does not match (it was cut short).
        """
        if "checkpoint" not in self.file or "state" not in self.file["checkpoint"]:
            return None
        g = self.file["checkpoint"]
        _check_checkpoint(g, self.part)
        info = _read_attrs(g)
        info.pop(CHECKSUM_ATTR, None)
        return _read_tree(g["state"]), info

    def write_final(self, positions, box, velocities=None):
        """Store the final configuration (and velocities when there are any)."""
        g = self.file.require_group("final")
        _write_tree(g, {"positions": np.asarray(positions, dtype=np.float64),
                        "box": np.asarray(box, dtype=np.float64)})
        if velocities is not None:
            _write_tree(g, {"velocities": np.asarray(velocities, dtype=np.float64)})

    def set_attrs(self, attrs):
        _write_attrs(self.file, attrs)

    def complete(self):
        """Mark the file complete, store its checksum, close, sync and rename it."""
        self.file.attrs["complete"] = True
        self.file.attrs[CHECKSUM_ATTR] = checksum(self.file)
        self.file.flush()
        self.file.close()
        fsync_path(self.part)
        os.replace(self.part, self.path)
        return self.path

    def close(self):
        """Close without completing (the ``.part`` file stays for a later resume)."""
        if self.file.id.valid:
            self.file.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


def _check_checkpoint(g, where):
    stored = g.attrs.get(CHECKSUM_ATTR)
    if stored is None or _plain(stored) != checksum(g):
        raise SimulationError(f"the checkpoint in '{where}' is damaged (checksum "
                              f"{'missing' if stored is None else 'mismatch'})")


def open_resumable(path, chunk=256):
    """Reopen an interrupted ``NAME.h5.part`` with its checkpoint, checked.

    Returns
    -------
    (RunWriter, (state, info) or None) or None
        None when there is no ``.part`` file, or when it was damaged (it is
        then moved aside with a warning and the run starts again).  The
        checkpoint is None when the run stopped before its first one.
    """
    part = part_path(path)
    if not part.exists():
        return None
    try:
        writer = RunWriter.reopen(path, chunk)
    except SimulationError as exc:
        move_aside(part, f"cannot be opened: {' '.join(str(exc).split())}")
        return None
    try:
        saved = writer.read_checkpoint()
        if saved is not None:
            n_done = int(saved[1]["n_samples_done"])
            g = writer.file["samples"]
            short = [k for k in g if g[k].shape[0] < n_done]
            if short:
                raise SimulationError(f"samples {short} are shorter than the checkpoint's "
                                      f"{n_done}")
            for k in g:  # every stored sample must read back
                np.asarray(g[k][:n_done])
    except (SimulationError, OSError, KeyError, ValueError) as exc:
        writer.close()
        move_aside(part, " ".join(str(exc).split()))
        return None
    return writer, saved


# -- reading ----------------------------------------------------------------------------

def _open_for_reading(path):
    h5py = _h5py()
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
        return _read_attrs(f)


def read_samples(path):
    """All observables of a run file: {name: ndarray, shape=(n_samples,)}."""
    with _open_for_reading(path) as f:
        return {k: _numeric(v) for k, v in f["samples"].items()}


def read_checkpoint(path):
    """(state, info) from a run file's checkpoint group, or None."""
    with _open_for_reading(path) as f:
        if "checkpoint" not in f or "state" not in f["checkpoint"]:
            return None
        _check_checkpoint(f["checkpoint"], path)
        info = _read_attrs(f["checkpoint"])
        info.pop(CHECKSUM_ATTR, None)
        return _read_tree(f["checkpoint"]["state"]), info


def read_final(path):
    """The final configuration: {"positions", "box"[, "velocities"]}, or {} if absent."""
    with _open_for_reading(path) as f:
        return _read_tree(f["final"]) if "final" in f else {}


def read_run(path):
    """Everything in a run file as plain data.

    Returns
    -------
    dict
        "attrs" (dict), "samples" (dict of ndarray), "final" (dict),
        "checkpoint" ((state, info) or None), "complete" (bool).
    """
    with _open_for_reading(path) as f:
        out = {"attrs": _read_attrs(f),
               "samples": {k: _numeric(v) for k, v in f["samples"].items()},
               "final": _read_tree(f["final"]) if "final" in f else {},
               "checkpoint": None}
        if "checkpoint" in f and "state" in f["checkpoint"]:
            info = _read_attrs(f["checkpoint"])
            info.pop(CHECKSUM_ATTR, None)
            out["checkpoint"] = (_read_tree(f["checkpoint"]["state"]), info)
    out["complete"] = bool(out["attrs"].get("complete", False))
    return out
