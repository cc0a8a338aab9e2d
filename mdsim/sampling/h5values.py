"""HDF5 attributes and datasets read back as plain numbers, strings and arrays.

The run files of :mod:`mdsim.sampling.store` hold only numbers, strings and
numeric arrays (no object or pickled data); these helpers turn what h5py
returns into plain Python and NumPy values and refuse anything else.
"""
import numpy as np

from mdsim.errors import StudyError

__all__ = ["h5py_module", "plain", "numeric", "group_attrs", "read_tree"]


def h5py_module():
    """The h5py module, imported when first needed rather than when this module is imported."""
    import h5py
    return h5py


def plain(value):
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


def numeric(dataset):
    """A dataset's values, refusing anything but numbers (no object or string data)."""
    if dataset.dtype.kind not in "biuf":
        raise StudyError(f"dataset '{dataset.name}' in '{dataset.file.filename}' has dtype "
                         f"{dataset.dtype}; this tool reads only numeric datasets (the file was "
                         "not written by it)")
    return np.array(dataset[()])


def group_attrs(obj):
    """The attributes of an open HDF5 file, group or dataset as plain values (dict)."""
    return {k: plain(v) for k, v in obj.attrs.items()}


def read_tree(group):
    """An open HDF5 group as a nested dict: datasets as arrays, attributes as plain values."""
    h5py = h5py_module()
    out = {}
    for key, item in group.items():
        if isinstance(item, h5py.Group):
            out[key] = read_tree(item)
        else:
            out[key] = numeric(item)
    for key, value in group.attrs.items():
        out[key] = plain(value)
    return out
