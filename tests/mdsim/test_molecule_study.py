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
     "canonical Monte Carlo only (one kind, or mixed with atoms and linear molecules), "
     "not direct"),
])
def test_simulation_routes_are_refused_in_one_line(tmp_path, capsys, name, route, match, line):
    text = (CONFIGS / f"{name}.toml").read_text()
    (tmp_path / "propane_ideal_cv.csv").write_text(PROPANE_ROWS.read_text())
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
PROPANE_ROWS = CONFIGS / "propane_ideal_cv.csv"


def test_propane_config_reads_as_a_rigid_nonlinear_molecule():
    # 3 translations + 3 rotations; the config gives the whole c_v_ig ("all motions"), at
    # 400 K 85.70 J/(mol K): c_p 94.01 J/(mol K) minus R (Chao, Wilhoit and Hall 1973, from
    # memory), of which 3 R is the model's and the rest vibrational
    from mdsim.study.statepoints import ideal_heat_capacity
    from mdsim.units import R_GAS
    study = read_study(CONFIGS / "propane.toml")
    (mol,) = study.gas.molecules
    assert mol.is_nonlinear
    assert (mol.n_sites, mol.kinetic_dof, study.gas.dof_per_particle) == (3, 6, 6)
    assert mol.molar_mass_kg_mol == pytest.approx(0.0440956)
    assert "Martin and Siepmann" in mol.source
    cv = ideal_heat_capacity(study)
    assert cv.cv(400.0) == pytest.approx(85.70, abs=1e-12)
    assert cv.vibrational_cv(400.0) == pytest.approx(85.70 - 3.0 * R_GAS, abs=1e-12)
    assert (study.gas.ideal_heat_capacity_counts, study.gas.ideal_heat_capacity_counts_given) \
        == ("all motions", True)
    assert plan_tasks(study) == []  # routes = []: the virial routes only


def test_nonlinear_molecule_refuses_axial_multipoles(tmp_path):
    text = PROPANE.replace('form = "rigid-molecule"', 'form = "rigid-molecule"\n'
                           'quadrupole = "1.0 D angstrom"')
    with pytest.raises(StudyError, match="not on one line.*linear molecules only"):
        read_study(write_study(tmp_path, text))


# -- [gas] ideal_heat_capacity_counts: what ideal_heat_capacity holds for rigid molecules --


def propane_with(tmp_path, cv, counts, table_rows=None):
    """The propane study with ``ideal_heat_capacity = cv`` and ``counts`` (None: no key);
    ``table_rows`` [(T, c_v)] are written to tmp_path/cv.csv."""
    if table_rows is not None:
        (tmp_path / "cv.csv").write_text("temperature_K, cv_J_molK\n" + "".join(
            f"{t!r}, {c!r}\n" for t, c in table_rows))
    text = PROPANE.replace('ideal_heat_capacity = "propane_ideal_cv.csv"\n'
                           'ideal_heat_capacity_counts = "all motions"',
                           f'ideal_heat_capacity = "{cv}"' + (
                               "" if counts is None
                               else f'\nideal_heat_capacity_counts = "{counts}"'))
    assert text != PROPANE
    return write_study(tmp_path, text)


def table_rows(path):
    """The (T, c_v) rows of a heat-capacity CSV (comments and header skipped)."""
    rows = [line.split("#")[0].strip() for line in path.read_text().splitlines()]
    return [tuple(float(x) for x in r.split(",")) for r in rows if r and r[0].isdigit()]


@pytest.mark.parametrize("text, match", [
    # a non-linear molecule must say which (its vibrations pass 1.5 R: the two look alike)
    (lambda p: p.replace('ideal_heat_capacity_counts = "all motions"\n', ""),
     r"ideal_heat_capacity_counts'.*required: molecule 'propane' is not linear.*"
     r'add ideal_heat_capacity_counts = "vibrations".*or "all motions"'),
    # a whole c_v below the model's 3 R of translations and rotations
    (lambda p: p.replace('"propane_ideal_cv.csv"', '"2.9 R"'),
     r"ideal_heat_capacity' = '2.9 R': .*whole ideal-gas c_v, but it is 2.9 R, below the 3 R "
     r".*allowed: >= 3 R.*vibrational part with ideal_heat_capacity_counts = \"vibrations\""),
    (lambda p: p.replace('"propane_ideal_cv.csv"', '{ polynomial = [3.2, -0.001], unit = "R", '
                         'valid_range_K = [100.0, 500.0] }'),
     r"it is 2.7 R at 500 K, below the 3 R"),
    # a vibrational part cannot be negative
    (lambda p: p.replace('"propane_ideal_cv.csv"', '"-1 R"').replace('"all motions"',
                                                                      '"vibrations"'),
     r"'-1 R': a heat capacity cannot be negative"),
    (lambda p: p.replace('"all motions"', '"rotations"'),
     r"ideal_heat_capacity_counts' = 'rotations'.*vibrations.*all motions"),
])
def test_what_the_heat_capacity_counts_is_checked(tmp_path, text, match):
    with pytest.raises(StudyError, match=match):
        read_study(write_study(tmp_path, text(PROPANE)))


def test_propane_without_what_its_heat_capacity_counts_is_one_line(tmp_path, capsys):
    path = write_study(tmp_path, PROPANE.replace('ideal_heat_capacity_counts = "all motions"\n',
                                                 ""))
    (tmp_path / "propane_ideal_cv.csv").write_text(PROPANE_ROWS.read_text())
    assert main(["virial", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "ideal_heat_capacity_counts" in err[0] and "not linear" in err[0]


def test_a_whole_table_below_the_kinetic_part_names_its_row(tmp_path):
    # invented rows: 20 J/(mol K) at 350 K is below propane's 3 R = 24.94 J/(mol K)
    path = propane_with(tmp_path, "cv.csv", "all motions", [(300.0, 70.0), (350.0, 20.0),
                                                            (400.0, 85.0)])
    with pytest.raises(StudyError, match=r"it is 2.405 R at 350 K, below the 3 R"):
        read_study(path)


def test_linear_molecules_default_to_vibrations_and_say_a_total_is_all_motions(tmp_path):
    study = read_study(CONFIGS / "nitrogen.toml")
    assert (study.gas.ideal_heat_capacity_counts, study.gas.ideal_heat_capacity_counts_given) \
        == ("vibrations", False)
    assert "the default for linear molecules" in study.gas.describe_heat_capacity_counts()
    with pytest.raises(StudyError, match=r"already counts translations.*or write "
                       r'ideal_heat_capacity_counts = "all motions" to give the whole c_v'):
        read_study(write_study(tmp_path, NITROGEN.replace('"0 R"', '"2.5 R"')))


def test_nitrogen_whole_and_vibrational_constants_are_one_model(tmp_path):
    # 2.5 R given whole is 0 R of vibrations: the same c_v_ig, u and s (exact arithmetic)
    from mdsim.study.statepoints import ideal_heat_capacity
    whole = read_study(write_study(tmp_path, NITROGEN.replace(
        'ideal_heat_capacity = "0 R"',
        'ideal_heat_capacity = "2.5 R"\nideal_heat_capacity_counts = "all motions"')))
    vib = read_study(CONFIGS / "nitrogen.toml")
    a, b = ideal_heat_capacity(whole), ideal_heat_capacity(vib)
    assert a.cv(300.0) == pytest.approx(b.cv(300.0), rel=1e-15)
    assert a.delta_u(250.0, 300.0) == pytest.approx(b.delta_u(250.0, 300.0), rel=1e-14)
    assert a.vibrational_cv(300.0) == pytest.approx(0.0, abs=1e-12)


def test_propane_whole_table_and_vibrational_table_give_one_delta_t(tmp_path):
    # The same propane c_v_ig given whole (the shipped table) and as its vibrational part
    # (each row minus the model's 3 R): the tool's sum kinetic + vibrational is the whole, so
    # the B2 free expansion at 400 K, 680 mol/m^3 into twice the volume agrees to 1e-12 K
    # (rounding only; the solver's own tolerance is far below: common practice, no source).
    from analysis.expansion import virial_expansion
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    from mdsim.units import R_GAS
    rows = table_rows(PROPANE_ROWS)
    whole = read_study(CONFIGS / "propane.toml")
    (tmp_path / "vib").mkdir()
    vib = read_study(propane_with(tmp_path / "vib", "cv.csv", "vibrations",
                                  [(t, c - 3.0 * R_GAS) for t, c in rows]))
    gas = virial_gas(whole)
    dT = [virial_expansion(gas, ideal_heat_capacity(s), 400.0, 2.0, rho_i=680.0,
                           order=2).delta_T_K for s in (whole, vib)]
    assert dT[0] < -1.0  # the expansion cools: the comparison is not of two zeros
    assert dT[0] == pytest.approx(dT[1], abs=1e-12, rel=0)


def test_the_run_summary_says_what_the_heat_capacity_counts():
    # the report's assumptions line is these two texts (mdsim.pipeline.report_md); mdsim
    # virial prints them too
    from mdsim.pipeline.summary import run_summary
    gas = run_summary(read_study(CONFIGS / "propane.toml"), [])["gas"]
    assert (gas["ideal_heat_capacity_counts"], gas["ideal_heat_capacity_counts_given"]) == \
        ("all motions", True)
    assert gas["ideal_heat_capacity_used"].endswith(
        "given whole, of which 6/2 R is the rigid model's (translation and rotation) and the "
        "rest vibrational")
    from mdsim.cli.cmd_virial import format_virial_table
    lines = format_virial_table({"study": "propane", "state_points": [], "gas": gas})
    assert lines[1].startswith('c_v_ig: ideal_heat_capacity_counts = "all motions" (given); '
                               "used: tabulated c_v_ig from propane_ideal_cv.csv")
    argon = run_summary(read_study(CONFIGS / "argon.toml"), [])["gas"]
    assert (argon["ideal_heat_capacity_counts"], argon["ideal_heat_capacity_counts_given"]) == \
        (None, False)
