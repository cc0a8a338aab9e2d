"""mdsim check: predictions, z-scores, chi-square, sensitivities, suggestions, the command."""
import json
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import chi2 as chi2_dist

from analysis.expansion import virial_expansion
from analysis.heatcapacity import ConstantHeatCapacity
from analysis.virial_eos import VirialGas
from mdsim.check import (ExpansionModel, chi2_test, model_for_study, rank_candidates,
                         run_check)
from mdsim.cli import main
from mdsim.errors import StudyError
from mdsim.check.measurements import read_expansion_data, read_virial_data
from mdsim.engine.potentials import LennardJones
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
STUDY = CONFIGS / "demo_check.toml"
DATA = CONFIGS / "demo_measurements.csv"
VIRIAL = CONFIGS / "demo_virial.csv"


@pytest.fixture(scope="module")
def study():
    return read_study(STUDY)


@pytest.fixture(scope="module")
def data():
    return read_expansion_data(DATA)


@pytest.fixture(scope="module")
def result(study, data):
    return run_check(study, data, read_virial_data(VIRIAL))


def test_fast_model_matches_virial_expansion(study, data):
    # the spline tables of B2*, B3* against the analysis solver called directly;
    # tolerance 1e-4 K: the splines reproduce B3 to ~1e-5 relative (a few 1e-6 K measured)
    model, theta = model_for_study(study)
    dT, conv = model.delta_T(theta, data.temperature_K, data.volume_ratio, p_Pa=data.pressure_Pa)
    gas = VirialGas(LennardJones(182.0, 3.98), [1.0], [0.157])
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    for k in range(len(data)):
        T, p, _, r = data.state(k)
        ref = virial_expansion(gas, cv, T, r, p_i=p, order=3).delta_T_K
        assert dT[k] == pytest.approx(ref, abs=1e-4)
    assert conv.all()


def test_fast_model_density_rows_and_ideal_limit():
    model = ExpansionModel("lennard-jones", ConstantHeatCapacity.in_units_of_R(1.5))
    gas = VirialGas(LennardJones(120.0, 3.4), [1.0], [0.04])
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    dT, _ = model.delta_T([120.0, 3.4], np.array([200.0]), np.array([2.5]),
                          rho_mol_m3=np.array([800.0]))
    ref = virial_expansion(gas, cv, 200.0, 2.5, rho_i=800.0, order=3).delta_T_K
    assert dT[0] == pytest.approx(ref, abs=1e-4)  # same reason as above
    # an ideal gas does not change temperature: a vanishing density gives Delta T -> 0
    # (Delta T ~ rho: 1e-3 mol/m^3 gives about 1e-6 of the 800 mol/m^3 value)
    tiny, _ = model.delta_T([120.0, 3.4], np.array([200.0]), np.array([2.5]),
                            rho_mol_m3=np.array([1e-3]))
    assert abs(tiny[0]) < 1e-5


def test_check_rows_against_analysis(study, data, result):
    gas = VirialGas(LennardJones(182.0, 3.98), [1.0], [0.157])
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    z = []
    for k, row in enumerate(result["rows"]):
        T, p, _, r = data.state(k)
        ref = virial_expansion(gas, cv, T, r, p_i=p, order=3)
        assert row["predicted_delta_T_K"] == pytest.approx(ref.delta_T_K, rel=1e-12)
        if np.isfinite(ref.delta_T_B2_K):
            assert row["predicted_delta_T_B2_only_K"] == pytest.approx(ref.delta_T_B2_K, rel=1e-12)
        else:  # the B2-only comparison failed in the solver: reported as missing
            assert row["predicted_delta_T_B2_only_K"] is None
        assert row["prediction_stderr_K"] == 0.0 and row["route"] == "virial B2+B3"
        zk = (data.delta_T_K[k] - ref.delta_T_K) / data.delta_T_uncertainty_K[k]
        assert row["z"] == pytest.approx(zk, rel=1e-10)
        z.append(zk)
    c2 = float(np.sum(np.square(z)))
    assert result["check"]["chi2"] == pytest.approx(c2, rel=1e-10)
    assert result["check"]["dof"] == len(data)
    assert result["check"]["p_value"] == pytest.approx(chi2_dist.sf(c2, len(data)), rel=1e-12)
    # the demo's viscosity-style parameters are deliberately off
    assert not result["check"]["consistent"]
    assert "inconsistent" in result["verdict"] and "5% level" in result["verdict"]


def test_chi2_test_against_scipy():
    z = np.array([0.3, -1.2, 2.0, 0.1, -0.4])
    out = chi2_test(z, n_params=2, level=0.05)
    assert out["dof"] == 3
    assert out["p_value"] == pytest.approx(chi2_dist.sf(np.sum(z * z), 3), rel=1e-14)
    assert out["consistent"] == (out["p_value"] >= 0.05)
    with pytest.raises(StudyError, match="at least 3 are needed"):
        chi2_test(z[:2], n_params=2)
    with pytest.raises(StudyError, match="setting 'level'"):
        chi2_test(z, level=1.5)


def test_sensitivity_against_rebuilt_potentials(result, data):
    # central differences of the analysis solver with rebuilt potentials; the
    # tolerance 1e-3 relative covers the O(h^2) difference error with h = 0.1 K, 0.001 A
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    T, p, _, r = data.state(6)

    def dT(eps, sig):
        return virial_expansion(VirialGas(LennardJones(eps, sig), [1.0], [0.157]), cv, T, r,
                                p_i=p, order=3).delta_T_K
    d_eps = (dT(182.1, 3.98) - dT(181.9, 3.98)) / 0.2
    d_sig = (dT(182.0, 3.981) - dT(182.0, 3.979)) / 0.002
    row = result["rows"][6]
    assert row["d_delta_T_d_epsilon_K_per_K"] == pytest.approx(d_eps, rel=1e-3)
    assert row["d_delta_T_d_sigma_K_per_angstrom"] == pytest.approx(d_sig, rel=1e-3)
    # a deeper well cools more: d(Delta T)/d(epsilon) < 0 for this cooling gas
    assert d_eps < 0.0


def test_rank_candidates_linear_model_closed_form():
    # linear model Delta T = a . theta: the Fisher matrix after one more row at a is
    # F + a a^T / s^2; compare with direct determinants and inverses
    F = np.array([[4.0, 1.0], [1.0, 3.0]])
    a = np.array([[0.1, 0.0], [1.0, 0.5], [2.0, 1.0], [0.0, 3.0]])
    s = np.full(4, 0.5)
    det = rank_candidates(F, a, s, "det")
    tr = rank_candidates(F, a, s, "trace")
    for c in range(4):
        Fn = F + np.outer(a[c], a[c]) / s[c] ** 2
        assert det[c] == pytest.approx(np.sqrt(np.linalg.det(F) / np.linalg.det(Fn)), rel=1e-12)
        assert tr[c] == pytest.approx(np.trace(np.linalg.inv(Fn)) / np.trace(np.linalg.inv(F)),
                                      rel=1e-12)
    # a larger sensitivity along the same direction is always preferred
    assert det[2] < det[1] < det[0] and tr[2] < tr[1] < tr[0]
    # a less precise measurement helps less
    assert rank_candidates(F, a[1:2], [1.0])[0] > rank_candidates(F, a[1:2], [0.5])[0]


def test_suggestions_prefer_sensitive_states(study, data):
    out = run_check(study, data, suggest={"temperature_K": (250.0, 420.0),
                                          "pressure_Pa": (5e5, 40e5), "volume_ratio": (2.0, 2.0),
                                          "uncertainty_K": 0.05, "count": 196})
    c = out["suggestions"]["candidates"]
    shrink = [x["shrink"] for x in c]
    assert shrink == sorted(shrink) and all(0.0 < v <= 1.0 for v in shrink)
    # among candidates at one temperature the higher pressure (larger |dDT/dtheta|) ranks first
    at = [x for x in c if x["temperature_K"] == 250.0]
    p_order = [x["pressure_Pa"] for x in at]
    assert p_order == sorted(p_order, reverse=True)


def test_command_writes_files(tmp_path, capsys):
    out = tmp_path / "chk"
    rc = main(["check", str(STUDY), "--data", str(DATA), "--virial-data", str(VIRIAL), "--fit",
               "--out", str(out), "--json"])
    assert rc == 0
    js = json.loads(capsys.readouterr().out)
    assert set(js["fit"]["epsilon_K"]) >= {"value", "stderr"}
    assert set(js["fit"]) >= {"sigma_angstrom", "correlation", "chi2_per_dof", "points_used"}
    assert js["fit"]["points_used"] == 19
    for name in ("check.csv", "check.json", "plots/check_parity.png", "plots/check_residuals.png",
                 "plots/fit_region.png"):
        assert (out / name).is_file()
    lines = (out / "check.csv").read_text().splitlines()
    assert lines[0].startswith("line,label,initial_temperature_K") and len(lines) == 15


def test_command_bad_data_exit_2(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("initial_temperature_K,initial_pressure_bar,volume_ratio,delta_T_K,"
                   "delta_T_uncertainty_K\n300,10,0.8,-1,0.1\n")
    rc = main(["check", str(STUDY), "--data", str(bad), "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert rc == 2 and "line 2, column 'volume_ratio'" in err
    assert not (tmp_path / "o").exists()  # nothing computed, nothing written


def test_runs_directory_reused(tmp_path, study, data):
    run = tmp_path / "run"
    run.mkdir()
    (run / "study.toml").write_text(STUDY.read_text())
    T, p, _, r = data.state(0)
    rec = {"index": 0, "volume_ratio": r,
           "initial": {"temperature_K": T, "pressure_Pa": p, "density_mol_m3": 200.0},
           "delta_T_K": {"energy": {"value": -4.2, "stderr": 0.03}}}
    (run / "results.json").write_text(json.dumps({"state_points": [rec]}))
    out = run_check(study, data, runs_dir=run)
    row = out["rows"][0]
    assert row["route"].startswith("simulation (energy route")
    assert row["predicted_delta_T_K"] == -4.2 and row["prediction_stderr_K"] == 0.03
    z = (data.delta_T_K[0] + 4.2) / np.hypot(data.delta_T_uncertainty_K[0], 0.03)
    assert row["z"] == pytest.approx(z, rel=1e-12)
    assert out["rows"][1]["route"] == "virial B2+B3"


def test_table_route_through_cstable(monkeypatch, study, data):
    import mdsim.cstable.expansion as cst
    calls = []

    def fake(table, eps, sig, M, cv, T, r, p_i_Pa=None, rho_i_mol_m3=None):
        calls.append((eps, sig, M, T, r, p_i_Pa))
        if T > 400.0:
            raise StudyError("outside the table")
        return -1.0, 0.02
    monkeypatch.setattr(cst, "table_delta_T", fake)

    class Table:
        form, shape = "lennard-jones", {}
    out = run_check(study, data, table=Table())
    inside = [r for r, T in zip(out["rows"], data.temperature_K) if T <= 400.0]
    outside = [r for r, T in zip(out["rows"], data.temperature_K) if T > 400.0]
    assert all(r["route"] == "table" and r["prediction_stderr_K"] == 0.02 for r in inside)
    # a state the table does not cover falls back to the virial route, and says so
    assert outside and all(r["route"] == "virial B2+B3" and r["used"] for r in outside)
    assert all("outside the corresponding-states table" in " ".join(r["notes"]) for r in outside)
    assert calls[0][:3] == (182.0, 3.98, pytest.approx(0.157))

    class Mie:
        form, shape = "mie", {}
    with pytest.raises(StudyError, match="table is for the 'mie' form"):
        run_check(study, data, table=Mie())


SIM_STUDY = """
[study]
name = "chk"
[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
cutoff = 2.5
[initial]
temperature = "150 K"
density = "2000 mol/m^3"
[expansion]
volume_ratio = 2.0
[simulation]
routes = ["energy"]
particles = 100
target_stderr = "0.5 K"
seed = 3
"""


@pytest.mark.slow
def test_check_simulates_measured_states_when_the_study_asks(tmp_path, capsys):
    import json as _json
    from analysis.expansion import virial_expansion
    from mdsim.cli import main
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    from mdsim.study.reader import read_study
    study_path = tmp_path / "s.toml"
    study_path.write_text(SIM_STUDY)
    data = tmp_path / "d.csv"
    data.write_text("initial_temperature_K,initial_density_mol_m3,volume_ratio,delta_T_K,"
                    "delta_T_uncertainty_K\n150,2000,2,-14.6,0.3\n")
    out = tmp_path / "out"
    assert main(["check", str(study_path), "--data", str(data), "--out", str(out), "--json",
                 "--quiet"]) == 0
    row = _json.loads(capsys.readouterr().out)["rows"][0]
    assert row["route"].startswith("simulation (energy route")
    assert (out / "simulations" / "row-0002" / "results.json").is_file()
    # the simulated prediction agrees with the B2+B3 route at this low density (rho* = 0.08)
    # within 4 of its standard errors plus the B2 to B2+B3 spread (common practice, no source)
    study = read_study(study_path)
    v = virial_expansion(virial_gas(study), ideal_heat_capacity(study), 150.0, 2.0,
                         rho_i=2000.0, order=3)
    spread = abs(v.delta_T_B2_K - v.delta_T_B2B3_K)
    assert abs(row["predicted_delta_T_K"] - v.delta_T_K) < 4 * row["prediction_stderr_K"] + spread
    # a second check reuses the finished run directory instead of simulating again
    before = (out / "simulations" / "row-0002" / "tasks" / "0000.h5").stat().st_mtime_ns
    assert main(["check", str(study_path), "--data", str(data), "--out", str(out), "--json",
                 "--quiet"]) == 0
    again = _json.loads(capsys.readouterr().out)["rows"][0]
    assert again["predicted_delta_T_K"] == row["predicted_delta_T_K"]
    assert (out / "simulations" / "row-0002" / "tasks" / "0000.h5").stat().st_mtime_ns == before
    # --no-simulate falls back to the virial route
    assert main(["check", str(study_path), "--data", str(data), "--out", str(tmp_path / "o2"),
                 "--json", "--quiet", "--no-simulate"]) == 0
    assert "virial" in _json.loads(capsys.readouterr().out)["rows"][0]["route"]


def test_check_text_rounds_each_value_to_its_error(result):
    from mdsim.cli.cmd_check import format_check
    text = "\n".join(format_check(result))
    # configs/demo_measurements.csv line 5: -3.91072 +- 0.05 K, written -3.911 ± 0.050;
    # line 8: -18.14249 +- 0.1 K, written -18.14 ± 0.10
    assert "  -3.911 ± 0.050 " in text and "  -18.14 ± 0.10 " in text
    assert "+/-" not in text


def test_check_text_writes_fit_parameters_by_the_two_figure_rule(result):
    from mdsim.cli.cmd_check import format_check
    fit = {"form": "lennard-jones", "route": "virial B2+B3", "points_used": 19,
           "parameters": ["epsilon_K"], "correlation": -0.9975, "chi2_per_dof": 0.686,
           "dof": 17, "p_value": 0.82, "verdict": "consistent",
           "epsilon_K": {"value": 170.7049, "stderr": 2.4123, "stderr_scaled": 1.9981}}
    lines = format_check({**result, "fit": fit})
    # 2.4123 -> 2.4 and 1.9981 -> 2.0: one decimal each, the value to match
    assert "  epsilon_K            170.7 ± 2.4   (scaled by sqrt(chi2/dof): 170.7 ± 2.0)" in lines
