"""The rigid-molecule model: inertia, degrees of freedom, symmetry and its refusals."""
import numpy as np
import pytest
from scipy.constants import N_A

from analysis.molecules import RigidMolecule, Site
from mdsim.engine.potentials import LennardJones
from mdsim.errors import StudyError

LJ = LennardJones(34.897, 3.3211)


def test_linear_molecule_inertia_and_dof(nitrogen):
    # two masses m at +-L/2: I = 2 m (L/2)^2 = m L^2 / 2 about any axis through the centre
    # perpendicular to the bond, 0 about the bond (Goldstein, Classical Mechanics, ch. 5)
    m = 0.0140067 / N_A
    L = 1.0464e-10
    moments = nitrogen.moments_of_inertia()
    assert moments[0] == 0.0
    assert moments[1:] == pytest.approx([0.5 * m * L * L] * 2, rel=1e-12)
    assert (nitrogen.rotational_dof, nitrogen.kinetic_dof) == (2, 5)
    assert nitrogen.is_end_symmetric


def test_nonlinear_molecule_has_three_rotations():
    # a water-like triangle: three non-zero moments, 3 + 3 kinetic degrees of freedom
    sites = [Site(LJ, (0.0, 0.0, 0.0), 0.016), Site(LJ, (0.76, 0.59, 0.0), 0.001),
             Site(LJ, (-0.76, 0.59, 0.0), 0.001)]
    mol = RigidMolecule("bent", sites)
    assert mol.kinetic_dof == 6
    assert np.all(mol.moments_of_inertia() > 0.0)
    assert mol.is_nonlinear and not mol.is_linear
    with pytest.raises(StudyError, match="not on one line, so they have no axial coordinates"):
        mol.axial_positions_s()
    # axial multipoles are for linear molecules: refused with the reason and the way out
    with pytest.raises(StudyError, match="not on one line.*linear molecules only.*site charges"):
        RigidMolecule("bent Q", sites, quadrupole_e_angstrom2=0.3)


def test_asymmetric_molecule_is_not_end_symmetric():
    other = LennardJones(50.0, 3.0)
    mol = RigidMolecule("CO-like", [Site(LJ, (0, 0, -0.5), 0.012), Site(other, (0, 0, 0.6), 0.016)])
    assert not mol.is_end_symmetric


def test_net_charge_is_refused():
    with pytest.raises(StudyError, match="must be neutral"):
        RigidMolecule("ion", [Site(LJ, (0, 0, 0), 0.02, charge_e=1.0)])


def test_multipole_needs_an_axis():
    with pytest.raises(StudyError, match="needs a linear molecule of two or more sites"):
        RigidMolecule("atom", [Site(LJ, (0, 0, 0), 0.02)], quadrupole_e_angstrom2=0.3)
