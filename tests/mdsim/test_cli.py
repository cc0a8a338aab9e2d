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
    # rc = 3 sigma with tails: U/N = -5.1901e-2, p* = 4.1003e-3 (REFERENCES.md)
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
    (["sample", ARGON, "--density", "500 mol/m^3"], "--temperature is required"),
    (["sample", ARGON, "--temperature", "150 K"], "--density"),
    (["sample", ARGON, "--temperature", "150 K", "--density", "500 mol/m^3", "--particles", "x"],
     "not a whole number"),
    (["sample", ARGON, "--temperature", "150 K", "--density", "500 mol/m^3", "--method", "npt"],
     "invalid choice"),
    (["sample", ARGON, "--method", "mc-nve", "--density", "500 mol/m^3"], "--energy is required"),
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
