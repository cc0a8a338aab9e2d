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

Damage is detected on read: :func:`~mdsim.sampling.integrity.verify` checks
the completion marker and the checksum of a finished file,
:func:`open_resumable` the checkpoint of an interrupted one.  A damaged file
is moved aside as ``NAME.corrupt-<time>`` with a
:class:`~mdsim.sampling.integrity.CorruptFileWarning` and its work is done
again; nothing is deleted (:mod:`mdsim.sampling.integrity`).

Everything is stored as plain numbers, strings and arrays (no object or
pickled data), and the readers (:mod:`mdsim.sampling.readers`) only read
those.  This module is the one entry point to run files: it also offers the
readers and the integrity checks under their usual names.
"""
import importlib.metadata
import os
from pathlib import Path

import numpy as np

from mdsim.errors import SimulationError
from mdsim.files import fsync_path
from mdsim.sampling.h5values import group_attrs, h5py_module, read_tree
from mdsim.sampling.integrity import (CHECKSUM_ATTR, CORRUPT_SUFFIX, CorruptFileWarning,
                                      check_checkpoint, check_finished, checksum, move_aside,
                                      verify)
from mdsim.sampling.readers import (is_complete, read_attrs, read_checkpoint, read_final,
                                    read_run, read_samples)

__all__ = ["FORMAT_VERSION", "PART_SUFFIX", "PACKAGE", "RunWriter", "open_resumable",
           "part_path", "package_versions", "write_tree",
           # the integrity checks and the readers, offered here for callers of the run file
           "CHECKSUM_ATTR", "CORRUPT_SUFFIX", "CorruptFileWarning", "checksum", "verify",
           "move_aside", "check_finished", "is_complete", "read_attrs", "read_samples",
           "read_checkpoint", "read_final", "read_run"]

FORMAT_VERSION = 2
PART_SUFFIX = ".part"
PACKAGE = "free-expansion"


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


def _write_attrs(obj, attrs):
    """Store a dict of settings as attributes of an open HDF5 object."""
    for key, value in attrs.items():
        obj.attrs[str(key)] = _attr_value(value, key)


def write_tree(group, state):
    """Write a state dictionary: arrays as datasets (in place if same shape), scalars as attributes."""
    for key, value in state.items():
        key = str(key)
        if isinstance(value, dict):
            sub = group.require_group(key)
            write_tree(sub, value)
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
        h5py = h5py_module()
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
        h5py = h5py_module()
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
        return group_attrs(self.file)

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
        write_tree(g.require_group("state"), state)
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
        check_checkpoint(g, self.part)
        info = group_attrs(g)
        info.pop(CHECKSUM_ATTR, None)
        return read_tree(g["state"]), info

    def write_final(self, positions, box, velocities=None):
        """Store the final configuration (and velocities when there are any)."""
        g = self.file.require_group("final")
        write_tree(g, {"positions": np.asarray(positions, dtype=np.float64),
                        "box": np.asarray(box, dtype=np.float64)})
        if velocities is not None:
            write_tree(g, {"velocities": np.asarray(velocities, dtype=np.float64)})

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
