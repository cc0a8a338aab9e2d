"""The third virial coefficient B3 (pairwise additive, classical), its cross terms and mixtures.

C_abc = -(8 pi^2 / 3) int int int f_ab(r) f_ac(s) f_bc(t) r s t dt ds dr in
bipolar coordinates.  The numba kernels (:func:`_hermite`,
:func:`_b3_kernel`) do the (r, s) double sum with the inner t integral
tabulated once per temperature; they call nothing outside this module.
Unit-agnostic like :mod:`analysis.virial.second`: B3 per molecule squared
in length^6.

Array suffixes: ``_r`` radial quadrature nodes, ``_q`` nodes of a partial
panel, ``_k`` derivative order in T (0: value, 1: d/dT, 2: d2/dT2), ``_g``
the uniform grid of the inner triangle integral G(x).
"""
import functools
import math

import numpy as np
from numba import njit

from analysis.virial.quadrature import (DEFAULT_NODES_B3, R_B3_SIGMA, check_mixture,
                                        check_nodes, check_pot, check_temperature, mayer,
                                        panel_breaks, panel_nodes, register, registered,
                                        shape_out)
from mdsim.engine.potentials import FORM_TABLE

__all__ = ["b3", "b3_cross", "b3_mixture"]

# Spacing of the uniform grid of G(x) = int_0^x f(t) t dt (units of sigma).
# Cubic Hermite interpolation with exact slopes: error ~ h^4 max|G''''| / 384,
# below 1e-8 sigma^2 even for the steep wall at T* = 0.5.
_G_STEP_SIGMA = 0.004


@njit(cache=True)
def _hermite(x, g0, gh, G_kg, S_kg):
    """Cubic Hermite interpolants of G_0, G_1, G_2 at x (exact slopes S_k = dG_k/dx).

    Below the grid start g0 (inside a hard core, or 0) f = -1, so G = -x^2/2
    and its T-derivatives vanish; beyond the grid G is constant.
    """
    if x <= g0:
        return -0.5 * x * x, 0.0, 0.0
    m = G_kg.shape[1]
    t = (x - g0) / gh
    j = int(t)
    if j >= m - 1:
        return G_kg[0, m - 1], G_kg[1, m - 1], G_kg[2, m - 1]
    t -= j
    t2 = t * t
    t3 = t2 * t
    h00 = 2.0 * t3 - 3.0 * t2 + 1.0
    h10 = (t3 - 2.0 * t2 + t) * gh
    h01 = -2.0 * t3 + 3.0 * t2
    h11 = (t3 - t2) * gh
    return (h00 * G_kg[0, j] + h10 * S_kg[0, j] + h01 * G_kg[0, j + 1] + h11 * S_kg[0, j + 1],
            h00 * G_kg[1, j] + h10 * S_kg[1, j] + h01 * G_kg[1, j + 1] + h11 * S_kg[1, j + 1],
            h00 * G_kg[2, j] + h10 * S_kg[2, j] + h01 * G_kg[2, j + 1] + h11 * S_kg[2, j + 1])


@njit(cache=True)
def _b3_kernel(r_r, w_r, pan_r, fab_kr, fac_kr, sp_rq, wp_rq, fab_krq, fac_krq,
               g0, gh, G_kg, S_kg, out_k):
    """Triangle integral of f_ab(r) f_ac(s) f_bc(t) r s t and two T-derivatives.

    Integrates over s < r the symmetrised integrand
    [f_ab(r) f_ac(s) + f_ab(s) f_ac(r)] r s [G_bc(r+s) - G_bc(r-s)].
    Inner nodes for outer node i: every node of a lower panel, plus the
    partial-panel nodes sp_rq[i] (from the panel start to r_i).
    """
    n = r_r.size
    nq = sp_rq.shape[1]
    acc0 = 0.0
    acc1 = 0.0
    acc2 = 0.0
    for i in range(n):
        r = r_r[i]
        ar0, ar1, ar2 = fab_kr[0, i], fab_kr[1, i], fab_kr[2, i]
        cr0, cr1, cr2 = fac_kr[0, i], fac_kr[1, i], fac_kr[2, i]
        s0 = 0.0
        s1 = 0.0
        s2 = 0.0
        for jj in range(n + nq):
            if jj < n:
                if pan_r[jj] >= pan_r[i]:
                    continue
                s = r_r[jj]
                ws = w_r[jj]
                as0, as1, as2 = fab_kr[0, jj], fab_kr[1, jj], fab_kr[2, jj]
                cs0, cs1, cs2 = fac_kr[0, jj], fac_kr[1, jj], fac_kr[2, jj]
            else:
                q = jj - n
                s = sp_rq[i, q]
                ws = wp_rq[i, q]
                as0, as1, as2 = fab_krq[0, i, q], fab_krq[1, i, q], fab_krq[2, i, q]
                cs0, cs1, cs2 = fac_krq[0, i, q], fac_krq[1, i, q], fac_krq[2, i, q]
            p0 = ar0 * cs0 + as0 * cr0
            p1 = ar1 * cs0 + ar0 * cs1 + as1 * cr0 + as0 * cr1
            p2 = (ar2 * cs0 + 2.0 * ar1 * cs1 + ar0 * cs2
                  + as2 * cr0 + 2.0 * as1 * cr1 + as0 * cr2)
            hi0, hi1, hi2 = _hermite(r + s, g0, gh, G_kg, S_kg)
            lo0, lo1, lo2 = _hermite(r - s, g0, gh, G_kg, S_kg)
            F0 = hi0 - lo0
            F1 = hi1 - lo1
            F2 = hi2 - lo2
            c = ws * s
            s0 += c * p0 * F0
            s1 += c * (p1 * F0 + p0 * F1)
            s2 += c * (p2 * F0 + 2.0 * p1 * F1 + p0 * F2)
        c = w_r[i] * r
        acc0 += c * s0
        acc1 += c * s1
        acc2 += c * s2
    out_k[0] = acc0
    out_k[1] = acc1
    out_k[2] = acc2


class _TriangleLayout:
    """Nodes, energies and the G grid of one triple of pair potentials."""

    def __init__(self, pot_ab, pot_ac, pot_bc, n):
        breaks, _ = panel_breaks([pot_ab, pot_ac, pot_bc], R_B3_SIGMA)
        r_end = breaks[-1]
        self.r_r, self.w_r, self.pan_r = panel_nodes(breaks, n)
        x, wq = np.polynomial.legendre.leggauss(n)
        lo = breaks[self.pan_r]
        half = 0.5 * (self.r_r - lo)
        self.sp_rq = lo[:, None] + half[:, None] * (x[None, :] + 1.0)
        self.wp_rq = half[:, None] * wq[None, :]
        self.u_ab_r = pot_ab.energy(self.r_r)
        self.u_ac_r = pot_ac.energy(self.r_r)
        self.u_ab_rq = pot_ab.energy(self.sp_rq)
        self.u_ac_rq = pot_ac.energy(self.sp_rq)
        # Uniform grid of G_bc from its core (f = -1 below) to 2 r_end; for a
        # table the spacing makes its last point a grid node (f jumps there).
        g0 = pot_bc.core_radius
        step = _G_STEP_SIGMA * pot_bc.sigma
        if pot_bc.form == FORM_TABLE:
            m_in = max(1, int(math.ceil((pot_bc.r_max - g0) / step)))
            step = (pot_bc.r_max - g0) / m_in
        m = int(math.ceil((2.0 * r_end - g0) / step)) + 1
        self.g0 = g0
        self.gh = step
        self.x_g = g0 + step * np.arange(m + 1)
        xg, wg = np.polynomial.legendre.leggauss(4)
        self.tq_gq = self.x_g[:-1, None] + 0.5 * step * (xg[None, :] + 1.0)
        self.wq_q = 0.5 * step * wg
        # At x = 0 (no core) the slope f x is 0 whatever u is: evaluate u just off 0.
        self.u_bc_g = pot_bc.energy(np.maximum(self.x_g, 1e-3 * step))
        self.u_bc_gq = pot_bc.energy(self.tq_gq)

    def integrate(self, T):
        fab_kr = np.array(mayer(self.u_ab_r, T))
        fac_kr = np.array(mayer(self.u_ac_r, T))
        fab_krq = np.array(mayer(self.u_ab_rq, T))
        fac_krq = np.array(mayer(self.u_ac_rq, T))
        fg_kg = np.array(mayer(self.u_bc_g, T))
        fq_kgq = np.array(mayer(self.u_bc_gq, T))
        inc_kg = (fq_kgq * self.tq_gq[None]) @ self.wq_q
        G_kg = np.zeros((3, self.x_g.size))
        G_kg[0, 0] = -0.5 * self.g0 ** 2
        G_kg[:, 1:] = G_kg[:, :1] + np.cumsum(inc_kg, axis=1)
        S_kg = fg_kg * self.x_g[None]
        out = np.zeros(3)
        _b3_kernel(self.r_r, self.w_r, self.pan_r, fab_kr, fac_kr, self.sp_rq, self.wp_rq,
                   fab_krq, fac_krq, self.g0, self.gh, G_kg, S_kg, out)
        return -(8.0 * math.pi ** 2 / 3.0) * out


@functools.lru_cache(maxsize=64)
def _triangle_layout(key_ab, key_ac, key_bc, n):
    return _TriangleLayout(registered(key_ab), registered(key_ac), registered(key_bc), n)


@functools.lru_cache(maxsize=4096)
def _b3_cached(key_ab, key_ac, key_bc, n, T):
    return tuple(_triangle_layout(key_ab, key_ac, key_bc, n).integrate(T))


def b3_cross(pot_ab, pot_ac, pot_bc, T, n_nodes=DEFAULT_NODES_B3):
    """Third virial cross coefficient C_abc and its first two T-derivatives.

    Parameters
    ----------
    pot_ab, pot_ac, pot_bc : PairPotential
        The three pair potentials of a triple of molecules of species a, b, c.
    T : float or ndarray, energy unit of the potentials
    n_nodes : int, optional
        Gauss-Legendre nodes per panel (default 10: better than 1e-6
        relative for LJ over 0.7 <= T* <= 100, see the tests).

    Returns
    -------
    C, dC_dT, d2C_dT2 : float or ndarray shaped like T
        Per molecule squared, length^6 (/ energy, / energy^2).

    Notes
    -----
    C_abc = -(8 pi^2 / 3) int int int f_ab(r) f_ac(s) f_bc(t) r s t dt ds dr
    over |r - s| <= t <= r + s (bipolar coordinates; Hirschfelder, Curtiss
    and Bird 1954, section 3.8), pairwise-additive and classical.  The t
    integral is G(r+s) - G(|r-s|) with G(x) = int_0^x f_bc(t) t dt
    tabulated once per T; the (r, s) integral runs over s < r with the
    integrand symmetrised, so no panel straddles the kink at r = s.  The
    distances r and s are cut at 10 sigma (a table's last point): for LJ the
    neglected part falls as R^-9 and is below 1e-6 relative; for Mie
    attractive exponents m < 6 it falls only as R^(3 - 2m).
    Values are cached per potential and temperature.
    """
    for name, p in (("pot_ab", pot_ab), ("pot_ac", pot_ac), ("pot_bc", pot_bc)):
        check_pot(p, name)
    T_t = check_temperature(T).ravel()
    n = check_nodes(n_nodes, "n_nodes")
    keys = (register(pot_ab), register(pot_ac), register(pot_bc))
    vals = np.array([_b3_cached(*keys, n, float(t)) for t in T_t])
    return shape_out(tuple(vals.T), T)


def b3(pot, T, n_nodes=DEFAULT_NODES_B3):
    """Classical additive third virial coefficient B3 and its T-derivatives.

    Parameters
    ----------
    pot : PairPotential
    T : float or ndarray, energy unit of ``pot``
    n_nodes : int, optional

    Returns
    -------
    B3, dB3_dT, d2B3_dT2 : float or ndarray shaped like T
        Per molecule squared, length^6.

    Notes
    -----
    See :func:`b3_cross` with all three pairs equal.

    Examples
    --------
    Lennard-Jones at T* = 1 in units of b0^2 = (2 pi sigma^3 / 3)^2:
    B3* = 0.4297 (Hirschfelder, Curtiss and Bird 1954, Table I-C):

    >>> import math
    >>> from mdsim.engine.potentials import LennardJones
    >>> B3, dB3_dT, d2B3_dT2 = b3(LennardJones(1.0, 1.0), 1.0)
    >>> round(B3 / (2.0 * math.pi / 3.0) ** 2, 4)
    0.4297
    """
    return b3_cross(pot, pot, pot, T, n_nodes)


def b3_mixture(pairs, fractions, T, n_nodes=DEFAULT_NODES_B3):
    """Mixture third virial coefficient sum_abc x_a x_b x_c C_abc and T-derivatives.

    Parameters
    ----------
    pairs : PairMatrix
    fractions : array_like, shape=(n_species,)
    T : float or ndarray, energy unit of the potentials

    Returns
    -------
    B3, dB3_dT, d2B3_dT2 : as :func:`b3`
    """
    x = check_mixture(pairs, fractions, T)
    ns = pairs.n_species
    P = pairs.pots
    out = [0.0, 0.0, 0.0]
    for a in range(ns):
        for b in range(a, ns):
            for c in range(b, ns):
                # C_abc is symmetric in its indices: count each multiset once
                # with the number of its distinct orderings.
                mult = 6 if a < b < c else (1 if a == b == c else 3)
                weight = mult * x[a] * x[b] * x[c]
                if weight == 0.0:
                    continue
                vals = b3_cross(P[a][b], P[a][c], P[b][c], T, n_nodes)
                out = [o + weight * v for o, v in zip(out, vals)]
    return tuple(out)
