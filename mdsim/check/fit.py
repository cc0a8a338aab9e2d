"""Weighted least squares of the potential's parameters and their confidence region.

:class:`Objective` holds the weighted residuals of the expansion (and
second-virial) data for a model; :func:`fit_parameters` minimises them
(scipy.optimize.least_squares) and returns the covariance (J^T W J)^-1 with
the measurement uncertainties taken as stated; :func:`inside_region` and
:func:`delta_chi2_for` describe the joint confidence region.

Array suffixes: ``_n`` measurement rows, ``_p`` parameters, ``_np`` a
Jacobian (row by parameter).
"""
import math

import numpy as np

from mdsim.check.statistics import DEFAULT_LEVEL, chi2_test
from mdsim.errors import ConvergenceError, StudyError

__all__ = ["Objective", "sensitivities", "fit_parameters", "inside_region", "delta_chi2_for",
           "central_differences", "ONE_SIGMA", "TWO_SIGMA", "FD_STEP"]

# Relative step of the central differences for sensitivities and Jacobians.
FD_STEP = 1e-5
# Joint probabilities of the 1- and 2-sigma regions (those of a 1-D Gaussian).
ONE_SIGMA = 0.682689492137086
TWO_SIGMA = 0.954499736103642


class Objective:
    """Weighted residuals of expansion (and second-virial) data for a model.

    Parameters
    ----------
    model : ExpansionModel
    data : ExpansionData
    rows : ndarray of int
        The expansion rows used.
    virial_data : VirialData or None
    predictor : TablePredictor or None
        Through the table when given, else the model's virial route.
    pred_stderr_n : ndarray, shape=(len(rows),), optional
        Prediction standard errors held fixed in the weights (table route).
    """

    def __init__(self, model, data, rows, virial_data=None, predictor=None, pred_stderr_n=None):
        self.model, self.data, self.rows = model, data, np.asarray(rows, dtype=int)
        self.virial, self.predictor = virial_data, predictor
        k = self.rows
        self.T = data.temperature_K[k]
        self.r = data.volume_ratio[k]
        self.p = None if data.pressure_Pa is None else data.pressure_Pa[k]
        self.rho = None if data.density_mol_m3 is None else data.density_mol_m3[k]
        self.y = data.delta_T_K[k]
        u_pred = np.zeros(k.size) if pred_stderr_n is None else np.asarray(pred_stderr_n)
        self.sigma = np.sqrt(data.delta_T_uncertainty_K[k] ** 2 + u_pred ** 2)

    @property
    def n_points(self):
        """Expansion rows plus second-virial rows."""
        return int(self.rows.size + (len(self.virial) if self.virial is not None else 0))

    def predict(self, theta):
        """Delta T (K) of the used rows at parameters ``theta``, shape=(len(rows),)."""
        if self.predictor is not None:
            return self.predictor.delta_T(theta, self.T, self.r, self.p, self.rho)[0]
        return self.model.delta_T(theta, self.T, self.r, self.p, self.rho)[0]

    def residuals(self, theta):
        """(predicted - measured) / sigma, expansion rows then second-virial rows."""
        res = (self.predict(theta) - self.y) / self.sigma
        if self.virial is not None:
            v = self.virial
            res = np.concatenate([res, (self.model.B2(theta, v.temperature_K) - v.B_m3_mol)
                                  / v.B_uncertainty_m3_mol])
        # a row that leaves the model's domain during a fit weighs heavily, not NaN
        return np.where(np.isfinite(res), res, 1e6)

    def chi2(self, theta):
        """The sum of squared residuals at ``theta``."""
        r = self.residuals(theta)
        return float(r @ r)

    def jacobian(self, theta):
        """d residuals / d theta by central differences, shape=(n_points, n_params)."""
        return central_differences(self.residuals, theta)


def central_differences(f, theta):
    """The Jacobian of a vector function f(theta) by central differences.

    Parameters
    ----------
    f : callable
        ``f(theta) -> ndarray, shape=(n,)``.
    theta : array_like, shape=(k,)
        Each step is ``FD_STEP * |theta_j|`` (the parameters are never 0).

    Returns
    -------
    ndarray, shape=(n, k)

    Examples
    --------
    >>> central_differences(lambda t: np.array([t[0] ** 2, t[0] * t[1]]), [2.0, 3.0]).round(6)
    array([[4., 0.],
           [3., 2.]])
    """
    theta = np.asarray(theta, dtype=float)
    cols = []
    for j in range(theta.size):
        h = FD_STEP * abs(theta[j])
        tp, tm = theta.copy(), theta.copy()
        tp[j] += h
        tm[j] -= h
        cols.append((f(tp) - f(tm)) / (2.0 * h))
    return np.column_stack(cols)


def sensitivities(model, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None, predictor=None):
    """d(Delta T)/d(parameter) per state by central differences.

    Returns
    -------
    ndarray, shape=(n, n_params)
        K per K (epsilon), K per angstrom (sigma), K per unit exponent.
    """
    f = (predictor.delta_T if predictor is not None else model.delta_T)
    return central_differences(lambda t: f(t, T_K, volume_ratio, p_Pa, rho_mol_m3)[0], theta)


def fit_parameters(objective, start, bounds=None, level=DEFAULT_LEVEL):
    """Weighted least squares of the parameters (scipy.optimize.least_squares).

    Parameters
    ----------
    objective : Objective
    start : ndarray, shape=(n_params,)
    bounds : (lower, upper), optional

    Returns
    -------
    dict
        ``theta`` (ndarray), ``covariance`` (ndarray, (J^T J)^-1 of the
        weighted residuals: the measurement uncertainties taken as stated),
        ``stderr``, ``stderr_scaled`` (times sqrt(chi2/dof)), ``correlation``
        (matrix), ``stats`` (:func:`chi2_test` with the parameters
        subtracted), ``jacobian`` (weighted), ``optimizer`` (status text),
        ``n_evaluations``.

    Raises
    ------
    ConvergenceError
        When the optimiser fails.
    """
    from scipy.optimize import least_squares
    start = np.asarray(start, dtype=float)
    k = start.size
    if objective.n_points <= k:
        raise StudyError(f"a fit of {k} parameters needs more than {k} usable measurements; "
                         f"{objective.n_points} are usable; add measurements (or second-virial "
                         "measurements, fitted jointly)")
    lo, hi = bounds if bounds is not None else (np.full(k, -np.inf), np.full(k, np.inf))
    x0 = np.clip(start, lo + 1e-9 * np.abs(lo), hi - 1e-9 * np.abs(hi))
    res = least_squares(objective.residuals, x0, jac=lambda t: objective.jacobian(t),
                        bounds=(lo, hi), x_scale="jac", method="trf", xtol=1e-12, ftol=1e-12,
                        gtol=1e-12, max_nfev=200)
    if res.status <= 0:
        raise ConvergenceError(f"the fit did not converge: {res.message}", partial=res.x)
    theta = res.x
    J = objective.jacobian(theta)
    JTJ = J.T @ J
    try:
        cov = np.linalg.inv(JTJ)
    except np.linalg.LinAlgError:
        raise ConvergenceError("the fit's parameters are not determined by the data (singular "
                               "J^T J); add measurements at other temperatures", partial=theta) \
            from None
    stats = chi2_test(objective.residuals(theta), n_params=k, level=level)
    stderr = np.sqrt(np.diag(cov))
    corr = cov / np.outer(stderr, stderr)
    return {"theta": theta, "covariance": cov, "stderr": stderr,
            "stderr_scaled": stderr * math.sqrt(stats["chi2_per_dof"]), "correlation": corr,
            "stats": stats, "jacobian": J, "optimizer": res.message,
            "n_evaluations": int(res.nfev)}


def inside_region(theta_true, theta_fit, covariance, delta_chi2):
    """True when theta_true lies inside (theta - theta_fit)^T C^-1 (theta - theta_fit) <= delta_chi2."""
    d = np.asarray(theta_true, dtype=float) - np.asarray(theta_fit, dtype=float)
    return bool(d @ np.linalg.solve(covariance, d) <= delta_chi2)


def delta_chi2_for(probability, n_params):
    """The chi-square increase bounding a joint confidence region (2.30, 6.18 for 2 params)."""
    from scipy.stats import chi2 as chi2_dist
    return float(chi2_dist.ppf(probability, n_params))
