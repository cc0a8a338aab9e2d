"""Shared rigid-molecule models of the molecule tests.

Two-centre Lennard-Jones plus point quadrupole (2CLJQ) parameters of
Vrabec, Stoll and Hasse, J. Phys. Chem. B 105, 12126 (2001), from memory
(the same values as configs/nitrogen.toml and configs/co2.toml):
(epsilon/k K, sigma angstrom, L angstrom, Q D angstrom).  Argon's one-centre
LJ of the same paper, from memory: 116.79 K, 3.3952 angstrom.
"""
import pytest

from analysis.molecules import RigidMolecule, Site
from analysis.molecules.electrostatics import E_ANGSTROM_PER_DEBYE
from mdsim.engine.potentials import LennardJones

VRABEC_2001 = {"N2": (34.897, 3.3211, 1.0464, 1.4397, 0.0280134),
               "O2": (43.183, 3.1062, 0.9699, 0.8081, 0.0319988),
               "CO2": (133.22, 2.9847, 2.4176, 3.7938, 0.0440095)}


def two_centre(name):
    """The 2CLJQ molecule of ``VRABEC_2001[name]``."""
    eps, sigma, length, q_debye_angstrom, mass = VRABEC_2001[name]
    lj = LennardJones(eps, sigma)
    return RigidMolecule(name, [Site(lj, (0.0, 0.0, -0.5 * length), 0.5 * mass),
                                Site(lj, (0.0, 0.0, 0.5 * length), 0.5 * mass)],
                         quadrupole_e_angstrom2=q_debye_angstrom * E_ANGSTROM_PER_DEBYE)


def atom(name, eps, sigma, mass):
    """A one-site molecule."""
    return RigidMolecule(name, [Site(LennardJones(eps, sigma), (0.0, 0.0, 0.0), mass)])


@pytest.fixture(scope="session")
def lj_atom():
    """The Lennard-Jones atom in reduced units as a one-site molecule."""
    return atom("LJ", 1.0, 1.0, 0.04)


@pytest.fixture(scope="session")
def nitrogen():
    return two_centre("N2")


@pytest.fixture(scope="session")
def co2():
    return two_centre("CO2")


@pytest.fixture(scope="session")
def oxygen():
    return two_centre("O2")


@pytest.fixture(scope="session")
def argon_atom():
    return atom("Ar", 116.79, 3.3952, 0.039948)
