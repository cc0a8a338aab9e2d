"""The energy of two molecules against a site-by-site sum written out here."""
import numpy as np
import pytest

from analysis.molecules import RigidMolecule, Site
from analysis.molecules.electrostatics import COULOMB_K_ANGSTROM
from analysis.molecules.pair_energy import pair_energy
from mdsim.engine.potentials import LennardJones


def _lj(eps, sigma, r):
    return 4.0 * eps * ((sigma / r) ** 12 - (sigma / r) ** 6)


def _unit(v):
    return v / np.linalg.norm(v)


@pytest.mark.parametrize("seed", [1, 2])
def test_two_centre_molecules_with_quadrupoles(nitrogen, seed):
    # sites at +-L/2 along each axis, LJ between all four site pairs, plus the
    # quadrupole-quadrupole energy (Gray and Gubbins 1984, section 2.4)
    rng = np.random.default_rng(seed)
    e1, e2, n = (_unit(rng.normal(size=3)) for _ in range(3))
    d = 4.2 * n
    half = 0.5 * 1.0464
    want = sum(_lj(34.897, 3.3211, np.linalg.norm(d + b * e2 - a * e1))
               for a in (-half, half) for b in (-half, half))
    theta = nitrogen.quadrupole
    c1, c2, c12 = e1 @ n, e2 @ n, e1 @ e2
    want += (0.75 * COULOMB_K_ANGSTROM * theta * theta / 4.2 ** 5
             * (1 - 5 * c1 ** 2 - 5 * c2 ** 2 - 15 * c1 ** 2 * c2 ** 2 + 2 * (c12 - 5 * c1 * c2) ** 2))
    assert float(pair_energy(nitrogen, nitrogen, d, e1, e2)) == pytest.approx(want, rel=1e-12)


def test_unlike_sites_combine_by_lorentz_berthelot(nitrogen, argon_atom):
    # N2 site with Ar: sigma = (3.3211 + 3.3952)/2, eps = sqrt(34.897 * 116.79)
    z = np.array([0.0, 0.0, 1.0])
    x = np.array([1.0, 0.0, 0.0])
    d = 3.9 * x
    eps, sigma = np.sqrt(34.897 * 116.79), 0.5 * (3.3211 + 3.3952)
    want = sum(_lj(eps, sigma, np.hypot(3.9, 0.5232)) for _ in range(2))
    assert float(pair_energy(nitrogen, argon_atom, d, z, z)) == pytest.approx(want, rel=1e-12)


def test_site_charges_and_overlap():
    lj = LennardJones(50.0, 3.0)
    dipolar = RigidMolecule("q", [Site(lj, (0, 0, -0.6), 0.01, charge_e=0.4),
                                  Site(lj, (0, 0, 0.6), 0.01, charge_e=-0.4)])
    z = np.array([0.0, 0.0, 1.0])
    d = 5.0 * np.array([1.0, 0.0, 0.0])
    want = sum(_lj(50.0, 3.0, np.hypot(5.0, za - zb)) + COULOMB_K_ANGSTROM * qa * qb
               / np.hypot(5.0, za - zb)
               for za, qa in ((-0.6, 0.4), (0.6, -0.4)) for zb, qb in ((-0.6, 0.4), (0.6, -0.4)))
    assert float(pair_energy(dipolar, dipolar, d, z, z)) == pytest.approx(want, rel=1e-12)
    # two sites closer than half their sigma overlap: +inf (docs/physics.md section 7a.1)
    assert np.isinf(pair_energy(dipolar, dipolar, 1.4 * np.array([1.0, 0, 0]), z, z))
