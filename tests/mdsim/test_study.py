"""Study files: schema validation, potentials in K and angstrom, systems in reduced units."""
import math
import os
import textwrap
from pathlib import Path

import numpy as np
import pytest

from mdsim.errors import StudyError
from mdsim.engine.potentials import Exp6, LennardJones
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
K_B, N_A = 1.380649e-23, 6.02214076e23  # CODATA 2018, exact
R = K_B * N_A

PURE = """
[study]
name = "test-gas"

[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
"""


def write(tmp_path, text, name="study.toml"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def test_argon_example():
    study = read_study(CONFIGS / "argon.toml")
    gas = study.gas
    pot = gas.pairs_K_angstrom.pots[0][0]
    # Hirschfelder, Curtiss and Bird (1954) argon LJ fit, from memory: 119.8 K, 3.405 angstrom
    assert isinstance(pot, LennardJones)
    assert pot.epsilon == pytest.approx(119.8, rel=1e-14)
    assert pot.sigma == pytest.approx(3.405, rel=1e-14)
    assert gas.pairs_K_angstrom.cutoff == 3.0
    assert gas.molar_masses_kg_mol[0] == pytest.approx(0.039948, rel=1e-14)
    assert gas.ideal_heat_capacity == "1.5 R"
    assert gas.quantum_correction is False and gas.quantum == "classical"
    assert gas.dof_per_particle == 3
    assert study.units.epsilon_K == pytest.approx(119.8)
    assert study.units.sigma_m == pytest.approx(3.405e-10)
    assert study.initial  # the pipeline tables are kept raw
    assert isinstance(study.expansion["volume_ratio"], float)


def test_system_in_reduced_units(tmp_path):
    study = read_study(write(tmp_path, PURE))
    rho_mol = 500.0
    system = study.system(200, rho_mol, seed=3)
    rho_red = rho_mol * N_A * (3.405e-10) ** 3   # rho* = rho N_A sigma^3
    assert system.density == pytest.approx(rho_red, rel=1e-12)
    pot = system.pairs.pots[0][0]
    assert pot.epsilon == pytest.approx(1.0, rel=1e-14)
    assert pot.sigma == pytest.approx(1.0, rel=1e-14)
    assert system.r_ni.shape == (200, 3)
    # dilute: random start, so not on the lattice's evenly spaced planes
    assert len(np.unique(np.round(system.r_ni[:, 0], 6))) > 100
    # same seed, same start
    assert np.array_equal(system.r_ni, study.system(200, rho_mol, seed=3).r_ni)


def test_dense_system_uses_lattice(tmp_path):
    study = read_study(write(tmp_path, PURE))
    rho_mol = 0.8 / (N_A * (3.405e-10) ** 3)  # rho* = 0.8, a liquid
    system = study.system(216, rho_mol, seed=1)
    assert len(np.unique(np.round(system.r_ni[:, 0], 9))) == 6  # 6 x 6 x 6 lattice planes
    with pytest.raises(StudyError, match="start"):
        study.system(216, rho_mol, start="fcc")
    with pytest.raises(StudyError, match="particles"):
        study.system(1, rho_mol)


def test_epsilon_as_molar_energy(tmp_path):
    study = read_study(write(tmp_path, PURE.replace('"119.8 K"', '"996 J/mol"')))
    assert study.gas.pairs_K_angstrom.pots[0][0].epsilon == pytest.approx(996.0 / R, rel=1e-12)


MIXTURE = """
[study]
name = "air"

[gas]
name = "air"
ideal_heat_capacity = "2.5 R"
dof_per_particle = 5

[[gas.species]]
name = "nitrogen"
mole_fraction = 0.79
molar_mass = "28.0134 g/mol"
potential = { form = "lennard-jones", epsilon = "95.05 K", sigma = "3.698 angstrom" }

[[gas.species]]
name = "oxygen"
mole_fraction = 0.21
molar_mass = "31.9988 g/mol"
potential = { form = "lennard-jones", epsilon = "118.0 K", sigma = "3.46 angstrom" }

[potential]
cutoff = 3.5
k_ij = 0.02
"""


def test_mixture(tmp_path):
    study = read_study(write(tmp_path, MIXTURE))
    gas = study.gas
    assert gas.species_names == ["nitrogen", "oxygen"]
    assert np.allclose(gas.fractions, [0.79, 0.21], rtol=0, atol=1e-15)
    pm = gas.pairs_K_angstrom
    cross = pm.pots[0][1]
    # Lorentz-Berthelot with k_ij (docs/physics.md section 7)
    assert cross.epsilon == pytest.approx(0.98 * math.sqrt(95.05 * 118.0), rel=1e-13)
    assert cross.sigma == pytest.approx(0.5 * (3.698 + 3.46), rel=1e-13)
    assert pm.cutoff == 3.5
    assert gas.dof_per_particle == 5
    assert study.units.epsilon_K == pytest.approx(95.05)   # species 0 sets the units
    counts = study.counts(101)
    assert counts.tolist() == [80, 21]  # 79.79 -> 80, 21.21 -> 21 (largest remainder)
    system = study.system(300, 1000.0, seed=2)
    assert system.counts_a.tolist() == [237, 63]
    assert system.masses_a[1] == pytest.approx(31.9988 / 28.0134, rel=1e-13)


def test_mole_fractions_must_sum_to_one(tmp_path):
    with pytest.raises(StudyError, match="sum to 1.01"):
        read_study(write(tmp_path, MIXTURE.replace("0.21", "0.22")))
    # within 1e-6 is accepted
    study = read_study(write(tmp_path, MIXTURE.replace("0.21", "0.2100005")))
    assert study.gas.n_species == 2


def test_mixture_rules(tmp_path):
    with pytest.raises(StudyError, match="per species"):
        read_study(write(tmp_path, MIXTURE.replace('ideal_heat_capacity', 'molar_mass = "29 g/mol"\nideal_heat_capacity')))
    with pytest.raises(StudyError, match="does not belong here"):
        read_study(write(tmp_path, MIXTURE.replace("cutoff = 3.5", 'form = "mie"')))
    with pytest.raises(StudyError, match="same potential form"):
        read_study(write(tmp_path, MIXTURE.replace(
            '{ form = "lennard-jones", epsilon = "118.0 K", sigma = "3.46 angstrom" }',
            '{ form = "exp-6", epsilon = "118.0 K", r_min = "3.9 angstrom", steepness = 14.0 }')))
    with pytest.raises(StudyError, match="mixtures only"):
        read_study(write(tmp_path, PURE + "k_ij = 0.1\n"))


def test_mie_and_exp6(tmp_path):
    mie = PURE.replace('form = "lennard-jones"', 'form = "mie"') + \
        "repulsive_exponent = 12.0\nattractive_exponent = 6.0\n"
    pot = read_study(write(tmp_path, mie)).gas.pairs_K_angstrom.pots[0][0]
    lj = LennardJones(119.8, 3.405)
    r = np.linspace(3.2, 10.0, 7)
    assert np.allclose(pot.energy(r), lj.energy(r), rtol=1e-12)  # Mie 12-6 is LJ (closed form)
    exp6 = PURE.replace('form = "lennard-jones"', 'form = "exp-6"').replace(
        'sigma = "3.405 angstrom"', 'r_min = "3.85 angstrom"\nsteepness = 14.0')
    p1 = read_study(write(tmp_path, exp6)).gas.pairs_K_angstrom.pots[0][0]
    assert isinstance(p1, Exp6) and p1.r_min == pytest.approx(3.85)
    # giving sigma instead must give the same potential (r_min solved from sigma)
    exp6s = exp6.replace('r_min = "3.85 angstrom"', f'sigma = "{p1.sigma!r} angstrom"')
    p2 = read_study(write(tmp_path, exp6s)).gas.pairs_K_angstrom.pots[0][0]
    assert p2.r_min == pytest.approx(3.85, rel=1e-10)  # root-finder tolerance
    with pytest.raises(StudyError, match="exactly one of r_min or sigma"):
        read_study(write(tmp_path, exp6.replace("steepness", 'sigma = "3.4 angstrom"\nsteepness')))
    with pytest.raises(StudyError, match="missing; the mie form needs"):
        read_study(write(tmp_path, PURE.replace('form = "lennard-jones"', 'form = "mie"')))
    with pytest.raises(StudyError, match="does not apply to the lennard-jones form"):
        read_study(write(tmp_path, PURE + "steepness = 13.0\n"))


@pytest.mark.parametrize("header, e_scale, r_scale", [
    ("r_angstrom, u_K", 1.0, 1.0),
    ("r_nm, u_J_mol", R, 0.1),
])
def test_table_potential(tmp_path, header, e_scale, r_scale):
    lj = LennardJones(119.8, 3.405)
    r = np.linspace(3.0, 15.0, 400)
    rows = "\n".join(f"{float(a) * r_scale!r}, {float(b) * e_scale!r}" for a, b in zip(r, lj.energy(r)))
    (tmp_path / "pot.csv").write_text(f"# argon LJ as a table\n{header}\n{rows}\n", encoding="utf-8")
    text = PURE.replace('form = "lennard-jones"', 'form = "table"').replace(
        'epsilon = "119.8 K"\nsigma = "3.405 angstrom"', 'table_file = "pot.csv"')
    pot = read_study(write(tmp_path, text)).gas.pairs_K_angstrom.pots[0][0]
    # spline of 400 points over 12 angstrom: well depth and zero crossing to 1e-4 relative
    assert pot.epsilon == pytest.approx(119.8, rel=1e-4)
    assert pot.sigma == pytest.approx(3.405, rel=1e-4)


def test_table_needs_unit_header(tmp_path):
    (tmp_path / "pot.csv").write_text("r, u\n1, 2\n", encoding="utf-8")
    text = PURE.replace('form = "lennard-jones"', 'form = "table"').replace(
        'epsilon = "119.8 K"\nsigma = "3.405 angstrom"', 'table_file = "pot.csv"')
    with pytest.raises(StudyError, match="does not name the units"):
        read_study(write(tmp_path, text))
    with pytest.raises(StudyError, match="does not exist"):
        read_study(write(tmp_path, text.replace("pot.csv", "missing.csv")))


def test_heat_capacity_forms(tmp_path):
    poly = PURE.replace('"1.5 R"', '{ polynomial = [20.8, 0.001], unit = "J/(mol K)" }')
    assert read_study(write(tmp_path, poly)).gas.ideal_heat_capacity == {
        "polynomial": [20.8, 0.001], "unit": "J/(mol K)"}
    ranged = PURE.replace('"1.5 R"', '{ polynomial = [1.5], unit = "R", valid_range_K = [50, 900] }')
    assert read_study(write(tmp_path, ranged)).gas.ideal_heat_capacity["valid_range_K"] == [50.0, 900.0]
    with pytest.raises(StudyError, match="valid_range_K"):
        read_study(write(tmp_path, ranged.replace("[50, 900]", "[900, 50]")))
    (tmp_path / "cv.csv").write_text("temperature_K, cv_J_molK\n100, 20.8\n500, 21.0\n",
                                     encoding="utf-8")
    csv = read_study(write(tmp_path, PURE.replace('"1.5 R"', '"cv.csv"')))
    assert csv.gas.ideal_heat_capacity == str((tmp_path / "cv.csv").resolve())
    table = read_study(write(tmp_path, PURE.replace('"1.5 R"', '{ table = "cv.csv" }')))
    assert table.gas.ideal_heat_capacity == {"table": str((tmp_path / "cv.csv").resolve())}
    # the analysis package accepts every validated form
    from analysis.heatcapacity import heat_capacity_from_spec
    # two table points: the monotone interpolant is the straight line, 20.9 at 300 K
    for study, cv_300 in ((csv, 20.9), (table, 20.9), (read_study(write(tmp_path, ranged)), 1.5 * R)):
        model = heat_capacity_from_spec(study.gas.ideal_heat_capacity)
        assert model.cv(300.0) == pytest.approx(cv_300, rel=1e-12)  # round-off only
    assert read_study(write(tmp_path, PURE.replace('"1.5 R"', '"20.8 J/(mol K)"'))) \
        .gas.ideal_heat_capacity == "20.8 J/(mol K)"
    with pytest.raises(StudyError, match="below the translational"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '"1.2 R"')))
    with pytest.raises(StudyError, match="dimension"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '"1.5 J/mol"')))
    with pytest.raises(StudyError, match="polynomial"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '{ polynomial = [], unit = "R" }')))
    with pytest.raises(StudyError, match="did you mean 'unit'"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '{ polynomial = [1.5], units = "R" }')))
    with pytest.raises(StudyError, match="does not exist"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '"nothere.csv"')))


def test_unknown_key_suggests_nearest(tmp_path):
    with pytest.raises(StudyError) as err:
        read_study(write(tmp_path, PURE.replace("molar_mass", "molar_mas")))
    msg = str(err.value)
    assert "study.toml" in msg and "[gas]" in msg and "'molar_mas'" in msg
    assert "did you mean 'molar_mass'" in msg
    with pytest.raises(StudyError, match="did you mean 'potential'"):
        read_study(write(tmp_path, PURE.replace("[potential]", "[potentail]")))
    with pytest.raises(StudyError, match="did you mean 'lennard-jones'"):
        read_study(write(tmp_path, PURE.replace('"lennard-jones"', '"lennard-jone"')))


@pytest.mark.parametrize("old, new, fragment", [
    ('"119.8 K"', '"119.8 m"', "not a well depth"),
    ('"3.405 angstrom"', '"3.405 K"', "expected a length"),
    ('"3.405 angstrom"', '"340 angstrom"', "out of range"),
    ('"39.948 g/mol"', "39.948", "needs a unit"),
    ('name = "test-gas"', 'name = "my gas/1"', "file names"),
    ('name = "test-gas"', "name = 3", "must be a string"),
    ('ideal_heat_capacity = "1.5 R"', 'ideal_heat_capacity = "1.5 R"\nquantum_correction = true',
     "quantum = \"classical\" | \"first-order\""),
    ('ideal_heat_capacity = "1.5 R"', 'ideal_heat_capacity = "1.5 R"\nquantum = "yes"',
     "unknown choice"),
    ('ideal_heat_capacity = "1.5 R"', 'ideal_heat_capacity = "1.5 R"\nstatistics = "bose"',
     "applies only with quantum = \"exact\""),
    ('ideal_heat_capacity = "1.5 R"',
     'ideal_heat_capacity = "1.5 R"\nquantum = "exact"\nstatistics = "bose"\nnuclear_spin = "1/2"',
     "half-integer spin belongs to fermions"),
    ('ideal_heat_capacity = "1.5 R"',
     'ideal_heat_capacity = "1.5 R"\nquantum = "exact"\nnuclear_spin = "para-hydrogen"',
     "molecules are bosons"),
    ('ideal_heat_capacity = "1.5 R"', 'ideal_heat_capacity = "1.5 R"\ndof_per_particle = 4',
     "not an allowed value"),
    ('sigma = "3.405 angstrom"', 'sigma = "3.405 angstrom"\ncutoff = 1.0', "out of range"),
    ('ideal_heat_capacity = "1.5 R"\n', "", "missing required key"),
])
def test_bad_values(tmp_path, old, new, fragment):
    assert old in PURE
    with pytest.raises(StudyError, match=fragment):
        read_study(write(tmp_path, PURE.replace(old, new)))


def test_bad_files(tmp_path):
    with pytest.raises(StudyError, match="does not exist"):
        read_study(tmp_path / "none.toml")
    with pytest.raises(StudyError, match="is a directory"):
        read_study(tmp_path)
    bad = tmp_path / "latin1.toml"
    bad.write_bytes(PURE.replace("test-gas", "gaz-\u00e9").encode("latin-1"))
    with pytest.raises(StudyError, match="not UTF-8"):
        read_study(bad)
    with pytest.raises(StudyError, match="not valid TOML"):
        read_study(write(tmp_path, PURE + "\n[gas\n"))
    with pytest.raises(StudyError, match=r"\[study\]: missing table"):
        read_study(write(tmp_path, PURE.replace("[study]", "[initial]")))
    with pytest.raises(StudyError, match="must be a table"):
        read_study(write(tmp_path, "sweep = 3\n" + PURE))


# -- the run tables: [initial], [expansion], [simulation], [sweep], [cluster] ----------------

RUN = PURE + """
[initial]
temperature = "295.15 K"
pressure = "22 bar"

[expansion]
volume_ratio = 2.0
"""


def test_run_tables_converted_with_defaults(tmp_path):
    study = read_study(write(tmp_path, RUN + '\n[simulation]\nmax_cpu_time = "2 h"\n'
                             'particles = 500\nsampler = "md"\n'
                             '\n[cluster]\nsystem = "slurm"\naddress = "tcp://10.0.0.1:8786"\n'))
    assert study.initial == {"temperature": 295.15, "pressure": 22e5}
    assert study.expansion == {"volume_ratio": 2.0}
    sim = study.simulation
    assert sim["routes"] == ["energy"] and sim["particles"] == 500 and sim["sampler"] == "md"
    assert sim["max_cpu_time"] == 7200.0 and sim["target_stderr"] == 0.05 and sim["seed"] == 1
    assert study.cluster == {"system": "slurm", "address": "tcp://10.0.0.1:8786",
                             "cpus_per_job": 1, "memory_per_job": "2GB",
                             "time_limit": "01:00:00", "batch_jobs": 1}
    # no [simulation] table: every key present with its schema default (particles None:
    # the tool chooses); "10 min" is 600 s
    assert read_study(write(tmp_path, RUN)).simulation == {
        "routes": ["energy"], "particles": None, "target_stderr": 0.05, "max_cpu_time": 600.0,
        "seed": 1, "sampler": "auto", "quantum_potential": "none"}


def test_empty_routes_means_virial_only(tmp_path):
    study = read_study(write(tmp_path, RUN + "\n[simulation]\nroutes = []\n"))
    assert study.simulation["routes"] == []


@pytest.mark.parametrize("table, line, fragment", [
    ("initial", 'temperature = "-5 K"', "'temperature'.*out of range"),
    ("initial", 'temperature = "nan K"', "'temperature'.*not finite"),
    ("initial", 'temperature = "300 bar"', "'temperature'.*expected a temperature"),
    ("initial", 'pressure = "0 bar"', "'pressure'.*out of range"),
    ("initial", 'pressure = "1e30 Pa"', "'pressure'.*out of range"),
    ("initial", 'pressure = "inf bar"', "'pressure'.*not finite"),
    ("initial", 'density = "500 mol/m^3"', "'density'.*both pressure and density"),
    ("initial", 'denisty = "500 mol/m^3"', "did you mean 'density'"),
    ("expansion", "volume_ratio = 1.0", "'volume_ratio'.*out of range"),
    ("expansion", "volume_ratio = 0.5", "'volume_ratio'.*out of range"),
    ("expansion", 'volume_ratio = "2"', "'volume_ratio'.*plain number"),
    ("simulation", 'routes = ["energy", "direkt"]', "'routes'.*did you mean 'direct'"),
    ("simulation", 'routes = ["partition"]', "'routes'.*'partition' is now called 'direct'"),
    ("simulation", 'routes = "energy"', "'routes'.*list of route names"),
    ("simulation", 'routes = ["energy", "energy"]', "'routes'.*listed twice"),
    ("simulation", "particles = 10", "'particles'.*out of range"),
    ("simulation", "particles = 500.5", "'particles'.*whole number"),
    ("simulation", 'target_stderr = "0 K"', "'target_stderr'.*out of range"),
    ("simulation", 'target_stderr = "0.05"', "'target_stderr'.*no unit"),
    ("simulation", 'max_cpu_time = "10 K"', "'max_cpu_time'.*expected a time"),
    ("simulation", 'max_cpu_time = "-1 min"', "'max_cpu_time'.*out of range"),
    ("simulation", "seed = -1", "'seed'.*out of range"),
    ("simulation", 'sampler = "bd"', "'sampler'.*unknown choice"),
    ("cluster", 'system = "sge"', "'system'.*unknown choice"),
    ("cluster", 'memory_per_job = "lots"', "'memory_per_job'.*expected format"),
    ("cluster", 'time_limit = "2 hours"', "'time_limit'.*expected format"),
    ("cluster", "cpus_per_job = 0", "'cpus_per_job'.*out of range"),
    ("cluster", "batch_jobs = 0", "'batch_jobs'.*out of range"),
    ("cluster", "cores = 4", "'cores' is now called 'cpus_per_job'"),
    ("cluster", 'memory = "4GB"', "'memory' is now called 'memory_per_job'"),
    ("cluster", 'walltime = "01:00:00"', "'walltime' is now called 'time_limit'"),
    ("cluster", 'interface = "ib0"', "'interface' is now called 'network_interface'"),
    ("cluster", "jobs = 2", "'jobs' is now called 'batch_jobs'"),
    ("cluster", 'address = "10.0.0.1"', "'address'.*expected format"),
    ("cluster", 'partition = "a b"', "'partition'.*expected format"),
    ("cluster", 'network_interface = ""', "'network_interface'.*expected format"),
    ("cluster", 'sytem = "slurm"', "did you mean 'system'"),
])
def test_run_table_errors(tmp_path, table, line, fragment):
    text = RUN if f"[{table}]" in RUN else RUN + f"\n[{table}]\n"
    key = line.split(" =")[0]
    existing = [ln for ln in text.splitlines() if ln.startswith(key + " =")]
    if existing:  # replace the valid value
        text = text.replace(existing[0], line)
    else:
        text = text.replace(f"[{table}]\n", f"[{table}]\n{line}\n")
    with pytest.raises(StudyError, match=fragment) as err:
        read_study(write(tmp_path, text))
    assert f"[{table}]" in str(err.value) and "study.toml" in str(err.value)


def test_density_checks(tmp_path):
    base = RUN.replace('pressure = "22 bar"', "{}")
    # a mass density is refused with the molar value it means (1.7976 kg/m^3 / 39.948 g/mol = 44.9985)
    with pytest.raises(StudyError, match=r"'density'.*mass density.*44\.998\d* mol/m\^3"):
        read_study(write(tmp_path, base.format('density = "1.7976 kg/m^3"')))
    # close packing of spheres of diameter sigma: rho sigma^3 = sqrt(2) (geometry), 60567 mol/m^3
    rho_cp = 2 ** 0.5 / (N_A * 3.405e-10 ** 3)
    assert read_study(write(tmp_path, base.format(f'density = "{0.99 * rho_cp} mol/m^3"')))
    with pytest.raises(StudyError, match="'density'.*denser than close packing"):
        read_study(write(tmp_path, base.format(f'density = "{1.01 * rho_cp} mol/m^3"')))
    with pytest.raises(StudyError, match="'density'.*out of range"):
        read_study(write(tmp_path, base.format('density = "-3 mol/m^3"')))


@pytest.mark.parametrize("sweep, fragment", [
    ('pressure = ["10 bar", "20 bar"]', r"\[initial\] key 'pressure'.*also swept"),
    ('density = ["10 mol/m^3"]', "sweep over density while \\[initial\\] gives pressure"),
    ('volume_ratio = [2.0, 3.0]', r"\[expansion\] key 'volume_ratio'.*also swept"),
    ('temperature = []', "'temperature'.*non-empty list"),
    ('temperature = ["300 K", "300 K"]', "'temperature'.*listed twice"),
    ('temperature = ["300 K", "-1 K"]', "'temperature'.*out of range"),
    ('temperature = "300 K"', "'temperature'.*non-empty list"),
    ('volume_ratio = [0.9]', "'volume_ratio'.*out of range"),
    ('pressure = ["1 bar"]\ndensity = ["1 mol/m^3"]', "both pressure and density are swept"),
    ('temprature = ["300 K"]', "did you mean 'temperature'"),
])
def test_sweep_errors(tmp_path, sweep, fragment):
    with pytest.raises(StudyError, match=fragment):
        read_study(write(tmp_path, RUN + f"\n[sweep]\n{sweep}\n"))


def test_sweep_replaces_initial_keys(tmp_path):
    text = RUN.replace('pressure = "22 bar"\n', "").replace("volume_ratio = 2.0\n", "")
    study = read_study(write(tmp_path, text + '\n[sweep]\npressure = ["5 bar", "10 bar"]\n'
                             "volume_ratio = [1.5, 2.0, 3.0]\n"))
    assert study.sweep == {"pressure": [5e5, 10e5], "volume_ratio": [1.5, 2.0, 3.0]}
    assert len(study.state_points()) == 6


def test_potential_source_key(tmp_path):
    text = PURE.replace('sigma = "3.405 angstrom"',
                        'sigma = "3.405 angstrom"\nsource = "HCB 1954, second-virial fit"')
    study = read_study(write(tmp_path, text))
    assert study.raw["potential"]["source"] == "HCB 1954, second-virial fit"


@pytest.mark.parametrize("where", ["absolute", "parent", "subfolder"])
def test_table_files_must_stay_inside_the_study_folder(tmp_path, where):
    # a study is data: it must not make the tool read files elsewhere (issue rule)
    source = (CONFIGS / "argon_lj_table.csv").read_text()
    study_dir = tmp_path / "study"
    (study_dir / "tables").mkdir(parents=True)
    (study_dir / "tables" / "lj.csv").write_text(source)
    (tmp_path / "outside.csv").write_text(source)
    value = {"absolute": str((tmp_path / "outside.csv").resolve()), "parent": "../outside.csv",
             "subfolder": "tables/lj.csv"}[where]
    text = PURE.replace('form = "lennard-jones"\nepsilon = "119.8 K"\nsigma = "3.405 angstrom"',
                        f'form = "table"\ntable_file = "{value}"')
    path = study_dir / "study.toml"
    path.write_text(text)
    if where == "subfolder":
        assert read_study(path).gas.pairs_K_angstrom.pots[0][0].name == "table"
    else:
        with pytest.raises(StudyError, match="table_file.*(absolute|outside)"):
            read_study(path)


def test_every_example_validates():
    files = sorted(CONFIGS.glob("*.toml"))
    assert len(files) >= 6
    forms = set()
    for path in files:
        study = read_study(path)
        assert study.state_points(), path
        forms.add(study.gas.pairs_K_angstrom.pots[0][0].name)
        if study.gas.n_species > 1:
            forms.add("mixture")
    assert {"lennard-jones", "mie", "exp-6", "table", "mixture"} <= forms


def test_k_ij_by_species_names(tmp_path):
    named = MIXTURE.replace("k_ij = 0.02", 'k_ij = { "oxygen-nitrogen" = 0.02 }')
    cross = read_study(write(tmp_path, named)).gas.pairs_K_angstrom.pots[0][1]
    # the same Lorentz-Berthelot cross term as the plain number (docs/physics.md section 7)
    assert cross.epsilon == pytest.approx(0.98 * math.sqrt(95.05 * 118.0), rel=1e-13)
    with pytest.raises(StudyError, match="unknown species 'oxygn'.*did you mean 'oxygen'"):
        read_study(write(tmp_path, MIXTURE.replace("k_ij = 0.02",
                                                   'k_ij = { "oxygn-nitrogen" = 0.02 }')))
    with pytest.raises(StudyError, match="not two species names"):
        read_study(write(tmp_path, MIXTURE.replace("k_ij = 0.02", 'k_ij = { "oxygen" = 0.02 }')))


@pytest.mark.parametrize("kind, fragment", [("directory", "is a directory"),
                                            ("fifo", "not a regular file"),
                                            ("missing", "does not exist")])
def test_heat_capacity_file_must_be_a_regular_file(tmp_path, kind, fragment):
    # a pipe would be read for ever; each case names the key, the value and the problem
    target = tmp_path / "cv.csv"
    if kind == "directory":
        target.mkdir()
    elif kind == "fifo":
        os.mkfifo(target)
    with pytest.raises(StudyError, match=f"ideal_heat_capacity' = 'cv.csv'.*{fragment}"):
        read_study(write(tmp_path, PURE.replace('"1.5 R"', '"cv.csv"')))
