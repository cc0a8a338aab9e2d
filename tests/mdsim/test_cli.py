"""The command line: `mdsim sample`, JSON output, one-line errors with status 2."""
import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from mdsim.sampling import store
from mdsim.cli import COMMANDS, main

ROOT = Path(__file__).resolve().parents[2]
ARGON = str(ROOT / "configs" / "argon.toml")
K_B, N_A = 1.380649e-23, 6.02214076e23  # CODATA 2018, exact
R = K_B * N_A
SIGMA_M, EPS_K = 3.405e-10, 119.8        # argon LJ, Hirschfelder-Curtiss-Bird (from memory)

FAST = ["--particles", "64", "--samples", "100", "--equilibration", "30", "--seed", "4"]


def si_density(rho_red):
    return rho_red / (N_A * SIGMA_M ** 3)


def test_sample_json_through_main(capsys, tmp_path):
    out_file = tmp_path / "a.h5"
    rc = main(["sample", ARGON, "--temperature", "150 K", "--density", "6000 mol/m^3",
               "--out", str(out_file), "--json"] + FAST)
    assert rc == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("energy_J_mol", "pressure_Pa", "heat_capacity_res_J_molK"):
        assert set(data[key]) == {"value", "stderr"}
        assert set(data["reduced"][key]) == {"value", "stderr"}
        assert math.isfinite(data[key]["value"]) and data[key]["stderr"] > 0
    # SI = reduced x unit (closed forms: R eps/k, eps/sigma^3, R)
    assert data["energy_J_mol"]["value"] == pytest.approx(
        data["reduced"]["energy_J_mol"]["value"] * R * EPS_K, rel=1e-12)
    assert data["pressure_Pa"]["value"] == pytest.approx(
        data["reduced"]["pressure_Pa"]["value"] * K_B * EPS_K / SIGMA_M ** 3, rel=1e-12)
    assert data["heat_capacity_res_J_molK"]["stderr"] == pytest.approx(
        data["reduced"]["heat_capacity_res_J_molK"]["stderr"] * R, rel=1e-12)
    assert data["reduced"]["temperature"]["value"] == pytest.approx(150.0 / EPS_K, rel=1e-12)
    assert store.is_complete(out_file) and data["run_file"] == str(out_file)
    assert store.read_attrs(out_file)["study_name"] == "argon"


@pytest.mark.slow
def test_dilute_lj_gas_against_nist_through_the_command_line():
    # NIST Standard Reference Simulation Website, LJ fluid NVT MC, T* = 0.85, rho* = 0.005,
    # rc = 3 sigma with tails: U/N = -5.1901e-2, p* = 4.1003e-3 (docs/references.md section 4)
    T = f"{0.85 * EPS_K!r} K"
    rho = f"{si_density(0.005)!r} mol/m^3"
    proc = subprocess.run([sys.executable, "-m", "mdsim", "sample", ARGON, "--temperature", T,
                           "--density", rho, "--particles", "200", "--samples", "4000",
                           "--equilibration", "200", "--seed", "1", "--json"],
                          capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 0, proc.stderr
    red = json.loads(proc.stdout)["reduced"]
    u, p = red["energy_J_mol"], red["pressure_Pa"]
    # 4 combined standard errors (ours; NIST's few 1e-4 for U); finite-size effects are
    # negligible in a dilute gas (common practice, no source)
    assert u["value"] == pytest.approx(-5.1901e-2, abs=4 * math.hypot(u["stderr"], 3e-4))
    assert p["value"] == pytest.approx(4.1003e-3, abs=4 * math.hypot(p["stderr"], 3e-6))


def test_text_output(capsys):
    assert main(["sample", ARGON, "--temperature", "150 K", "--density", "6000 mol/m^3"]
                + FAST) == 0
    text = capsys.readouterr().out
    for part in ("configurational energy", "J/mol", "pressure", "Pa", "residual heat capacity",
                 "J/(mol K)", "reduced"):
        assert part in text


def test_mc_nve_reports_heat_capacity_unavailable(capsys):
    assert main(["sample", ARGON, "--method", "mc-nve", "--energy", "1500 J/mol",
                 "--density", "6000 mol/m^3", "--json"] + FAST) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["heat_capacity_res_J_molK"]["value"] is None
    assert "constant energy" in data["heat_capacity_res_J_molK"]["unavailable"]
    assert data["temperature_K"]["value"] > 0


@pytest.mark.parametrize("argv, fragment", [
    (["sample", ARGON, "--temperature", "150 kg", "--density", "500 mol/m^3"], "[mass]"),
    (["sample", ARGON, "--density", "500 mol/m^3"], "option --temperature: required"),
    (["sample", ARGON, "--temperature", "150 K"], "--density"),
    (["sample", ARGON, "--temperature", "150 K", "--density", "500 mol/m^3", "--particles", "x"],
     "not a whole number"),
    (["sample", ARGON, "--temperature", "150 K", "--density", "500 mol/m^3", "--method", "npt"],
     "invalid choice"),
    (["sample", ARGON, "--method", "mc-nve", "--density", "500 mol/m^3"],
     "option --energy: required"),
    (["sample", ARGON, "--temperature", "-5 K", "--density", "500 mol/m^3"],
     "option --temperature = -5"),
    (["sample", ARGON, "--temperature", "150 K", "--density", "500 mol/m^3", "--method", "mc-nve",
      "--energy", "1500 J/mol"], "option --temperature = 150"),
    (["sample", "/nonexistent/study.toml", "--temperature", "1 K", "--density", "1 mol/m^3"],
     "does not exist"),
    (["frobnicate"], "invalid choice"),
    ([], "give a command"),
])
def test_bad_input_one_line_status_2(capsys, argv, fragment):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("mdsim: error: ") and err.count("\n") == 1
    assert fragment in err


def test_subprocess_error_has_no_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(Path(ARGON).read_text().replace("molar_mass", "molar_mas"))
    proc = subprocess.run([sys.executable, "-m", "mdsim", "sample", str(bad), "--temperature",
                           "150 K", "--density", "500 mol/m^3"], capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.startswith("mdsim: error: ") and proc.stderr.count("\n") == 1
    assert "did you mean 'molar_mass'" in proc.stderr and "Traceback" not in proc.stderr


def test_subprocess_json_and_help():
    proc = subprocess.run([sys.executable, "-m", "mdsim", "sample", ARGON, "--temperature",
                           "150 K", "--density", "6000 mol/m^3", "--json"] + FAST,
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr
    assert "pymbar" not in proc.stderr.lower() and "Traceback" not in proc.stderr  # no banner
    assert json.loads(proc.stdout)["method"] == "mc-nvt"
    help_text = subprocess.run([sys.executable, "-m", "mdsim", "--help"], capture_output=True,
                               text=True).stdout
    assert all(name in help_text for name in COMMANDS)


# -- the commands' layout: renamed options, SettingError as the option, one run function --------

def _write_tiny_study(tmp_path):
    from test_tasks import write_study
    return write_study(tmp_path)


@pytest.mark.parametrize("argv, old, new, value", [
    (["run", "STUDY", "--executor", "local"], "--executor", "--on", "local"),
    (["run", "STUDY", "--executor", "array", "--submit"], "--executor", "--on", "array"),
    (["table", "build", "STUDY", "--executor", "dask"], "--executor", "--on", "dask"),
    (["inversion", ARGON, "--simulate", "--sim-densities", "1"], "--sim-densities",
     "--simulated-density-count", "1"),
    (["inversion", ARGON, "--simulate", "--sim-temperatures", "2"], "--sim-temperatures",
     "--simulated-temperature-count", "2"),
])
def test_old_option_spellings_name_the_new_one(argv, old, new, value, tmp_path, capsys,
                                               monkeypatch):
    monkeypatch.chdir(tmp_path)
    study = str(_write_tiny_study(tmp_path))
    argv = [study if a == "STUDY" else a for a in argv]
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err == f"mdsim: error: option {old} is now called {new}: write {new} {value}\n"
    assert not (tmp_path / "runs").exists()  # refused before anything was written


def test_old_option_spellings_are_not_in_the_help(capsys):
    for argv in (["run", "--help"], ["inversion", "--help"], ["table", "build", "--help"]):
        with pytest.raises(SystemExit):
            main(argv)
        text = capsys.readouterr().out
        assert "--executor" not in text and "--sim-" not in text
    with pytest.raises(SystemExit):
        main(["table", "show", "--help"])
    text = capsys.readouterr().out
    assert "T_STAR RHO_STAR" in text and "kT/epsilon" in text and "rho sigma^3" in text


def _fake_run_study(calls, tmp_path):
    """A stand-in for mdsim.pipeline.run_study.run_study that records its arguments."""
    from mdsim.pipeline.run_study import StudyRun

    def fake(study, out_dir=None, **kw):
        calls.append((study.name, str(out_dir), kw))
        tasks = [{"index": 0, "route": "energy", "state_point": {"index": 0}}]
        return StudyRun(run_dir=tmp_path / "r", tasks=tasks, skipped=0, on="local", failed={},
                        summary={"study": study.name, "state_points": []})
    return fake


def test_run_and_demo_go_through_the_same_library_function(tmp_path, capsys, monkeypatch):
    import mdsim.pipeline.run_study as run_study_module
    calls = []
    monkeypatch.setattr(run_study_module, "run_study", _fake_run_study(calls, tmp_path))
    study = _write_tiny_study(tmp_path)
    assert main(["run", str(study), "--out", str(tmp_path / "a"), "--on", "local",
                 "--workers", "3", "--json", "--quiet"]) == 0
    assert json.loads(capsys.readouterr().out) == {"study": "tiny", "state_points": []}
    assert main(["demo", "--out", str(tmp_path / "d"), "--json", "--quiet"]) == 0
    assert json.loads(capsys.readouterr().out) == {"study": "demo-noctium", "state_points": []}
    assert [c[:2] for c in calls] == [("tiny", str(tmp_path / "a")),
                                      ("demo-noctium", str(tmp_path / "d"))]
    run_kw, demo_kw = calls[0][2], calls[1][2]
    assert run_kw["on"] == "local" and run_kw["workers"] == 3 and run_kw["quiet"]
    assert demo_kw.get("on") is None and demo_kw["quiet"]


def test_a_setting_error_from_the_library_names_the_option(tmp_path, capsys, monkeypatch):
    import mdsim.pipeline.run_study as run_study_module
    from mdsim.errors import SettingError

    def refuse(study, out_dir=None, **kw):
        raise SettingError("workers", kw["workers"], "more than this machine can give")
    monkeypatch.setattr(run_study_module, "run_study", refuse)
    study = _write_tiny_study(tmp_path)
    assert main(["run", str(study), "--workers", "7"]) == 2
    assert capsys.readouterr().err == ("mdsim: error: option --workers = 7: more than this "
                                       "machine can give\n")

    def refuse_unmapped(study, out_dir=None, **kw):
        raise SettingError("colour", "red", "not a setting of any option")
    monkeypatch.setattr(run_study_module, "run_study", refuse_unmapped)
    assert main(["run", str(study)]) == 2
    assert capsys.readouterr().err == ("mdsim: error: setting 'colour' = 'red': not a setting "
                                       "of any option\n")


def test_a_task_index_out_of_range_names_the_option(tmp_path, capsys):
    from test_tasks import make_run_dir
    rd, _ = make_run_dir(tmp_path, _write_tiny_study(tmp_path))
    assert main(["task", str(rd.path), "--index", "1"]) == 2
    err = capsys.readouterr().err
    assert err == f"mdsim: error: option --index = 1: '{rd.path}' has tasks 0 to 0\n"


def test_command_modules_are_independent_of_the_dispatcher():
    """Each command module has HELP, add_arguments and run, and imports nothing from mdsim.cli."""
    import ast
    import importlib
    for name in COMMANDS:
        module = importlib.import_module(f"mdsim.cli.cmd_{name}")
        assert COMMANDS[name] is module
        assert isinstance(module.HELP, str) and "\n" not in module.HELP
        assert callable(module.add_arguments) and callable(module.run)
        tree = ast.parse(Path(module.__file__).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                assert node.module != "mdsim.cli", (name, ast.unparse(node))
            if isinstance(node, ast.Import):
                assert all(a.name != "mdsim.cli" for a in node.names), name


def test_sample_text_rounds_each_value_to_its_error():
    from mdsim.cli.cmd_sample import format_sample
    entry = {"value": -1234.5678, "stderr": 12.345}
    out = {"study": "s", "method": "mc-nvt", "particles": 64, "samples": 100, "interval": 1,
           "temperature_K": {"value": 150.0, "stderr": 0.0}, "density_mol_m3": 6000.0,
           "energy_J_mol": entry, "pressure_Pa": {"value": 2.0e6, "stderr": 3.14159e4},
           "heat_capacity_res_J_molK": {"unavailable": "too few samples"},
           "reduced": {"temperature": {"value": 1.2521, "stderr": 0.0}, "density": 0.141,
                       "energy_J_mol": {"value": -1.23994, "stderr": 0.0123986},
                       "pressure_Pa": {"value": 0.1, "stderr": 0.00157}},
           "run_file": None, "resumed": False}
    lines = format_sample(out)
    assert lines[1] == "  temperature             150 (set) K   (reduced 1.2521 (set))"
    # errors to two figures (12.345 -> 12, 31416 -> 31000, 0.0123986 -> 0.012), values to match
    assert lines[3] == ("  configurational energy  -1235 ± 12 J/mol   "
                        "(reduced -1.240 ± 0.012)")
    assert lines[4] == "  pressure                2000000 ± 31000 Pa   (reduced 0.1000 ± 0.0016)"
    assert lines[5] == "  residual heat capacity  unavailable: too few samples"


def test_sample_text_through_main_matches_its_json(capsys):
    from mdsim.numbers import value_with_error
    argv = ["sample", ARGON, "--temperature", "150 K", "--density", "6000 mol/m^3"] + FAST
    assert main(argv + ["--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert main(argv) == 0
    text = capsys.readouterr().out
    e = data["energy_J_mol"]
    assert f"configurational energy  {value_with_error(e['value'], e['stderr'])} J/mol" in text


def test_run_prints_each_state_point_with_rounded_errors(capsys, tmp_path):
    from types import SimpleNamespace
    from mdsim.cli.run_output import print_study_run
    energy = {"index": 0, "delta_T_K": {"energy": {"value": -5.4666, "stderr": 0.04237}},
              "final": {"temperature_K": 289.6834, "temperature_stderr_K": 0.04237,
                        "source": "energy"}}
    virial = {"index": 1, "delta_T_K": {"virial_b2b3": {"value": -10.98765, "stderr": None}},
              "final": {"temperature_K": 284.16235, "temperature_stderr_K": None,
                        "source": "virial_b2b3"}}
    run = SimpleNamespace(summary={"state_points": [energy, virial]}, tasks=[{}], failed=[],
                          run_dir=tmp_path, array_state=None)
    assert print_study_run(run, "s.toml") == 0
    err = capsys.readouterr().err.splitlines()
    # 0.04237 K -> 0.042 K, the values to three decimals; a virial value keeps its figures
    assert err[0] == "state point 0: Delta T = -5.467 ± 0.042 K, T_f = 289.683 ± 0.042 K (energy)"
    assert err[1] == "state point 1: Delta T = -10.988 K, T_f = 284.162 K (virial B2+B3)"
    assert err[2].startswith(f"run directory {tmp_path}: 1 of 1 tasks complete")
