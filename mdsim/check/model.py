"""The fast expansion model: reduced virial coefficients of one shape, scaled by epsilon and sigma.

Fits, sensitivities, posteriors and suggestions call the model thousands of
times, so for a pure gas with a Lennard-Jones or Mie potential they use
:class:`ExpansionModel`: the reduced B2*(T*) and B3*(T*) (and two
T-derivatives each) of the potential's shape, computed once by
:mod:`analysis.virial` on a log grid of T* and interpolated by cubic
splines (corresponding states: B2 = sigma^3 B2*(T / epsilon),
B3 = sigma^6 B3*(T / epsilon)), and the constant-energy balance solved by a
vectorised Newton iteration.  Its Delta T agrees with
:func:`analysis.expansion.virial_expansion` to about 1e-5 K (the splines
reproduce B3 to about 1e-5 relative; tests).

Array suffixes: ``_n`` measurement rows, ``_p`` parameters.
"""
import functools
import math

import numpy as np

from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import N_A, R_GAS

__all__ = ["ExpansionModel", "ReducedVirial", "reduced_virial", "reduced_coefficients",
           "study_potential", "model_for_study", "FIT_FORMS", "SERIES_LIMIT", "T_RED_RANGE",
           "SHAPE_RANGE", "SHAPE_STEP"]

# Reduced-temperature range of the spline tables of B2* and B3*.
T_RED_RANGE = (0.2, 400.0)
T_RED_NODES = 200
# Shape fits: the repulsive exponent's lattice (tables are built on it and
# interpolated between by cubic Lagrange weights in the exponent).
SHAPE_STEP = 0.5
SHAPE_RANGE = (7.0, 40.0)
# The B2 + B3 series is trusted up to this third-term fraction of Z
# (the limit of analysis.virial_eos.VirialGas.check_converged).
SERIES_LIMIT = 0.05
A3_TO_M3_MOL = 1e-30 * N_A
A6_TO_M6_MOL2 = 1e-60 * N_A * N_A
FIT_FORMS = ("lennard-jones", "mie")
# Newton steps allowed for the initial density and the final temperature.
NEWTON_STEPS = 60

class ReducedVirial:
    """Splines of B2*(T*), B3*(T*) and their T*-derivatives for one Mie shape.

    Parameters
    ----------
    repulsive, attractive : float
        Mie exponents (12, 6 for Lennard-Jones).

    Notes
    -----
    Values per molecule in sigma^3 and sigma^6 at T* = kT / epsilon, computed
    by :func:`analysis.virial.b2` and :func:`analysis.virial.b3` of
    ``Mie(1, 1, n, m)`` at ``T_RED_NODES`` temperatures spaced evenly in
    ln T* over ``T_RED_RANGE``; each of the six functions is a cubic spline
    in ln T*.  The spacing (0.035 in ln T*) keeps the interpolation error
    near 1e-7 relative for B2 and 1e-5 for B3.
    """

    def __init__(self, repulsive, attractive):
        from scipy.interpolate import CubicSpline

        from analysis import virial
        from mdsim.engine.potentials import LennardJones, Mie
        self.repulsive, self.attractive = float(repulsive), float(attractive)
        pot = (LennardJones(1.0, 1.0) if (self.repulsive, self.attractive) == (12.0, 6.0)
               else Mie(1.0, 1.0, self.repulsive, self.attractive))
        T = np.geomspace(*T_RED_RANGE, T_RED_NODES)
        x = np.log(T)
        vals = list(virial.b2(pot, T)) + list(virial.b3(pot, T))
        self._splines = [CubicSpline(x, np.asarray(v, dtype=float)) for v in vals]

    def coefficients(self, T_red):
        """(B2, dB2, d2B2, B3, dB3, d2B3) reduced, at T_red (array), derivatives in T*."""
        T_red = np.asarray(T_red, dtype=float)
        lo, hi = T_RED_RANGE
        if np.any(~np.isfinite(T_red)) or np.any(T_red < lo) or np.any(T_red > hi):
            bad = T_red[~((T_red >= lo) & (T_red <= hi))].ravel()[0]
            raise StudyError(f"reduced temperature kT/epsilon = {bad:.4g} is outside the range "
                             f"{lo:g} to {hi:g} of the fast virial tables; the measurement "
                             "temperatures and epsilon are too far apart for this potential "
                             "(check the units of epsilon and of the temperatures)")
        return tuple(s(np.log(T_red)) for s in self._splines)


@functools.lru_cache(maxsize=48)
def reduced_virial(repulsive, attractive):
    """The :class:`ReducedVirial` of a shape, built once per process (cached)."""
    return ReducedVirial(repulsive, attractive)


def _lagrange_weights(n, nodes):
    w = np.ones(len(nodes))
    for i, xi in enumerate(nodes):
        for j, xj in enumerate(nodes):
            if i != j:
                w[i] *= (n - xj) / (xi - xj)
    return w


def reduced_coefficients(T_red, repulsive, attractive, interpolate_shape=False):
    """Reduced B2, B3 and derivatives; with ``interpolate_shape`` the repulsive
    exponent may be any number (cubic Lagrange interpolation between tables on
    a lattice of step ``SHAPE_STEP``), so that a shape fit sees a smooth model."""
    if not interpolate_shape:
        return reduced_virial(float(repulsive), float(attractive)).coefficients(T_red)
    lo, hi = SHAPE_RANGE
    if not (lo <= repulsive <= hi):
        raise StudyError(f"repulsive exponent {repulsive:.4g}: the shape fit allows {lo:g} to "
                         f"{hi:g}; start from a value inside that range")
    k = math.floor((repulsive - lo) / SHAPE_STEP)
    k = min(max(k, 1), int(round((hi - lo) / SHAPE_STEP)) - 2)
    nodes = [lo + (k + j) * SHAPE_STEP for j in (-1, 0, 1, 2)]
    w = _lagrange_weights(repulsive, nodes)
    out = None
    for wj, nj in zip(w, nodes):
        c = reduced_virial(round(nj, 6), float(attractive)).coefficients(T_red)
        out = [wj * v for v in c] if out is None else [o + wj * v for o, v in zip(out, c)]
    return tuple(out)


class ExpansionModel:
    """Delta T of free expansions and B2 for parameter vectors (B2 + B3 virial route).

    Parameters
    ----------
    form : {"lennard-jones", "mie"}
    cv_ig : IdealGasHeatCapacity
    repulsive, attractive : float
        Mie exponents (ignored for Lennard-Jones, which is 12-6).
    fit_shape : bool
        When true, the parameter vector carries the repulsive exponent
        third (a Lennard-Jones model becomes Mie n-6).

    Attributes
    ----------
    names : tuple of str
        ``("epsilon_K", "sigma_angstrom")`` and ``"repulsive_exponent"``
        when ``fit_shape``.
    """

    def __init__(self, form, cv_ig, repulsive=12.0, attractive=6.0, fit_shape=False):
        if form not in FIT_FORMS:
            raise StudyError(f"potential form {form!r}: fits, sensitivities, posteriors and "
                             f"suggestions need a form with a fixed shape, {' or '.join(FIT_FORMS)}")
        self.form = form
        self.cv_ig = cv_ig
        self.repulsive = 12.0 if form == "lennard-jones" else float(repulsive)
        self.attractive = 6.0 if form == "lennard-jones" else float(attractive)
        self.fit_shape = bool(fit_shape)
        self.names = ("epsilon_K", "sigma_angstrom") + (("repulsive_exponent",)
                                                       if fit_shape else ())

    def start(self, epsilon_K, sigma_angstrom):
        """The parameter vector of a study's potential."""
        x = [float(epsilon_K), float(sigma_angstrom)]
        if self.fit_shape:
            x.append(self.repulsive)
        return np.array(x)

    def bounds(self, data_T_K):
        """(lower, upper) of the parameters, keeping every T* inside the spline range."""
        T = np.asarray(data_T_K, dtype=float)
        eps_lo = 1.5 * T.max() / T_RED_RANGE[1]
        eps_hi = 0.5 * T.min() / T_RED_RANGE[0]
        lo, hi = [eps_lo, 0.5], [eps_hi, 50.0]
        if self.fit_shape:
            lo.append(SHAPE_RANGE[0] + 2 * SHAPE_STEP)
            hi.append(SHAPE_RANGE[1] - 3 * SHAPE_STEP)
        return np.array(lo), np.array(hi)

    def coefficients(self, theta, T_K):
        """SI (B, dB/dT, d2B/dT2, C, dC/dT, d2C/dT2) at temperatures T_K."""
        eps, sig = float(theta[0]), float(theta[1])
        n = float(theta[2]) if self.fit_shape else self.repulsive
        T_red = np.asarray(T_K, dtype=float) / eps
        b, db, d2b, c, dc, d2c = reduced_coefficients(T_red, n, self.attractive,
                                                      interpolate_shape=self.fit_shape)
        s3 = A3_TO_M3_MOL * sig ** 3
        s6 = A6_TO_M6_MOL2 * sig ** 6
        return (s3 * b, s3 * db / eps, s3 * d2b / eps ** 2,
                s6 * c, s6 * dc / eps, s6 * d2c / eps ** 2)

    def B2(self, theta, T_K):
        """Second virial coefficient, m^3/mol."""
        return self.coefficients(theta, T_K)[0]

    def delta_T(self, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None):
        """Delta T (K) of free expansions by the B2 + B3 series, vectorised over rows.

        Parameters
        ----------
        theta : array_like, shape=(n_params,)
        T_K, volume_ratio : ndarray, shape=(n,)
        p_Pa, rho_mol_m3 : ndarray, shape=(n,), one of them

        Returns
        -------
        delta_T_K : ndarray, shape=(n,)
            NaN where the density or the final temperature cannot be solved.
        converged : ndarray, shape=(n,), bool
            The B2 + B3 series holds (third term <= ``SERIES_LIMIT`` of Z) at
            the initial and the final state.

        Notes
        -----
        rho_i solves rho (1 + B rho + C rho^2) = p / (R T) by Newton steps
        from the ideal gas (the branch :meth:`VirialGas.density_from_pressure`
        takes); T_f solves u_ig(T_f) + u_res(T_f, rho_i / r) = u_ig(T_i) +
        u_res(T_i, rho_i), u_res = -R T^2 (B' rho + C' rho^2 / 2), by Newton
        steps with c_v = c_v_ig + c_v_res.
        """
        T_i = np.asarray(T_K, dtype=float)
        r = np.asarray(volume_ratio, dtype=float)
        B, dB, _, C, dC, _ = self.coefficients(theta, T_i)
        if rho_mol_m3 is not None:
            rho = np.asarray(rho_mol_m3, dtype=float).copy()
            ok = np.ones(T_i.shape, dtype=bool)
        else:
            rho, ok = _density_from_pressure(B, C, np.asarray(p_Pa, dtype=float) / (R_GAS * T_i))
        rho = np.where(ok, rho, np.nan)
        z_i = np.abs(C * rho * rho) / np.abs(1.0 + B * rho)
        u_res_i = -R_GAS * T_i ** 2 * (dB * rho + 0.5 * dC * rho * rho)
        u_target = self.cv_ig.u(T_i) + u_res_i
        rho_f = rho / r
        T = self._final_temperature(theta, T_i, rho_f, u_target)
        B, _, _, C, _, _ = self.coefficients(theta, np.where(np.isfinite(T), T, T_i))
        z_f = np.abs(C * rho_f ** 2) / np.abs(1.0 + B * rho_f)
        delta = np.where(ok & np.isfinite(T), T - T_i, np.nan)
        converged = ok & (z_i <= SERIES_LIMIT) & (z_f <= SERIES_LIMIT) & np.isfinite(delta)
        return delta, converged

    def _final_temperature(self, theta, T_i, rho_f, u_target):
        """T_f with u_ig(T_f) + u_res(T_f, rho_f) = u_target, by Newton steps from T_i."""
        cv = self.cv_ig
        T = T_i.copy()
        for _ in range(NEWTON_STEPS):
            B, dB, d2B, C, dC, d2C = self.coefficients(theta, np.where(np.isfinite(T), T, T_i))
            u_res = -R_GAS * T ** 2 * (dB * rho_f + 0.5 * dC * rho_f ** 2)
            cv_res = -R_GAS * ((2.0 * T * dB + T * T * d2B) * rho_f
                               + 0.5 * (2.0 * T * dC + T * T * d2C) * rho_f ** 2)
            Tsafe = np.where(np.isfinite(T), T, T_i)
            f = cv.u(Tsafe) + u_res - u_target
            c_tot = cv.cv(Tsafe) + cv_res
            step = f / np.where(c_tot > 0.0, c_tot, np.nan)
            # keep the iterate positive: at most halve T per step
            step = np.where(step > 0.5 * T, 0.5 * T, step)
            T = T - step
            if np.all(~np.isfinite(step) | (np.abs(step) <= 1e-12 * T_i)):
                return T
        raise ConvergenceError(f"the constant-energy balance did not converge in {NEWTON_STEPS} "
                               "Newton steps (fast virial model)", partial=T - T_i)


def _density_from_pressure(B, C, target):
    """rho with rho (1 + B rho + C rho^2) = target (= p / RT), and where it is a gas root.

    Newton steps from the ideal gas; ``ok`` is false where the iteration
    failed or left the branch of positive d(p)/d(rho).
    """
    rho = target.copy()
    for _ in range(NEWTON_STEPS):
        g = rho * (1.0 + B * rho + C * rho * rho) - target
        dg = 1.0 + 2.0 * B * rho + 3.0 * C * rho * rho
        step = g / np.where(dg > 0.0, dg, np.nan)
        rho = rho - step
        if np.all(~np.isfinite(step) | (np.abs(step) <= 1e-14 * np.abs(rho))):
            break
    dg = 1.0 + 2.0 * B * rho + 3.0 * C * rho * rho
    ok = np.isfinite(rho) & (rho > 0.0) & (dg > 0.0)
    return rho, ok


def study_potential(study):
    """(form, epsilon_K, sigma_angstrom, repulsive, attractive) of a pure-gas study.

    Raises StudyError for mixtures and forms without a fixed shape.
    """
    g = study.gas
    if g.n_species != 1:
        raise StudyError(f"study '{study.path}': a fit, sensitivities, a posterior and "
                         f"suggestions need a pure gas; this one has {g.n_species} species")
    pot = g.pairs_K_angstrom.pots[0][0]
    if pot.name not in FIT_FORMS:
        raise StudyError(f"study '{study.path}', [potential] form = {pot.name!r}: a fit, "
                         f"sensitivities, a posterior and suggestions need "
                         f"{' or '.join(FIT_FORMS)} (a fixed shape scaled by epsilon and sigma)")
    return pot.name, pot.epsilon, pot.sigma, pot.repulsive, pot.attractive


def model_for_study(study, fit_shape=False):
    """(ExpansionModel, start parameter vector) of a study's potential."""
    from mdsim.study.statepoints import ideal_heat_capacity
    form, eps, sig, n, m = study_potential(study)
    model = ExpansionModel(form, ideal_heat_capacity(study), n, m, fit_shape=fit_shape)
    return model, model.start(eps, sig)

