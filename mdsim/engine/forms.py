"""The pair-potential forms as numbers: form codes, parameter rows, one scalar kernel.

Every potential packs itself into a flat float64 parameter row (``params``,
length ``N_PARAM``, layout below) and, for tables, a spline coefficient
array (``table``).  The one scalar function :func:`pair_eval` evaluates any
form from ``(form, params, table, r2)``; the numba kernels of the engine
call it in their inner loops, and the vectorised NumPy methods of the
potential objects (:mod:`mdsim.engine.potentials`) loop over it through
:func:`eval_many`, so each formula lives in exactly one place.

Parameter row layout (indices are module constants):
    EPS     well depth (exp-6, table: depth of the minimum)
    SIG     distance of the zero crossing, u(SIG) = 0
    REP     repulsive exponent n (Mie; 12 for LJ)
    ATT     attractive exponent m (Mie; 6 for LJ)
    PREF    Mie prefactor C(n, m) (4 for LJ)
    ALPHA   exp-6 steepness
    RMIN    exp-6 position of the minimum
    RCORE   hard-core radius: below it u = +inf (exp-6 guard, table start)
    RC      cut-off radius (set by the pair matrix; 0 here means none)
    RC2     RC squared
    SHIFT   u(RC), subtracted by the truncated-and-shifted model of MD
    T_R0    table: first knot
    T_DR    table: knot spacing
    T_N     table: number of intervals
    EXPA    exp-6: repulsive amplitude A of A exp(-B r)
    EXPB    exp-6: B
    EXPC    exp-6: dispersion coefficient C of -C / r^6
"""
import math

import numpy as np
from numba import njit

__all__ = ["FORM_LJ", "FORM_MIE", "FORM_EXP6", "FORM_TABLE", "FORM_NAMES", "N_PARAM",
           "EPS", "SIG", "REP", "ATT", "PREF", "ALPHA", "RMIN", "RCORE", "RC", "RC2", "SHIFT",
           "T_R0", "T_DR", "T_N", "EXPA", "EXPB", "EXPC", "pair_eval", "eval_many"]

FORM_LJ, FORM_MIE, FORM_EXP6, FORM_TABLE = 0, 1, 2, 3
FORM_NAMES = {FORM_LJ: "lennard-jones", FORM_MIE: "mie", FORM_EXP6: "exp-6", FORM_TABLE: "table"}

(EPS, SIG, REP, ATT, PREF, ALPHA, RMIN, RCORE, RC, RC2, SHIFT,
 T_R0, T_DR, T_N, EXPA, EXPB, EXPC) = range(17)
N_PARAM = 17


@njit(cache=True, inline="always")
def pair_eval(form, p, table, r2):
    """Energy and scaled force of one pair at squared distance ``r2``.

    Parameters
    ----------
    form : int
        One of FORM_LJ, FORM_MIE, FORM_EXP6, FORM_TABLE.
    p : ndarray, shape=(N_PARAM,), float64
        Parameter row of the pair.
    table : ndarray, shape=(n_intervals, 4), float64
        Cubic spline coefficients (tables only; any array otherwise).
    r2 : float
        Squared distance, > 0.

    Returns
    -------
    u : float
        Pair energy (no cut-off applied; +inf inside a hard core).
    f_over_r : float
        -(du/dr) / r, so that the force on particle i is ``f_over_r * (r_i - r_j)``
        and the pair virial is ``f_over_r * r2``.

    Notes
    -----
    LJ: u = 4 eps [(s/r)^12 - (s/r)^6].
    Mie: u = C eps [(s/r)^n - (s/r)^m], C = n/(n-m) (n/m)^(m/(n-m)).
    exp-6 (modified Buckingham): u = A exp(-B r) - C6 / r^6 with
    A = eps 6/(alpha-6) e^alpha, B = alpha / r_min, C6 = eps alpha r_min^6/(alpha-6);
    below the spurious maximum (RCORE) u = +inf, the usual guard against
    its collapse.  Table: cubic spline in r on uniform knots; below the
    first knot u = +inf, beyond the last knot u = 0.
    """
    if form == FORM_LJ:
        inv2 = 1.0 / r2
        s2 = p[SIG] * p[SIG] * inv2
        s6 = s2 * s2 * s2
        u = 4.0 * p[EPS] * (s6 * s6 - s6)
        f = 24.0 * p[EPS] * (2.0 * s6 * s6 - s6) * inv2
        return u, f
    elif form == FORM_MIE:
        inv2 = 1.0 / r2
        lg = math.log(p[SIG] * p[SIG] * inv2)
        sn = math.exp(0.5 * p[REP] * lg)
        sm = math.exp(0.5 * p[ATT] * lg)
        ce = p[PREF] * p[EPS]
        return ce * (sn - sm), ce * (p[REP] * sn - p[ATT] * sm) * inv2
    elif form == FORM_EXP6:
        if r2 < p[RCORE] * p[RCORE]:
            return np.inf, np.inf
        r = math.sqrt(r2)
        inv2 = 1.0 / r2
        rep = p[EXPA] * math.exp(-p[EXPB] * r)
        disp = p[EXPC] * inv2 * inv2 * inv2
        return rep - disp, (p[EXPB] * r * rep - 6.0 * disp) * inv2
    else:
        r = math.sqrt(r2)
        x = (r - p[T_R0]) / p[T_DR]
        if x < 0.0:
            return np.inf, np.inf
        k = int(x)
        if k >= int(p[T_N]):
            return 0.0, 0.0
        t = (x - k) * p[T_DR]
        c0 = table[k, 0]
        c1 = table[k, 1]
        c2 = table[k, 2]
        c3 = table[k, 3]
        u = ((c0 * t + c1) * t + c2) * t + c3
        du = (3.0 * c0 * t + 2.0 * c1) * t + c2
        return u, -du / r


@njit(cache=True)
def eval_many(form, p, table, r_r, out_u, out_dudr):
    """:func:`pair_eval` over a grid of distances, for the NumPy side.

    Parameters
    ----------
    form : int
    p : ndarray, shape=(N_PARAM,), float64
    table : ndarray, shape=(n_intervals, 4), float64
    r_r : ndarray, shape=(n_r,), float64
        Distances, > 0.
    out_u, out_dudr : ndarray, shape=(n_r,), float64 (output)
        u(r) and du/dr.
    """
    for k in range(r_r.size):
        u, f = pair_eval(form, p, table, r_r[k] * r_r[k])
        out_u[k] = u
        out_dudr[k] = -f * r_r[k]
