"""The first-order (h^2) Wigner-Kirkwood correction of the additive B3, with T-derivatives.

To first order in h^2 the quantum partition function of pairwise-additive
molecules is the classical one of the effective pair potential
u + (hbar^2 / (24 mu kT)) lap u (the first Wigner-Kirkwood term of the N-body
Boltzmann density sums the Laplacians of the pair terms), so

    Delta B3 = (c / (12 T)) dB3[u + eps lap u] / d eps at eps = 0,   c = hbar^2 / (2 mu k),

with B3[.] the classical additive third virial coefficient of
:mod:`analysis.virial.third`.  The eps-derivative is a central difference
of two tabulated potentials u +/- eps lap u (eps small: the error is
O(eps^2) in a term that is itself small).  Unit-agnostic like the other
coefficients: u in K, lengths in the potential's unit, B3 per molecule
squared in length^6.
"""
import functools
import math

import numpy as np

from analysis.virial.quadrature import (DEFAULT_NODES_B3, check_pot, check_temperature, register,
                                        registered, shape_out)
from analysis.virial.third import b3
from mdsim.checks import non_negative
from mdsim.engine.potentials import FORM_TABLE, Tabulated

__all__ = ["b3_quantum_first_order"]

# The step of the central difference, as the largest relative change of u
# over the well and the wall it makes (|eps lap u| <= _STEP |u| + _STEP eps_well).
_STEP = 2e-3


def _laplacian(pot, r):
    h = 1e-5 * r
    d1 = pot.dudr(r)
    d2 = (pot.dudr(r + h) - pot.dudr(r - h)) / (2.0 * h)
    return d2 + 2.0 * d1 / r


@functools.lru_cache(maxsize=16)
def _shifted_pair(key):
    """The tables u + eps lap u and u - eps lap u of a registered potential, and eps."""
    pot = registered(key)
    if pot.form == FORM_TABLE:
        # inside the ends, so that the differences of du/dr stay on the table
        r = np.linspace(pot.r_points[0] * (1.0 + 3e-5), pot.r_max * (1.0 - 3e-5),
                        4 * pot.r_points.size)
    else:
        r0 = max(pot.core_radius * (1.0 + 1e-9), 0.6 * pot.sigma)
        r = np.linspace(r0, 12.0 * pot.sigma, 6000)
    u = pot.energy(r)
    lap = _laplacian(pot, r)
    scale = np.abs(u) + pot.epsilon
    eps = _STEP / float(np.max(np.abs(lap) / scale))
    return (Tabulated(r, u + eps * lap, source="u + eps lap u"),
            Tabulated(r, u - eps * lap, source="u - eps lap u"), eps)


def b3_quantum_first_order(pot, T, h2_over_mu, n_nodes=DEFAULT_NODES_B3):
    """First-order Wigner-Kirkwood correction of the additive B3 and its T-derivatives.

    Parameters
    ----------
    pot : PairPotential (energies in K)
    T : float or ndarray, K
    h2_over_mu : float
        h^2 / (mu k), K x length^2, mu = m/2 for like molecules.

    Returns
    -------
    dB3, d_dB3_dT, d2_dB3_dT2 : float or ndarray shaped like T
        Per molecule squared, length^6.

    Notes
    -----
    See the module: Delta B3 = (c / 12) D(T) / T with
    D = dB3/d eps the classical B3's response to u -> u + eps lap u and
    c = hbar^2/(2 mu k) = h2_over_mu / (8 pi^2); the T-derivatives follow
    from those of D (the classical B3's own) and of 1/T.  Exact to order
    h^2 for a pure gas of pairwise-additive molecules; higher orders (and
    exchange, below about 2 epsilon/k for helium) are left out.

    Examples
    --------
    A small positive correction for a Lennard-Jones gas with Lambda*^2 = 0.1:

    >>> from mdsim.engine.potentials import LennardJones
    >>> dB3, _, _ = b3_quantum_first_order(LennardJones(1.0, 1.0), 2.0, 0.2)
    >>> 0.0 < dB3 < 0.5
    True
    """
    check_pot(pot)
    T_t = check_temperature(T).ravel()
    q = non_negative("h2_over_mu", h2_over_mu, "h^2 / (mu k) in K x length^2")
    plus, minus, eps = _shifted_pair(register(pot))
    hi = b3(plus, T_t, n_nodes)
    lo = b3(minus, T_t, n_nodes)
    D0, D1, D2 = ((a - b) / (2.0 * eps) for a, b in zip(hi, lo))
    k = q / (8.0 * math.pi ** 2) / 12.0
    val = k * D0 / T_t
    der1 = k * (D1 / T_t - D0 / T_t ** 2)
    der2 = k * (D2 / T_t - 2.0 * D1 / T_t ** 2 + 2.0 * D0 / T_t ** 3)
    return shape_out((val, der1, der2), T)
