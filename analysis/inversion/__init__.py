"""Joule coefficient and the Joule (free-expansion) inversion locus.

The Joule coefficient is the temperature change per unit molar volume of a
free expansion, at constant internal energy,

    mu_J = (dT/dV)_U = -[T (dp/dT)_rho - p] / C_V ,

in K mol/m^3 when V is the molar volume (m^3/mol) and C_V the molar heat
capacity.  A gas cools in a free expansion (mu_J < 0) where
T (dp/dT)_rho > p and warms where T (dp/dT)_rho < p; the locus
T (dp/dT)_rho = p is the Joule inversion curve (the Amagat curve).  Its
zero-density end is the maximum of B2(T) (T* ~ 25.15 for Lennard-Jones).

Two routes are offered:

* the virial route (module ``virial_series``), through any object with the
  methods of :class:`analysis.virial_eos.VirialGas` (SI units, truncation
  ``order`` 2 or 3);
* the canonical fluctuation route (module ``fluctuation``) from NVT samples
  of the configurational energy and pressure (:func:`fluctuation_estimate`),
  in reduced units.

The zero-pressure Joule-Thomson (throttling) inversion temperature, where
T dB/dT = B (T* ~ 6.43 for Lennard-Jones), is a DIFFERENT quantity: it is
where a gas throttled through a valve at low pressure changes from cooling
to warming (an isenthalpic process), not where a free expansion into vacuum
does (an isoenergetic one).  :func:`joule_inversion` (module ``curve``)
computes and labels both; the helium and hydrogen "inversion near 40 K and
200 K" figures are the Joule-Thomson ones.  This package re-exports the
public names of its modules.

Array suffixes: ``_t`` a time series (one value per recorded sample),
``_d`` a grid of densities, ``_g`` a grid of temperatures.
"""
from analysis.inversion.curve import JouleInversion, joule_inversion
from analysis.inversion.fluctuation import (FluctuationEstimate, fluctuation_estimate,
                                            joule_inversion_curve_samples)
from analysis.inversion.virial_series import (joule_coefficient_virial,
                                              joule_inversion_curve_virial, joule_sign_virial_Pa,
                                              joule_thomson_inversion_zero_pressure_K,
                                              zero_density_joule_inversion_K)

__all__ = ["joule_inversion", "JouleInversion", "fluctuation_estimate", "FluctuationEstimate",
           "joule_inversion_curve_samples", "joule_sign_virial_Pa", "joule_coefficient_virial",
           "zero_density_joule_inversion_K", "joule_thomson_inversion_zero_pressure_K",
           "joule_inversion_curve_virial"]
