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

* the virial route, through any object with the methods of
  :class:`analysis.virial_eos.VirialGas` (SI units, truncation ``order`` 2 or 3);
* the canonical fluctuation route from NVT samples of the configurational
  energy and pressure (:func:`fluctuation_estimate`), in reduced units.

The zero-pressure Joule-Thomson (throttling) inversion temperature, where
T dB/dT = B (T* ~ 6.43 for Lennard-Jones), is a DIFFERENT quantity: it is
where a gas throttled through a valve at low pressure changes from cooling
to warming (an isenthalpic process), not where a free expansion into vacuum
does (an isoenergetic one).  :func:`joule_inversion` computes and labels both;
the helium and hydrogen "inversion near 40 K and 200 K" figures are the
Joule-Thomson ones.

Array suffixes: ``_t`` a time series (one value per recorded sample),
``_d`` a grid of densities, ``_g`` a grid of temperatures.
"""
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from analysis import inputs, stats
from analysis.results import Result
from mdsim.checks import positive
from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import K_B, N_A, R_GAS


# Temperatures scanned for sign changes, in units of the largest pair well
# depth epsilon/k: wide enough for the B2 maximum (25 eps/k for LJ, lower for
# softer Mie and exp-6 repulsions) and the Joule-Thomson point (6.4 eps/k).
_SCAN_LOW_EPS = 0.3
_SCAN_HIGH_EPS = 400.0
_SCAN_POINTS = 240


# --- validation helpers ---------------------------------------------------------

def _cv_ig(cv_ig, temperature_K):
    """Ideal-gas molar heat capacity (J/(mol K)) from a model with ``cv(T)``."""
    return float(inputs.heat_capacity_model(cv_ig, ("cv",)).cv(temperature_K))


def _pair_epsilons_K(gas):
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
    values = np.array([fun(t) for t in grid_K])
    finite = np.isfinite(values)
    for k in range(grid_K.size - 1):
        if finite[k] and finite[k + 1] and values[k] > 0.0 >= values[k + 1]:
            if values[k + 1] == 0.0:
                return float(grid_K[k + 1])
            return float(brentq(fun, grid_K[k], grid_K[k + 1], xtol=1e-12, rtol=1e-13))
    raise ConvergenceError(
        f"{what}: no sign change from positive to negative between {grid_K[0]:.4g} K and "
        f"{grid_K[-1]:.4g} K; widen 'temperature_range_K' or check the potential",
        partial={"temperature_K": grid_K, "values": values})


# --- virial route ---------------------------------------------------------------

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
    rho = float(density_mol_m3)
    if not math.isfinite(rho) or rho < 0.0:
        raise StudyError(f"setting 'density_mol_m3' = {density_mol_m3!r}: must be a finite "
                         "number >= 0 (mol/m^3)")
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
    per mole (DESIGN.md 2.4).
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
    where dB/dT changes sign (T* ~ 25.15 for LJ; REFERENCES.md).  With a
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
        T in K where T dB/dT = B (T* ~ 6.43 for LJ; REFERENCES.md).

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


# --- fluctuation route (NVT samples, reduced units) ----------------------------

@dataclass(frozen=True)
class FluctuationEstimate(Result):
    """Canonical-ensemble fluctuation estimates at one state (reduced units).

    Reduced units: energies in epsilon, temperature kT/epsilon, number
    density N sigma^3 / V, pressure in epsilon/sigma^3, heat capacity per
    particle in units of k.  All ``*_stderr`` are standard errors from the
    statistical inefficiency of the linearised (influence) series of each
    estimator (delta method).

    Attributes
    ----------
    temperature_red, density_red : float
        The state sampled.
    n_particles : int
    pressure_red : float
        p = rho T + <P_conf>.
    dp_dT_red : float
        (dp/dT)_rho = rho + N Cov(p_conf, u) / T^2.
    joule_sign_red : float
        T (dp/dT)_rho - p = N Cov(p_conf, u) / T - <P_conf>; > 0: cooling.
    cv_res_red : float
        Residual heat capacity per particle, N Var(u) / T^2.
    cv_ig_red : float
        Ideal-gas heat capacity per particle used (units of k).
    joule_coefficient_red : float
        mu_J = -(T dp/dT - p) / (cv_ig + cv_res), in T* per (sigma^3 per
        particle) of volume.
    t0 : int
        Samples discarded as equilibration.
    n_used : int
        Samples used.
    """

    temperature_red: float
    density_red: float
    n_particles: int
    pressure_red: float
    pressure_stderr_red: float
    dp_dT_red: float
    dp_dT_stderr_red: float
    joule_sign_red: float
    joule_sign_stderr_red: float
    cv_res_red: float
    cv_res_stderr_red: float
    cv_ig_red: float
    joule_coefficient_red: float
    joule_coefficient_stderr_red: float
    t0: int
    n_used: int

    def joule_coefficient_K_mol_m3(self, epsilon_K, sigma_angstrom):
        """mu_J and its stderr in SI, K mol/m^3, for a potential (eps/k, sigma)."""
        scale = positive("epsilon_K", epsilon_K, "the well depth eps/k in K") / (
            (positive("sigma_angstrom", sigma_angstrom, "sigma in angstrom") * 1e-10) ** 3 * N_A)
        return self.joule_coefficient_red * scale, self.joule_coefficient_stderr_red * scale


def _influence_stderr(phi_t):
    """sqrt(g var / n) of a linearised estimator series."""
    n = phi_t.size
    if np.ptp(phi_t) == 0.0:
        return 0.0
    g = stats.statistical_inefficiency(phi_t)
    return math.sqrt(g * float(np.var(phi_t, ddof=1)) / n)


def fluctuation_estimate(u_conf_t, p_conf_t, n_particles, temperature_red, density_red,
                         cv_ig_red=1.5, discard_equilibration=True):
    """(dp/dT)_rho, T dp/dT - p, c_v,res and mu_J from NVT samples.

    Parameters
    ----------
    u_conf_t : array_like, shape=(n_samples,), float64, reduced (epsilon)
        Configurational energy PER PARTICLE of the sampled model, one value
        per sample.  It must be the energy whose Boltzmann factor the run
        samples (the truncated energy for Monte Carlo, the truncated and
        shifted one for MD); adding a constant (the analytic tail) changes
        nothing here.
    p_conf_t : array_like, shape=(n_samples,), float64, reduced (eps/sigma^3)
        Configurational (virial) pressure, without the ideal part rho T,
        INCLUDING the long-range tail correction (a constant at fixed
        density: it shifts <P_conf> and hence p, but not any covariance).
    n_particles : int
        N, the number of particles of the run.
    temperature_red : float
        kT/epsilon of the thermostat or Monte Carlo run.
    density_red : float
        N sigma^3 / V.
    cv_ig_red : float
        Ideal-gas heat capacity per particle in units of k (1.5 for atoms;
        c_v,ig(T)/R for molecules whose internal motion the spherical model
        does not carry).
    discard_equilibration : bool
        Drop the longer of the two series' transients (automated detection)
        first.

    Returns
    -------
    FluctuationEstimate

    Notes
    -----
    In the canonical ensemble d<A>/dT = Cov(A, U_pot) / (k T^2) for any
    configurational A, with U_pot the TOTAL configurational energy
    (DESIGN.md 2.4).  With per-particle u = U_pot / N (the series given),
    Cov(P_conf, U_pot) = N Cov(p_conf, u) and Var(U_pot) = N^2 Var(u), so in
    reduced units (k = 1)

        (dp/dT)_rho = rho + N Cov(p_conf, u) / T^2
        T (dp/dT)_rho - p = N Cov(p_conf, u) / T - <p_conf>
        c_v,res (per particle) = Var(U_pot) / (N T^2) = N Var(u) / T^2
        mu_J = -(T dp/dT - p) / (c_v,ig + c_v,res).

    The ideal-gas parts of T dp/dT and p cancel exactly.  Standard errors by
    the delta method: each estimator theta is, to first order, the mean of an
    influence series phi_t (for a covariance, (x_t - <x>)(y_t - <y>); for a
    mean, x_t; combinations by the chain rule), whose statistical
    inefficiency g gives stderr = sqrt(g var(phi) / n).
    """
    u_t = stats.check_series(u_conf_t, "u_conf_t")
    p_t = stats.check_series(p_conf_t, "p_conf_t")
    if u_t.size != p_t.size:
        raise StudyError(f"series 'u_conf_t' ({u_t.size} samples) and 'p_conf_t' ({p_t.size} "
                         "samples) must have the same length; pass values recorded at the "
                         "same samples")
    if isinstance(n_particles, bool) or int(n_particles) != n_particles or n_particles < 1:
        raise StudyError(f"setting 'n_particles' = {n_particles!r}: must be a positive whole "
                         "number (the N of the run)")
    n_part = int(n_particles)
    T = positive("temperature_red", temperature_red, "give kT/epsilon of the run")
    rho = positive("density_red", density_red, "give N sigma^3 / V of the run")
    cv_ig = positive("cv_ig_red", cv_ig_red, "the ideal-gas heat capacity per particle in "
                      "units of k (1.5 for atoms)")
    t0 = 0
    if discard_equilibration:
        t0 = max(stats.detect_equilibration(u_t)[0], stats.detect_equilibration(p_t)[0])
        if u_t.size - t0 < stats.MIN_SAMPLES:
            t0 = 0  # reported through t0; too few samples would remain
    u, p = u_t[t0:], p_t[t0:]
    n = u.size
    du = u - u.mean()
    dp = p - p.mean()
    cov_pu = float(np.sum(dp * du) / (n - 1))
    var_u = float(np.sum(du * du) / (n - 1))
    p_mean = float(p.mean())

    pressure = rho * T + p_mean
    dp_dT = rho + n_part * cov_pu / (T * T)
    sign = n_part * cov_pu / T - p_mean
    cv_res = n_part * var_u / (T * T)
    cv = cv_ig + cv_res
    mu = -sign / cv

    # influence series (delta method); the centred products are the
    # linearisation of the sample covariance and variance about their means
    phi_cov = dp * du
    phi_var = du * du
    phi_sign = (n_part / T) * phi_cov - p
    phi_cv = (n_part / (T * T)) * phi_var
    phi_mu = -phi_sign / cv + (sign / (cv * cv)) * phi_cv

    return FluctuationEstimate(
        temperature_red=T, density_red=rho, n_particles=n_part,
        pressure_red=pressure, pressure_stderr_red=_influence_stderr(p),
        dp_dT_red=dp_dT, dp_dT_stderr_red=_influence_stderr((n_part / (T * T)) * phi_cov),
        joule_sign_red=sign, joule_sign_stderr_red=_influence_stderr(phi_sign),
        cv_res_red=cv_res, cv_res_stderr_red=_influence_stderr(phi_cv),
        cv_ig_red=cv_ig,
        joule_coefficient_red=mu, joule_coefficient_stderr_red=_influence_stderr(phi_mu),
        t0=int(t0), n_used=int(n))


def joule_inversion_curve_samples(estimates, epsilon_K, sigma_angstrom, density_rtol=1e-9):
    """Joule inversion points from fluctuation estimates on a (T, rho) grid.

    Parameters
    ----------
    estimates : sequence of FluctuationEstimate
        At least two temperatures per density; densities equal within
        ``density_rtol`` are one isochore.
    epsilon_K, sigma_angstrom : float
        The reduced units of the samples (eps/k in K, sigma in angstrom).
    density_rtol : float
        Relative tolerance for grouping densities.

    Returns
    -------
    points : list of dict
        ``{temperature_K, density_mol_m3, pressure_Pa, source, stderr_K}``
        with ``source`` = "simulation", one per sign change of
        T (dp/dT) - p along each isochore (several if the sign changes
        several times: then the samples are too noisy to place the root).
    missing_mol_m3 : list of float
        Densities whose sampled temperatures do not bracket a sign change.

    Notes
    -----
    Between neighbouring temperatures T1 < T2 with sign values g1, g2 of
    opposite sign, the root of the straight line is
    T0 = (T1 g2 - T2 g1) / (g2 - g1); with independent errors s1, s2,
    sigma(T0)^2 = (T2 - T1)^2 (g2^2 s1^2 + g1^2 s2^2) / (g2 - g1)^4
    (first-order propagation).  The pressure is interpolated on the same line.
    """
    eps = positive("epsilon_K", epsilon_K, "the well depth eps/k in K of the reduced units")
    sig_m = positive("sigma_angstrom", sigma_angstrom, "sigma in angstrom of the reduced units") * 1e-10
    est = list(estimates)
    if not est or not all(isinstance(e, FluctuationEstimate) for e in est):
        raise StudyError("joule_inversion_curve_samples: 'estimates' must be a non-empty list of "
                         "FluctuationEstimate (from fluctuation_estimate)")
    groups = []
    for e in sorted(est, key=lambda e: e.density_red):
        if groups and abs(e.density_red - groups[-1][0].density_red) <= density_rtol * e.density_red:
            groups[-1].append(e)
        else:
            groups.append([e])
    rho_scale = 1.0 / (sig_m ** 3 * N_A)   # reduced number density -> mol/m^3
    p_scale = eps * K_B / sig_m ** 3       # eps/sigma^3 -> Pa
    points, missing = [], []
    for grp in groups:
        grp.sort(key=lambda e: e.temperature_red)
        rho_si = grp[0].density_red * rho_scale
        found = False
        for a, b in zip(grp[:-1], grp[1:]):
            g1, g2 = a.joule_sign_red, b.joule_sign_red
            if g1 == 0.0 or g1 * g2 < 0.0:
                T1, T2 = a.temperature_red, b.temperature_red
                if g1 == 0.0:
                    t_root, s_t, p_root = T1, 0.0, a.pressure_red
                else:
                    t_root = (T1 * g2 - T2 * g1) / (g2 - g1)
                    s_t = (T2 - T1) * math.sqrt(g2 ** 2 * a.joule_sign_stderr_red ** 2
                                                + g1 ** 2 * b.joule_sign_stderr_red ** 2) / (g2 - g1) ** 2
                    w = (t_root - T1) / (T2 - T1)
                    p_root = (1.0 - w) * a.pressure_red + w * b.pressure_red
                points.append({"temperature_K": t_root * eps, "density_mol_m3": rho_si,
                               "pressure_Pa": p_root * p_scale, "source": "simulation",
                               "stderr_K": s_t * eps})
                found = True
        if not found:
            missing.append(rho_si)
    return points, missing


# --- the combined result ---------------------------------------------------------

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
