"""A catalogue of bad inputs fed to the study parser, the CSV readers and the commands.

For each: exit status 2, one error line naming the file, the key and the value, no
traceback, and nothing written (the working directory, ``--out`` and ``runs/`` stay as
they were).  What counts as bad comes from the study-file reference in README.md and
from physics (close packing rho sigma^3 = sqrt(2): common practice, no source).
"""
import pytest

from mdsim.cli import main

GOOD = {
    "study": {"name": '"bad"'},
    "gas": {"molar_mass": '"39.948 g/mol"', "ideal_heat_capacity": '"1.5 R"'},
    "potential": {"form": '"lennard-jones"', "epsilon": '"119.8 K"',
                  "sigma": '"3.405 angstrom"', "cutoff": "2.5"},
    "initial": {"temperature": '"150 K"', "density": '"2000 mol/m^3"'},
    "expansion": {"volume_ratio": "2.0"},
    "simulation": {"routes": "[]"},
}

MIXTURE = """
[study]
name = "mix"
[gas]
ideal_heat_capacity = "1.5 R"
[[gas.species]]
name = "a"
mole_fraction = {xa}
molar_mass = "39.948 g/mol"
potential = {{ form = "lennard-jones", epsilon = "119.8 K", sigma = "3.405 angstrom" }}
[[gas.species]]
name = "b"
mole_fraction = {xb}
molar_mass = "83.8 g/mol"
potential = {{ form = "lennard-jones", epsilon = "164 K", sigma = "3.6 angstrom" }}
[initial]
temperature = "150 K"
density = "2000 mol/m^3"
[expansion]
volume_ratio = 2.0
[simulation]
routes = []
"""


def _toml(changes):
    doc = {t: dict(body) for t, body in GOOD.items()}
    for (table, key), value in changes.items():
        body = doc.setdefault(table, {})
        if value is None:
            body.pop(key, None)
        else:
            body[key] = value
    return "\n".join(f"[{t}]\n" + "\n".join(f"{k} = {v}" for k, v in body.items())
                     for t, body in doc.items()) + "\n"


# (id, changes to the good study, words the error line must hold besides the file name)
STUDY_CASES = [
    ("temperature-wrong-unit", {("initial", "temperature"): '"150 bar"'}, ["temperature", "150 bar"]),
    ("temperature-no-unit", {("initial", "temperature"): "150"}, ["temperature", "150"]),
    ("temperature-negative", {("initial", "temperature"): '"-5 K"'}, ["temperature", "-5 K"]),
    ("temperature-zero", {("initial", "temperature"): '"0 K"'}, ["temperature", "0 K"]),
    ("temperature-nan", {("initial", "temperature"): '"nan K"'}, ["temperature", "nan K"]),
    ("temperature-inf", {("initial", "temperature"): '"inf K"'}, ["temperature", "inf K"]),
    ("temperature-huge", {("initial", "temperature"): '"1e300 K"'}, ["temperature", "1e300 K"]),
    ("temperature-toml-nan", {("initial", "temperature"): "nan"}, ["temperature", "nan"]),
    ("density-beyond-close-packing", {("initial", "density"): '"80000 mol/m^3"'},
     ["density", "80000 mol/m^3"]),
    ("density-mass-units", {("initial", "density"): '"1.8 kg/m^3"'}, ["density", "1.8 kg/m^3"]),
    ("density-negative", {("initial", "density"): '"-1 mol/m^3"'}, ["density", "-1 mol/m^3"]),
    ("density-and-pressure", {("initial", "pressure"): '"10 bar"'}, ["pressure"]),
    ("pressure-wrong-unit", {("initial", "density"): None, ("initial", "pressure"): '"22 K"'},
     ["pressure", "22 K"]),
    ("volume-ratio-one", {("expansion", "volume_ratio"): "1.0"}, ["volume_ratio", "1.0"]),
    ("volume-ratio-below-one", {("expansion", "volume_ratio"): "0.5"}, ["volume_ratio", "0.5"]),
    ("volume-ratio-string", {("expansion", "volume_ratio"): '"two"'}, ["volume_ratio", "two"]),
    ("volume-ratio-inf", {("expansion", "volume_ratio"): "inf"}, ["volume_ratio", "inf"]),
    ("volume-ratio-huge", {("expansion", "volume_ratio"): "1e308"}, ["volume_ratio", "1e+308"]),
    ("molar-mass-zero", {("gas", "molar_mass"): '"0 g/mol"'}, ["molar_mass", "0 g/mol"]),
    ("molar-mass-wrong-unit", {("gas", "molar_mass"): '"39.9 K"'}, ["molar_mass", "39.9 K"]),
    ("epsilon-negative", {("potential", "epsilon"): '"-119.8 K"'}, ["epsilon", "-119.8 K"]),
    ("epsilon-a-length", {("potential", "epsilon"): '"3.4 angstrom"'}, ["epsilon", "3.4 angstrom"]),
    ("sigma-zero", {("potential", "sigma"): '"0 angstrom"'}, ["sigma", "0 angstrom"]),
    ("sigma-huge", {("potential", "sigma"): '"1e30 angstrom"'}, ["sigma", "1e30 angstrom"]),
    ("unknown-form", {("potential", "form"): '"morse"'}, ["form", "morse"]),
    ("unknown-key", {("potential", "sigmaa"): '"3 angstrom"'}, ["sigmaa", "sigma"]),
    ("unknown-table", {("potentail", "form"): '"mie"'}, ["potentail"]),
    ("unknown-simulation-key", {("simulation", "particle"): "100"}, ["particle"]),
    ("cutoff-too-small", {("potential", "cutoff"): "0.5"}, ["cutoff", "0.5"]),
    ("cutoff-above-half-box", {("initial", "density"): '"20000 mol/m^3"',
                               ("simulation", "routes"): '["energy"]',
                               ("simulation", "particles"): "32"}, ["particles", "32"]),
    ("mie-missing-exponent", {("potential", "form"): '"mie"',
                              ("potential", "repulsive_exponent"): "12.0"},
     ["attractive_exponent"]),
    ("exp6-steepness-low", {("potential", "form"): '"exp-6"', ("potential", "sigma"): None,
                            ("potential", "r_min"): '"3.8 angstrom"',
                            ("potential", "steepness"): "3.0"}, ["steepness", "3.0"]),
    ("unknown-route", {("simulation", "routes"): '["magic"]'}, ["routes", "magic"]),
    ("target-negative", {("simulation", "target_stderr"): '"-0.1 K"'},
     ["target_stderr", "-0.1 K"]),
    ("cpu-time-wrong-unit", {("simulation", "max_cpu_time"): '"10 K"'}, ["max_cpu_time", "10 K"]),
    ("seed-negative", {("simulation", "seed"): "-1"}, ["seed", "-1"]),
    ("seed-bool", {("simulation", "seed"): "true"}, ["seed", "True"]),
    ("seed-huge", {("simulation", "seed"): "99999999999999999999"},
     ["seed", "99999999999999999999"]),
    ("cv-below-translation", {("gas", "ideal_heat_capacity"): '"1 R"'},
     ["ideal_heat_capacity", "1 R"]),
    ("cv-words", {("gas", "ideal_heat_capacity"): '"lots"'}, ["ideal_heat_capacity", "lots"]),
    # what ideal_heat_capacity counts means something for rigid molecules only
    ("cv-counts-for-atoms", {("gas", "ideal_heat_capacity_counts"): '"vibrations"'},
     ["ideal_heat_capacity_counts", "vibrations", "rigid molecules", "remove it"]),
    ("cv-counts-unknown", {("gas", "ideal_heat_capacity_counts"): '"rotations"'},
     ["ideal_heat_capacity_counts", "rotations", "all motions"]),
    ("name-with-slash", {("study", "name"): '"../evil"'}, ["name", "../evil"]),
    ("table-file-missing", {("potential", "form"): '"table"', ("potential", "epsilon"): None,
                            ("potential", "sigma"): None,
                            ("potential", "table_file"): '"nope.csv"'}, ["table_file", "nope.csv"]),
    ("table-file-a-device", {("potential", "form"): '"table"', ("potential", "epsilon"): None,
                             ("potential", "sigma"): None,
                             ("potential", "table_file"): '"/dev/zero"'},
     ["table_file", "/dev/zero"]),
    ("table-file-outside-not-a-table", {("potential", "form"): '"table"',
                                        ("potential", "epsilon"): None,
                                        ("potential", "sigma"): None,
                                        ("potential", "table_file"): '"/etc/hostname"'},
     ["table_file", "/etc/hostname"]),
    ("table-file-directory", {("potential", "form"): '"table"', ("potential", "epsilon"): None,
                              ("potential", "sigma"): None,
                              ("potential", "table_file"): '".."'}, ["table_file"]),
]


def _snapshot(root):
    return sorted(str(p.relative_to(root)) for p in root.rglob("*"))


def _check_refused(argv, tmp_path, capsys, words, files):
    """Exit 2, one 'mdsim: error:' line naming file and words, nothing new on disk."""
    before = _snapshot(tmp_path)
    status = main(argv)
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert status == 2, captured.err
    assert len(lines) == 1 and lines[0].startswith("mdsim: error: "), captured.err
    assert "Traceback" not in captured.err
    for name in files:
        assert str(name) in lines[0], (name, lines[0])
    for word in words:
        assert word in lines[0], (word, lines[0])
    assert _snapshot(tmp_path) == before  # nothing written, no runs/ either
    assert captured.out == ""


@pytest.mark.parametrize("changes, words", [c[1:] for c in STUDY_CASES],
                         ids=[c[0] for c in STUDY_CASES])
def test_bad_study_is_refused_by_run(changes, words, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    study = tmp_path / "study.toml"
    study.write_text(_toml(changes), encoding="utf-8")
    _check_refused(["run", str(study), "--out", str(tmp_path / "out")], tmp_path, capsys,
                   words, [study])


@pytest.mark.parametrize("xa, xb, words", [("0.5", "0.4", ["mole_fraction", "0.9"]),
                                           ("-0.2", "1.2", ["mole_fraction", "-0.2"]),
                                           ('"half"', "0.5", ["mole_fraction", "half"])],
                         ids=["sum-0.9", "negative", "words"])
def test_bad_mixture_is_refused(xa, xb, words, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    study = tmp_path / "mix.toml"
    study.write_text(MIXTURE.format(xa=xa, xb=xb), encoding="utf-8")
    _check_refused(["virial", str(study)], tmp_path, capsys, words, [study])


FILE_CASES = [
    ("empty", b"", []),
    ("binary", bytes(range(256)) * 4, []),
    ("not-utf8", "[study]\nname = \"caf\xe9\"\n".encode("latin-1"), ["UTF-8"]),
    ("not-toml", b"[study\nname = 1\n", ["TOML"]),
    ("python-code", b"__import__('os').system('touch pwned')\n", ["TOML"]),
]


@pytest.mark.parametrize("content, words", [c[1:] for c in FILE_CASES],
                         ids=[c[0] for c in FILE_CASES])
@pytest.mark.parametrize("command", ["run", "virial"])
def test_bad_study_files_are_refused(command, content, words, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    study = tmp_path / "study.toml"
    study.write_bytes(content)
    _check_refused([command, str(study)], tmp_path, capsys, words, [study])


def test_a_study_that_is_a_directory_or_missing(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "adir").mkdir()
    _check_refused(["run", str(tmp_path / "adir")], tmp_path, capsys, ["directory"],
                   [tmp_path / "adir"])
    _check_refused(["virial", str(tmp_path / "missing.toml")], tmp_path, capsys,
                   ["does not exist"], [tmp_path / "missing.toml"])


def test_bad_command_line_values(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    study = tmp_path / "study.toml"
    study.write_text(_toml({}), encoding="utf-8")
    _check_refused(["run", str(study), "--workers", "0"], tmp_path, capsys, ["--workers", "0"], [])
    _check_refused(["run", str(study), "--on", "magic"], tmp_path, capsys, ["magic"], [])
    _check_refused(["status", str(tmp_path)], tmp_path, capsys, ["tasks.json"], [tmp_path])
    _check_refused(["task", str(tmp_path), "--index", "-1"], tmp_path, capsys, ["--index"], [])
    _check_refused(["frobnicate"], tmp_path, capsys, ["frobnicate"], [])


CSV_CASES = [
    ("empty", b"", "no header"),
    ("binary", bytes(range(256)), "cannot be read"),
    ("not-utf8", "initial_temperature_K\n29\xe9\n".encode("latin-1"), "cannot be read"),
    ("unknown-column", b"temp_K,initial_pressure_bar,volume_ratio,delta_T_K,delta_T_uncertainty_K\n"
                       b"300,10,2,-1,0.1\n", "temp_K"),
    ("ratio-one", b"initial_temperature_K,initial_pressure_bar,volume_ratio,delta_T_K,"
                  b"delta_T_uncertainty_K\n300,10,1.0,-1,0.1\n", "volume_ratio"),
    ("nan-value", b"initial_temperature_K,initial_pressure_bar,volume_ratio,delta_T_K,"
                  b"delta_T_uncertainty_K\nnan,10,2,-1,0.1\n", "initial_temperature_K"),
    ("negative-uncertainty", b"initial_temperature_K,initial_pressure_bar,volume_ratio,delta_T_K,"
                             b"delta_T_uncertainty_K\n300,10,2,-1,-0.1\n", "delta_T_uncertainty_K"),
]


@pytest.mark.parametrize("content, word", [c[1:] for c in CSV_CASES], ids=[c[0] for c in CSV_CASES])
def test_bad_measurement_files_are_refused_by_the_reader(content, word, tmp_path):
    measurements = pytest.importorskip("mdsim.check.measurements")
    from mdsim.errors import StudyError
    path = tmp_path / "data.csv"
    path.write_bytes(content)
    with pytest.raises(StudyError) as exc:
        measurements.read_expansion_data(path)
    text = str(exc.value)
    assert str(path) in text and word in text and "\n" not in text.strip()
