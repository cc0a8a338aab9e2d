"""Free-expansion (Joule) solvers at constant internal energy: the routes.

A gas at (T_i, rho_i) expands into vacuum to r = V_f / V_i > 1 times its
volume, with no heat and no work, so its molar internal energy is conserved:

    u_ig(T_f) + u_res(T_f, rho_f) = u_ig(T_i) + u_res(T_i, rho_i),  rho_f = rho_i / r,

with u_ig(T) = int c_v_ig dT from :mod:`analysis.heatcapacity`.  The
routes solve it:

- :func:`virial_expansion` (module ``virial_series``): u_res and p from the
  virial series of a ``VirialGas`` (B2, or B2 + B3), solved with a
  bracketing root finder (:func:`analysis.roots.find_root_bracketed`).
- :func:`energy_route` (module ``energy``): u_res sampled by NVT simulation
  at the initial state and at a few temperatures at rho_f; Newton steps
  (:func:`newton_step`) and, from two sampled temperatures on, MBAR
  reweighting of the sampled energies as the interpolant of u_res(T)
  (module ``mbar``).
- :func:`microcanonical_route` (module ``microcanonical``): the temperature
  estimator of a microcanonical Monte Carlo run at the final volume
  (J. R. Ray, Phys. Rev. A 44, 4061, 1991).
- :func:`direct_route` (module ``direct``): the relaxed tail of an NVE MD
  run after the box was enlarged, corrected from the model (truncated and
  shifted) potential to the full one.

- :func:`coexistence_expansion` (module ``coexistence``): a final state
  inside the vapour-liquid dome, at equilibrium: vapour and liquid at T_f by
  the lever rule over the coexisting densities and energies.

The simulation routes report a :class:`SampledExpansionResult` (module
``sampled``).  This package re-exports the public names of its modules, so
``from analysis.expansion import virial_expansion, energy_route`` works.

Units.  The virial and energy routes work in SI: temperatures in K,
densities in mol/m^3, pressures in Pa, molar energies in J/mol, heat
capacities in J/(mol K).  The microcanonical and direct routes take the
engine's reduced per-particle series (energies in epsilon, temperatures
kT/epsilon) with the reference well depth ``epsilon_K`` (epsilon/k in K) and
report kelvin; :func:`reduced_to_J_mol` converts a reduced per-particle
energy: u [J/mol] = u_red * epsilon_K * R.

Array suffixes: ``_t`` time series, ``_n`` pooled samples, ``_kn`` state k
by sample n (pymbar's convention).
"""
from analysis.expansion.coexistence import (CoexistenceExpansionResult, CoexistencePoint,
                                            CoexistenceTable, SinglePhaseFinalState,
                                            coexistence_expansion, vapour_fraction)
from analysis.expansion.direct import direct_route
from analysis.expansion.energy import (NEWTON_TOLERANCE, NewtonStep, StateSample, energy_route,
                                       newton_step)
from analysis.expansion.mbar import MIN_NEIGHBOUR_OVERLAP, MBARInterpolant
from analysis.expansion.microcanonical import microcanonical_route
from analysis.expansion.sampled import SampledExpansionResult, reduced_to_J_mol
from analysis.expansion.virial_series import (VIRIAL_SPREAD_WARN, VirialExpansionResult,
                                              virial_expansion)
from analysis.roots import find_root_bracketed

__all__ = ["virial_expansion", "VirialExpansionResult", "VIRIAL_SPREAD_WARN",
           "energy_route", "newton_step", "NewtonStep", "StateSample", "NEWTON_TOLERANCE",
           "MBARInterpolant", "MIN_NEIGHBOUR_OVERLAP", "microcanonical_route", "direct_route",
           "SampledExpansionResult", "reduced_to_J_mol", "find_root_bracketed",
           "coexistence_expansion", "CoexistencePoint", "CoexistenceTable",
           "CoexistenceExpansionResult", "SinglePhaseFinalState", "vapour_fraction"]
