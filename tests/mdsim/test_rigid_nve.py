"""Rigid molecules by molecular dynamics in stage files, and the fixed-energy routes for them.

The MD stage sampler (mdsim.sampling.rigid_md_stage) in resumable run files,
thermostatted and at fixed energy; the energy offset of the Ray estimator;
configs/nitrogen.toml through the microcanonical route (fixed-energy MD at
the final density, mdsim.pipeline.routes.rigid_microcanonical) and the
direct route (MD of the expansion, mdsim.pipeline.routes.rigid_direct)
against CoolProp's nitrogen (Span et al. 2000; test-only).
"""
import csv
import json

import numpy as np
import pytest

from analysis.expansion import microcanonical_route
from mdsim.errors import StudyError
from mdsim.pipeline.plan import plan_tasks
from mdsim.sampling import store
from mdsim.study.reader import read_study

from test_rigid_route import (check_route_entropy, coolprop_delta_T, energy_study,
                              interrupted_and_uninterrupted)


@pytest.mark.parametrize("method, temperature, energy, settings", [
    ("rigid-md-nvt", 8.6, None, {"time_step": 0.0017, "thermostat_time": 0.0068}),
    ("rigid-md-nve", None, 20.9, {"start_temperature": 8.6}),
])
def test_rigid_md_stage_resumes_bit_for_bit(tmp_path, method, temperature, energy, settings):
    # the MD stage follows the protocol of sample_state_point: an interrupted run file
    # continues from its checkpoint to the numbers of an uninterrupted run (exact equality)
    run = dict(n_equilibration=100, n_samples=60, interval=5, seed=[3, 1], checkpoint_every=20,
               **settings)
    path = tmp_path / "r.h5"
    resumed, ref = interrupted_and_uninterrupted(path, 20, run, method, temperature, energy)
    s = ref.samples
    if energy is not None:
        # the fixed energy: the shifted model's total u_model + kinetic is conserved to the
        # integrator's error (0.01 epsilon per molecule, 5e-4 of E: a symplectic step's
        # bounded energy error, common practice, no source); u_full + kinetic stays at E to
        # that and the change of the shift's sum (plain cut minus shifted, its standard
        # deviation 0.005 epsilon per molecule in this run: 0.03 is six of them)
        total = s["u_model"] + s["kinetic"]
        assert np.ptp(total) < 0.01
        assert np.allclose(s["u_full"] + s["kinetic"], energy, atol=0.03)
        assert set(resumed.summary["temperature"].as_dict()) >= {"value", "stderr"}
    else:
        assert resumed.summary["temperature"].value == temperature


def test_a_run_off_its_energy_moves_the_ray_temperature_by_offset_over_cv():
    # 100 particles, f = 5, kinetic energy 2.5 per particle: Ray's kT = N K / (F/2 - 1) =
    # 250 / 249; a run 0.05 epsilon per particle above E lowers T by 0.05 / (f/2) = 0.02
    # (first-order energy balance, common practice, no source)
    K = np.full(60, 2.5)
    base = microcanonical_route(K, 100, 5, 1.0, 1.0)
    moved = microcanonical_route(K, 100, 5, 1.0, 1.0, energy_offset_red=(0.05, 0.01))
    assert base.final_temperature_K == pytest.approx(250 / 249, rel=1e-12)
    assert moved.final_temperature_K == pytest.approx(250 / 249 - 0.02, rel=1e-12)
    assert moved.final_temperature_stderr_K == pytest.approx(0.01 / 2.5, rel=1e-12)


@pytest.mark.parametrize("route", ["microcanonical", "direct"])
def test_the_fixed_energy_routes_refuse_a_vibrational_heat_capacity(tmp_path, route):
    # both routes' MD carries the model's 5 kinetic degrees of freedom and no vibration: they
    # take c_v_ig = (f/2) R only, as the microcanonical route of spheres; a vibrational part
    # (CO2's table, here a constant) is refused at planning, naming the route to use
    text = energy_study(tmp_path, routes=f'["{route}"]').read_text().replace(
        'ideal_heat_capacity = "0 R"', 'ideal_heat_capacity = "0.5 R"')
    (tmp_path / "vib.toml").write_text(text)
    with pytest.raises(StudyError, match=f"the {route} route assumes a constant classical "
                       "c_v_ig.*use the energy route"):
        plan_tasks(read_study(tmp_path / "vib.toml"))


@pytest.mark.slow
def test_nitrogen_microcanonical_route_against_coolprop(tmp_path, monkeypatch):
    CP = pytest.importorskip("CoolProp.CoolProp")
    import mdsim.pipeline.report as report
    from mdsim.pipeline.run_study import run_study
    # the report's Joule inversion curve of the molecular virial gas is the virial route's
    # (about 50 s), not this route's: left out, as in tests/mdsim/test_rigid_route.py
    monkeypatch.setattr(report, "run_inversion", lambda vg, records: (None, [], []))
    run_dir = tmp_path / "run"
    run_study(read_study(energy_study(tmp_path, routes='["microcanonical"]')), run_dir,
              workers=1, quiet=True, plots=False)
    rows = {r["route"]: r for r in csv.DictReader((run_dir / "results.csv").open())}
    row = rows["microcanonical"]
    dT, se = float(row["delta_T_K"]), float(row["delta_T_stderr_K"])
    assert row["status"] == "done" and row["n_particles"] == "128"
    ref = coolprop_delta_T(CP)  # CoolProp nitrogen, same U at the doubled volume
    # tolerance: 4 standard errors plus the model's 2 % on Delta T up to 100 bar (the
    # allowance of the energy route's test, tests/mdsim/test_rigid_route.py)
    assert dT == pytest.approx(ref, abs=4 * se + 0.02 * abs(ref))
    assert 0.0 < se <= 0.5  # the target met
    sim = json.loads((run_dir / "results.json").read_text())["state_points"][0]["simulation"]
    assert sim["microcanonical"]["stopped_by"] == "target"
    # the fixed-energy chain is one trajectory: each stage continues the last one's centres,
    # axes, velocities and angular momenta, so the shifted model's energy u_model + kinetic
    # (which the dynamics conserve) carries across the stage boundary to the integrator's
    # bounded error (0.005 epsilon per molecule peak to peak over the 12000 steps of this run;
    # 0.015 allows for more stages; a stage started from other momenta would jump by ~0.1)
    stages = run_dir / "tasks" / "0000.stages"
    names = ["final-state-nve-pilot.h5"] + sorted(
        p.name for p in stages.glob("final-state-nve-[0-9]*.h5"))
    assert len(names) >= 2
    check_route_entropy(row)  # Delta s from the route's end states (insertion at T_f, rho_f)
    totals = []
    for name in names:
        assert store.read_attrs(stages / name)["method"] == "rigid-md-nve"
        s = store.read_samples(stages / name)
        totals.append(s["u_model"] + s["kinetic"])
    assert np.ptp(np.concatenate(totals)) < 0.015


@pytest.mark.slow
def test_nitrogen_direct_route_against_coolprop(tmp_path, monkeypatch):
    CP = pytest.importorskip("CoolProp.CoolProp")
    import mdsim.pipeline.report as report
    from mdsim.pipeline.run_study import run_study
    monkeypatch.setattr(report, "run_inversion", lambda vg, records: (None, [], []))
    run_dir = tmp_path / "run"
    run_study(read_study(energy_study(tmp_path, routes='["direct"]')), run_dir, workers=1,
              quiet=True, plots=False)
    row = {r["route"]: r for r in csv.DictReader((run_dir / "results.csv").open())}["direct"]
    dT, se = float(row["delta_T_K"]), float(row["delta_T_stderr_K"])
    assert row["status"] == "done" and row["n_particles"] == "128"
    ref = coolprop_delta_T(CP)
    # tolerance: 4 standard errors plus the model's 2 % (as for the other routes above)
    assert dT == pytest.approx(ref, abs=4 * se + 0.02 * abs(ref))
    assert 0.0 < se <= 0.5
    # the expansion is one fixed-energy trajectory of the rigid molecules: its stages are
    # rigid-md-nve runs whose shifted-model energy carries across every stage boundary: to the
    # integrator's bounded error (0.0095 epsilon per molecule peak to peak over the 36000
    # steps of this run; 0.02 allows for more stages, a restart from other momenta would
    # jump by ~0.1; the first filling stage is set to the canonical mean)
    stages = run_dir / "tasks" / "0000.stages"
    names = sorted(p.name for p in stages.glob("wall-removed-filling-*.h5")) + sorted(
        p.name for p in stages.glob("wall-removed-relaxed-*.h5"))
    totals = []
    for name in names:
        assert store.read_attrs(stages / name)["method"] == "rigid-md-nve"
        s = store.read_samples(stages / name)
        totals.append(s["u_model"] + s["kinetic"])
    assert len(names) >= 17 and np.ptp(np.concatenate(totals)) < 0.02
    check_route_entropy(row)  # the final state's insertion run starts from the relaxed box
