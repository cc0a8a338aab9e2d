"""First-order (delta-method) error propagation from estimates with standard errors.

Notes
-----
For f(x) with gradient grad f and input covariance C, the standard error
is sqrt(grad^T C grad); a ratio a / b is the case written out with its
covariance term (``docs/physics.md`` section 8.4).

Examples
--------
>>> round(ratio_stderr(3.0, 0.3, 2.0, 0.1), 6)
0.167705
"""
import math

import numpy as np

from mdsim.errors import StudyError

__all__ = ["ratio_stderr", "propagate_stderr"]


def ratio_stderr(a, a_stderr, b, b_stderr, covariance_ab=0.0):
    """Standard error of a / b by first-order error propagation.

    Parameters
    ----------
    a, b : float
        Estimates (b != 0).
    a_stderr, b_stderr : float
        Their standard errors.
    covariance_ab : float
        Covariance of the two estimates (0 for independent ones).

    Returns
    -------
    float

    Notes
    -----
    Delta method: var(a/b) = (a/b)^2 [var a / a^2 + var b / b^2 - 2 cov / (a b)],
    written without dividing by a so that a = 0 is allowed.
    """
    if b == 0.0:
        raise StudyError("ratio_stderr: the denominator 'b' is 0; the ratio a / b is "
                         "undefined. Check the quantity used as denominator.")
    var = (a_stderr ** 2 + (a / b) ** 2 * b_stderr ** 2 - 2.0 * (a / b) * covariance_ab) / b ** 2
    return math.sqrt(max(var, 0.0))


def propagate_stderr(gradient, covariance):
    """First-order (delta-method) standard error of f(x) from grad f and cov(x).

    Parameters
    ----------
    gradient : array_like, shape=(n,)
        Partial derivatives of f at the estimate.
    covariance : array_like, shape=(n, n) or (n,)
        Covariance matrix of the inputs, or their standard errors for
        independent inputs.

    Returns
    -------
    float
        sqrt(grad^T C grad).
    """
    grad = np.atleast_1d(np.asarray(gradient, dtype=np.float64))
    cov = np.asarray(covariance, dtype=np.float64)
    if cov.ndim == 1:
        cov = np.diag(cov ** 2)
    if cov.shape != (grad.size, grad.size):
        raise StudyError(
            f"propagate_stderr: gradient has {grad.size} entries but covariance has shape "
            f"{cov.shape}; pass an (n, n) covariance or n standard errors.")
    return math.sqrt(max(float(grad @ cov @ grad), 0.0))
