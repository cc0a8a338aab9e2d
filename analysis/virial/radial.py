"""The radial Schroedinger equation on a uniform grid: Numerov kernels and Riccati-Bessel functions.

The numba kernels (:func:`numerov_run`, :func:`start_index`,
:func:`numerov_all`, :func:`riccati_all`) call nothing outside this file
(numba's own cache check covers them).  Used by
:mod:`analysis.virial.phase_shifts` for phase shifts and bound states.

Units: u in K, r in the potential's length unit, c = hbar^2/(2 mu k) in K x
length^2, k in 1/length.
"""
import dataclasses
import math

import numpy as np
from numba import njit

__all__ = ["BARRIER", "numerov_run", "start_index", "numerov_all", "riccati_all", "riccati",
           "RadialGrid", "radial_grid", "radial_grid_start"]

#: Where the integration starts: the WKB exponent under the barrier from the
#: start to the turning point is at least this (the neglected solution is
#: smaller by exp(-2 x BARRIER)).
BARRIER = 18.0


@njit(cache=True)
def numerov_run(f_base, inv_r2, h, l, k2, i_start):
    """Integrate y'' + (k2 - v - l(l+1)/r^2) y = 0 outward from index i_start.

    Parameters
    ----------
    f_base : ndarray, shape=(n_r,)
        -v(r) = -u(r)/c on the uniform grid (1/length^2).
    inv_r2 : ndarray, shape=(n_r,)
        1/r^2 on the grid.
    h : float
        Grid step.
    l : int
    k2 : float
        k^2 (negative for bound-state energies).
    i_start : int
        y = 0 at this index, a small value at the next.

    Returns
    -------
    y_end_1, y_end : float
        The solution at the last two grid points (scaled to stay finite).
    nodes : int
        Sign changes of y on the grid after i_start.
    """
    n = f_base.size
    ll = l * (l + 1.0)
    h12 = h * h / 12.0
    y_prev = 0.0
    y = 1e-30
    w_prev = 1.0 + h12 * (f_base[i_start] + k2 - ll * inv_r2[i_start])
    w_cur = 1.0 + h12 * (f_base[i_start + 1] + k2 - ll * inv_r2[i_start + 1])
    nodes = 0
    for i in range(i_start + 1, n - 1):
        w_next = 1.0 + h12 * (f_base[i + 1] + k2 - ll * inv_r2[i + 1])
        # Numerov with w = 1 + h^2 f / 12: w+ y+ = (12 - 10 w) y - w- y-.
        y_next = ((12.0 - 10.0 * w_cur) * y - w_prev * y_prev) / w_next
        if (y_next < 0.0 and y > 0.0) or (y_next > 0.0 and y < 0.0):
            nodes += 1
        elif y_next == 0.0:
            y_next = 1e-300 * (1.0 if y < 0.0 else -1.0)
            nodes += 1
        y_prev = y
        y = y_next
        w_prev = w_cur
        w_cur = w_next
        if abs(y) > 1e200:
            y *= 1e-200
            y_prev *= 1e-200
    return y_prev, y, nodes


@njit(cache=True)
def start_index(f_base, inv_r2, h, l, k2, i_from):
    """Grid index to start from (WKB exponent under the barrier >= BARRIER) and the
    innermost classically allowed index, searched from ``i_from`` outward."""
    n = f_base.size
    ll = l * (l + 1.0)
    it = n - 2
    for i in range(max(i_from, 1), n - 1):
        if f_base[i] + k2 - ll * inv_r2[i] > 0.0:
            it = i
            break
    acc = 0.0
    i = it
    while i > 1 and acc < BARRIER:
        i -= 1
        q = -(f_base[i] + k2 - ll * inv_r2[i])
        if q > 0.0:
            acc += math.sqrt(q) * h
    return max(i - 1, 0), it


@njit(cache=True)
def numerov_all(f_base, inv_r2, h, k2, y1_l, y2_l, nodes_l):
    """:func:`numerov_run` for l = 0 .. n_l - 1 (outputs filled in place)."""
    it = 1
    for l in range(y1_l.size):
        # The allowed region only shrinks as l grows: search on from the last turning point.
        i0, it = start_index(f_base, inv_r2, h, l, k2, it)
        y1_l[l], y2_l[l], nodes_l[l] = numerov_run(f_base, inv_r2, h, l, k2, i0)


def radial_grid_start(pot, E_max):
    """Where the radial grid starts: a hard wall, or where u reaches 200 E_max (+ 1000 K).

    Parameters
    ----------
    pot : PairPotential (K, length)
    E_max : float, K

    Returns
    -------
    float
        Length unit; below it the wave function is taken as zero.
    """
    if pot.core_radius > 0.0:
        return float(pot.core_radius) * (1.0 + 1e-12)
    level = 200.0 * E_max + 1000.0
    lo, hi = 1e-3 * pot.sigma, pot.sigma
    if not float(pot.energy(lo)) > level:
        return lo
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if float(pot.energy(mid)) > level:
            lo = mid
        else:
            hi = mid
    return lo


@dataclasses.dataclass
class RadialGrid:
    """A uniform radial grid with the potential on it.

    Attributes
    ----------
    r0, h : float
        First point and step (length unit).
    f_base : ndarray, shape=(n_r,)
        -u(r)/c (1/length^2; u = +inf inside a hard core stored as 1e300).
    inv_r2 : ndarray, shape=(n_r,)
        1/r^2.
    """

    r0: float
    h: float
    f_base: np.ndarray
    inv_r2: np.ndarray

    @property
    def r_end(self):
        """The last grid point, the matching radius."""
        return self.r0 + (self.f_base.size - 1) * self.h


def radial_grid(pot, c, r_start, r_match, h):
    """The grid from r_start to r_match with a step of at most h, for hbar^2/(2 mu k) = c."""
    n = int(math.ceil((r_match - r_start) / h)) + 1
    h = (r_match - r_start) / (n - 1)
    r = r_start + h * np.arange(n)
    u = np.asarray(pot.energy(np.maximum(r, 1e-12)), dtype=float)
    u = np.where(np.isfinite(u), u, 1e300)
    return RadialGrid(r_start, h, -u / c, 1.0 / (r * r))


@njit(cache=True)
def riccati_all(x, j_l, n_l):
    """Riccati-Bessel x j_l(x) and x y_l(x) for l = 0 .. size - 1 (in place).

    x y_l by the upward recurrence (stable); x j_l by Miller's downward
    recurrence normalised to sin(x).  Values beyond the float range are
    left as 0 (j) and -inf (y): deep under the centrifugal barrier.
    """
    m = j_l.size
    s = math.sin(x)
    co = math.cos(x)
    n_l[0] = -co
    if m > 1:
        n_l[1] = -co / x - s
    for l in range(1, m - 1):
        nxt = (2.0 * l + 1.0) / x * n_l[l] - n_l[l - 1]
        n_l[l + 1] = nxt if math.isfinite(nxt) else -np.inf
    top = m + int(x) + 40
    a = 0.0
    b = 1e-300
    for l in range(top, -1, -1):
        c = (2.0 * l + 3.0) / x * b - a
        a = b
        b = c
        if l < m:
            j_l[l] = b
        if abs(b) > 1e250:
            b *= 1e-250
            a *= 1e-250
            for q in range(l, min(m, l + 1 + top)):
                j_l[q] *= 1e-250
    # b is now proportional to x j_0 = sin x (the recurrence of the Riccati form is the same).
    if abs(s) > 0.3:
        scale = s / j_l[0]
    else:
        scale = (s / x - co) / j_l[1] if m > 1 else s / j_l[0]
    for l in range(m):
        j_l[l] *= scale


def riccati(n, x):
    """x j_l(x) and x y_l(x) for l = 0 .. n - 1 (:func:`riccati_all`)."""
    j = np.empty(n)
    y = np.empty(n)
    riccati_all(float(x), j, y)
    return j, y
