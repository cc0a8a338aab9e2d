"""mdsim: the simulation engine and pipeline of the free-expansion tool.

The package is layered; each layer imports only from the layers below it
(``docs/architecture.md``):

- :mod:`mdsim.cli` - the ``mdsim`` command, one module per command;
- :mod:`mdsim.check`, :mod:`mdsim.cstable` - checks against measurements,
  the corresponding-states table;
- :mod:`mdsim.pipeline` - plans, tasks, routes, the run directory, reports;
- :mod:`mdsim.study`, :mod:`mdsim.sampling`, :mod:`mdsim.execute` - study
  files, sampling one state point, running jobs locally or on a cluster;
- :mod:`analysis` - thermodynamics and statistics on numbers and arrays;
- :mod:`mdsim.engine` - potentials, kernels, MD and Monte Carlo;
- :mod:`mdsim.errors`, :mod:`mdsim.units`, :mod:`mdsim.files` - the base.

Nothing happens on import but the engine's kernel-cache check.
"""
from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("free-expansion")
except PackageNotFoundError:  # running from a source tree that was not installed
    __version__ = "0+unknown"

__all__ = ["__version__"]
