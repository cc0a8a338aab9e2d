"""A grid of coexistence points stored in a table file, for every epsilon and sigma of one shape.

Gibbs-ensemble points (:func:`mdsim.sampling.coexistence.coexistence_point`)
are reduced: rho sigma^3, u / epsilon, p sigma^3 / epsilon at T* = kT /
epsilon.  For a potential of fixed shape and cut-off the same points serve
every (epsilon, sigma), so a corresponding-states table file
(:mod:`mdsim.cstable`) may carry a grid of them over T*, and the
coexistence route reads it instead of running the Gibbs ensemble.  This
module writes and reads that grid: the HDF5 group ``coexistence`` of the
table file, one dataset per field of :class:`CoexistencePoint` (one value
per grid temperature), and as attributes the fingerprint of the reduced
potential (:func:`mdsim.sampling.coexistence.potential_fingerprint`), the
cut-off and the tail treatment (coexistence depends on both).

Array suffix: ``_t`` grid temperature.
"""
from pathlib import Path

import numpy as np

from mdsim.errors import StudyError
from mdsim.sampling.coexistence import CoexistencePoint, potential_fingerprint

__all__ = ["GRID_GROUP", "write_grid", "read_grid", "grid_for"]

GRID_GROUP = "coexistence"
"""The HDF5 group of the grid in a table file."""
_NUMBERS = ("T_red", "rho_vap", "rho_vap_err", "rho_liq", "rho_liq_err", "u_vap", "u_vap_err",
            "u_liq", "u_liq_err", "p_sat", "p_sat_err", "p_liq", "p_liq_err")
_COUNTS = ("n_particles", "equilibration_cycles", "production_cycles")


def write_grid(h5file, points, pairs):
    """Write coexistence points of one reduced potential as the grid group of an open HDF5 file.

    Parameters
    ----------
    h5file : h5py.File
        Open for writing.
    points : sequence of CoexistencePoint
        One per temperature, in increasing T*.
    pairs : mdsim.engine.potentials.PairMatrix
        The reduced potential they were computed with.
    """
    g = h5file.create_group(GRID_GROUP)
    for key in _NUMBERS:
        g[key] = np.array([getattr(p, key) for p in points], dtype=float)
    for key in _COUNTS:
        g[key] = np.array([getattr(p, key) for p in points], dtype=np.int64)
    g.attrs["potential_fingerprint"] = potential_fingerprint(pairs)
    g.attrs["cutoff_red"] = float(pairs.rc_max)
    g.attrs["tail"] = points[0].tail if points else ""
    g.attrs["seeds"] = ", ".join(p.seed for p in points)
    g.attrs["method"] = "Gibbs-ensemble Monte Carlo (mdsim.sampling.coexistence)"


def read_grid(path):
    """The coexistence points of a table file's grid and the grid's attributes.

    Parameters
    ----------
    path : path-like
        A table file.

    Returns
    -------
    (list of CoexistencePoint, dict)

    Raises
    ------
    StudyError
        The file cannot be read or holds no coexistence grid.
    """
    import h5py
    path = Path(path)
    try:
        f = h5py.File(path, "r")
    except OSError as exc:
        raise StudyError(f"coexistence table '{path}' cannot be read as HDF5 ({exc}); give a "
                         "table file from 'mdsim table build'") from None
    with f:
        if GRID_GROUP not in f:
            raise StudyError(f"table file '{path}' holds no coexistence grid; build it with "
                             "[table] coexistence_temperatures = [...] ('mdsim table build')")
        g = f[GRID_GROUP]
        attrs = {k: (v.decode() if isinstance(v, bytes) else v) for k, v in g.attrs.items()}
        cols = {k: g[k][()] for k in _NUMBERS + _COUNTS}
    points = [CoexistencePoint(**{k: float(cols[k][i]) for k in _NUMBERS},
                               **{k: int(cols[k][i]) for k in _COUNTS},
                               cutoff_red=float(attrs["cutoff_red"]), tail=str(attrs["tail"]))
              for i in range(cols["T_red"].size)]
    return points, attrs


def grid_for(path, pairs):
    """The grid's points when they were computed for this reduced potential (shape and cut-off).

    Parameters
    ----------
    path : path-like
        A table file with a coexistence grid.
    pairs : mdsim.engine.potentials.PairMatrix
        The study's potential in reduced units.

    Returns
    -------
    list of CoexistencePoint

    Raises
    ------
    StudyError
        No grid, or a grid of another shape or cut-off.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones, PairMatrix
    >>> grid_for("no-such-table.h5", PairMatrix([LennardJones(1.0, 1.0)], 3.0))
    Traceback (most recent call last):
    ...
    mdsim.errors.StudyError: coexistence table 'no-such-table.h5' cannot be read as HDF5 (...
    """
    points, attrs = read_grid(path)
    if attrs.get("potential_fingerprint") != potential_fingerprint(pairs):
        raise StudyError(f"the coexistence grid of table file '{path}' was computed for another "
                         f"potential shape or cut-off (its cut-off {attrs.get('cutoff_red')} "
                         f"sigma, the study's {float(pairs.cutoff):g} sigma "
                         "once reduced); build a table for this potential")
    return points
