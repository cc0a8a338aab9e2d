"""Characteristic temperatures of a pair potential from B2: Boyle, B2 maximum, Joule-Thomson.

Each is the first root, on a logarithmic scan refined by brentq, of a
function of B2(T) and dB2/dT; temperatures in the energy unit of the
potential.
"""
import math

import numpy as np
from scipy.optimize import brentq

from analysis.virial.quadrature import check_pot
from analysis.virial.second import b2
from mdsim.errors import StudyError

__all__ = ["boyle_temperature", "b2_maximum_temperature", "joule_thomson_inversion_zero_pressure"]


def _root_of(func, pot, T_range, what, fix):
    eps = pot.epsilon
    if T_range is None:
        lo, hi = 0.3 * eps, 1000.0 * eps
    else:
        lo, hi = (float(v) for v in T_range)
        if not (math.isfinite(lo) and math.isfinite(hi) and 0.0 < lo < hi):
            raise StudyError(f"'T_range' = {T_range!r}: need 0 < low < high (energy unit of the "
                             "potential)")
    T_t = np.geomspace(lo, hi, 400)
    g_t = func(T_t)
    sign = np.flatnonzero(np.sign(g_t[:-1]) * np.sign(g_t[1:]) < 0)
    if sign.size == 0:
        raise StudyError(f"{what}: no root between T = {lo:.6g} and {hi:.6g} (energy unit of the "
                         f"potential; the function keeps the sign {np.sign(g_t[0]):+.0f}); {fix}")
    k = int(sign[0])
    return brentq(lambda t: float(func(np.array([t]))[0]), T_t[k], T_t[k + 1],
                  xtol=1e-13 * T_t[k], rtol=1e-14, maxiter=200)


def boyle_temperature(pot, T_range=None):
    """Temperature where B2 = 0 (energy unit of ``pot``; LJ: T* = 3.418).

    Parameters
    ----------
    pot : PairPotential
    T_range : (float, float), optional
        Search interval; default 0.3 to 1000 epsilon.
    """
    check_pot(pot)
    return _root_of(lambda t: b2(pot, t)[0], pot, T_range, "Boyle temperature (B2 = 0)",
                    "a purely repulsive or purely attractive potential has none; widen 'T_range' "
                    "if the root lies outside")


def b2_maximum_temperature(pot, T_range=None):
    """Temperature of the maximum of B2: the zero-density Joule (free-expansion)
    inversion (LJ: T* = 25.15).  Not the Joule-Thomson inversion.

    Parameters
    ----------
    pot : PairPotential
    T_range : (float, float), optional
        Search interval; default 0.3 to 1000 epsilon.
    """
    check_pot(pot)
    return _root_of(lambda t: b2(pot, t)[1], pot, T_range,
                    "maximum of B2 (zero-density Joule inversion, dB2/dT = 0)",
                    "a hard-core potential with no soft repulsion has no maximum; widen 'T_range' "
                    "if it lies outside")


def joule_thomson_inversion_zero_pressure(pot, T_range=None):
    """Zero-pressure Joule-Thomson (throttling) inversion, T dB2/dT = B2
    (energy unit of ``pot``; LJ: T* = 6.43).  Not the free-expansion inversion.

    Parameters
    ----------
    pot : PairPotential
    T_range : (float, float), optional
        Search interval; default 0.3 to 1000 epsilon.
    """
    check_pot(pot)

    def g(t):
        B, dB, _ = b2(pot, t)
        return t * dB - B
    return _root_of(g, pot, T_range, "zero-pressure Joule-Thomson inversion (T dB2/dT = B2)",
                    "widen 'T_range' if the root lies outside")
