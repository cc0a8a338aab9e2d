"""The quadrature shared by the virial coefficients: panels, nodes, the Mayer function, checks.

The coefficients are Gauss-Legendre quadratures on a fixed,
potential-dependent set of panels (dense across the repulsive wall and the
well), so they are smooth functions of T, safe inside root finders.  The
layouts are cached per potential: :func:`register` gives a potential a
hashable key (its form and parameters) under which the cached builders
find it again.
"""
import functools
import math
import weakref

import numpy as np

from mdsim.checks import positive_array
from mdsim.engine.potentials import FORM_TABLE, PairMatrix, PairPotential
from mdsim.errors import StudyError

__all__ = ["R_FAR_SIGMA", "R_B3_SIGMA", "DEFAULT_NODES_B2", "DEFAULT_NODES_B3", "mayer",
           "check_pot", "check_temperature", "check_nodes", "check_fractions", "check_mixture",
           "shape_out", "panel_breaks", "panel_nodes", "b2_layout", "register", "registered"]

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

DEFAULT_NODES_B2 = 20
DEFAULT_NODES_B3 = 10


def check_pot(pot, name="pot"):
    """``pot`` once it is a pair potential of mdsim.engine.potentials."""
    if not isinstance(pot, PairPotential):
        raise StudyError(f"'{name}' must be a pair potential from mdsim.engine.potentials "
                         f"(LennardJones, Mie, Exp6, Tabulated); got {type(pot).__name__}")
    return pot


def check_temperature(T, name="T"):
    """Temperatures as a float array, all positive and finite (energy unit of the potential)."""
    return positive_array(name, T, "temperatures in the energy unit of the potential, e.g. "
                          "kelvin for u/k in K")


def check_nodes(n, name):
    """Gauss-Legendre nodes per panel as an int in 4..200."""
    n = int(n)
    if n < 4 or n > 200:
        raise StudyError(f"setting '{name}' = {n}: Gauss-Legendre nodes per panel must be in 4..200")
    return n


def check_fractions(fractions, n_species):
    """Mole fractions as a float array of ``n_species`` entries >= 0 summing to 1."""
    x = np.asarray(fractions, dtype=float).ravel()
    if x.size != n_species:
        raise StudyError(f"'fractions' has {x.size} entries for {n_species} species; give one mole "
                         "fraction per species")
    if not np.all(np.isfinite(x)) or np.any(x < 0.0) or abs(x.sum() - 1.0) > 1e-8:
        raise StudyError(f"'fractions' = {x.tolist()}: mole fractions must be >= 0 and sum to 1 "
                         f"(they sum to {x.sum():.10g}); normalise them")
    return x


def check_mixture(pairs, fractions, T):
    """Mole fractions of a mixture, once ``pairs`` and ``T`` are checked too."""
    if not isinstance(pairs, PairMatrix):
        raise StudyError(f"'pairs' must be a PairMatrix; got {type(pairs).__name__}")
    x = check_fractions(fractions, pairs.n_species)
    check_temperature(T)
    return x


def shape_out(values_kt, T):
    """Tuple of per-order results shaped like the input T (floats for scalars)."""
    if np.ndim(T) == 0:
        return tuple(float(v[0]) for v in values_kt)
    shape = np.shape(T)
    return tuple(v.reshape(shape) for v in values_kt)


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


def _pot_key(pot):
    table = pot.table.tobytes() if pot.form == FORM_TABLE else b""
    return (pot.form, pot.params.tobytes(), table)


# Keys to live potentials, so the cached layout builders can reach them;
# weak, so a fit that makes thousands of potentials does not keep them.
_POT_BY_KEY = weakref.WeakValueDictionary()


def register(pot):
    """The cache key of ``pot`` (its form and parameters), after recording it."""
    key = _pot_key(pot)
    _POT_BY_KEY[key] = pot
    return key


def registered(key):
    """The live potential recorded under ``key`` by :func:`register`."""
    return _POT_BY_KEY[key]


def panel_breaks(pots, r_end_sigma):
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


def panel_nodes(breaks, n):
    """Composite Gauss-Legendre nodes and weights on the panels.

    Returns
    -------
    r, w : ndarray, shape=(n_panels * n,)
        Nodes and weights.
    pan : ndarray of int, shape=(n_panels * n,)
        The panel of each node.
    """
    x, w = np.polynomial.legendre.leggauss(n)
    lo = breaks[:-1, None]
    half = 0.5 * np.diff(breaks)[:, None]
    r = lo + half * (x[None, :] + 1.0)
    wr = half * w[None, :]
    pan = np.repeat(np.arange(breaks.size - 1), n)
    return r.ravel(), wr.ravel(), pan


@functools.lru_cache(maxsize=64)
def b2_layout(key, n):
    """Radial nodes, weights, u(r) and du/dr of the B2 integral for a registered potential.

    Parameters
    ----------
    key : tuple
        From :func:`register`.
    n : int
        Gauss-Legendre nodes per panel.

    Returns
    -------
    r, w, u, dudr : ndarray, shape=(n_nodes,)
        Nodes (panels up to 7 sigma, then the tail in y = 7 sigma / r),
        weights, energies and their radial derivatives.
    """
    pot = registered(key)
    breaks, r_far = panel_breaks([pot], R_FAR_SIGMA)
    r, w, _ = panel_nodes(breaks, n)
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
