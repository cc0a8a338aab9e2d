"""Means, variances and covariances of correlated time series, with error bars.

Every average the project reports comes from a correlated series (Monte
Carlo sweeps, MD steps).  The functions here discard the equilibration part
by automated detection (the start that maximises the number of effectively
uncorrelated samples), estimate the statistical inefficiency g of the series
that is averaged, and return the estimate with its standard error
sqrt(g * var / n).  The heavy lifting is pymbar's ``timeseries`` module
(Chodera, J. Chem. Theory Comput. 12, 1799, 2016), imported lazily with its
import-time banner suppressed.

Array suffix: ``_t`` a time series (one sample per recorded step).

A constant series (for example the residual energy of an ideal gas, which is
exactly zero) is legitimate: its g is 1 and its standard error 0.
"""
import contextlib
import io
import math
from dataclasses import dataclass

import numpy as np

from mdsim.errors import ConvergenceError, SimulationError, StudyError

MIN_SAMPLES = 20
"""Fewest samples accepted: below this neither g nor a variance means much."""

_PYMBAR = None


def import_pymbar():
    """The pymbar package, imported on first use with its import banner
    (printed to stdout and stderr) swallowed."""
    global _PYMBAR
    if _PYMBAR is None:
        sink = io.StringIO()
        with contextlib.redirect_stdout(sink), contextlib.redirect_stderr(sink):
            import pymbar
            import pymbar.timeseries  # noqa: F401  (its warning is printed on import)
        _PYMBAR = pymbar
    return _PYMBAR


def _timeseries():
    return import_pymbar().timeseries


def check_series(x_t, name="x_t", min_samples=MIN_SAMPLES):
    """Validate a time series and return it as a 1-D float64 array.

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
        The series.
    name : str
        Its name, used in error messages.
    min_samples : int
        Fewest samples accepted.

    Returns
    -------
    ndarray, shape=(n_samples,), float64

    Raises
    ------
    StudyError
        Not one-dimensional, or fewer than ``min_samples`` samples.
    SimulationError
        A sample is NaN or infinite.
    """
    x_t = np.asarray(x_t, dtype=np.float64)
    if x_t.ndim != 1:
        raise StudyError(
            f"time series '{name}' must be one-dimensional; got shape {x_t.shape}. "
            "Pass one observable per call (one value per recorded step).")
    if x_t.size < min_samples:
        raise StudyError(
            f"time series '{name}' has {x_t.size} samples; at least {min_samples} are "
            "needed to estimate a statistical inefficiency. Run longer or record more often.")
    bad = np.flatnonzero(~np.isfinite(x_t))
    if bad.size:
        raise SimulationError(
            f"time series '{name}' holds {bad.size} non-finite value(s), first at index "
            f"{bad[0]} ({x_t[bad[0]]}); the run that produced it went wrong (check the "
            "time step, overlapping particles or hard-core contacts).")
    return x_t


def _is_constant(x_t):
    return bool(np.ptp(x_t) == 0.0)


def _equilibration(x_t):
    """(t0, g, n_eff) for a validated series."""
    if _is_constant(x_t):
        return 0, 1.0, float(x_t.size)
    ts = _timeseries()
    # Every start time costs one g estimate; ~200 candidate starts keep this
    # linear in practice while resolving the transient to 0.5 % of the run.
    nskip = max(1, x_t.size // 200)
    t0, g, n_eff = ts.detect_equilibration(x_t, fast=True, nskip=nskip)
    return int(t0), float(g), float(n_eff)


def _inefficiency(x_t, y_t=None):
    """g of validated series; 1 for a constant series."""
    if _is_constant(x_t) or (y_t is not None and _is_constant(y_t)):
        return 1.0
    g = float(_timeseries().statistical_inefficiency(x_t, y_t, fast=False))
    return max(g, 1.0)


def detect_equilibration(x_t):
    """Find the end of the equilibration transient of a series.

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
        The series, at least ``MIN_SAMPLES`` finite values.

    Returns
    -------
    t0 : int
        Index of the first sample of the equilibrated part.
    g : float
        Statistical inefficiency of ``x_t[t0:]`` (>= 1).
    n_eff : float
        Effective number of uncorrelated samples in ``x_t[t0:]``.

    Notes
    -----
    Chooses t0 maximising n_eff(t0) = (n - t0) / g(t0) (Chodera, J. Chem.
    Theory Comput. 12, 1799, 2016), through ``pymbar.timeseries``; for long
    series about 200 evenly spaced candidate starts are tried.
    """
    x_t = check_series(x_t)
    return _equilibration(x_t)


def statistical_inefficiency(x_t, y_t=None):
    """Statistical inefficiency g = 1 + 2 tau of a series (or of two, crossed).

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
    y_t : array_like, shape=(n_samples,), optional
        For the cross inefficiency of ``x_t`` and ``y_t``.

    Returns
    -------
    float
        g >= 1; the variance of the mean is g var / n.  A constant series
        returns 1.
    """
    x_t = check_series(x_t)
    if y_t is not None:
        y_t = check_series(y_t, "y_t")
        if y_t.size != x_t.size:
            raise StudyError(
                f"series 'x_t' and 'y_t' must have the same length; got {x_t.size} and "
                f"{y_t.size}. Pass samples recorded at the same steps.")
    return _inefficiency(x_t, y_t)


@dataclass(frozen=True)
class SeriesMean:
    """Mean of a correlated series.

    Attributes
    ----------
    mean : float
        Mean of the equilibrated part.
    stderr : float
        Its standard error, sqrt(g var / n_used).
    g : float
        Statistical inefficiency of the part used.
    t0 : int
        Samples discarded as equilibration.
    n_used : int
        Samples averaged.
    """

    mean: float
    stderr: float
    g: float
    t0: int
    n_used: int

    @property
    def n_effective(self):
        """Effective number of uncorrelated samples, n_used / g."""
        return self.n_used / self.g


@dataclass(frozen=True)
class SeriesEstimate:
    """A second moment (variance, covariance) of correlated series.

    Attributes
    ----------
    value : float
        The estimate.
    stderr : float
        Its standard error, from the statistical inefficiency of the product
        series whose mean the estimate is.
    g : float
        That statistical inefficiency.
    t0 : int
        Samples discarded as equilibration.
    n_used : int
        Samples used.
    """

    value: float
    stderr: float
    g: float
    t0: int
    n_used: int


def mean_and_stderr(x_t, discard_equilibration=True):
    """Mean of a correlated series and its standard error.

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
        At least ``MIN_SAMPLES`` finite values.
    discard_equilibration : bool
        Drop the transient found by :func:`detect_equilibration` first.

    Returns
    -------
    SeriesMean
    """
    x_t = check_series(x_t)
    t0 = _equilibration(x_t)[0] if discard_equilibration else 0
    x = x_t[t0:]
    if x.size < MIN_SAMPLES:
        _raise_drift(x_t, t0)
    g = _inefficiency(x)
    var = float(np.var(x, ddof=1))
    return SeriesMean(float(np.mean(x)), math.sqrt(g * var / x.size), g, t0, int(x.size))


def _raise_drift(x_t, t0):
    g = _inefficiency(x_t)
    whole = SeriesMean(float(np.mean(x_t)), math.sqrt(g * float(np.var(x_t, ddof=1)) / x_t.size),
                       g, 0, int(x_t.size))
    raise ConvergenceError(
        f"the series of {x_t.size} samples does not settle: equilibration detection puts "
        f"its start at sample {t0}, leaving fewer than {MIN_SAMPLES} samples. The run is "
        "still drifting; run longer (more equilibration and production steps).", partial=whole)


def _start(x_t, y_t, discard_equilibration):
    if not discard_equilibration:
        return 0
    t0 = max(_equilibration(x_t)[0], _equilibration(y_t)[0])
    if x_t.size - t0 < MIN_SAMPLES:
        _raise_drift(x_t, t0)
    return t0


def variance_and_stderr(x_t, discard_equilibration=True):
    """Variance of a correlated series and its standard error.

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
        At least ``MIN_SAMPLES`` finite values.
    discard_equilibration : bool
        Drop the transient of ``x_t`` first.

    Returns
    -------
    SeriesEstimate
        ``value`` = sum (x - mean)^2 / (n - 1).

    Notes
    -----
    The variance is the mean of the squared deviations d_t = (x_t - <x>)^2,
    so its standard error is sqrt(g_d var(d) / n) with g_d the statistical
    inefficiency of d_t.  Used for the fluctuation heat capacity
    c_v,res = Var(U) / (k T^2).
    """
    x_t = check_series(x_t)
    return covariance_and_stderr(x_t, x_t, discard_equilibration)


def covariance_and_stderr(x_t, y_t, discard_equilibration=True):
    """Covariance of two series sampled at the same steps, with standard error.

    Parameters
    ----------
    x_t, y_t : array_like, shape=(n_samples,)
        At least ``MIN_SAMPLES`` finite values each, same length.
    discard_equilibration : bool
        Drop the longer of the two transients first.

    Returns
    -------
    SeriesEstimate
        ``value`` = sum (x - <x>)(y - <y>) / (n - 1).

    Notes
    -----
    The covariance is the mean of p_t = (x_t - <x>)(y_t - <y>); its standard
    error is sqrt(g_p var(p) / n), g_p the statistical inefficiency of p_t.
    Used for (dp/dT)_rho = rho k + Cov(P_conf, U) / (k T^2).
    """
    x_t = check_series(x_t)
    y_t = check_series(y_t, "y_t")
    if y_t.size != x_t.size:
        raise StudyError(
            f"series 'x_t' and 'y_t' must have the same length; got {x_t.size} and "
            f"{y_t.size}. Pass samples recorded at the same steps.")
    t0 = _start(x_t, y_t, discard_equilibration)
    x, y = x_t[t0:], y_t[t0:]
    n = x.size
    p = (x - x.mean()) * (y - y.mean())
    value = float(p.sum() / (n - 1))
    g = _inefficiency(p)
    stderr = math.sqrt(g * float(np.var(p, ddof=1)) / n) * n / (n - 1)
    return SeriesEstimate(value, stderr, g, t0, int(n))
