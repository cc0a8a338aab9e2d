"""The virial route to the Joule coefficient and the Joule inversion curve.

Through any object with the SI methods of
:class:`analysis.virial_eos.VirialGas` (truncation ``order`` 2 or 3):
T (dp/dT)_rho - p, the Joule coefficient, the zero-density end of the
inversion curve (the maximum of B2), points of the curve at given densities,
and apart, the zero-pressure Joule-Thomson (throttling) inversion.
Temperatures in K, densities in mol/m^3, pressures in Pa.
"""
import math

import numpy as np
from scipy.optimize import brentq

from analysis import inputs
from mdsim.checks import non_negative, positive
from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import R_GAS

__all__ = ["joule_sign_virial_Pa", "joule_coefficient_virial", "zero_density_joule_inversion_K",
           "joule_thomson_inversion_zero_pressure_K", "joule_inversion_curve_virial"]


# Temperatures scanned for sign changes, in units of the largest pair well
# depth epsilon/k: wide enough for the B2 maximum (25 eps/k for LJ, lower for
# softer Mie and exp-6 repulsions) and the Joule-Thomson point (6.4 eps/k).
_SCAN_LOW_EPS = 0.3
_SCAN_HIGH_EPS = 400.0
_SCAN_POINTS = 240


def _cv_ig(cv_ig, temperature_K):
    """Ideal-gas molar heat capacity (J/(mol K)) from a model with ``cv(T)``."""
    return float(inputs.heat_capacity_model(cv_ig, ("cv",)).cv(temperature_K))


def _pair_epsilons_K(gas):
    if hasattr(gas, "well_depths_K"):  # rigid molecules: the depth of each pair's minimum
        return gas.well_depths_K()
    pairs = getattr(gas, "pairs", None)
    if pairs is None:
        raise StudyError(f"gas {gas!r}: expected a VirialGas with a 'pairs' PairMatrix "
                         "(energies in kelvin) to set the temperature scan range")
    ns = pairs.n_species
    return [pairs.pots[a][b].epsilon for a in range(ns) for b in range(ns)]


def _scan_grid_K(gas, temperature_range_K):
    if temperature_range_K is None:
        eps = _pair_epsilons_K(gas)
        lo, hi = _SCAN_LOW_EPS * min(eps), _SCAN_HIGH_EPS * max(eps)
    else:
        try:
            lo, hi = (float(t) for t in temperature_range_K)
        except (TypeError, ValueError):
            raise StudyError(f"setting 'temperature_range_K' = {temperature_range_K!r}: must be "
                             "two temperatures (low, high) in K") from None
        if not (math.isfinite(lo) and math.isfinite(hi) and 0.0 < lo < hi):
            raise StudyError(f"setting 'temperature_range_K' = {temperature_range_K!r}: need "
                             "0 < low < high (finite, in K)")
    return np.geomspace(lo, hi, _SCAN_POINTS)


def _first_falling_root(fun, grid_K, what):
    """Lowest T on the grid where ``fun`` changes sign from + to -, refined."""
    values = np.full(grid_K.size, np.nan)
    values[0] = fun(grid_K[0])
    for k in range(grid_K.size - 1):  # in order: the grid beyond the first root is not needed
        values[k + 1] = fun(grid_K[k + 1])
        a, b = values[k], values[k + 1]
        if np.isfinite(a) and np.isfinite(b) and a > 0.0 >= b:
            if b == 0.0:
                return float(grid_K[k + 1])
            return float(brentq(fun, grid_K[k], grid_K[k + 1], xtol=1e-12, rtol=1e-13))
    raise ConvergenceError(
        f"{what}: no sign change from positive to negative between {grid_K[0]:.4g} K and "
        f"{grid_K[-1]:.4g} K; widen 'temperature_range_K' or check the potential",
        partial={"temperature_K": grid_K, "values": values})


def joule_sign_virial_Pa(gas, temperature_K, density_mol_m3, order=2):
    """T (dp/dT)_rho - p from the virial equation of state.

    Parameters
    ----------
    gas : VirialGas
        Equation of state with ``pressure_Pa`` and ``dp_dT_Pa_K`` (SI).
    temperature_K : float
    density_mol_m3 : float
        Molar density, >= 0.
    order : {2, 3}
        Truncation of the virial series.

    Returns
    -------
    float
        T (dp/dT)_rho - p in Pa: positive where a free expansion cools.

    Notes
    -----
    With p = rho R T (1 + B rho + C rho^2) this is
    R T^2 rho^2 (dB/dT + rho dC/dT): the ideal-gas parts cancel exactly, so
    the sign is that of dB/dT at low density.
    """
    order = inputs.order(order)
    T = positive("temperature_K", temperature_K, "give the temperature in K")
    rho = non_negative("density_mol_m3", density_mol_m3, "mol/m^3")
    return float(T * gas.dp_dT_Pa_K(T, rho, order) - gas.pressure_Pa(T, rho, order))


def joule_coefficient_virial(gas, cv_ig, temperature_K, density_mol_m3, order=2):
    """Joule coefficient mu_J = (dT/dV)_U from the virial route.

    Parameters
    ----------
    gas : VirialGas
        Equation of state (SI methods ``pressure_Pa``, ``dp_dT_Pa_K``,
        ``cv_res_J_molK``).
    cv_ig : heat-capacity model
        Ideal-gas molar heat capacity, an object with ``cv(T)`` in J/(mol K)
        (``analysis.heatcapacity``).
    temperature_K : float
    density_mol_m3 : float
        Molar density, >= 0.
    order : {2, 3}
        Truncation of the virial series.

    Returns
    -------
    float
        mu_J in K mol/m^3 (kelvin per m^3/mol of molar volume); negative where
        the gas cools in a free expansion.

    Notes
    -----
    mu_J = -[T (dp/dT)_rho - p] / C_V with C_V = c_v,ig(T) + c_v,res(T, rho)
    per mole (docs/physics.md section 5.1).
    """
    order = inputs.order(order)
    g = joule_sign_virial_Pa(gas, temperature_K, density_mol_m3, order)
    T = float(temperature_K)
    cv = _cv_ig(cv_ig, T) + float(gas.cv_res_J_molK(T, float(density_mol_m3), order))
    if not cv > 0.0:
        raise StudyError(f"heat capacity at T = {T} K, rho = {density_mol_m3} mol/m^3 is {cv} "
                         "J/(mol K), not positive: the virial series is outside its range "
                         "here; simulation is needed")
    return -g / cv


def zero_density_joule_inversion_K(gas, order=2, temperature_range_K=None):
    """Zero-density limit of the Joule inversion curve: the maximum of B2(T).

    Parameters
    ----------
    gas : VirialGas
    order : {2, 3}
        Only B2 matters at zero density; accepted so that callers pass the
        same ``order`` everywhere.
    temperature_range_K : (float, float), optional
        Range scanned for the root; default 0.3 to 400 times the largest
        pair epsilon/k.

    Returns
    -------
    float
        T in K where dB/dT = 0 (B falling above it: free expansion warms).

    Notes
    -----
    As rho -> 0, T (dp/dT) - p = R T^2 rho^2 dB/dT, so the inversion is
    where dB/dT changes sign (T* ~ 25.15 for LJ; docs/references.md section 2.4).  With a
    quantum-corrected gas the corrected B is used.
    """
    inputs.order(order)
    grid = _scan_grid_K(gas, temperature_range_K)
    return _first_falling_root(lambda t: float(gas.dB_dT(t, 2)), grid,
                               "zero-density Joule inversion (dB/dT = 0)")


def joule_thomson_inversion_zero_pressure_K(gas, temperature_range_K=None):
    """Zero-pressure Joule-Thomson (throttling) inversion temperature.

    NOT a free-expansion quantity: the isenthalpic (throttling) coefficient
    (dT/dp)_H changes sign here in the limit p -> 0.

    Parameters
    ----------
    gas : VirialGas
    temperature_range_K : (float, float), optional
        Range scanned for the root; default 0.3 to 400 times the largest
        pair epsilon/k.

    Returns
    -------
    float
        T in K where T dB/dT = B (T* ~ 6.43 for LJ; docs/references.md section 2.4).

    Notes
    -----
    (dT/dp)_H -> (T dB/dT - B) / c_p,ig as p -> 0.
    """
    grid = _scan_grid_K(gas, temperature_range_K)
    return _first_falling_root(lambda t: float(t * gas.dB_dT(t, 2) - gas.B(t, 2)), grid,
                               "zero-pressure Joule-Thomson inversion (T dB/dT = B)")


def joule_inversion_curve_virial(gas, densities_mol_m3, order=3, temperature_range_K=None):
    """Points of the Joule inversion curve T (dp/dT)_rho = p, virial route.

    Parameters
    ----------
    gas : VirialGas
    densities_mol_m3 : array_like, shape=(n_densities,)
        Molar densities (> 0) at which to solve for the inversion temperature.
    order : {2, 3}
        Truncation.  At order 2 the inversion temperature is the B2 maximum
        at every density (only the pressure changes along the curve); order 3
        gives the first density dependence, dB/dT + rho dC/dT = 0.
    temperature_range_K : (float, float), optional
        Range scanned for the root at each density.

    Returns
    -------
    points : list of dict
        One ``{temperature_K, density_mol_m3, pressure_Pa, source}`` per
        density with a root, ``source`` = "virial"; the zero-density end
        (the B2 maximum, p = 0) first.
    missing_mol_m3 : list of float
        Densities where no inversion was found in the range (the truncated
        series has no root there; simulation is needed).
    """
    order = inputs.order(order)
    rho_d = np.atleast_1d(np.asarray(densities_mol_m3, dtype=float))
    if rho_d.ndim != 1 or rho_d.size == 0 or not np.all(np.isfinite(rho_d)) or np.any(rho_d <= 0):
        raise StudyError(f"setting 'densities_mol_m3' = {densities_mol_m3!r}: must be a "
                         "non-empty list of positive molar densities (mol/m^3)")
    grid = _scan_grid_K(gas, temperature_range_K)
    t0 = zero_density_joule_inversion_K(gas, order, temperature_range_K)
    points = [{"temperature_K": t0, "density_mol_m3": 0.0, "pressure_Pa": 0.0,
               "source": "virial"}]
    missing = []
    for rho in rho_d:
        rho = float(rho)

        def scaled_sign(t, rho=rho):
            # divided by R T^2 rho^2 so brentq sees an O(B) function
            return joule_sign_virial_Pa(gas, t, rho, order) / (R_GAS * t * t * rho * rho)
        try:
            t = _first_falling_root(scaled_sign, grid, f"Joule inversion at {rho} mol/m^3")
        except ConvergenceError:
            missing.append(rho)
            continue
        points.append({"temperature_K": t, "density_mol_m3": rho,
                       "pressure_Pa": float(gas.pressure_Pa(t, rho, order)), "source": "virial"})
    return points, missing
