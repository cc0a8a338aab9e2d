"""The Joule inversion result: the curve from both routes with its two limits labelled.

:func:`joule_inversion` collects the virial points of the inversion curve,
the simulation points from fluctuation estimates, the zero-density Joule
inversion and, apart and labelled as such, the zero-pressure Joule-Thomson
(throttling) inversion, which is often confused with it.
"""
from dataclasses import dataclass, field

from analysis import inputs
from analysis.inversion.fluctuation import joule_inversion_curve_samples
from analysis.inversion.virial_series import (joule_inversion_curve_virial,
                                              joule_thomson_inversion_zero_pressure_K,
                                              zero_density_joule_inversion_K)
from analysis.results import Result
from mdsim.errors import StudyError

__all__ = ["JouleInversion", "joule_inversion"]


@dataclass(frozen=True)
class JouleInversion(Result):
    """Free-expansion (Joule) inversion and, apart, the throttling one.

    Attributes
    ----------
    joule_inversion_zero_density_K : float
        Zero-density end of the Joule (free-expansion) inversion curve: the
        maximum of B2(T).  Above it a free expansion warms the gas.
    joule_thomson_inversion_zero_pressure_K : float
        Zero-pressure Joule-Thomson (THROTTLING) inversion temperature,
        T dB/dT = B.  A different process (isenthalpic flow through a valve),
        listed because the two are often confused.
    joule_inversion_curve : list of dict
        ``{temperature_K, density_mol_m3, pressure_Pa, source}``; source
        "virial" or "simulation" (those also carry ``stderr_K``).
    virial_order : int
        Truncation of the virial points.
    densities_without_inversion_mol_m3 : list of float
        Densities where a route found no sign change in its range.
    notes : list of str
    """

    joule_inversion_zero_density_K: float
    joule_thomson_inversion_zero_pressure_K: float
    joule_inversion_curve: list
    virial_order: int
    densities_without_inversion_mol_m3: list = field(default_factory=list)
    notes: list = field(default_factory=list)


_NOTE = ("joule_inversion_* is the free-expansion (constant-energy) inversion; "
         "joule_thomson_inversion_zero_pressure_K is the throttling (constant-enthalpy) "
         "inversion at low pressure, a different quantity (the often-quoted helium ~40 K and "
         "hydrogen ~200 K are of this kind)")


def joule_inversion(gas, densities_mol_m3=None, order=3, samples=None, epsilon_K=None,
                    sigma_angstrom=None, temperature_range_K=None):
    """Joule inversion curve (virial and, if given, simulation points) with
    the zero-density and zero-pressure Joule-Thomson limits.

    Parameters
    ----------
    gas : VirialGas
    densities_mol_m3 : array_like, optional
        Densities for virial points beyond the zero-density end.
    order : {2, 3}
        Virial truncation for the curve.
    samples : sequence of FluctuationEstimate, optional
        NVT estimates on a (T, rho) grid for simulation points; needs
        ``epsilon_K`` and ``sigma_angstrom`` (their reduced units).
    temperature_range_K : (float, float), optional
        Range scanned for virial roots.

    Returns
    -------
    JouleInversion

    Examples
    --------
    For a Lennard-Jones gas the free-expansion inversion at zero density
    lies at T* = 25.15 and the zero-pressure throttling one at T* = 6.43:

    >>> from analysis.virial_eos import VirialGas
    >>> from mdsim.engine.potentials import LennardJones
    >>> argon = VirialGas(LennardJones(119.8, 3.405), [1.0], 0.039948)
    >>> res = joule_inversion(argon)
    >>> round(res.joule_inversion_zero_density_K / 119.8, 2)
    25.15
    >>> round(res.joule_thomson_inversion_zero_pressure_K / 119.8, 2)
    6.43
    """
    order = inputs.order(order)
    t_joule = zero_density_joule_inversion_K(gas, order, temperature_range_K)
    t_jt = joule_thomson_inversion_zero_pressure_K(gas, temperature_range_K)
    missing = []
    if densities_mol_m3 is None:
        curve = [{"temperature_K": t_joule, "density_mol_m3": 0.0, "pressure_Pa": 0.0,
                  "source": "virial"}]
    else:
        curve, miss = joule_inversion_curve_virial(gas, densities_mol_m3, order,
                                                   temperature_range_K)
        missing.extend(miss)
    notes = [_NOTE]
    if missing:
        notes.append("virial series: no inversion found at densities "
                     + ", ".join(f"{m:.6g}" for m in missing) + " mol/m^3 (simulation is needed)")
    if samples is not None:
        if epsilon_K is None or sigma_angstrom is None:
            raise StudyError("joule_inversion: simulation 'samples' need 'epsilon_K' and "
                             "'sigma_angstrom' (the reduced units they were run in)")
        sim, miss = joule_inversion_curve_samples(samples, epsilon_K, sigma_angstrom)
        curve.extend(sim)
        if miss:
            notes.append("simulation samples: no sign change bracketed at densities "
                         + ", ".join(f"{m:.6g}" for m in miss)
                         + " mol/m^3 (sample a wider temperature range)")
        missing.extend(miss)
    return JouleInversion(joule_inversion_zero_density_K=t_joule,
                          joule_thomson_inversion_zero_pressure_K=t_jt,
                          joule_inversion_curve=curve, virial_order=order,
                          densities_without_inversion_mol_m3=missing, notes=notes)
