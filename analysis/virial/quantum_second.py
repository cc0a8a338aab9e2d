"""The second-order (h^4) Wigner-Kirkwood term of B2, with its T-derivatives.

The middle level between the first-order correction of
:mod:`analysis.virial.quantum` and the exact phase-shift B2 of
:mod:`analysis.virial.quantum_exact`.  Unit-agnostic like
:mod:`analysis.virial.second`.
"""
import math

import numpy as np

from analysis.virial.quadrature import (DEFAULT_NODES_B2, b2_layout, check_nodes, check_pot,
                                        check_temperature, mayer, register, shape_out)
from mdsim.checks import non_negative

__all__ = ["b2_second_order"]


def _power_term(J_k, p, T):
    """T^-p J(T) and its first two T-derivatives, from J, J', J''."""
    J0, J1, J2 = J_k
    return (J0 / T ** p,
            J1 / T ** p - p * J0 / T ** (p + 1),
            J2 / T ** p - 2.0 * p * J1 / T ** (p + 1) + p * (p + 1) * J0 / T ** (p + 2))


def b2_second_order(pot, T, h2_over_mu, n_nodes=DEFAULT_NODES_B2):
    """Second-order Wigner-Kirkwood term of B2 and its T-derivatives.

    Parameters and returns as :func:`analysis.virial.quantum.b2_quantum`
    (``h2_over_mu`` = h^2 / (mu k), mu = m/2 for a like pair).

    Notes
    -----
    For a like pair of molecular mass m (h^2 / (m k) = h2_over_mu / 2),

        Delta B_II = -h^4 / (1920 pi^3 m^2 k^4 T^4) int_0^inf exp(-u/kT)
                     [u''^2 + 2 u'^2 / r^2 + 10 u'^3 / (9 kT r) - 5 u'^4 / (36 (kT)^2)] r^2 dr,

    the h^4 term of the Wigner-Kirkwood expansion of B2 (Kihara; Hirschfelder,
    Curtiss and Bird 1954, section 6.5).  u'' is taken by central
    differences of du/dr.  The tests check it against the exact phase-shift
    B2 minus the classical and first-order parts.

    Examples
    --------
    Lennard-Jones at T* = 1 with Lambda*^2 = 0.1 (h2_over_mu = 2 Lambda*^2):
    a small negative term, below 0.1 % of B2:

    >>> from mdsim.engine.potentials import LennardJones
    >>> dB, _, _ = b2_second_order(LennardJones(1.0, 1.0), 1.0, 0.2)
    >>> -0.002 < dB < 0.0
    True
    """
    check_pot(pot)
    T_t = check_temperature(T).ravel()
    q = non_negative("h2_over_mu", h2_over_mu, "h^2 / (mu k) in energy x length^2")
    n = check_nodes(n_nodes, "n_nodes")
    r, w, u, d1 = b2_layout(register(pot), n)
    step = 1e-5 * r
    with np.errstate(over="ignore", invalid="ignore"):
        d2 = (pot.dudr(r + step) - pot.dudr(r - step)) / (2.0 * step)
        g_a = (d2 * d2 + 2.0 * d1 * d1 / (r * r)) * r * r * w
        g_b = (10.0 / 9.0) * d1 ** 3 * r * w
        g_c = -(5.0 / 36.0) * d1 ** 4 * r * r * w
    e = mayer(u[None, :], T_t[:, None])
    e = (e[0] + 1.0, e[1], e[2])
    out = [np.zeros_like(T_t) for _ in range(3)]
    for g, p in ((g_a, 4), (g_b, 5), (g_c, 6)):
        # Inside a core, or where the derivatives overflow, exp(-u/T) is 0.
        g = np.where(np.isfinite(g) & np.isfinite(u), g, 0.0)
        J_k = [ek @ g for ek in e]
        for kk, v in enumerate(_power_term(J_k, p, T_t)):
            out[kk] += v
    c = -(0.25 * q * q) / (1920.0 * math.pi ** 3)
    return shape_out(tuple(c * o for o in out), T)
