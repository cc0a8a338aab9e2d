"""The Axilrod-Teller triple-dipole energy and its non-additive third virial coefficient.

u3 = C9 (1 + 3 cos g1 cos g2 cos g3) / (r12 r13 r23)^3, the g the angles of
the triangle of the three atoms (Axilrod and Teller, J. Chem. Phys. 11,
299 (1943)).  Units as :mod:`analysis.virial`: C9 in the potential's
energy unit times length^9 (K angstrom^9 for u/k in K), B3 in length^6.

The non-additive B3 is a Gauss-Legendre quadrature over triangles
(r = r12, s = r13, c = cos of the angle at atom 1) on the radial panels of
:mod:`analysis.virial.quadrature` up to ``R_B3_SIGMA`` sigma; smooth in T.
Array suffixes: ``_q`` the (r, s, c) quadrature nodes, ``_t`` temperatures.
"""
import functools
import math

import numpy as np

from analysis.virial.quadrature import (R_B3_SIGMA, check_pot, check_temperature, panel_breaks,
                                        panel_nodes, register, registered, shape_out)
from mdsim.checks import count
from mdsim.engine.potentials import axilrod_teller_sq

__all__ = ["axilrod_teller", "b3_nonadditive", "HARTREE_BOHR9_IN_K_ANGSTROM9",
           "DEFAULT_NODES_NONADDITIVE", "DEFAULT_NODES_ANGLE"]

#: One hartree bohr^9 (the atomic unit of C9) in K angstrom^9.
HARTREE_BOHR9_IN_K_ANGSTROM9 = 4.3597447222071e-18 / 1.380649e-23 * 0.529177210903 ** 9
#: Gauss-Legendre nodes per radial panel and in the angle cosine (tests: the
#: result agrees with 10 and 32 nodes to 2e-3 relative for argon at 150-1000 K).
DEFAULT_NODES_NONADDITIVE = 4
DEFAULT_NODES_ANGLE = 16
# Triangles whose pair energies sum above this many epsilon are left out.
_U2_MAX_EPSILON = 1000.0


def axilrod_teller(c9, r12, r13, r23):
    """Axilrod-Teller triple-dipole energy of three atoms.

    Parameters
    ----------
    c9 : float, energy * length^9
    r12, r13, r23 : float or ndarray, length
        The sides of the triangle.

    Returns
    -------
    float or ndarray, energy

    Notes
    -----
    The triple-dipole formula of Axilrod and Teller (1943) as
    :func:`mdsim.engine.potentials.axilrod_teller_sq` writes it (its one
    home, shared with the engine's three-body kernel), on the sides squared.

    Examples
    --------
    An equilateral triangle of side a: u3 = (11/8) C9 / a^9.

    >>> float(axilrod_teller(8.0, 1.0, 1.0, 1.0))
    11.0
    """
    sides = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (r12, r13, r23)))
    a2, b2, c2 = (np.ascontiguousarray(x.ravel()) ** 2 for x in sides)
    out = axilrod_teller_sq(float(c9), a2, b2, c2).reshape(sides[0].shape)
    return float(out) if np.ndim(out) == 0 else out


@functools.lru_cache(maxsize=16)
def _layout(key, n_r, n_c):
    """(r, s, t) of the triangle nodes, the weights and the summed pair energy."""
    pot = registered(key)
    breaks, _ = panel_breaks([pot], R_B3_SIGMA)
    r, w, _ = panel_nodes(breaks, n_r)
    c, wc = np.polynomial.legendre.leggauss(n_c)
    # the integrand is symmetric in r <-> s: nodes with r < s count twice, r = s once
    i, j = np.triu_indices(r.size)
    sym = np.where(i == j, 1.0, 2.0)
    R, C = np.meshgrid(r[i], c, indexing="ij")
    S = np.broadcast_to(r[j][:, None], R.shape)
    W = (sym * w[i] * w[j] * r[i] ** 2 * r[j] ** 2)[:, None] * wc[None, :]
    T = np.sqrt(np.maximum(R * R + S * S - 2.0 * R * S * C, 0.0))
    u_pairs = pot.energy(R.ravel()) + pot.energy(S.ravel()) + pot.energy(T.ravel())
    # exp(-U2/T) is below exp(-25) up to T = 40 epsilon where U2 > 1000 epsilon
    keep = np.isfinite(u_pairs) & (u_pairs < _U2_MAX_EPSILON * pot.epsilon)
    return (R.ravel()[keep], S.ravel()[keep], T.ravel()[keep], W.ravel()[keep],
            u_pairs[keep])


def b3_nonadditive(pot, c9, T, n_radial=DEFAULT_NODES_NONADDITIVE, n_angle=DEFAULT_NODES_ANGLE):
    """The Axilrod-Teller (non-additive) part of B3 and its first two T-derivatives.

    Parameters
    ----------
    pot : PairPotential
        The atoms' pair potential.
    c9 : float
        Axilrod-Teller coefficient in the potential's energy unit times length^9.
    T : float or ndarray, energy unit of ``pot``
    n_radial, n_angle : int, optional
        Gauss-Legendre nodes per radial panel and in the angle cosine.

    Returns
    -------
    dB3, d(dB3)/dT, d2(dB3)/dT2 : float or ndarray shaped like T
        Per molecule^2, length^6 (and per energy, per energy^2).

    Notes
    -----
    dB3 = -(1/3) int int exp(-(u12 + u13 + u23)/T) (exp(-u123/T) - 1)
    dr12 dr13 = -(8 pi^2 / 3) int r^2 dr int s^2 ds int dc [...], with
    r12 = r, r13 = s, r23^2 = r^2 + s^2 - 2 r s c (Hirschfelder, Curtiss
    and Bird, Molecular Theory of Gases and Liquids, 1954, section 3.10;
    Sherwood and Prausnitz, J. Chem. Phys. 41, 413 (1964)).  With
    A = exp(-(U2 + u3)/T), h = exp(-U2/T) expm1(-u3/T):
    h' = (U2 h + u3 A) / T^2 and
    h'' = (U2^2 h + (2 U2 u3 + u3^2) A) / T^4 - 2 (U2 h + u3 A) / T^3.

    Examples
    --------
    Argon, Lennard-Jones (119.8 K, 3.405 angstrom) with C9 = 518 hartree
    bohr^9 (about 5.3e5 K angstrom^9), at 300 K in cm^6/mol^2:

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.virial.si import M6_MOL2_PER_A6
    >>> c9 = 518.0 * HARTREE_BOHR9_IN_K_ANGSTROM9
    >>> dB3 = b3_nonadditive(LennardJones(119.8, 3.405), c9, 300.0)[0]
    >>> round(dB3 * M6_MOL2_PER_A6 * 1e12)
    167
    """
    check_pot(pot)
    c9 = float(c9)
    T_t = check_temperature(T).ravel()
    n_r = count("n_radial", n_radial, 4)
    n_c = count("n_angle", n_angle, 4)
    key = register(pot)
    out = np.array([_at_temperature(key, c9, float(t), n_r, n_c) for t in T_t]).T
    return shape_out(tuple(out), T)


@functools.lru_cache(maxsize=1024)
def _at_temperature(key, c9, T, n_r, n_c):
    """(dB3, d/dT, d2/dT2) at one T (kept: root finders ask for one T several times)."""
    r, s, t, w, U2 = _layout(key, n_r, n_c)
    u3 = axilrod_teller(c9, r, s, t)
    with np.errstate(over="ignore", under="ignore"):
        A = np.exp(-(U2 + u3) / T)
        h = np.exp(-U2 / T) * np.expm1(-u3 / T)
    d1 = (U2 * h + u3 * A) / T ** 2
    d2 = (U2 * U2 * h + (2.0 * U2 * u3 + u3 * u3) * A) / T ** 4 - 2.0 * d1 / T
    scale = -8.0 * math.pi ** 2 / 3.0
    return scale * (w @ h), scale * (w @ d1), scale * (w @ d2)
