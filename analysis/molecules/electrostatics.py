"""Electrostatic energies of point charges and of point dipoles and quadrupoles on an axis.

Energies are u/k in kelvin, lengths in angstrom, charges in elementary
charges e, dipole moments in e angstrom and (Buckingham) quadrupole moments
in e angstrom^2; :data:`COULOMB_K_ANGSTROM` carries the factor
e^2 / (4 pi epsilon_0 k_B angstrom).  The multipole formulas take unit
vectors: ``e1_v``, ``e2_v`` the axes of the two molecules and ``n_v`` the
unit vector from molecule 1 to molecule 2 (suffix ``_v``: last axis of
length 3).
"""
import numpy as np
from scipy import constants as _c

__all__ = ["COULOMB_K_ANGSTROM", "E_ANGSTROM_PER_DEBYE", "charge_charge", "dipole_dipole",
           "dipole_quadrupole", "quadrupole_quadrupole"]

#: e^2 / (4 pi epsilon_0 k_B angstrom) in K: u/k = COULOMB_K_ANGSTROM q1 q2 / r.
COULOMB_K_ANGSTROM = _c.e ** 2 / (4.0 * np.pi * _c.epsilon_0 * _c.k * 1e-10)
#: One debye in e angstrom (1 D = 1e-21 / c C m).
E_ANGSTROM_PER_DEBYE = 1e-21 / _c.c / (_c.e * 1e-10)


def _dot(a_v, b_v):
    return np.sum(a_v * b_v, axis=-1)


def charge_charge(q1, q2, r):
    """Coulomb energy u/k = C q1 q2 / r in K (charges in e, r in angstrom)."""
    return COULOMB_K_ANGSTROM * q1 * q2 / r


def dipole_dipole(mu1, mu2, e1_v, e2_v, n_v, r):
    """Energy of two point dipoles, K.

    Notes
    -----
    u = (mu1 mu2 / r^3) [e1.e2 - 3 (e1.n)(e2.n)] (Gray and Gubbins, Theory
    of Molecular Fluids, vol. 1, 1984, section 2.4).

    Examples
    --------
    Two parallel dipoles of 1 e angstrom side by side at 10 angstrom repel:

    >>> z = [0.0, 0.0, 1.0]
    >>> round(float(dipole_dipole(1.0, 1.0, z, z, [1.0, 0.0, 0.0], 10.0)), 3)
    167.101
    """
    e1_v, e2_v, n_v = (np.asarray(a, dtype=float) for a in (e1_v, e2_v, n_v))
    return (COULOMB_K_ANGSTROM * mu1 * mu2 / r ** 3
            * (_dot(e1_v, e2_v) - 3.0 * _dot(e1_v, n_v) * _dot(e2_v, n_v)))


def dipole_quadrupole(mu1, theta2, e1_v, e2_v, n_v, r):
    """Energy of a point dipole (molecule 1) and a linear point quadrupole (molecule 2), K.

    Notes
    -----
    With c = e2.m, m = -n the unit vector from the quadrupole to the dipole:
    u = (3 mu1 Theta2 / (2 r^4)) [2 c (e1.e2) - 5 c^2 (e1.m) + e1.m], the
    dipole's energy -mu.E in the field of the quadrupole potential
    phi = Theta (3 c^2 - 1) / (2 r^3) (Buckingham, Q. Rev. Chem. Soc. 13,
    183 (1959)).
    """
    e1_v, e2_v, n_v = (np.asarray(a, dtype=float) for a in (e1_v, e2_v, n_v))
    m_v = -n_v
    c = _dot(e2_v, m_v)
    d_m = _dot(e1_v, m_v)
    return (1.5 * COULOMB_K_ANGSTROM * mu1 * theta2 / r ** 4
            * (2.0 * c * _dot(e1_v, e2_v) - 5.0 * c * c * d_m + d_m))


def quadrupole_quadrupole(theta1, theta2, e1_v, e2_v, n_v, r):
    """Energy of two linear point quadrupoles, K.

    Notes
    -----
    u = (3 Theta1 Theta2 / (4 r^5)) [1 - 5 c1^2 - 5 c2^2 - 15 c1^2 c2^2
    + 2 (e1.e2 - 5 c1 c2)^2] with c_i = e_i.n (Gray and Gubbins 1984,
    section 2.4; the form used for the two-centre Lennard-Jones plus point
    quadrupole model by Vrabec, Stoll and Hasse, J. Phys. Chem. B 105,
    12126 (2001)).
    """
    e1_v, e2_v, n_v = (np.asarray(a, dtype=float) for a in (e1_v, e2_v, n_v))
    c1 = _dot(e1_v, n_v)
    c2 = _dot(e2_v, n_v)
    g = _dot(e1_v, e2_v) - 5.0 * c1 * c2
    return (0.75 * COULOMB_K_ANGSTROM * theta1 * theta2 / r ** 5
            * (1.0 - 5.0 * c1 * c1 - 5.0 * c2 * c2 - 15.0 * c1 * c1 * c2 * c2 + 2.0 * g * g))
