"""Study files with rigid molecules and the Axilrod-Teller term: reading, refusals, the CLI line."""
import pathlib

import pytest

from mdsim.cli import main
from mdsim.errors import StudyError
from mdsim.pipeline.plan import plan_tasks
from mdsim.study.reader import read_study

CONFIGS = pathlib.Path(__file__).resolve().parents[2] / "configs"
NITROGEN = (CONFIGS / "nitrogen.toml").read_text()

ARGON_C9 = (CONFIGS / "argon.toml").read_text().replace(
    'sigma = "3.405 angstrom"', 'sigma = "3.405 angstrom"\nthree_body_c9 = "{c9}"')


def write_study(tmp_path, text):
    """``text`` as tmp_path/study.toml."""
    (tmp_path / "study.toml").write_text(text)
    return tmp_path / "study.toml"


def test_nitrogen_config_reads_as_a_rigid_linear_molecule():
    study = read_study(CONFIGS / "nitrogen.toml")
    (mol,) = study.gas.molecules
    assert (mol.n_sites, mol.kinetic_dof, study.gas.dof_per_particle) == (2, 5, 5)
    assert mol.quadrupole == pytest.approx(1.4397 * 0.2081943, rel=1e-6)  # D angstrom -> e A^2
    assert mol.molar_mass_kg_mol == pytest.approx(0.0280134)
    assert "Vrabec" in mol.source
    assert plan_tasks(study) == []  # routes = []: the virial routes only


@pytest.mark.parametrize("old, new, match", [
    # a c_v that already counts the rotations the model carries
    ('ideal_heat_capacity = "0 R"', 'ideal_heat_capacity = "2.5 R"',
     "already counts translations.*vibrational part"),
    ('ideal_heat_capacity = "0 R"', 'ideal_heat_capacity = { polynomial = [20.8], unit = '
     '"J/(mol K)" }', "2.502 R already counts translations"),
    # a dof_per_particle that disagrees with the model
    ('ideal_heat_capacity = "0 R"', 'ideal_heat_capacity = "0 R"\ndof_per_particle = 3',
     "dof_per_particle.*model has 5"),
    ('molar_mass = "28.0134 g/mol"', 'molar_mass = "32 g/mol"', "site masses do not add up"),
    # an unknown site key names the site and the nearest valid key
    ('mass = "14.0067 g/mol"\n\n[initial]', 'mass = "14.0067 g/mol"\ncharge = 0.1\n\n[initial]',
     r"site #2.*charge.*unknown key.*charge_e"),
    # the Axilrod-Teller term is for atoms
    ('quadrupole = "1.4397 D angstrom"',
     'quadrupole = "1.4397 D angstrom"\nthree_body_c9 = "518 hartree * bohr^9"', "three_body_c9"),
])
def test_bad_molecule_studies_are_refused(tmp_path, old, new, match):
    assert old in NITROGEN
    with pytest.raises(StudyError, match=match):
        read_study(write_study(tmp_path, NITROGEN.replace(old, new)))


@pytest.mark.parametrize("name, route, match, line", [
    # every simulation route takes rigid linear molecules (tests/mdsim/test_rigid_route.py,
    # test_rigid_nve.py); a non-linear one only the energy route's Monte Carlo
    # (tests/mdsim/test_body_mc.py), the virial routes answer the others
    ("propane", "direct", "molecule 'propane' is not linear.*routes = \\[\\]",
     "canonical Monte Carlo of one kind of molecule only, not direct"),
])
def test_simulation_routes_are_refused_in_one_line(tmp_path, capsys, name, route, match, line):
    text = (CONFIGS / f"{name}.toml").read_text()
    path = write_study(tmp_path, text.replace("\nroutes = []", f'\nroutes = ["{route}"]'))
    with pytest.raises(StudyError, match=match):
        plan_tasks(read_study(path))
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and line in err[0]


@pytest.mark.parametrize("text", ["518 hartree * bohr^9", "532252.5 K angstrom^9"])
def test_c9_in_atomic_units_or_over_k(tmp_path, text):
    # 1 hartree bohr^9 / k = 315775.02 K * (0.529177211 angstrom)^9 (CODATA)
    study = read_study(write_study(tmp_path, ARGON_C9.replace('{c9}', text)))
    assert study.gas.three_body_c9_K_A9 == pytest.approx(518 * 315775.02 * 0.529177211 ** 9,
                                                         rel=1e-6)


def test_argon_three_body_config_carries_c9():
    # configs/argon_three_body.toml: 518 hartree bohr^9 (Kumar and Meath 1985, from memory)
    study = read_study(CONFIGS / "argon_three_body.toml")
    assert study.gas.three_body_c9_K_A9 == pytest.approx(518 * 315775.02 * 0.529177211 ** 9,
                                                         rel=1e-6)
    assert plan_tasks(study) == []


PROPANE = (CONFIGS / "propane.toml").read_text()


def test_propane_config_reads_as_a_rigid_nonlinear_molecule():
    # 3 translations + 3 rotations: c_v_ig = 3 R + the vibrational part the config gives
    # (60.7 J/(mol K) at 400 K: c_p 94.0 J/(mol K) minus 4 R, from memory)
    from mdsim.study.statepoints import ideal_heat_capacity
    from mdsim.units import R_GAS
    study = read_study(CONFIGS / "propane.toml")
    (mol,) = study.gas.molecules
    assert mol.is_nonlinear
    assert (mol.n_sites, mol.kinetic_dof, study.gas.dof_per_particle) == (3, 6, 6)
    assert mol.molar_mass_kg_mol == pytest.approx(0.0440956)
    assert "Martin and Siepmann" in mol.source
    assert ideal_heat_capacity(study).cv(400.0) == pytest.approx(3.0 * R_GAS + 60.7)
    assert plan_tasks(study) == []  # routes = []: the virial routes only


def test_nonlinear_molecule_refuses_axial_multipoles(tmp_path):
    text = PROPANE.replace('form = "rigid-molecule"', 'form = "rigid-molecule"\n'
                           'quadrupole = "1.0 D angstrom"')
    with pytest.raises(StudyError, match="not on one line.*linear molecules only"):
        read_study(write_study(tmp_path, text))
