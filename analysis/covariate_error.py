"""The error of a mean whose slow part follows a covariate series (a control variate).

In a Gibbs-ensemble box the particle number wanders slowly while the energy
per particle is dominated, sample by sample, by fast noise: the statistical
inefficiency of the energy alone misses the slow part of its error.  The
box's density shows that slow mode with little noise.
:func:`mean_with_covariate` splits a series into the part that follows a
covariate and the rest and adds their errors.

Array suffix: ``_t`` a time series.
"""
import math

import numpy as np

from analysis.block_error import production_mean

__all__ = ["mean_with_covariate"]


def mean_with_covariate(x_t, c_t):
    """Mean and standard error of a series whose slow part follows a covariate series.

    Parameters
    ----------
    x_t, c_t : ndarray, shape=(n_samples,)
        The series (a Gibbs box's energy per particle or pressure) and the
        covariate (the box's density), production samples after an
        equilibration.

    Returns
    -------
    (float, float)
        The mean of ``x_t`` and the larger of two standard errors: its own
        (:func:`analysis.block_error.production_mean`) and
        sqrt(b^2 se(c)^2 + se(r)^2), x = a + b c + r fitted by least
        squares, each se from :func:`analysis.block_error.production_mean`.

    Notes
    -----
    The particle number of a Gibbs box wanders slowly (transfers into a
    cold liquid are rare); the energy per particle of a dilute vapour moves
    with it but is dominated, sample by sample, by fast noise, so its own
    statistical inefficiency (and blocks much shorter than the slow mode)
    miss the slow part of its error.  The density's series shows that mode
    with little noise; the error of the mean of a + b c + r is |b| se(c)
    plus, in quadrature, that of the residual r, uncorrelated with c by
    construction (the regression split of control variates; common practice
    in Monte Carlo error analysis, no source).  Measured on Lennard-Jones
    Gibbs runs at T* = 0.9 (``mdsim.sampling.coexistence``).

    Examples
    --------
    A density in 12 slow steps and an energy that follows it under larger fast
    noise (invented numbers):

    >>> rng = np.random.default_rng(1)
    >>> rho = np.repeat(rng.normal(0.015, 0.001, 12), 100)
    >>> u = -10.0 * rho + rng.normal(0.0, 0.02, rho.size)
    >>> m, se = mean_with_covariate(u, rho)
    >>> round(m, 3), se >= production_mean(u)[1]
    (-0.154, True)
    """
    x_t, c_t = np.asarray(x_t, dtype=float), np.asarray(c_t, dtype=float)
    mean, se = production_mean(x_t)
    d_t = c_t - c_t.mean()
    ss = float(np.dot(d_t, d_t))
    if ss <= 0.0:
        return mean, se
    b = float(np.dot(d_t, x_t - mean)) / ss
    se_split = math.hypot(b * production_mean(c_t)[1], production_mean(x_t - b * d_t)[1])
    return mean, max(se, se_split)
