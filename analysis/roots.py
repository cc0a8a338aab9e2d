"""A root finder that searches outward from a guess for a bracket, then solves with brentq.

The free-expansion solvers (:mod:`analysis.expansion`) and the constant-energy
path of :mod:`analysis.entropy` solve an energy balance u(T) = u_target whose
root lies near a known temperature (the initial one); the search grows
geometrically from there in both directions, so the nearest sign change is
found without knowing a bracket in advance.
"""
import numpy as np
from scipy.optimize import brentq

from mdsim.errors import ConvergenceError

__all__ = ["find_root_bracketed"]


def find_root_bracketed(fun, x0, lower, upper, what, first_step=0.02, xtol=None, rtol=1e-13):
    """Root of a scalar function near x0, bracketed by a growing search.

    Parameters
    ----------
    fun : callable
        f(x) -> float.
    x0 : float
        Where the search starts (a root is expected near it).
    lower, upper : float
        Hard limits of the search (x0 inside).
    what : str
        What the root is, for the error message.
    first_step : float
        First trial offset, relative to x0; it grows by 1.6 each try,
        downwards and upwards alternately.
    xtol, rtol : float, optional
        Tolerances of the final brentq solve; ``xtol`` is 1e-12 * x0 by
        default.

    Returns
    -------
    float

    Raises
    ------
    ConvergenceError
        No sign change in [lower, upper]; ``partial`` holds the last
        (below, above) points and their function values.

    Examples
    --------
    >>> round(find_root_bracketed(lambda x: x * x - 2.0, 1.0, 0.0, 10.0, "sqrt(2)"), 12)
    1.414213562373
    """
    if xtol is None:
        xtol = 1e-12 * x0
    f0 = fun(x0)
    if f0 == 0.0:
        return float(x0)
    step = first_step * x0
    below, above = x0, x0
    f_below, f_above = f0, f0
    while below > lower or above < upper:
        if below > lower:
            nxt = max(lower, below - step)
            f_nxt = fun(nxt)
            if np.sign(f_nxt) != np.sign(f_below):
                return float(brentq(fun, nxt, below, xtol=xtol, rtol=rtol))
            below, f_below = nxt, f_nxt
        if above < upper:
            nxt = min(upper, above + step)
            f_nxt = fun(nxt)
            if np.sign(f_nxt) != np.sign(f_above):
                return float(brentq(fun, above, nxt, xtol=xtol, rtol=rtol))
            above, f_above = nxt, f_nxt
        step *= 1.6
    raise ConvergenceError(
        f"no root of the energy balance for {what} between {lower:g} and {upper:g} K: the "
        "internal energy does not cross its initial value there. The state may lie outside "
        "the model's reach (check the heat-capacity range, the density and the potential), "
        "or the final state is two-phase; use a simulation route.",
        partial={"x": (below, above), "f": (f_below, f_above)})
