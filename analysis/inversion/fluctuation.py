"""The fluctuation route to the Joule coefficient: NVT samples of energy and pressure.

In the canonical ensemble d<A>/dT = Cov(A, U_pot) / (k T^2) for any
configurational A, with U_pot the TOTAL configurational energy
(docs/physics.md section 5.3).  With per-particle u = U_pot / N (the series given),
Cov(P_conf, U_pot) = N Cov(p_conf, u) and Var(U_pot) = N^2 Var(u), so in
reduced units (k = 1)

    (dp/dT)_rho = rho + N Cov(p_conf, u) / T^2
    T (dp/dT)_rho - p = N Cov(p_conf, u) / T - <p_conf>
    c_v,res (per particle) = Var(U_pot) / (N T^2) = N Var(u) / T^2
    mu_J = -(T dp/dT - p) / (c_v,ig + c_v,res).

The ideal-gas parts of T dp/dT and p cancel exactly.  Standard errors by
the delta method: each estimator theta is, to first order, the mean of an
influence series phi_t (for a covariance, (x_t - <x>)(y_t - <y>); for a
mean, x_t; combinations by the chain rule), whose statistical inefficiency
g gives stderr = sqrt(g var(phi) / n).

Reduced units throughout: energies in epsilon, temperature kT/epsilon,
number density N sigma^3 / V, pressure in epsilon/sigma^3.  Array suffix
``_t``: a time series (one value per recorded sample).
"""
import math
from dataclasses import dataclass

import numpy as np

from analysis import stats
from analysis.results import Result
from mdsim.checks import count, positive
from mdsim.errors import StudyError
from mdsim.units import K_B, N_A

__all__ = ["FluctuationEstimate", "fluctuation_estimate", "joule_inversion_curve_samples"]


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


def _paired_series(u_conf_t, p_conf_t, discard_equilibration):
    """(u, p, t0): the two series from the end of the longer transient on."""
    u_t = stats.check_series(u_conf_t, "u_conf_t")
    p_t = stats.check_series(p_conf_t, "p_conf_t")
    if u_t.size != p_t.size:
        raise StudyError(f"series 'u_conf_t' ({u_t.size} samples) and 'p_conf_t' ({p_t.size} "
                         "samples) must have the same length; pass values recorded at the "
                         "same samples")
    t0 = 0
    if discard_equilibration:
        t0 = max(stats.detect_equilibration(u_t)[0], stats.detect_equilibration(p_t)[0])
        if u_t.size - t0 < stats.MIN_SAMPLES:
            t0 = 0  # reported through t0; too few samples would remain
    return u_t[t0:], p_t[t0:], t0


def _estimates(u, p, n_part, T, rho, cv_ig):
    """The estimates and their standard errors, keyed by FluctuationEstimate's fields."""
    n = u.size
    du = u - u.mean()
    dp = p - p.mean()
    cov_pu = float(np.sum(dp * du) / (n - 1))
    var_u = float(np.sum(du * du) / (n - 1))
    p_mean = float(p.mean())

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
    return {"pressure_red": rho * T + p_mean, "pressure_stderr_red": _influence_stderr(p),
            "dp_dT_red": rho + n_part * cov_pu / (T * T),
            "dp_dT_stderr_red": _influence_stderr((n_part / (T * T)) * phi_cov),
            "joule_sign_red": sign, "joule_sign_stderr_red": _influence_stderr(phi_sign),
            "cv_res_red": cv_res, "cv_res_stderr_red": _influence_stderr(phi_cv),
            "joule_coefficient_red": mu,
            "joule_coefficient_stderr_red": _influence_stderr(phi_mu)}


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
    The estimators and their delta-method standard errors are those of the
    module docstring.

    Examples
    --------
    Uncorrelated energies and pressures give (dp/dT)_rho = rho: the ideal
    gas part alone.

    >>> import numpy as np
    >>> u = np.tile([-0.1, 0.1], 20)
    >>> est = fluctuation_estimate(u, np.tile([0.0, 0.0, 0.01, 0.01], 10), 100, 2.0, 0.05,
    ...                            discard_equilibration=False)
    >>> round(est.dp_dT_red, 12), round(est.cv_res_red, 4)
    (0.05, 0.2564)
    """
    u, p, t0 = _paired_series(u_conf_t, p_conf_t, discard_equilibration)
    n_part = count("n_particles", n_particles, hint="the N of the run")
    T = positive("temperature_red", temperature_red, "give kT/epsilon of the run")
    rho = positive("density_red", density_red, "give N sigma^3 / V of the run")
    cv_ig = positive("cv_ig_red", cv_ig_red, "the ideal-gas heat capacity per particle in "
                     "units of k (1.5 for atoms)")
    return FluctuationEstimate(temperature_red=T, density_red=rho, n_particles=n_part,
                               cv_ig_red=cv_ig, t0=int(t0), n_used=int(u.size),
                               **_estimates(u, p, n_part, T, rho, cv_ig))


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
