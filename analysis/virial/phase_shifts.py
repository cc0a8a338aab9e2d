"""Scattering phase shifts and bound states of a pair potential, from the radial equation.

The radial Schroedinger equation of the relative motion,

    y''(r) + [k^2 - u(r)/c - l(l+1)/r^2] y(r) = 0,   c = hbar^2 / (2 mu k_B),

is integrated outward by Numerov's method (:func:`_numerov_run`, a numba
kernel) from deep inside the repulsive wall to the matching radius R,
beyond which the potential is left to the classical tail term of
:mod:`analysis.virial.quantum_exact`.  The phase shift follows from the
solution at two points matched to the Riccati-Bessel functions
x j_l(x), x y_l(x); its multiple of pi from the number of nodes of the
solution (continuity in k, so that Levinson's theorem
delta_l(0) = n_bound pi holds).  Bound states are found by bisection on
the node count (oscillation theorem), with the decaying free solution
x k_l(x) beyond R.

Units: u in K, r in the potential's length unit (angstrom), c in K x
length^2, k in 1/length, energies E = c k^2 in K.

Array suffixes: ``_r`` radial grid, ``_k`` wave numbers, ``_l`` partial waves.
"""
import dataclasses
import math

import numpy as np
from numba import njit
from scipy.special import spherical_kn

from mdsim.errors import StudyError

__all__ = ["PhaseShifts", "phase_shift_table", "phase_shifts_at", "bound_states",
           "radial_grid_start", "MATCH_SIGMA"]

#: Matching radius in units of sigma; the potential beyond it enters
#: classically (its quantum correction there is below 1e-3 of a tail term
#: that is itself a few percent of B2, see docs/physics.md).
MATCH_SIGMA = 3.5
# Numerov steps per local wavelength bound: h q_max <= _HQ.  The phase error
# grows as R q^6 h^5 / 240 (below 1e-5 rad here).
_HQ = 0.2
# Where the integration starts: the WKB exponent under the barrier from the
# start to the turning point is at least this (the neglected solution is
# smaller by exp(-2 x _BARRIER)).
_BARRIER = 18.0


@njit(cache=True)
def _numerov_run(f_base, inv_r2, h, l, k2, i_start):
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
def _start_index(f_base, inv_r2, h, l, k2, i_from):
    """Grid index to start from (WKB exponent under the barrier >= _BARRIER) and the
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
    while i > 1 and acc < _BARRIER:
        i -= 1
        q = -(f_base[i] + k2 - ll * inv_r2[i])
        if q > 0.0:
            acc += math.sqrt(q) * h
    return max(i - 1, 0), it


@njit(cache=True)
def _numerov_all(f_base, inv_r2, h, k2, y1_l, y2_l, nodes_l):
    """:func:`_numerov_run` for l = 0 .. n_l - 1 (outputs filled in place)."""
    it = 1
    for l in range(y1_l.size):
        # The allowed region only shrinks as l grows: search on from the last turning point.
        i0, it = _start_index(f_base, inv_r2, h, l, k2, it)
        y1_l[l], y2_l[l], nodes_l[l] = _numerov_run(f_base, inv_r2, h, l, k2, i0)


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
class _Grid:
    r0: float
    h: float
    f_base: np.ndarray
    inv_r2: np.ndarray

    @property
    def r_end(self):
        return self.r0 + (self.f_base.size - 1) * self.h


def _grid(pot, c, r_start, r_match, h):
    n = int(math.ceil((r_match - r_start) / h)) + 1
    h = (r_match - r_start) / (n - 1)
    r = r_start + h * np.arange(n)
    u = np.asarray(pot.energy(np.maximum(r, 1e-12)), dtype=float)
    u = np.where(np.isfinite(u), u, 1e300)
    return _Grid(r_start, h, -u / c, 1.0 / (r * r))


@njit(cache=True)
def _riccati_all(x, j_l, n_l):
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


def _riccati(n, x):
    j = np.empty(n)
    y = np.empty(n)
    _riccati_all(float(x), j, y)
    return j, y


def _free_phase(l, x, j, y):
    """Continuous phase theta(x) of the Riccati-Bessel pair (j, y) = (x j_l, x y_l),
    x j_l = M sin(theta), theta(0) = 0."""
    ang = np.arctan2(j, -y)
    L = l + 0.5
    xs = np.maximum(x, L)
    wkb = np.where(x > L, np.sqrt(xs * xs - L * L) - L * np.arccos(L / xs) + 0.25 * np.pi,
                   0.25 * np.pi * np.minimum(x / L, 1.0) ** (2 * l + 1))
    return ang + 2.0 * np.pi * np.round((wkb - ang) / (2.0 * np.pi))


def phase_shifts_at(pot, c, k, l_values, r_match, h=None, r_start=None):
    """Phase shifts delta_l(k) of the potential cut at ``r_match`` (radians, continuous in k).

    Parameters
    ----------
    pot : PairPotential (K, length)
    c : float
        hbar^2 / (2 mu k_B), K x length^2.
    k : float
        Wave number, 1/length (> 0).
    l_values : array_like of int
    r_match : float
        Matching radius (u = 0 beyond it in this problem).
    h, r_start : float, optional
        Numerov step and grid start (chosen from k when left out).

    Returns
    -------
    ndarray, shape=(n_l,)
    """
    E = c * k * k
    if r_start is None:
        r_start = radial_grid_start(pot, E)
    if h is None:
        q_max = math.sqrt(k * k + pot.epsilon / c)
        h = min(0.01 * pot.sigma, _HQ / q_max)
    grid = _grid(pot, c, r_start, r_match, h)
    l_l = np.asarray(l_values, dtype=int)
    return _shifts_on_grid(grid, k, int(l_l.max()) + 1)[l_l]


def _shifts_on_grid(grid, k, n_l):
    """delta_l(k) for l = 0 .. n_l - 1."""
    l_l = np.arange(n_l)
    y1 = np.empty(n_l)
    y2 = np.empty(n_l)
    nodes = np.empty(n_l, dtype=np.int64)
    _numerov_all(grid.f_base, grid.inv_r2, grid.h, k * k, y1, y2, nodes)
    r2 = grid.r_end
    r1 = r2 - grid.h
    j1, n1 = _riccati(n_l, k * r1)
    j2, n2 = _riccati(n_l, k * r2)
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        delta0 = np.arctan((y1 * j2 - y2 * j1) / (y1 * n2 - y2 * n1))
    delta0 = np.where(np.isfinite(delta0), delta0, 0.0)
    theta = _free_phase(l_l, k * r2, j2, n2)
    # Continuity in k: the nodes of y on (0, R] are floor((theta(kR) + delta) / pi).
    m = nodes - np.floor((theta + delta0) / np.pi)
    return delta0 + np.pi * m


def _count_below(grid, l, E, c):
    """Bound states of partial wave l below E < 0 (oscillation theorem, decaying tail beyond R)."""
    kappa2 = -E / c
    i0, _ = _start_index(grid.f_base, grid.inv_r2, grid.h, l, -kappa2, 1)
    y1, y2, nodes = _numerov_run(grid.f_base, grid.inv_r2, grid.h, l, -kappa2, i0)
    r2 = grid.r_end
    r1 = r2 - grid.h
    kap = math.sqrt(kappa2)
    if kap * r2 < 1e-8:
        w1, w2 = r1 ** (-l), r2 ** (-l)
    else:
        # x k_l(x), both points scaled by the same exp(kappa r2) to stay finite.
        scale = math.exp(min(kap * r2, 600.0))
        w1 = kap * r1 * spherical_kn(l, kap * r1) * scale
        w2 = kap * r2 * spherical_kn(l, kap * r2) * scale
    wronski = w1 * y2 - w2 * y1
    return nodes + (1 if y2 * wronski < 0.0 else 0)


def bound_states(pot, c, r_match, l_max=400):
    """Bound-state energies of the potential cut at ``r_match``, by partial wave.

    Parameters
    ----------
    pot : PairPotential (K, length)
    c : float
        hbar^2 / (2 mu k_B), K x length^2.
    r_match : float
    l_max : int, optional
        Largest l examined (the search stops at the first l without a bound state).

    Returns
    -------
    list of (int, float)
        (l, E_b in K), E_b < 0.

    Notes
    -----
    The number of bound states below E is the number of nodes of the
    regular solution at E (oscillation theorem); each level is bracketed
    by bisection on that count to 1e-11 of the well depth.
    """
    depth = pot.epsilon
    q_max = math.sqrt(depth / c) * 1.5
    h = min(0.005 * pot.sigma, _HQ / q_max)
    grid = _grid(pot, c, radial_grid_start(pot, depth), r_match, h)
    u_min = float(-np.max(grid.f_base) * c)
    tiny = 1e-12 * depth
    out = []
    for l in range(l_max + 1):
        n_b = _count_below(grid, l, -tiny, c)
        if n_b == 0:
            break
        for n in range(n_b):
            lo, hi = u_min * (1.0 + 1e-9) - tiny, -tiny
            while hi - lo > 1e-11 * depth:
                mid = 0.5 * (lo + hi)
                if _count_below(grid, l, mid, c) > n:
                    hi = mid
                else:
                    lo = mid
            out.append((l, 0.5 * (lo + hi)))
    return out


@dataclasses.dataclass
class PhaseShifts:
    """Phase-shift sums of one pair on a quadrature in k, reused at every temperature.

    Attributes
    ----------
    c : float
        hbar^2 / (2 mu k_B), K x length^2.
    k_k, w_k : ndarray, shape=(n_k,)
        Gauss-Legendre nodes and weights in k (1/length).
    even_k, odd_k : ndarray, shape=(n_k,)
        sum over even (odd) l of (2l + 1) delta_l(k), radians.
    bound : list of (int, float)
        (l, E_b in K).
    r_match : float
        Matching radius (length unit).
    E_max : float
        Highest energy of the quadrature (K).
    l_used : ndarray of int, shape=(n_k,)
        Partial waves summed at each k (convergence record).
    """

    c: float
    k_k: np.ndarray
    w_k: np.ndarray
    even_k: np.ndarray
    odd_k: np.ndarray
    bound: list
    r_match: float
    E_max: float
    l_used: np.ndarray


def _k_panels(sigma, k_max, n_nodes):
    edges = [0.0]
    width = 0.05 / sigma
    while edges[-1] < k_max:
        edges.append(min(edges[-1] + width, k_max))
        width = min(width * 1.4, 4.0 / sigma)
    x, w = np.polynomial.legendre.leggauss(n_nodes)
    e = np.array(edges)
    half = 0.5 * np.diff(e)
    k = (e[:-1, None] + half[:, None] * (x[None, :] + 1.0)).ravel()
    wk = (half[:, None] * w[None, :]).ravel()
    return k, wk


def _summed_shifts(pot, c, k, r_match, r_start):
    """sum_l (2l+1) delta_l over even and odd l, and the number of l summed.

    Partial waves whose turning point lies beyond the matching radius
    (l + 1/2 > k R) only tunnel, over a band of l of width ~ (k R)^(1/3):
    the sum stops at k R + 12 + 5 (k R)^(1/3) (tunnelling exponent ~ 20).
    """
    q_max = math.sqrt(k * k + pot.epsilon / c)
    grid = _grid(pot, c, r_start, r_match, min(0.01 * pot.sigma, _HQ / q_max))
    kr = k * r_match
    n_l = int(kr + 12.0 + 5.0 * kr ** (1.0 / 3.0))
    d = _shifts_on_grid(grid, k, n_l)
    w = 2.0 * np.arange(n_l) + 1.0
    return float((w * d)[0::2].sum()), float((w * d)[1::2].sum()), n_l


def phase_shift_table(pot, c, E_max, n_nodes=8):
    """Phase-shift sums and bound states of a pair potential up to the energy E_max.

    Parameters
    ----------
    pot : PairPotential (K, length)
    c : float
        hbar^2 / (2 mu k_B), K x length^2 (> 0).
    E_max : float
        Highest relative kinetic energy (K); about 30 kT for the highest T wanted.
    n_nodes : int, optional
        Gauss-Legendre nodes per panel in k.

    Returns
    -------
    PhaseShifts
    """
    if not (c > 0.0 and math.isfinite(c)):
        raise StudyError(f"'c' = {c!r}: hbar^2/(2 mu k) must be a positive number (K x length^2)")
    if not (E_max > 0.0 and math.isfinite(E_max)):
        raise StudyError(f"'E_max' = {E_max!r}: the highest energy must be positive (K)")
    r_match = MATCH_SIGMA * pot.sigma
    if hasattr(pot, "r_max"):
        r_match = min(r_match, pot.r_max)
    k_max = math.sqrt(E_max / c)
    k_k, w_k = _k_panels(pot.sigma, k_max, n_nodes)
    r_start = radial_grid_start(pot, E_max)
    even = np.empty(k_k.size)
    odd = np.empty(k_k.size)
    l_used = np.empty(k_k.size, dtype=int)
    for i, k in enumerate(k_k):
        even[i], odd[i], l_used[i] = _summed_shifts(pot, c, float(k), r_match, r_start)
    return PhaseShifts(c=c, k_k=k_k, w_k=w_k, even_k=even, odd_k=odd,
                       bound=bound_states(pot, c, r_match), r_match=r_match, E_max=E_max,
                       l_used=l_used)
