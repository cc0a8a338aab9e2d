"""The simulation engine: pair potentials, the periodic system, the random
stream, neighbour lists, force kernels, molecular dynamics and Monte Carlo.

Reduced Lennard-Jones-style units throughout (``docs/units.md``).  Importing
the package checks that numba's cached kernels were compiled from the
current sources (:mod:`mdsim.engine.kernel_cache`); nothing else happens on
import.
"""
from pathlib import Path as _Path

from mdsim.engine import kernel_cache as _kernel_cache

__all__ = []

_kernel_cache.ensure_fresh(_Path(__file__).parent)
