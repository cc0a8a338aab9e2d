"""Is a sampled state one homogeneous fluid?  Evidence of phase separation and of a solid.

- :mod:`analysis.phases.local_density` - the histogram of particle counts in
  the cells of a grid over sampled configurations, and whether it has two
  separate peaks (vapour-like and liquid-like cells);
- :mod:`analysis.phases.bond_order` - Steinhardt's local bond order q6 and
  the fraction of particles that are crystal-like;
- :mod:`analysis.phases.stability` - mechanical stability from the sampled
  pressure: negative pressure, and a pressure that falls as density rises.

Positions are in reduced units (sigma of species 0), arrays ``r_ni``
(particle, coordinate); configurations are sequences of such arrays.
"""
from analysis.phases.bond_order import CRYSTAL_FRACTION_SOLID, crystal_like_fraction, global_q6
from analysis.phases.local_density import LocalDensityCheck, cell_counts, local_density_check
from analysis.phases.stability import PressureCheck, pressure_check

__all__ = ["cell_counts", "local_density_check", "LocalDensityCheck", "global_q6",
           "crystal_like_fraction", "CRYSTAL_FRACTION_SOLID", "pressure_check", "PressureCheck"]
