"""Second and third virial coefficients of spherical pair potentials.

Core functions are unit-agnostic: the temperature ``T`` is in the energy
unit of the potential (kelvin for potentials given as u/k in K, 1 for
reduced units), lengths in the potential's length unit, and the results are
per molecule: B2 in length^3, B3 in length^6.  The SI layer at the bottom
(``*_m3_mol``, ``*_m6_mol2``) assumes potentials in kelvin and angstrom,
which is how the study reader builds them.

The coefficients are deterministic Gauss-Legendre quadratures on a fixed,
potential-dependent set of panels (dense across the repulsive wall and the
well), so they are smooth functions of T, safe inside root finders.

Array suffixes: ``_r`` radial quadrature nodes, ``_t`` temperatures,
``_k`` derivative order in T (0: value, 1: d/dT, 2: d2/dT2), ``_g`` the
uniform grid of the inner triangle integral G(x).
"""
import functools
import math
import warnings
import weakref

import numpy as np
from numba import njit

from mdsim.checks import positive_array
from mdsim.engine.potentials import FORM_TABLE, PairMatrix, PairPotential
from mdsim.errors import StudyError
from mdsim.units import K_B, N_A, PLANCK

ANGSTROM_M = 1.0e-10

# Panel layout in units of the pair's sigma: dense across the repulsive wall
# (where u/T ~ 1 moves from about 0.45 sigma at T* = 1e4 to sigma at low T)
# and the well, coarse further out.  For B2, R_FAR_SIGMA is where the
# substitution y = R / r takes over for the long-range tail (exact).  For
# B3 the distances r and s are cut at R_B3_SIGMA: for LJ the neglected part
# falls as R^-9 (measured: 2.4e-4 sigma^6 beyond 5 sigma at T* = 1, so
# ~5e-7 sigma^6, 3e-7 relative, beyond 10 sigma).
R_FAR_SIGMA = 7.0
R_B3_SIGMA = 10.0
_BREAKS_CORE_SIGMA = np.unique(np.concatenate([
    [0.0],
    np.linspace(0.3, 0.6, 7),
    np.linspace(0.6, 1.6, 26),
    np.linspace(1.6, 3.0, 8),
]))


def _breaks_sigma(r_end_sigma):
    n_out = int(math.ceil(r_end_sigma - 3.0)) + 1
    return np.concatenate([_BREAKS_CORE_SIGMA, np.linspace(3.0, r_end_sigma, n_out)[1:]])


# exp(-x) below this is treated as 0 (exp(-700) ~ 1e-304).
_X_MAX = 700.0

# Spacing of the uniform grid of G(x) = int_0^x f(t) t dt (units of sigma).
# Cubic Hermite interpolation with exact slopes: error ~ h^4 max|G''''| / 384,
# below 1e-8 sigma^2 even for the steep wall at T* = 0.5.
_G_STEP_SIGMA = 0.004

# Above this de Boer parameter the first-order Wigner-Kirkwood term is not
# enough (see check_de_boer); below _QUANTUM_NEGLIGIBLE omitting it is fine.
DE_BOER_FIRST_ORDER_LIMIT = 1.0
DE_BOER_NEGLIGIBLE = 0.3

DEFAULT_NODES_B2 = 20
DEFAULT_NODES_B3 = 10


class QuantumCorrectionWarning(UserWarning):
    """The gas is too quantum for the classical or first-order virial result."""


# --- checks --------------------------------------------------------------------

def _check_pot(pot, name="pot"):
    if not isinstance(pot, PairPotential):
        raise StudyError(f"'{name}' must be a pair potential from mdsim.engine.potentials "
                         f"(LennardJones, Mie, Exp6, Tabulated); got {type(pot).__name__}")
    return pot


def _check_temperature(T, name="T"):
    return positive_array(name, T, "temperatures in the energy unit of the potential, e.g. "
                          "kelvin for u/k in K")


def _check_nodes(n, name):
    n = int(n)
    if n < 4 or n > 200:
        raise StudyError(f"setting '{name}' = {n}: Gauss-Legendre nodes per panel must be in 4..200")
    return n


def _check_fractions(fractions, n_species):
    x = np.asarray(fractions, dtype=float).ravel()
    if x.size != n_species:
        raise StudyError(f"'fractions' has {x.size} entries for {n_species} species; give one mole "
                         "fraction per species")
    if not np.all(np.isfinite(x)) or np.any(x < 0.0) or abs(x.sum() - 1.0) > 1e-8:
        raise StudyError(f"'fractions' = {x.tolist()}: mole fractions must be >= 0 and sum to 1 "
                         f"(they sum to {x.sum():.10g}); normalise them")
    return x


def _check_mixture(pairs, fractions, T):
    """Mole fractions of a mixture, once ``pairs`` and ``T`` are checked too."""
    if not isinstance(pairs, PairMatrix):
        raise StudyError(f"'pairs' must be a PairMatrix; got {type(pairs).__name__}")
    x = _check_fractions(fractions, pairs.n_species)
    _check_temperature(T)
    return x


def _shape_out(values_kt, T):
    """Tuple of per-order results shaped like the input T (floats for scalars)."""
    if np.ndim(T) == 0:
        return tuple(float(v[0]) for v in values_kt)
    shape = np.shape(T)
    return tuple(v.reshape(shape) for v in values_kt)


# --- Mayer function and its T-derivatives ------------------------------------------

def mayer(u, T):
    """Mayer function f = exp(-u/T) - 1 and its first two T-derivatives.

    Parameters
    ----------
    u : ndarray, any shape, energy unit (may hold +inf inside a hard core)
    T : float or ndarray broadcastable with ``u``, energy unit

    Returns
    -------
    f, df_dT, d2f_dT2 : ndarray, broadcast shape

    Notes
    -----
    df/dT = (u/T^2) e^{-u/T},  d2f/dT2 = e^{-u/T} (x^2 - 2x) / T^2 with x = u/T.
    Where x > 700 (including u = +inf) e^{-x} is 0: f = -1, derivatives 0.
    """
    with np.errstate(invalid="ignore", over="ignore"):
        x = u / T
        big = ~(x <= _X_MAX)  # also catches inf and nan from inf/inf
        xs = np.where(big, 0.0, x)
        e = np.where(big, 0.0, np.exp(-xs))
        f = np.where(big, -1.0, np.expm1(-xs))
        d1 = xs * e / T
        d2 = e * (xs * xs - 2.0 * xs) / (T * T)
    return f, d1, d2


# --- quadrature layout -----------------------------------------------------------

def _pot_key(pot):
    table = pot.table.tobytes() if pot.form == FORM_TABLE else b""
    return (pot.form, pot.params.tobytes(), table)


def _breaks(pots, r_end_sigma):
    """Panel breakpoints for one or several potentials (union), and the far radius.

    Each potential contributes its layout scaled by its sigma, up to
    ``r_end_sigma`` sigma (or its table's last point).

    Returns
    -------
    breaks : ndarray, shape=(n_panels + 1,)
    r_far : float or None
        Start of the analytic-substitution tail, None when every potential
        is a table (u = 0 beyond its last point).
    """
    pts = []
    cores = []
    r_ends = []
    tables = True
    for pot in pots:
        b = _breaks_sigma(r_end_sigma) * pot.sigma
        if pot.form == FORM_TABLE:
            b = np.append(b[b < pot.r_max], pot.r_max)
            r_ends.append(pot.r_max)
        else:
            tables = False
            r_ends.append(r_end_sigma * pot.sigma)
        pts.append(b)
        if pot.core_radius > 0.0:
            cores.append(pot.core_radius)
    r_end = max(r_ends)
    b = np.unique(np.concatenate(pts + [np.array(cores), [0.0, r_end]]))
    b = b[b <= r_end]
    # Panels inside a core are kept on purpose: f = -1 there, but in the B3
    # integrand G(r + s) still crosses the wall when r, s are inside it.
    # Merge breakpoints closer than 1e-9 r_end (no zero-width slivers).
    keep = [b[0]]
    for x in b[1:]:
        if x - keep[-1] > 1e-9 * r_end:
            keep.append(x)
    return np.array(keep), (None if tables else r_end)


def _panel_nodes(breaks, n):
    """Composite Gauss-Legendre nodes and weights on the panels."""
    x, w = np.polynomial.legendre.leggauss(n)
    lo = breaks[:-1, None]
    half = 0.5 * np.diff(breaks)[:, None]
    r = lo + half * (x[None, :] + 1.0)
    wr = half * w[None, :]
    pan = np.repeat(np.arange(breaks.size - 1), n)
    return r.ravel(), wr.ravel(), pan


@functools.lru_cache(maxsize=64)
def _b2_layout(key, n):
    pot = _POT_BY_KEY[key]
    breaks, r_far = _breaks([pot], R_FAR_SIGMA)
    r, w, _ = _panel_nodes(breaks, n)
    if r_far is not None:
        # int_R^inf g(r) dr = int_0^1 g(R/y) R / y^2 dy
        y, wy = np.polynomial.legendre.leggauss(n)
        y = 0.5 * (y + 1.0)
        wy = 0.5 * wy
        r = np.concatenate([r, r_far / y])
        w = np.concatenate([w, wy * r_far / y ** 2])
    u = pot.energy(r)
    dudr = pot.dudr(r)
    return r, w, u, dudr


# Keys to live potentials, so the cached layout builders can reach them;
# weak, so a fit that makes thousands of potentials does not keep them.
_POT_BY_KEY = weakref.WeakValueDictionary()


def _register(pot):
    key = _pot_key(pot)
    _POT_BY_KEY[key] = pot
    return key


# --- second virial coefficient ----------------------------------------------------

def b2(pot, T, n_nodes=DEFAULT_NODES_B2):
    """Classical second virial coefficient and its first two T-derivatives.

    Parameters
    ----------
    pot : PairPotential
        Any form (LJ, Mie, exp-6 with its hard core, table).
    T : float or ndarray, energy unit of ``pot``
    n_nodes : int, optional
        Gauss-Legendre nodes per panel (default 20; results are converged
        to about 1e-10 relative, see the tests).

    Returns
    -------
    B2, dB2_dT, d2B2_dT2 : float or ndarray shaped like T
        Per molecule, length^3 (and length^3 / energy, length^3 / energy^2).

    Notes
    -----
    B2 = -2 pi int_0^inf (exp(-u/T) - 1) r^2 dr (Hirschfelder, Curtiss and
    Bird, Molecular Theory of Gases and Liquids, 1954, eq. 3.6-5), the
    derivatives by differentiating under the integral.  Inside a hard core
    f = -1; beyond a table's last point f = 0; beyond 7 sigma the tail is
    integrated exactly in the variable y = 7 sigma / r.
    """
    _check_pot(pot)
    T_t = _check_temperature(T).ravel()
    n = _check_nodes(n_nodes, "n_nodes")
    r, w, u, _ = _b2_layout(_register(pot), n)
    f, d1, d2 = mayer(u[None, :], T_t[:, None])
    wr2 = -2.0 * math.pi * w * r * r
    return _shape_out((f @ wr2, d1 @ wr2, d2 @ wr2), T)


def b2_mixture(pairs, fractions, T, n_nodes=DEFAULT_NODES_B2):
    """Mixture second virial coefficient sum_ab x_a x_b B_ab and its T-derivatives.

    Parameters
    ----------
    pairs : PairMatrix
    fractions : array_like, shape=(n_species,)
    T : float or ndarray, energy unit of the potentials

    Returns
    -------
    B2, dB2_dT, d2B2_dT2 : as :func:`b2`
    """
    x = _check_mixture(pairs, fractions, T)
    out = [0.0, 0.0, 0.0]
    ns = pairs.n_species
    for a in range(ns):
        for b in range(a, ns):
            weight = x[a] * x[b] * (1.0 if a == b else 2.0)
            if weight == 0.0:
                continue
            vals = b2(pairs.pots[a][b], T, n_nodes)
            out = [o + weight * v for o, v in zip(out, vals)]
    return tuple(out)


# --- third virial coefficient -----------------------------------------------------

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
        breaks, _ = _breaks([pot_ab, pot_ac, pot_bc], R_B3_SIGMA)
        r_end = breaks[-1]
        self.r_r, self.w_r, self.pan_r = _panel_nodes(breaks, n)
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
    return _TriangleLayout(_POT_BY_KEY[key_ab], _POT_BY_KEY[key_ac], _POT_BY_KEY[key_bc], n)


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
        _check_pot(p, name)
    T_t = _check_temperature(T).ravel()
    n = _check_nodes(n_nodes, "n_nodes")
    keys = (_register(pot_ab), _register(pot_ac), _register(pot_bc))
    vals = np.array([_b3_cached(*keys, n, float(t)) for t in T_t])
    return _shape_out(tuple(vals.T), T)


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
    x = _check_mixture(pairs, fractions, T)
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


# --- quantum correction -----------------------------------------------------------

def b2_quantum(pot, T, h2_over_mu, n_nodes=DEFAULT_NODES_B2):
    """First-order Wigner-Kirkwood correction to B2 and its T-derivatives.

    Parameters
    ----------
    pot : PairPotential
    T : float or ndarray, energy unit of ``pot``
    h2_over_mu : float
        h^2 / (mu k) in (energy unit) x (length unit)^2, mu the reduced mass
        of the pair (m/2 for a like pair).  In reduced LJ units of a like
        pair it is 2 Lambda*^2; for kelvin and angstrom use
        :func:`h2_over_mu_K_A2`.

    Returns
    -------
    dB, d_dB_dT, d2_dB_dT2 : float or ndarray shaped like T
        Per molecule, length^3.

    Notes
    -----
    Delta B = h^2 / (48 pi mu k^3 T^3) int_0^inf exp(-u/kT) (du/dr)^2 r^2 dr,
    which for a like pair (mu = m/2) is the h^2 / (24 pi m ...) form of
    Hirschfelder, Curtiss and Bird (1954), chapter 6.  The correction is
    the first term of a series in Lambda*^2; see :func:`check_de_boer`.
    """
    _check_pot(pot)
    T_t = _check_temperature(T).ravel()
    q = float(h2_over_mu)
    if not math.isfinite(q) or q < 0.0:
        raise StudyError(f"'h2_over_mu' = {h2_over_mu!r}: must be a non-negative number "
                         "(h^2 / (mu k) in energy x length^2)")
    n = _check_nodes(n_nodes, "n_nodes")
    r, w, u, dudr = _b2_layout(_register(pot), n)
    with np.errstate(over="ignore", invalid="ignore"):
        g = dudr * dudr * r * r * w
    # Inside a core, or where du/dr overflows, exp(-u/T) is 0 at any T.
    g = np.where(np.isfinite(g) & np.isfinite(u), g, 0.0)
    f, d1, d2 = mayer(u[None, :], T_t[:, None])
    # e^{-u/T} = f + 1 and its T-derivatives are those of f.
    J0, J1, J2 = (f + 1.0) @ g, d1 @ g, d2 @ g
    c = q / (48.0 * math.pi)
    val = c * J0 / T_t ** 3
    der1 = c * (J1 / T_t ** 3 - 3.0 * J0 / T_t ** 4)
    der2 = c * (J2 / T_t ** 3 - 6.0 * J1 / T_t ** 4 + 12.0 * J0 / T_t ** 5)
    return _shape_out((val, der1, der2), T)


def h2_over_mu_K_A2(mass_a_kg, mass_b_kg):
    """h^2 / (mu k) in K angstrom^2 for a pair of molecular masses (kg)."""
    ma, mb = float(mass_a_kg), float(mass_b_kg)
    for name, m in (("mass_a_kg", ma), ("mass_b_kg", mb)):
        if not math.isfinite(m) or m <= 0.0:
            raise StudyError(f"'{name}' = {m!r}: a molecular mass must be positive (kg per molecule; "
                             "divide the molar mass in kg/mol by N_A)")
    mu = ma * mb / (ma + mb)
    return PLANCK ** 2 / (mu * K_B) / ANGSTROM_M ** 2


def de_boer_parameter(pot_K_A, mass_kg):
    """Lambda* = h / (sigma sqrt(m epsilon)) for a potential in kelvin and angstrom.

    Parameters
    ----------
    pot_K_A : PairPotential
        epsilon as u/k in K, sigma in angstrom.
    mass_kg : float
        Molecular mass (kg per molecule).

    Returns
    -------
    float
        About 2.6 for helium, 1.7 for H2, 0.6 for neon, 0.19 for argon.
    """
    _check_pot(pot_K_A, "pot_K_A")
    m = float(mass_kg)
    if not math.isfinite(m) or m <= 0.0:
        raise StudyError(f"'mass_kg' = {mass_kg!r}: must be a positive molecular mass in kg")
    eps_J = pot_K_A.epsilon * K_B
    sigma_m = pot_K_A.sigma * ANGSTROM_M
    return PLANCK / (sigma_m * math.sqrt(m * eps_J))


def check_de_boer(pot_K_A, mass_kg, quantum_correction, label="gas"):
    """Warn when the quantum treatment chosen is not enough for this gas.

    Parameters
    ----------
    pot_K_A : PairPotential (kelvin, angstrom)
    mass_kg : float
    quantum_correction : bool
        Whether the first-order Wigner-Kirkwood term is applied.
    label : str
        Name used in the message.

    Returns
    -------
    float
        The de Boer parameter.

    Notes
    -----
    The first-order term is Lambda*^2 b_I(T*) sigma^3 with b_I(1) ~ 0.87,
    against |B2| ~ 5.3 sigma^3 classically at T* = 1 (LJ): about
    16 Lambda*^2 percent.  The Wigner-Kirkwood series is a series in
    Lambda*^2, so the neglected second-order part is of the order of the
    square of that fraction: a few percent of B2 at Lambda* = 1 and growing
    quickly above (H2 ~1.7, He ~2.6, where the series is no longer useful
    near T* = 1).  Hence the limit Lambda* > 1 for the first-order result,
    and Lambda* > 0.3 (correction above ~1.5 % of B2 at T* = 1; neon 0.6)
    for omitting the correction altogether.
    """
    lam = de_boer_parameter(pot_K_A, mass_kg)
    if quantum_correction and lam > DE_BOER_FIRST_ORDER_LIMIT:
        warnings.warn(
            f"{label}: de Boer parameter Lambda* = {lam:.3g} > {DE_BOER_FIRST_ORDER_LIMIT}: the "
            "first-order Wigner-Kirkwood correction is not enough for so quantum a gas (higher "
            "orders or exact quantum virial coefficients are needed, especially near and below "
            "T = epsilon/k); treat virial results as indicative only",
            QuantumCorrectionWarning, stacklevel=3)
    elif not quantum_correction and lam > DE_BOER_NEGLIGIBLE:
        warnings.warn(
            f"{label}: de Boer parameter Lambda* = {lam:.3g} > {DE_BOER_NEGLIGIBLE}: quantum "
            "effects change B2 by more than about 1 % near T = epsilon/k; enable the quantum "
            "correction (quantum_correction=True)",
            QuantumCorrectionWarning, stacklevel=3)
    return lam


# --- characteristic temperatures -------------------------------------------------

def _root_of(func, pot, T_range, what, fix):
    from scipy.optimize import brentq
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
    _check_pot(pot)
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
    _check_pot(pot)
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
    _check_pot(pot)

    def g(t):
        B, dB, _ = b2(pot, t)
        return t * dB - B
    return _root_of(g, pot, T_range, "zero-pressure Joule-Thomson inversion (T dB2/dT = B2)",
                    "widen 'T_range' if the root lies outside")


# --- SI layer (potentials in kelvin and angstrom) ---------------------------------

M3_MOL_PER_A3 = N_A * ANGSTROM_M ** 3
M6_MOL2_PER_A6 = (N_A * ANGSTROM_M ** 3) ** 2


def b2_m3_mol(pot_K_A, T_K, n_nodes=DEFAULT_NODES_B2):
    """B2, dB2/dT, d2B2/dT2 in m^3/mol (/K, /K^2) for a potential in K and angstrom."""
    return tuple(M3_MOL_PER_A3 * v for v in b2(pot_K_A, T_K, n_nodes))


def b3_m6_mol2(pot_K_A, T_K, n_nodes=DEFAULT_NODES_B3):
    """B3, dB3/dT, d2B3/dT2 in m^6/mol^2 (/K, /K^2) for a potential in K and angstrom."""
    return tuple(M6_MOL2_PER_A6 * v for v in b3(pot_K_A, T_K, n_nodes))
