"""The Axilrod-Teller triple-dipole term: its energy, its non-additive B3, its effect on argon."""
import math

import numpy as np
import pytest

from analysis.virial import b3
from analysis.virial.threebody import (HARTREE_BOHR9_IN_K_ANGSTROM9, axilrod_teller,
                                       b3_nonadditive)
from mdsim.engine.potentials import LennardJones

ARGON_LJ = LennardJones(119.8, 3.405)  # HCB 1954 second-virial fit (from memory)
# C9 of argon: 518 hartree bohr^9 (Kumar and Meath, Mol. Phys. 54, 823 (1985); from memory)
C9_ARGON = 518.0 * HARTREE_BOHR9_IN_K_ANGSTROM9


def test_equilateral_triangle():
    # all angles 60 degrees: u = C9 (1 + 3/8) / a^9 (Axilrod and Teller 1943)
    a = 3.7
    assert axilrod_teller(C9_ARGON, a, a, a) == pytest.approx(11.0 / 8.0 * C9_ARGON / a ** 9,
                                                              rel=1e-14)


def test_right_and_linear_triangles():
    # a right angle makes the cosine product 0: u = C9 / (r12 r13 r23)^3; three atoms on a
    # line (angles 0, 0, 180 degrees): u = C9 (1 - 3) / (r12 r13 r23)^3 (same formula)
    assert axilrod_teller(1.0, 3.0, 4.0, 5.0) == pytest.approx(1.0 / 60.0 ** 3, rel=1e-13)
    assert axilrod_teller(1.0, 1.0, 2.0, 1.0) == pytest.approx(-2.0 / 2.0 ** 3, rel=1e-13)


def test_c9_unit():
    # 1 hartree = 4.3597447e-18 J, bohr = 0.529177211 angstrom, k = 1.380649e-23 J/K (CODATA)
    assert HARTREE_BOHR9_IN_K_ANGSTROM9 == pytest.approx(315775.02 * 0.529177211 ** 9, rel=1e-7)


def _nonadditive_mc(pot, c9, T, n, seed):
    """Slow plain Monte Carlo of -(1/3) int int e^{-U2/T} (e^{-u3/T} - 1), cube of side 2 L."""
    rng = np.random.default_rng(seed)
    L = 4.0 * pot.sigma
    r2 = rng.uniform(-L, L, (n, 3))
    r3 = rng.uniform(-L, L, (n, 3))
    d12, d13, d23 = (np.linalg.norm(v, axis=1) for v in (r2, r3, r3 - r2))
    with np.errstate(over="ignore"):
        U2 = pot.energy(d12) + pot.energy(d13) + pot.energy(d23)
        g = np.exp(-U2 / T) * np.expm1(-axilrod_teller(c9, d12, d13, d23) / T)
    g = np.where(np.isfinite(g), g, 0.0) * (2 * L) ** 6 * (-1.0 / 3.0)
    return g.mean(), g.std() / math.sqrt(n)


def test_nonadditive_b3_against_plain_monte_carlo():
    # an independent, obvious estimate of the same integral (4 standard errors; the cube of
    # side 8 sigma leaves out less than 1 % by the r^-9 decay, which the tolerance holds)
    T = 300.0
    mc, err = _nonadditive_mc(ARGON_LJ, C9_ARGON, T, 400_000, seed=11)
    quad = b3_nonadditive(ARGON_LJ, C9_ARGON, T)[0]
    assert abs(quad - mc) < 4.0 * err + 0.01 * abs(quad)


def test_temperature_derivatives_match_finite_differences():
    T, h = 250.0, 0.05
    v, d1, d2 = b3_nonadditive(ARGON_LJ, C9_ARGON, np.array([T - h, T, T + h]))
    assert d1[1] == pytest.approx((v[2] - v[0]) / (2 * h), rel=1e-5)
    assert d2[1] == pytest.approx((v[2] - 2 * v[1] + v[0]) / h ** 2, rel=1e-3)


def test_argon_nonadditive_share_of_b3():
    # The triple-dipole term raises argon's B3 near room temperature by roughly a fifth
    # of the additive value (from memory: Sherwood and Prausnitz, J. Chem. Phys. 41, 413
    # (1964), figures of the non-additive C for LJ + Axilrod-Teller, nu* ~ 0.07); a band
    # of 0.1-0.3 around it
    ratio = b3_nonadditive(ARGON_LJ, C9_ARGON, 295.0)[0] / b3(ARGON_LJ, 295.0)[0]
    assert 0.1 < ratio < 0.3
