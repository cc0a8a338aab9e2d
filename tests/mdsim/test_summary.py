"""Per-state-point summaries: virial routes and the JSON record shared by the commands."""
import json
import math
from pathlib import Path

import pytest

from analysis.expansion import virial_expansion
from analysis.heatcapacity import heat_capacity_from_spec
from analysis.virial_eos import VirialGas
from mdsim.errors import StudyError
from mdsim.study.reader import read_study
from mdsim.pipeline.summary import run_summary, state_point_record
from mdsim.pipeline.virial_summary import virial_summary

CONFIGS = Path(__file__).resolve().parents[2] / "configs"


@pytest.fixture(scope="module")
def argon():
    return read_study(CONFIGS / "argon.toml")


def test_virial_summary_matches_the_analysis_package(argon):
    sp = argon.state_points()[0]
    vs = virial_summary(argon, sp)
    # the same solver called directly, from the same initial density
    g = argon.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol)
    cv = heat_capacity_from_spec("1.5 R")
    rho = gas.density_from_pressure(295.15, 22e5, order=3)
    b3 = virial_expansion(gas, cv, 295.15, 2.0, rho_i=rho, order=3)
    b2 = virial_expansion(gas, cv, 295.15, 2.0, rho_i=rho, order=2)
    tight = dict(rel=1e-10)  # same computation, round-off only
    assert vs["initial"]["density_mol_m3"] == pytest.approx(rho, **tight)
    assert vs["initial"]["pressure_Pa"] == 22e5
    assert vs["delta_T_K"]["virial_b2b3"] == {"value": pytest.approx(b3.delta_T_K, **tight),
                                           "stderr": None}
    assert vs["delta_T_K"]["virial_b2"]["value"] == pytest.approx(b2.delta_T_K, **tight)
    assert vs["final"]["temperature_K"] == pytest.approx(b3.final_temperature_K, **tight)
    assert vs["final"]["density_mol_m3"] == pytest.approx(rho / 2.0, **tight)
    assert vs["entropy_generated_J_molK"] == pytest.approx(b3.entropy_generated_J_molK, **tight)
    v = vs["virial"]
    assert v["B2_m3_mol"] == pytest.approx(gas.B(295.15), **tight)
    assert v["dB3_dT_m6_mol2K"] == pytest.approx(gas.dC_dT(295.15), **tight)
    # argon cools in a free expansion at room temperature (fact of the trade, no source), and
    # the entropy generated is near the ideal-gas R ln 2 (closed form; 2 %: the residual part
    # at 22 bar is about 1 %)
    assert vs["delta_T_K"]["virial_b2b3"]["value"] < 0
    assert vs["entropy_generated_J_molK"] == pytest.approx(8.314462618 * math.log(2), rel=0.02)


def test_air_cools_by_about_three_kelvin():
    # Air from about 22 bar at room temperature into an equal evacuated volume cools by
    # about 3 K (common practice, no source); "about" taken as +/- 1 K.
    study = read_study(CONFIGS / "air.toml")
    vs = virial_summary(study, study.state_points()[0])
    assert -4.0 < vs["delta_T_K"]["virial_b2b3"]["value"] < -2.0


def result(dT, s, T_f, rho_f, route_warn=()):
    return {"route": "x", "delta_T_K": {"value": dT, "stderr": s},
            "final_temperature_K": {"value": T_f, "stderr": s},
            "initial_density_mol_m3": 2 * rho_f, "final_density_mol_m3": rho_f,
            "final_pressure_Pa": {"value": 1.0e6, "stderr": 1e3}, "stopped_by": "target",
            "cpu_seconds": 12.0, "n_particles": 500, "warnings": list(route_warn), "notes": []}


def test_record_shape_and_route_preference(argon):
    sp = argon.state_points()[0]
    vs = virial_summary(argon, sp)
    rho_f = vs["initial"]["density_mol_m3"] / 2
    T_b3 = vs["final"]["temperature_K"]
    routes = {"direct": result(-5.3, 0.1, 295.15 - 5.3, rho_f),
              "microcanonical": result(-5.5, 0.05, 295.15 - 5.5, rho_f, ["slow"])}
    rec = state_point_record(argon, sp, routes)
    json.dumps(rec)  # JSON-ready
    assert set(rec) >= {"index", "initial", "final", "delta_T_K", "entropy_generated_J_molK",
                        "warnings", "virial"}
    for key in ("temperature_K", "pressure_Pa", "density_mol_m3"):
        assert key in rec["initial"] and key in rec["final"]
    assert list(rec["delta_T_K"]) == ["virial_b2", "virial_b2b3", "microcanonical", "direct"]
    assert rec["delta_T_K"]["direct"] == {"value": -5.3, "stderr": 0.1}
    # microcanonical is preferred over direct, and over the virial route
    assert rec["final"]["source"] == "microcanonical"
    assert rec["final"]["temperature_K"] == pytest.approx(295.15 - 5.5)
    assert "microcanonical: slow" in rec["warnings"]
    # the energy route beats them all
    routes["energy"] = result(-5.45, 0.02, 295.15 - 5.45, rho_f)
    assert state_point_record(argon, sp, routes)["final"]["source"] == "energy"
    # no simulation: the virial B2+B3 final state
    rec = state_point_record(argon, sp, {})
    assert rec["final"]["source"] == "virial_b2b3"
    assert rec["final"]["temperature_K"] == pytest.approx(T_b3, rel=1e-12)
    assert set(rec["delta_T_K"]) == {"virial_b2", "virial_b2b3"}
    with pytest.raises(StudyError, match="unknown route"):
        state_point_record(argon, sp, {"virial": {}})


def test_disagreement_with_simulation_is_a_warning(argon):
    sp = argon.state_points()[0]
    vs = virial_summary(argon, sp)
    rho_f = vs["initial"]["density_mol_m3"] / 2
    dT = vs["delta_T_K"]["virial_b2b3"]["value"]
    agree = state_point_record(argon, sp, {"energy": result(dT + 0.01, 0.02, 290, rho_f)},
                               virial=vs)
    assert not any("standard errors apart" in w for w in agree["warnings"])
    off = state_point_record(argon, sp, {"energy": result(dT + 1.0, 0.02, 290, rho_f)},
                             virial=vs)
    said = [w for w in off["warnings"] if "standard errors apart" in w]
    # the simulation's value with its error by the two-figure rule (mdsim.numbers)
    assert said and f"the energy route {dT + 1.0:.3f} ± 0.020 K" in said[0]


def test_dense_state_keeps_simulation_results(tmp_path):
    # a liquid-like state given by density: no virial route, the simulation stands
    text = (CONFIGS / "argon.toml").read_text().replace('pressure = "22 bar"',
                                                        'density = "30000 mol/m^3"')
    path = tmp_path / "dense.toml"
    path.write_text(text)
    study = read_study(path)
    sp = study.state_points()[0]
    rec = state_point_record(study, sp, {"energy": result(-40.0, 0.5, 255.0, 15000.0)})
    assert "virial_b2b3" not in rec["delta_T_K"] and "virial_b2" not in rec["delta_T_K"]
    assert any("virial_b2b3: not available" in w for w in rec["warnings"])
    assert rec["final"]["source"] == "energy"
    assert rec["entropy_generated_J_molK"] is None
    assert rec["initial"]["density_mol_m3"] == 30000.0


def test_run_summary(argon):
    sp = argon.state_points()[0]
    out = run_summary(argon, [state_point_record(argon, sp, {})])
    assert out["study"] == "argon"
    assert out["routes"] == ["energy"]
    assert [r["index"] for r in out["state_points"]] == [0]
    assert out["gas"]["potential_form"] == "lennard-jones"
    json.dumps(out)
