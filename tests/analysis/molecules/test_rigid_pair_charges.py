"""Site charges and axial point dipoles in the engine's rigid pair kernel (mdsim.engine.rigid_pair).

Checked against the analysis layer's NumPy pair energy
(analysis.molecules.pair_energy: plain Coulomb between site charges, the
kernel's default, and the
point-multipole formulas of Gray and Gubbins, Theory of Molecular Fluids,
vol. 1, 1984, section 2.4, checked there against point charges), against
the damped shifted-force pair energy written out in NumPy from Fennell and
Gezelter, J. Chem. Phys. 124, 234104 (2006), eqs. 19-20, and forces and
torques against finite differences of the energy (as in
test_rigid_pair_kernel.py).

Models: TraPPE carbon dioxide (configs/co2_charges.toml: Potoff and Siepmann
2001, from memory); an invented hydrogen-chloride-like molecule of two
unlike charged sites (its centre of mass off the site origin); invented polar
two-centre molecules with a point dipole, with and without a quadrupole.
"""
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.special import erfc

from analysis.molecules import RigidMolecule, Site
from analysis.molecules.electrostatics import COULOMB_K_ANGSTROM, E_ANGSTROM_PER_DEBYE
from analysis.molecules.pair_energy import pair_energy
from analysis.molecules.reduced import reduced_linear_type
from mdsim.engine.potentials import LennardJones
from mdsim.engine.rigid_mc import RigidMCSampler
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.errors import SettingError
from mdsim.study.reader import read_study
from test_rigid_pair_kernel import random_box, random_unit, rotate

CONFIGS = Path(__file__).resolve().parents[3] / "configs"
# reduced units of the tests: TraPPE oxygen's site (configs/co2_charges.toml)
EPS_K, SIGMA_A = 79.0, 3.05


def _polar(name, dipole_debye, quadrupole_debye_angstrom):
    """Invented polar two-centre molecule (N2's 2CLJ sites, Vrabec et al. 2001, from memory)."""
    lj = LennardJones(34.897, 3.3211)
    return RigidMolecule(name, [Site(lj, (0.0, 0.0, -0.5232), 0.014),
                                Site(lj, (0.0, 0.0, 0.5232), 0.014)],
                         dipole_e_angstrom=dipole_debye * E_ANGSTROM_PER_DEBYE,
                         quadrupole_e_angstrom2=quadrupole_debye_angstrom * E_ANGSTROM_PER_DEBYE)


@pytest.fixture(scope="module")
def molecules():
    co2 = read_study(CONFIGS / "co2_charges.toml").gas.molecules[0]
    hcl = RigidMolecule("HCl-like (invented)", [
        Site(LennardJones(20.0, 2.5), (0.0, 0.0, -1.27), 0.001008, 0.2),
        Site(LennardJones(150.0, 3.4), (0.0, 0.0, 0.0), 0.03545, -0.2)])
    return {"CO2": co2, "HCl": hcl, "DQ": _polar("DQ", 1.0, -1.44), "D": _polar("D", 1.5, 0.0),
            "Q": _polar("Q", 0.0, 1.44)}


def _model(mols, cutoff, shifted=False, coulomb="cut", damping=0.0):
    return LinearPairModel([reduced_linear_type(m, EPS_K, SIGMA_A) for m in mols], cutoff,
                           shifted, coulomb=coulomb, damping=damping)


def _engine_offset(mol, d, ea, eb, mol_b):
    """The engine's centre-centre vector for analysis's origin-origin vector d (angstrom):
    the engine puts each molecule's centre at its centre of mass."""
    return d + mol_b.centre_of_mass_v()[2] * eb - mol.centre_of_mass_v()[2] * ea


PAIRS = [("CO2", "CO2"), ("CO2", "HCl"), ("HCl", "HCl"), ("DQ", "D"), ("D", "DQ"),
         ("DQ", "DQ"), ("Q", "D"), ("DQ", "Q")]


@pytest.mark.parametrize("names", PAIRS)
@pytest.mark.parametrize("coulomb", ["cut", "dsf"])
def test_energy_inside_the_cutoff_matches_the_analysis_pair_energy(names, coulomb, molecules):
    # plain Coulomb (coulomb = "cut") and the point multipoles against analysis, to 1e-9
    # relative (measured 1e-13); the shifted force tends to it as Rc grows: at Rc = 1e9 sigma
    # its slope 1/Rc^2 is 1e-18 and its offset multiplies sum q_k q_m = 0 (measured 2e-11)
    a, b = (molecules[n] for n in names)
    model = _model([a, b], cutoff=1e9 if coulomb == "dsf" else 4.0, coulomb=coulomb)
    rng = np.random.default_rng(7)
    checked = 0
    for _ in range(40):
        d = random_unit(rng) * rng.uniform(2.5, 12.0)  # angstrom, inside 4 sigma (12.2)
        ea, eb = random_unit(rng), random_unit(rng)
        want = float(pair_energy(a, b, d, ea, eb))
        if not np.isfinite(want):
            continue
        u = model.pair(_engine_offset(a, d, ea, eb, b) / SIGMA_A, ea, eb, 0, 1)[0] * EPS_K
        assert u == pytest.approx(want, rel=1e-9)
        checked += 1
    assert checked >= 20


def _dsf_numpy(mol_a, mol_b, d, ea, eb, rc, alpha):
    """Site-site LJ (analysis, charges removed) plus the DSF energy of the site charges, K:
    q q C [erfc(a r)/r - erfc(a Rc)/Rc + (erfc(a Rc)/Rc^2 + 2a/sqrt(pi) exp(-a^2 Rc^2)/Rc)
    (r - Rc)] (Fennell and Gezelter 2006, eqs. 19-20), r and Rc in angstrom."""
    def bare(m):
        return RigidMolecule(m.name, [Site(s.potential, s.position_v, s.mass_kg_mol)
                                      for s in m.sites])
    u = float(pair_energy(bare(mol_a), bare(mol_b), d, ea, eb))
    slope = erfc(alpha * rc) / rc ** 2 + 2 * alpha / math.sqrt(math.pi) * math.exp(
        -(alpha * rc) ** 2) / rc
    for za, qa in zip(mol_a.axial_positions_s(), mol_a.charge_s):
        for zb, qb in zip(mol_b.axial_positions_s(), mol_b.charge_s):
            r = np.linalg.norm(d + zb * eb - za * ea)
            u += COULOMB_K_ANGSTROM * qa * qb * (erfc(alpha * r) / r - erfc(alpha * rc) / rc
                                                 + slope * (r - rc))
    return u


@pytest.mark.parametrize("names", [("CO2", "CO2"), ("CO2", "HCl")])
@pytest.mark.parametrize("damping", [0.0, 0.3])
def test_damped_shifted_force_energy_against_numpy(names, damping, molecules):
    # Rc = 3 sigma, inside the cut-off; the kernel's alpha is 1/sigma, NumPy's 1/angstrom
    a, b = (molecules[n] for n in names)
    rc = 3.0
    model = _model([a, b], cutoff=rc, coulomb="dsf", damping=damping)
    rng = np.random.default_rng(3)
    checked = 0
    for _ in range(30):
        d = random_unit(rng) * rng.uniform(3.0, 0.99 * rc * SIGMA_A)
        ea, eb = random_unit(rng), random_unit(rng)
        want = _dsf_numpy(a, b, d, ea, eb, rc * SIGMA_A, damping / SIGMA_A)
        if not np.isfinite(want):  # two sites overlap: analysis's +inf
            continue
        u = model.pair(_engine_offset(a, d, ea, eb, b) / SIGMA_A, ea, eb, 0, 1)[0] * EPS_K
        assert u == pytest.approx(want, rel=1e-9, abs=1e-9 * EPS_K)
        checked += 1
    assert checked >= 15


@pytest.mark.parametrize("names, shifted, coulomb, damping", [
    (("CO2", "HCl"), False, "cut", 0.0), (("HCl", "HCl"), True, "dsf", 0.3),
    (("CO2", "CO2"), True, "cut", 0.0), (("DQ", "D"), False, "cut", 0.0),
    (("DQ", "Q"), True, "cut", 0.0)])
def test_force_and_torques_are_derivatives_of_the_energy(names, shifted, coulomb, damping,
                                                         molecules):
    model = _model([molecules[n] for n in names], cutoff=3.0, shifted=shifted, coulomb=coulomb,
                   damping=damping)
    rng = np.random.default_rng(11)
    h = 1e-6

    def energy(d, ea, eb):
        return model.pair(d, ea, eb, 0, 1)[0]

    for _ in range(8):
        d = random_unit(rng) * rng.uniform(1.2, 2.9)
        ea, eb = random_unit(rng), random_unit(rng)
        u, force_b, torque_a, torque_b = model.pair(d, ea, eb, 0, 1)
        scale = max(1.0, abs(u))
        for x in np.eye(3):
            du = (energy(d + h * x, ea, eb) - energy(d - h * x, ea, eb)) / (2 * h)
            assert force_b @ x == pytest.approx(-du, abs=2e-6 * scale)
            du = (energy(d, rotate(ea, x, h), eb) - energy(d, rotate(ea, x, -h), eb)) / (2 * h)
            assert torque_a @ x == pytest.approx(-du, abs=2e-6 * scale)
            du = (energy(d, ea, rotate(eb, x, h)) - energy(d, ea, rotate(eb, x, -h))) / (2 * h)
            assert torque_b @ x == pytest.approx(-du, abs=2e-6 * scale)
        # no net torque about the origin (Newton's third law for rigid bodies)
        assert np.cross(d, force_b) + torque_a + torque_b == pytest.approx(
            np.zeros(3), abs=1e-10 * scale)


def test_box_kernels_against_a_numpy_sum_over_pairs(molecules):
    # the Monte Carlo cell kernel (plain cut) and the MD force kernel (shifted) on a periodic
    # box of charged CO2 and HCl (plain Coulomb): totals against analysis's pair energy
    # summed over the pairs inside the cut-off, u(d) and u(d) - u(rc d/|d|)
    mols = [molecules["CO2"], molecules["HCl"]]
    box_i = np.array([6.0, 6.5, 7.0])
    n, rc = 12, 2.9
    centre_ni, axis_ni, type_n = random_box(5, box_i, n, 2)
    want = want_shifted = 0.0
    for i in range(n):
        for j in range(i + 1, n):
            d = centre_ni[j] - centre_ni[i]
            d -= box_i * np.rint(d / box_i)
            r = np.linalg.norm(d)
            if r >= rc:
                continue
            a, b, ea, eb = mols[type_n[i]], mols[type_n[j]], axis_ni[i], axis_ni[j]
            # back to analysis's site origins (the engine's centres are the centres of mass)
            d_origin = (d * SIGMA_A - b.centre_of_mass_v()[2] * eb
                        + a.centre_of_mass_v()[2] * ea)
            u = float(pair_energy(a, b, d_origin, ea, eb))
            at_rc = d_origin + (rc / r - 1.0) * d * SIGMA_A  # the centres rc apart along d
            want += u
            want_shifted += u - float(pair_energy(a, b, at_rc, ea, eb))
    mc = RigidMCSampler(_model(mols, rc), centre_ni, axis_ni, type_n, box_i, temperature=2.0,
                        seed=1)
    assert mc.energy_and_virial()[0] == pytest.approx(want / EPS_K, rel=1e-9)
    md_model = _model(mols, rc, shifted=True)
    nb_nj = np.array([[j for j in range(i + 1, n)] + [0] * (i + 1) for i in range(n)],
                     dtype=np.int32)
    f, t = np.zeros((n, 3)), np.zeros((n, 3))
    u, _ = md_model.forces(centre_ni, axis_ni, type_n, box_i, nb_nj,
                           np.arange(n - 1, -1, -1, dtype=np.int32), f, t)
    assert u == pytest.approx(want_shifted / EPS_K, rel=1e-9)
    assert f.sum(axis=0) == pytest.approx(np.zeros(3), abs=1e-9)


def test_charges_with_multipoles_and_charged_molecules_are_refused(molecules):
    # no charge-multipole energy in the kernels (nor in the virial routes' check_mixable)
    with pytest.raises(SettingError, match="charge-multipole"):
        _model([molecules["CO2"], molecules["D"]], 3.0)
    lj = LennardJones(1.0, 1.0)
    with pytest.raises(SettingError, match="neutral"):
        LinearPairModel([([-0.2, 0.2], [lj, lj], 0.0, 0.0, [0.5, -0.4])], 3.0)
    with pytest.raises(SettingError, match="damping"):
        LinearPairModel([([-0.2, 0.2], [lj, lj], 0.0, 0.0, [0.5, -0.5])], 3.0, coulomb="dsf",
                        damping=-1.0)
    with pytest.raises(SettingError, match="damping"):  # plain Coulomb is undamped
        LinearPairModel([([-0.2, 0.2], [lj, lj], 0.0, 0.0, [0.5, -0.5])], 3.0, damping=0.2)
