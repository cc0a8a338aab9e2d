"""Study files with rigid molecules and the Axilrod-Teller term: reading, refusals, the CLI line."""
import pathlib

import pytest

from mdsim.cli import main
from mdsim.errors import StudyError
from mdsim.pipeline.plan import plan_tasks
from mdsim.study.reader import read_study

CONFIGS = pathlib.Path(__file__).resolve().parents[2] / "configs"
NITROGEN = (CONFIGS / "nitrogen.toml").read_text()

ARGON_C9 = """
[study]
name = "argon-c9"
[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
three_body_c9 = "{c9}"
"""


def write(tmp_path, text, name="study.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_nitrogen_config_reads_as_a_rigid_linear_molecule():
    study = read_study(CONFIGS / "nitrogen.toml")
    (mol,) = study.gas.molecules
    assert (mol.n_sites, mol.kinetic_dof, study.gas.dof_per_particle) == (2, 5, 5)
    assert mol.quadrupole == pytest.approx(1.4397 * 0.2081943, rel=1e-6)  # D angstrom -> e A^2
    assert mol.molar_mass_kg_mol == pytest.approx(0.0280134)
    assert "Vrabec" in mol.source
    assert plan_tasks(study) == []  # routes = []: the virial routes only


def test_heat_capacity_that_counts_rotations_is_refused(tmp_path):
    text = NITROGEN.replace('ideal_heat_capacity = "0 R"', 'ideal_heat_capacity = "2.5 R"')
    with pytest.raises(StudyError, match="already counts translations.*vibrational part"):
        read_study(write(tmp_path, text))


def test_dof_that_disagrees_with_the_model_is_refused(tmp_path):
    text = NITROGEN.replace('ideal_heat_capacity = "0 R"',
                            'ideal_heat_capacity = "0 R"\ndof_per_particle = 3')
    with pytest.raises(StudyError, match="dof_per_particle.*model has 5"):
        read_study(write(tmp_path, text))


def test_site_masses_must_sum_to_the_molar_mass(tmp_path):
    text = NITROGEN.replace('molar_mass = "28.0134 g/mol"', 'molar_mass = "32 g/mol"')
    with pytest.raises(StudyError, match="site masses do not add up"):
        read_study(write(tmp_path, text))


def test_unknown_site_key_names_the_site(tmp_path):
    text = NITROGEN.replace('mass = "14.0067 g/mol"\n\n[initial]',
                            'mass = "14.0067 g/mol"\ncharge = 0.1\n\n[initial]')
    with pytest.raises(StudyError, match=r"site #2.*charge.*unknown key.*charge_e"):
        read_study(write(tmp_path, text))


def test_simulation_routes_are_refused_in_one_line(tmp_path, capsys):
    path = write(tmp_path, NITROGEN.replace("routes = []", 'routes = ["energy"]'))
    with pytest.raises(StudyError, match="not yet supported for rigid-molecule potentials"):
        plan_tasks(read_study(path))
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "use the virial routes" in err[0]


@pytest.mark.parametrize("text", ["518 hartree * bohr^9", "532252.5 K angstrom^9"])
def test_c9_in_atomic_units_or_over_k(tmp_path, text):
    # 1 hartree bohr^9 / k = 315775.02 K * (0.529177211 angstrom)^9 (CODATA)
    study = read_study(write(tmp_path, ARGON_C9.format(c9=text)))
    assert study.gas.three_body_c9_K_A9 == pytest.approx(518 * 315775.02 * 0.529177211 ** 9,
                                                         rel=1e-6)


def test_c9_is_refused_for_molecules(tmp_path):
    text = NITROGEN.replace('quadrupole = "1.4397 D angstrom"',
                            'quadrupole = "1.4397 D angstrom"\nthree_body_c9 = "518 hartree * bohr^9"')
    with pytest.raises(StudyError, match="three_body_c9"):
        read_study(write(tmp_path, text))
