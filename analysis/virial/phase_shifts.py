"""Scattering phase shifts and bound states of a pair potential, from the radial equation.

The radial Schroedinger equation of the relative motion,

    y''(r) + [k^2 - u(r)/c - l(l+1)/r^2] y(r) = 0,   c = hbar^2 / (2 mu k_B),

is integrated outward by Numerov's method (:mod:`analysis.virial.radial`)
from deep inside the repulsive wall to the matching radius R,
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
from scipy.special import spherical_kn

from analysis.virial.radial import (numerov_all, numerov_run, radial_grid, radial_grid_start,
                                    riccati, start_index)
from mdsim.errors import StudyError

__all__ = ["PhaseShifts", "phase_shift_table", "phase_shifts_at", "bound_states", "MATCH_SIGMA"]

#: Matching radius in units of sigma; the potential beyond it enters
#: classically (its quantum correction there is below 1e-3 of a tail term
#: that is itself a few percent of B2, see docs/physics.md).
MATCH_SIGMA = 3.5
# Numerov steps per local wavelength bound: h q_max <= _HQ.  The phase error
# grows as R q^6 h^5 / 240 (below 1e-5 rad here).
_HQ = 0.2


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
    grid = radial_grid(pot, c, r_start, r_match, h)
    l_l = np.asarray(l_values, dtype=int)
    return _shifts_on_grid(grid, k, int(l_l.max()) + 1)[l_l]


def _shifts_on_grid(grid, k, n_l):
    """delta_l(k) for l = 0 .. n_l - 1."""
    l_l = np.arange(n_l)
    y1 = np.empty(n_l)
    y2 = np.empty(n_l)
    nodes = np.empty(n_l, dtype=np.int64)
    numerov_all(grid.f_base, grid.inv_r2, grid.h, k * k, y1, y2, nodes)
    r2 = grid.r_end
    r1 = r2 - grid.h
    j1, n1 = riccati(n_l, k * r1)
    j2, n2 = riccati(n_l, k * r2)
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
    i0, _ = start_index(grid.f_base, grid.inv_r2, grid.h, l, -kappa2, 1)
    y1, y2, nodes = numerov_run(grid.f_base, grid.inv_r2, grid.h, l, -kappa2, i0)
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
    grid = radial_grid(pot, c, radial_grid_start(pot, depth), r_match, h)
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
    grid = radial_grid(pot, c, r_start, r_match, min(0.01 * pot.sigma, _HQ / q_max))
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
