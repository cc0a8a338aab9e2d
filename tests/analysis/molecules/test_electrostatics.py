"""Point-multipole energies against the same multipoles built from point charges.

A dipole mu is +-mu/d at +-d/2 along its axis; a linear (Buckingham)
quadrupole Theta is charges q, -2q, q at -d, 0, d with Theta = 2 q d^2;
their Coulomb energy tends to the multipole formula as d -> 0 (textbook
electrostatics, common practice, no source).
"""
import numpy as np
import pytest

from analysis.molecules.electrostatics import (COULOMB_K_ANGSTROM, E_ANGSTROM_PER_DEBYE,
                                               dipole_dipole, dipole_quadrupole,
                                               quadrupole_quadrupole)

D = 0.02  # angstrom: the truncation error is O((d / r)^2) ~ 1e-6 at r = 20 angstrom
R = 20.0


def _dipole(mu, e, centre):
    return [(mu / D, centre + 0.5 * D * e), (-mu / D, centre - 0.5 * D * e)]


def _quadrupole(theta, e, centre):
    q = theta / (2.0 * D * D)
    return [(q, centre + D * e), (-2.0 * q, centre), (q, centre - D * e)]


def _coulomb(a, b):
    return sum(COULOMB_K_ANGSTROM * qa * qb / np.linalg.norm(pa - pb) for qa, pa in a
               for qb, pb in b)


def _unit(v):
    return v / np.linalg.norm(v)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_multipole_energies_match_point_charges(seed):
    rng = np.random.default_rng(seed)
    e1, e2, n = (_unit(rng.normal(size=3)) for _ in range(3))
    centre2 = R * n
    cases = [
        (dipole_dipole(0.3, 0.2, e1, e2, n, R), _coulomb(_dipole(0.3, e1, 0 * n),
                                                          _dipole(0.2, e2, centre2))),
        (dipole_quadrupole(0.3, 0.7, e1, e2, n, R), _coulomb(_dipole(0.3, e1, 0 * n),
                                                              _quadrupole(0.7, e2, centre2))),
        (quadrupole_quadrupole(0.5, 0.7, e1, e2, n, R),
         _coulomb(_quadrupole(0.5, e1, 0 * n), _quadrupole(0.7, e2, centre2))),
    ]
    for formula, charges in cases:
        # the charge sums cancel to ~1e-16 of q^2/r ~ 1e10 K: 1e-5 K absolute, 1e-4 relative
        assert formula == pytest.approx(charges, rel=1e-4, abs=1e-5)


def test_one_debye_in_e_angstrom():
    # 1 D = 3.33564e-30 C m, e = 1.602177e-19 C (CODATA): 0.2081943 e angstrom
    assert E_ANGSTROM_PER_DEBYE == pytest.approx(0.2081943, rel=1e-6)


def test_coulomb_constant_in_kelvin_angstrom():
    # e^2 / (4 pi eps0 k_B angstrom) = 167101 K (CODATA constants, common practice, no source)
    assert COULOMB_K_ANGSTROM == pytest.approx(167101.0, rel=1e-5)
