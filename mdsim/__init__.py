"""mdsim: the simulation engine and pipeline of the free-expansion tool.

Importing the package checks that numba's cached kernels were compiled from
the current sources (see ``mdsim._kernel_cache``); nothing else happens on
import.
"""
from importlib.metadata import PackageNotFoundError, version as _version
from pathlib import Path as _Path

from . import _kernel_cache

try:
    __version__ = _version("free-expansion")
except PackageNotFoundError:  # running from a source tree that was not installed
    __version__ = "0+unknown"

_kernel_cache.ensure_fresh(_Path(__file__).parent)
