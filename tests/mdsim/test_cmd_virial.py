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
        for entry in rec["delta_T_K"].values():
            assert entry["stderr"] is None and np.isfinite(entry["value"])
        assert set(rec["virial"]) >= {"B2_m3_mol", "dB2_dT_m3_molK", "B3_m6_mol2",
                                      "dB3_dT_m6_mol2K"}
        assert rec["final"]["source"] == "virial_b2b3"
        assert isinstance(rec["warnings"], list)
    assert main(["virial", str(path)]) == 0
    assert "Delta T, B2 + B3" in capsys.readouterr().out


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
