"""analysis: the thermodynamics of a free (Joule) expansion, on numbers and arrays.

It takes pair potentials (:mod:`mdsim.engine.potentials`) and sampled
series and never runs a simulation itself.  Its modules:

- :mod:`analysis.expansion` - the routes to the final temperature of a
  free expansion: ``virial_expansion``, ``energy_route``,
  ``microcanonical_route``, ``direct_route``, and ``coexistence_expansion``
  for a final state of vapour and liquid;
- :mod:`analysis.virial` - second and third virial coefficients (``b2``,
  ``b3``, mixtures, quantum correction, characteristic temperatures);
- :mod:`analysis.virial_eos` - ``VirialGas``, the virial equation of state
  in SI units;
- :mod:`analysis.heatcapacity` - ideal-gas heat capacity models and
  ``heat_capacity_from_spec``;
- :mod:`analysis.entropy` - entropy generated and work lost
  (``free_expansion_entropy``);
- :mod:`analysis.sampled_entropy` - entropy generated from sampled end
  states (``residual_entropy`` by test-particle insertion, ``route_entropy``);
- :mod:`analysis.inversion` - Joule coefficient and inversion curve
  (``joule_inversion``, ``fluctuation_estimate``);
- :mod:`analysis.phases` - evidence that a sampled state is not one
  homogeneous fluid (bimodal local density, crystal-like bond order,
  negative or falling pressure);
- :mod:`analysis.stats` - means and errors of correlated time series;
- :mod:`analysis.block_error` - block-averaging errors and production means;
- :mod:`analysis.error_propagation` - first-order propagation of standard errors;
- :mod:`analysis.results` - the ``Result`` base and ``to_plain``;
- :mod:`analysis.inputs`, :mod:`analysis.roots` - setting checks and the
  bracketed root finder the modules share.

It imports only the base of :mod:`mdsim` (errors, units, checks) and the
pair potentials.  Nothing is imported with the package: ``from analysis
import *`` loads the modules listed in ``__all__``.
"""

__all__ = ["expansion", "virial", "virial_eos", "heatcapacity", "entropy", "sampled_entropy",
           "inversion", "phases", "stats", "block_error", "error_propagation", "results",
           "inputs", "roots"]
