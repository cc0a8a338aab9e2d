"""Pair potentials: formulas, derivatives, tails, tables, combining rules."""
import math

import numpy as np
import pytest
from scipy.integrate import quad

from mdsim.errors import StudyError
from mdsim.engine.potentials import (EPS, RC, SHIFT, SIG, Exp6, LennardJones, Mie, PairMatrix,
                              Tabulated, combine, read_table)

R_GRID = np.linspace(0.85, 4.0, 41)


def all_forms():
    lj = LennardJones(1.0, 1.0)
    r = np.linspace(0.7, 8.0, 400)
    return [lj, Mie(1.0, 1.0, 14.0, 7.0), Exp6(1.0, 1.12, 14.0), Tabulated(r, lj.energy(r))]


def test_lj_closed_form_values():
    # closed form of the LJ 12-6 formula (common practice, no source)
    lj = LennardJones(1.0, 1.0)
    assert lj.energy(1.0) == 0.0
    assert lj.energy(2 ** (1 / 6)) == pytest.approx(-1.0, rel=1e-14)
    assert lj.dudr(2 ** (1 / 6)) == pytest.approx(0.0, abs=1e-12)
    assert lj.energy(1.5) == pytest.approx(4 * (1.5 ** -12 - 1.5 ** -6), rel=1e-14)


def test_mie_12_6_equals_lj():
    lj, mie = LennardJones(1.3, 0.9), Mie(1.3, 0.9, 12.0, 6.0)
    r = np.linspace(0.7, 5.0, 200)
    np.testing.assert_allclose(mie.energy(r), lj.energy(r), rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(mie.dudr(r), lj.dudr(r), rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(mie.tail_integrals(2.5), lj.tail_integrals(2.5), rtol=1e-13)


def test_mie_well_depth_and_zero():
    # Mie prefactor makes the minimum -eps at r = sigma (n/m)^(1/(n-m)) (common practice)
    mie = Mie(2.0, 1.1, 20.0, 6.0)
    rmin = 1.1 * (20 / 6) ** (1 / 14)
    assert mie.energy(rmin) == pytest.approx(-2.0, rel=1e-12)
    assert mie.energy(1.1) == pytest.approx(0.0, abs=1e-13)


@pytest.mark.parametrize("pot", all_forms(), ids=lambda p: p.name)
def test_derivative_matches_finite_difference(pot):
    h = 1e-6
    fd = (pot.energy(R_GRID + h) - pot.energy(R_GRID - h)) / (2 * h)
    # central difference error ~ h^2 u''' ~ 1e-9 relative; the table adds spline error
    tol = 1e-5 if pot.name == "table" else 1e-7
    np.testing.assert_allclose(pot.dudr(R_GRID), fd, rtol=tol, atol=tol)


@pytest.mark.parametrize("pot", all_forms(), ids=lambda p: p.name)
def test_tail_integrals_match_quadrature(pot):
    rc = 2.7
    if pot.name == "table":
        # the spline has 4000 knots: Simpson's rule on a grid 50x finer than the knots
        from scipy.integrate import simpson
        r = np.linspace(rc, pot.r_max - 1e-9, 200001)  # stop just short of the cut to u = 0
        i_u = simpson(pot.energy(r) * r * r, x=r)
        i_w = simpson(pot.dudr(r) * r ** 3, x=r)
    else:
        i_u = quad(lambda r: float(pot.energy(r)) * r * r, rc, np.inf, limit=200)[0]
        i_w = quad(lambda r: float(pot.dudr(r)) * r ** 3, rc, np.inf, limit=200)[0]
    got = pot.tail_integrals(rc)
    # adaptive quadrature to ~1e-10 absolute
    assert got[0] == pytest.approx(i_u, rel=1e-7, abs=1e-10)
    assert got[1] == pytest.approx(i_w, rel=1e-7, abs=1e-10)


def test_lj_tail_formula():
    # U_tail/N = (8/3) pi rho eps sigma^3 [(sigma/rc)^9/3 - (sigma/rc)^3]
    # (Allen and Tildesley, Computer Simulation of Liquids, eq. 2.144; from memory)
    rho, rc = 0.8, 2.5
    pm = PairMatrix([LennardJones(1.0, 1.0)], rc)
    u_tail, p_tail = pm.tail_corrections(rho, [1.0])
    assert u_tail == pytest.approx(8 / 3 * math.pi * rho * ((1 / rc) ** 9 / 3 - (1 / rc) ** 3), rel=1e-13)
    # P_tail = (16/3) pi rho^2 eps sigma^3 [2/3 (sigma/rc)^9 - (sigma/rc)^3] (same source)
    assert p_tail == pytest.approx(16 / 3 * math.pi * rho ** 2 * (2 / 3 * rc ** -9 - rc ** -3), rel=1e-13)


def test_exp6_core_guard():
    e6 = Exp6(1.0, 1.12, 14.0)
    rc = e6.core_radius
    assert 0.0 < rc < e6.sigma < e6.r_min
    assert np.isinf(e6.energy(0.99 * rc))
    # the guard sits on the spurious maximum: du/dr changes sign there
    assert e6.dudr(rc * (1 + 1e-6)) < 0.0
    assert e6.dudr(rc * 0.999) == -np.inf  # inside the core (slope reported as -inf)
    assert e6.energy(e6.r_min) == pytest.approx(-1.0, rel=1e-12)
    assert e6.energy(e6.sigma) == pytest.approx(0.0, abs=1e-12)


def test_table_reproduces_lj():
    lj = LennardJones(1.0, 1.0)
    r = np.linspace(0.8, 6.0, 300)
    t = Tabulated(r, lj.energy(r))
    x = np.linspace(0.9, 5.5, 97)
    # cubic spline through points 0.017 sigma apart: error ~ h^4 u^(4)/384, ~3e-5
    # of the wall energy near 0.9 sigma (~1e-5 eps absolute where u crosses zero)
    np.testing.assert_allclose(t.energy(x), lj.energy(x), rtol=5e-5, atol=2e-5)
    assert t.epsilon == pytest.approx(1.0, rel=1e-5)
    assert t.sigma == pytest.approx(1.0, rel=1e-5)
    assert np.isinf(t.energy(0.7))
    assert t.energy(6.5) == 0.0


def test_read_table_file_and_errors(tmp_path):
    lj = LennardJones(1.0, 1.0)
    r = np.linspace(0.8, 6.0, 300)
    good = tmp_path / "lj.csv"
    good.write_text("r,u\n" + "\n".join(f"{a},{b}" for a, b in zip(r, lj.energy(r))))
    t = read_table(good)
    assert t.energy(1.2) == pytest.approx(float(lj.energy(1.2)), abs=1e-4)
    with pytest.raises(StudyError, match="does not exist"):
        read_table(tmp_path / "missing.csv")
    with pytest.raises(StudyError, match="directory"):
        read_table(tmp_path)
    bad = tmp_path / "bad.csv"
    bad.write_text("1.0 2.0\n0.9 1.0\n" + "\n".join(f"{a} {b}" for a, b in zip(r, lj.energy(r))))
    with pytest.raises(StudyError, match="increase strictly"):
        read_table(bad)
    short = tmp_path / "short.csv"
    short.write_text("1.0 2.0\n1.1 -0.5\n1.3 -0.2\n")
    with pytest.raises(StudyError, match="at least"):
        read_table(short)


def test_bad_parameters_raise():
    with pytest.raises(StudyError, match="epsilon"):
        LennardJones(-1.0, 1.0)
    with pytest.raises(StudyError, match="sigma"):
        LennardJones(1.0, 0.0)
    with pytest.raises(StudyError, match="exponents"):
        Mie(1.0, 1.0, 6.0, 6.0)
    with pytest.raises(StudyError, match="alpha"):
        Exp6(1.0, 1.0, 5.0)
    with pytest.raises(StudyError, match="cutoff"):
        PairMatrix([LennardJones(1, 1)], -2.0)


def test_lorentz_berthelot():
    a, b = LennardJones(95.05, 3.698), LennardJones(119.8, 3.405)
    ab = combine(a, b, k_ij=0.1)
    # Lorentz-Berthelot rules (common practice, no source)
    assert ab.sigma == pytest.approx(0.5 * (3.698 + 3.405))
    assert ab.epsilon == pytest.approx(0.9 * math.sqrt(95.05 * 119.8))
    pm = PairMatrix([a, b], 3.0)
    assert pm.params_ab[0, 1, EPS] == pytest.approx(math.sqrt(95.05 * 119.8))
    assert pm.params_ab[1, 1, RC] == pytest.approx(3.0 * 3.405)
    assert pm.params_ab[0, 0, SHIFT] == pytest.approx(float(a.energy(3.0 * 3.698)))
    with pytest.raises(StudyError, match="same form"):
        combine(a, Mie(1, 1, 14, 6))


def test_identical_species_tail_equals_pure():
    lj = LennardJones(1.0, 1.0)
    pure = PairMatrix([lj], 3.0).tail_corrections(0.3, [1.0])
    mix = PairMatrix([lj, LennardJones(1.0, 1.0)], 3.0).tail_corrections(0.3, [0.3, 0.7])
    np.testing.assert_allclose(mix, pure, rtol=1e-13)


def test_scaled_to_reduced_units():
    pm = PairMatrix([LennardJones(119.8, 3.405)], 3.0)
    red = pm.scaled(119.8, 3.405)
    assert red.params_ab[0, 0, EPS] == pytest.approx(1.0)
    assert red.params_ab[0, 0, SIG] == pytest.approx(1.0)
    assert red.params_ab[0, 0, RC] == pytest.approx(3.0)
    assert red.tail_corrections(0.1, [1.0])[0] == pytest.approx(
        pm.tail_corrections(0.1 / 3.405 ** 3, [1.0])[0] / 119.8, rel=1e-12)
