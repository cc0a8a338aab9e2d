"""B2 of rigid molecules by orientation quadrature: limits with exact answers, convergence,
derivatives."""
import math

import numpy as np
import pytest

from analysis.molecules import OrientationGrid, RigidMolecule, Site, b2_molecules
from analysis.virial import b2
from mdsim.engine.potentials import LennardJones


def test_one_site_molecule_is_the_atom(lj_atom):
    # the exact radial quadrature of analysis.virial.b2 (itself checked against
    # Hirschfelder, Curtiss and Bird 1954, Table I-B); same panels idea, different code
    lj = LennardJones(1.0, 1.0)
    T = np.array([0.8, 1.0, 2.5, 10.0])
    got = b2_molecules(lj_atom, lj_atom, T)
    want = b2(lj, T)
    for g, w in zip(got, want):
        np.testing.assert_allclose(g, w, rtol=2e-5)


def test_two_coincident_sites_are_one_site_of_four_epsilon():
    # two LJ sites at the same point: every pair energy is 4 u(r) = LJ with 4 epsilon,
    # for any orientation (a check of the site sum and of the orientation average)
    lj = LennardJones(1.0, 1.0)
    mol = RigidMolecule("double", [Site(lj, (0, 0, 0), 0.02), Site(lj, (0, 0, 1e-9), 0.02)])
    T = np.array([3.0, 6.0])
    got = b2_molecules(mol, mol, T)[0]
    np.testing.assert_allclose(got, b2(LennardJones(4.0, 1.0), T)[0], rtol=1e-4)


def test_atom_with_molecule_is_symmetric(nitrogen, argon_atom):
    # B_ab = B_ba (the orientation average does not care which is first)
    a = b2_molecules(nitrogen, argon_atom, 250.0)
    b = b2_molecules(argon_atom, nitrogen, 250.0)
    assert a == pytest.approx(b, rel=1e-10)


@pytest.mark.parametrize("name", ["co2"])  # the most elongated model; N2 converges faster
def test_quadrature_is_converged(name, request):
    # default nodes against 12 orientation and 8 radial nodes: within 1e-3 relative
    # (measured: 3e-4 for CO2, 1e-5 for N2), well inside the model's own accuracy
    mol = request.getfixturevalue(name)
    T = np.array([200.0, 300.0, 600.0])
    fine = OrientationGrid(mol, mol, n_orientation=12, n_radial=8).b2(T)
    default = OrientationGrid(mol, mol).b2(T)
    for f, d in zip(fine, default):
        np.testing.assert_allclose(d, f, rtol=1e-3)


def test_temperature_derivatives_match_finite_differences(co2):
    grid = OrientationGrid(co2, co2)
    T, h = 300.0, 0.1
    B = lambda t: grid.b2(t)[0]  # noqa: E731
    _, dB, d2B = grid.b2(T)
    # central differences: error h^2 B''' / 6 ~ 1e-7 relative here (measured with h = 0.5: 6e-6)
    assert dB == pytest.approx((B(T + h) - B(T - h)) / (2 * h), rel=1e-6)
    assert d2B == pytest.approx((B(T + h) - 2 * B(T) + B(T - h)) / h ** 2, rel=1e-4)


def test_quadrupole_lowers_b2(nitrogen):
    # the quadrupole energy averages to zero at first order; its second-order term
    # -<u_QQ^2>/(2 kT) is attractive, so B2 falls (Gray and Gubbins 1984, section 3.2)
    bare = RigidMolecule("N2 no Q", nitrogen.sites)
    assert b2_molecules(nitrogen, nitrogen, 300.0)[0] < b2_molecules(bare, bare, 300.0)[0]
    assert math.isfinite(b2_molecules(bare, bare, 300.0)[0])
