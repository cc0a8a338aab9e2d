"""The second virial coefficient B2 of a pair potential and of a mixture, with T-derivatives.

Unit-agnostic: T in the energy unit of the potential, lengths in its length
unit, B2 per molecule in length^3 (see :mod:`analysis.virial`).
"""
import math

from analysis.virial.quadrature import (DEFAULT_NODES_B2, b2_layout, check_mixture, check_nodes,
                                        check_pot, check_temperature, mayer, register, shape_out)

__all__ = ["b2", "b2_mixture"]


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

    Examples
    --------
    Lennard-Jones at T* = 1 in units of b0 = 2 pi sigma^3 / 3: B2* = -2.5381
    (Hirschfelder, Curtiss and Bird 1954, Table I-B):

    >>> import math
    >>> from mdsim.engine.potentials import LennardJones
    >>> B, dB_dT, d2B_dT2 = b2(LennardJones(1.0, 1.0), 1.0)
    >>> round(B / (2.0 * math.pi / 3.0), 4)
    -2.5381
    """
    check_pot(pot)
    T_t = check_temperature(T).ravel()
    n = check_nodes(n_nodes, "n_nodes")
    r, w, u, _ = b2_layout(register(pot), n)
    f, d1, d2 = mayer(u[None, :], T_t[:, None])
    wr2 = -2.0 * math.pi * w * r * r
    return shape_out((f @ wr2, d1 @ wr2, d2 @ wr2), T)


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
    x = check_mixture(pairs, fractions, T)
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
