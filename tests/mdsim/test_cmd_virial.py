"""`mdsim virial` and `mdsim inversion`: JSON shape and numbers against the analysis package."""
import json
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar

from analysis.expansion import virial_expansion
from analysis.heatcapacity import heat_capacity_from_spec
from analysis.virial_eos import VirialGas
from mdsim.cli import main
from mdsim.cli.cmd_virial import format_virial_table
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
EXAMPLES = sorted(CONFIGS.glob("*.toml"))
EPS_K = 119.8  # argon LJ, Hirschfelder, Curtiss and Bird (1954), from memory


def run_json(capsys, *argv):
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_virial_runs_on_every_example(capsys, path):
    out = run_json(capsys, "virial", str(path), "--json")
    study = read_study(path)
    assert out["study"] == study.name
    assert len(out["state_points"]) == len(study.state_points())
    for rec in out["state_points"]:
        assert set(rec["delta_T_K"]) == {"virial_b2", "virial_b2b3"}
        for route, entry in rec["delta_T_K"].items():
            assert np.isfinite(entry["value"])
            if study.gas.molecules is not None and route == "virial_b2b3":
                assert entry["stderr"] > 0.0  # B3 by Monte Carlo integration
            else:
                assert entry["stderr"] is None
        assert set(rec["virial"]) >= {"B2_m3_mol", "dB2_dT_m3_molK", "B3_m6_mol2",
                                      "dB3_dT_m6_mol2K"}
        assert rec["final"]["source"] == "virial_b2b3"
        assert isinstance(rec["warnings"], list)
    # the text view of the same summary (what 'mdsim virial STUDY' prints; computing it
    # again would double the time of the rigid-molecule examples)
    assert "Delta T, B2 + B3" in "\n".join(format_virial_table(out))


def test_virial_numbers_against_analysis(capsys):
    out = run_json(capsys, "virial", str(CONFIGS / "argon_sweep.toml"), "--json")
    study = read_study(CONFIGS / "argon_sweep.toml")
    g = study.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol)
    cv = heat_capacity_from_spec("1.5 R")
    for rec, sp in zip(out["state_points"], study.state_points()):
        T, p = sp.temperature_K, sp.pressure_Pa
        rho = gas.density_from_pressure(T, p, order=3)
        res = virial_expansion(gas, cv, T, sp.volume_ratio, rho_i=rho, order=3)
        assert rec["initial"]["temperature_K"] == T and rec["initial"]["pressure_Pa"] == p
        # same functions, same inputs: round-off only
        assert rec["delta_T_K"]["virial_b2b3"]["value"] == pytest.approx(res.delta_T_K, rel=1e-10)
        assert rec["delta_T_K"]["virial_b2"]["value"] == pytest.approx(res.delta_T_B2_K, rel=1e-10)
        assert rec["virial"]["B2_m3_mol"] == pytest.approx(gas.B(T), rel=1e-12)
        assert rec["virial"]["B3_m6_mol2"] == pytest.approx(gas.C(T), rel=1e-12)
    # the cooling grows with the fill pressure (ordering of the sweep: pressure inner)
    dT = [rec["delta_T_K"]["virial_b2b3"]["value"] for rec in out["state_points"][:4]]
    assert dT == sorted(dT, reverse=True)


def test_table_potential_reproduces_lennard_jones(capsys):
    lj = run_json(capsys, "virial", str(CONFIGS / "argon.toml"), "--json")["state_points"][0]
    tab = run_json(capsys, "virial", str(CONFIGS / "argon_table.toml"), "--json")["state_points"][0]
    # the table holds the same LJ potential from 0.85 to 12 sigma; beyond 12 sigma it is cut
    # (B2 misses ~0.2 % there, dB2/dT less); 0.2 % on Delta T covers it
    for route in ("virial_b2", "virial_b2b3"):
        assert tab["delta_T_K"][route]["value"] == pytest.approx(
            lj["delta_T_K"][route]["value"], rel=2e-3)


def _lj_b2_reduced(T):
    """B2 / sigma^3 of LJ by scipy quadrature, written out here (no product code)."""
    def f(r):
        return (np.exp(-4.0 * (r ** -12 - r ** -6) / T) - 1.0) * r * r
    return -2.0 * np.pi * (quad(f, 1e-6, 1.0, limit=200)[0] + quad(f, 1.0, 50.0, limit=200)[0])


def test_inversion_temperatures_of_lj_argon(capsys):
    out = run_json(capsys, "inversion", str(CONFIGS / "argon.toml"), "--json")
    # docs/references.md section 2.4: maximum of B2 at T* = 25.15, zero-pressure Joule-Thomson at T* = 6.43
    assert out["joule_inversion_zero_density_K"] == pytest.approx(25.15 * EPS_K, rel=1e-3)
    assert out["joule_thomson_inversion_zero_pressure_K"] == pytest.approx(6.43 * EPS_K, rel=1e-3)
    # and against an independent scipy quadrature (1e-4: numerical derivative of the quadrature)
    t_max = minimize_scalar(lambda T: -_lj_b2_reduced(T), bounds=(15, 40), method="bounded",
                            options={"xatol": 1e-5}).x
    assert out["joule_inversion_zero_density_K"] / EPS_K == pytest.approx(t_max, rel=1e-4)
    h = 1e-4
    t_jt = brentq(lambda T: T * (_lj_b2_reduced(T + h) - _lj_b2_reduced(T - h)) / (2 * h)
                  - _lj_b2_reduced(T), 4.0, 10.0, xtol=1e-8)
    assert out["joule_thomson_inversion_zero_pressure_K"] / EPS_K == pytest.approx(t_jt, rel=1e-4)
    curve = out["joule_inversion_curve"]
    assert curve[0] == {"temperature_K": out["joule_inversion_zero_density_K"],
                        "density_mol_m3": 0.0, "pressure_Pa": 0.0, "source": "virial"}
    assert len(curve) == 1 + 8
    assert all(set(pt) == {"temperature_K", "density_mol_m3", "pressure_Pa", "source"}
               for pt in curve)
    # along the Amagat curve the inversion temperature falls as the density rises
    T = [pt["temperature_K"] for pt in curve]
    assert T == sorted(T, reverse=True)
    assert "free expansion" in out["labels"]["joule_inversion_zero_density_K"]
    assert "throttling" in out["labels"]["joule_thomson_inversion_zero_pressure_K"]
    assert out["simulation"] is None


def test_inversion_options(capsys, tmp_path):
    out = run_json(capsys, "inversion", str(CONFIGS / "argon.toml"), "--json",
                   "--max-density", "2000 mol/m^3", "--points", "3")
    assert [pt["density_mol_m3"] for pt in out["joule_inversion_curve"]] == pytest.approx(
        [0.0, 2000 / 3, 4000 / 3, 2000])
    assert main(["inversion", str(CONFIGS / "argon.toml"), "--max-density", "1e7 mol/m^3"]) == 2
    assert "--max-density" in capsys.readouterr().err
    assert main(["inversion", str(CONFIGS / "argon.toml")]) == 0
    text = capsys.readouterr().out
    assert "Joule-Thomson (throttling)" in text and "Joule (free expansion)" in text


@pytest.mark.slow
def test_inversion_simulated_points_agree_with_virial(capsys):
    from analysis.inversion import joule_sign_virial_Pa
    from mdsim.study.statepoints import virial_gas
    out = run_json(capsys, "inversion", str(CONFIGS / "argon.toml"), "--json", "--simulate",
                   "--simulated-density-count", "1", "--simulated-temperature-count", "2", "--particles", "64",
                   "--samples", "2000", "--seed", "5")
    sim = [pt for pt in out["joule_inversion_curve"] if pt["source"] == "simulation"]
    assert len(sim) == 1 and sim[0]["stderr_K"] > 0
    grid = out["simulation"]["grid"]
    assert len(grid) == 2
    # T (dp/dT)_rho - p from the fluctuation formula against the B2 + B3 series at each sampled
    # state (the series converges there: B3 term <= 5 % of Z); 3 standard errors, and 10 % of
    # the value for the neglected fourth virial term
    study = read_study(CONFIGS / "argon.toml")
    gas, units = virial_gas(study), study.units
    for g in grid:
        virial_red = units.pressure_to_reduced(
            joule_sign_virial_Pa(gas, g["temperature_K"], g["density_mol_m3"], order=3))
        assert abs(g["joule_sign_red"] - virial_red) < (3 * g["joule_sign_stderr_red"]
                                                        + 0.1 * abs(virial_red))
    # the grid brackets the inversion: cooling below it, warming above it (virial signs)
    signs = [joule_sign_virial_Pa(gas, g["temperature_K"], g["density_mol_m3"], order=3)
             for g in grid]
    assert signs[0] > 0 > signs[1]


def test_virial_text_gives_coefficients_in_cm_units(capsys):
    path = str(CONFIGS / "argon.toml")
    rec = run_json(capsys, "virial", path, "--json")["state_points"][0]
    assert main(["virial", path]) == 0
    text = capsys.readouterr().out
    b2_line = next(line for line in text.splitlines() if "B2, dB2/dT at T_i" in line)
    b3_line = next(line for line in text.splitlines() if "B3, dB3/dT at T_i" in line)
    assert b2_line.endswith(" cm^3/(mol K)") and " cm^3/mol, " in b2_line
    assert b3_line.endswith(" cm^6/(mol^2 K)") and " cm^6/mol^2, " in b3_line
    b2_cm3 = float(b2_line.split("T_i")[1].split()[0])
    b3_cm6 = float(b3_line.split("T_i")[1].split()[0])
    # 1 m^3 = 1e6 cm^3; five significant figures printed, so 1e-4 relative
    assert b2_cm3 == pytest.approx(rec["virial"]["B2_m3_mol"] * 1e6, rel=1e-4)
    assert b3_cm6 == pytest.approx(rec["virial"]["B3_m6_mol2"] * 1e12, rel=1e-4)
    # against the independent quadrature above: B2 = N_A sigma^3 B2*(T/eps), sigma 3.405 A
    # (configs/argon.toml); 1e-4 for the five printed figures
    n_a_sigma3_cm3 = 6.02214076e23 * (3.405e-8) ** 3
    assert b2_cm3 == pytest.approx(n_a_sigma3_cm3 * _lj_b2_reduced(295.15 / EPS_K), rel=1e-4)


def test_virial_text_rounds_the_final_temperature_to_its_error():
    from mdsim.cli.cmd_virial import format_virial_table
    rec = {"index": 0, "state_point": {"pressure_Pa": 2.2e6, "density_mol_m3": None,
                                       "temperature_K": 295.15, "volume_ratio": 2.0},
           "initial": {"density_mol_m3": 909.4, "pressure_Pa": 2.2e6, "density_from": None},
           "final": {"temperature_K": 289.6834, "temperature_stderr_K": 0.04237,
                     "pressure_Pa": 1.0866e6, "density_mol_m3": 454.7, "source": "energy"},
           "virial": {"B2_m3_mol": -1.646e-5, "dB2_dT_m3_molK": 2.09e-7,
                      "B3_m6_mol2": 9.5188e-10, "dB3_dT_m6_mol2K": -1.6939e-12,
                      "quantum_correction": False},
           "delta_T_K": {"virial_b2": {"value": -5.4876, "stderr": None}},
           "entropy_generated_J_molK": 5.7, "warnings": []}
    lines = format_virial_table({"study": "s", "state_points": [rec]})
    assert "  B2, dB2/dT at T_i      -16.46 cm^3/mol, 0.209 cm^3/(mol K)" in lines
    assert "  B3, dB3/dT at T_i      951.88 cm^6/mol^2, -1.6939 cm^6/(mol^2 K)" in lines
    # error 0.04237 K -> 0.042 K, the value to the same three decimals
    assert any("T = 289.683 ± 0.042 K, p = 10.866 bar" in line for line in lines)


def test_inversion_text_writes_a_simulated_point_with_its_error():
    from mdsim.cli.cmd_inversion import format_inversion_table
    out = {"study": "s", "joule_inversion_zero_density_K": 3013.28,
           "joule_thomson_inversion_zero_pressure_K": 770.41, "notes": [],
           "joule_inversion_curve": [
               {"temperature_K": 3013.28, "density_mol_m3": 0.0, "pressure_Pa": 0.0,
                "source": "virial"},
               {"temperature_K": 2801.234, "stderr_K": 43.7, "density_mol_m3": 1000.0,
                "pressure_Pa": 2.3e7, "source": "simulation"}]}
    lines = format_inversion_table(out)
    # error 43.7 K -> 44 K (two figures), so the value to whole kelvin
    assert lines[-1].split() == ["2801", "±", "44", "1000", "230", "simulation"]
    assert lines[-2].split() == ["3013.28", "0", "0", "virial"]
    assert "3013.28 K   (maximum of B2)" in lines[1]


def test_virial_and_inversion_take_the_initial_state_from_options(capsys):
    # The options replace [initial] (and its [sweep]); the numbers are those of a study
    # file that says the same (the same functions: round-off only).
    out = run_json(capsys, "virial", str(CONFIGS / "argon_sweep.toml"), "--json",
                   "--temperature", "150 K", "--density", "500 mol/m^3")
    assert len(out["state_points"]) == 1  # the temperature and pressure sweeps replaced
    rec = out["state_points"][0]
    assert rec["initial"]["temperature_K"] == 150.0
    assert rec["initial"]["density_mol_m3"] == 500.0
    study = read_study(CONFIGS / "argon.toml")
    g = study.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol)
    res = virial_expansion(gas, heat_capacity_from_spec("1.5 R"), 150.0,
                           rec["state_point"]["volume_ratio"], rho_i=500.0, order=3)
    assert rec["delta_T_K"]["virial_b2b3"]["value"] == pytest.approx(res.delta_T_K, rel=1e-10)
    assert main(["virial", str(CONFIGS / "argon.toml"), "--pressure", "1 bar",
                 "--density", "5 mol/m^3"]) == 2
    assert main(["virial", str(CONFIGS / "argon.toml"), "--temperature", "-5 K"]) == 2
    assert "--temperature" in capsys.readouterr().err


def test_initial_state_record_says_whether_a_free_expansion_warms_or_cools():
    # Lennard-Jones argon: at zero density the free expansion cools below the maximum of
    # B2, T* = 25.15 (3013 K for epsilon/k = 119.8 K; docs/references.md section 2.4),
    # and warms above it.
    from mdsim.pipeline.inversion_study import initial_state_record
    from mdsim.study import with_initial_state
    argon = read_study(CONFIGS / "argon.toml")
    cold = initial_state_record(with_initial_state(argon, 2900.0, density_mol_m3=1.0))
    hot = initial_state_record(with_initial_state(argon, 3150.0, density_mol_m3=1.0))
    assert cold["free_expansion"] == "cools" and cold["joule_coefficient_K_mol_m3"] < 0.0
    assert hot["free_expansion"] == "warms" and hot["joule_coefficient_K_mol_m3"] > 0.0
    assert cold["pressure_Pa"] == pytest.approx(1.0 * 8.314462618 * 2900.0, rel=1e-3)
