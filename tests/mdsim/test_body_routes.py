"""Non-linear rigid molecules in the MD routes (configs/propane.toml, rigid TraPPE-UA).

The fixed-energy rigid-body MD stage (mdsim.sampling.body_md_stage,
"rigid-body-md-nve") that the microcanonical and direct routes run; the
kinetic degrees of freedom of a box of non-linear molecules; and the MD of
the energy route's sampler "md" at propane's 20 bar (rho sigma^3 = 0.02),
whose pilot and equilibration are measured in mean free times
(mdsim.pipeline.rigid_chain), against canonical Monte Carlo of the same state.
The microcanonical route through the pipeline (64 molecules) against the
model's virial route; the other routes' Delta T through the pipeline (128
molecules, one to three minutes each) are measured in docs/physics.md
section 7a.7, not run here.
"""
import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from analysis.stats import mean_and_stderr
from mdsim.engine.body_mc import BodyMCSampler, body_lattice_start
from mdsim.engine.body_md import BodyMDSampler
from mdsim.engine.rigid_md_steps import drift_K_per_ns, rigid_time_step
from mdsim.pipeline.rigid_chain import (BODY_EQUILIBRATION_COLLISIONS, BODY_PILOT_COLLISIONS,
                                        box_kinetic_dof)
from mdsim.sampling.body_box import body_box
from mdsim.sampling.body_md_stage import BODY_MD_NVE_METHOD, mean_free_time
from mdsim.sampling.body_stage import body_system
from mdsim.study.reader import read_study

from test_body_mc import interrupted_and_uninterrupted, run_propane_study
from test_body_md import assert_md_meets_mc

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
RHO_20_BAR = 0.0216
"""Propane's reduced density (sigma of CH3) at 400 K and 20 bar: the model's own, found by the
energy route's pressure iteration (measured, 128 molecules)."""


@pytest.fixture(scope="module")
def propane():
    return read_study(CONFIGS / "propane.toml").gas.molecules[0]


def test_kinetic_degrees_of_freedom_of_a_box_of_nonlinear_molecules(propane):
    # 3 translations and 3 rotations per rigid non-linear molecule, less the 3 of the total
    # momentum that MD conserves (a fact of the trade); linear N2 keeps 3 + 2 per molecule
    for config, want in (("propane.toml", 6 * 128 - 3), ("nitrogen.toml", 5 * 128 - 3)):
        job = SimpleNamespace(study=read_study(CONFIGS / config), n_particles=128)
        assert box_kinetic_dof(job) == want


def test_fixed_energy_stage_holds_its_energy_and_resumes_bit_for_bit(tmp_path, propane):
    # a fresh rigid-body-md-nve stage equilibrates with the thermostat at the start
    # temperature, scales the momenta to the energy asked for and goes on at fixed energy
    energy = 12.0  # epsilon per molecule: u_full about -0.5, kinetic (6N - 3)/(2N) kT about 12.5
    run = dict(n_equilibration=300, n_samples=60, interval=10, seed=[3, 1], checkpoint_every=20,
               start_temperature=4.1, energy=energy)
    path = tmp_path / "nve.h5"
    interrupted_and_uninterrupted(path, lambda: body_system(propane, 400.0, 700.0, 27, 3.0,
                                                            seed=5),
                                  BODY_MD_NVE_METHOD, None, run)
    from mdsim.sampling import store
    s = store.read_samples(path)
    attrs = store.read_attrs(path)
    assert attrs["sampler_kinetic_dof_total"] == 6 * 27 - 3
    # the shifted model's total u_model + kinetic is what the dynamics conserve: to the
    # integrator's bounded error (measured ptp 0.002 epsilon per molecule; 0.005 is the
    # allowance of the linear molecules' test, tests/mdsim/test_rigid_nve.py, halved);
    # u_full + kinetic stays at E to that and the change of the shift's sum (plain cut minus
    # shifted; measured within 0.01 here: 0.03, the linear test's allowance)
    assert np.ptp(s["u_model"] + s["kinetic"]) < 0.005
    assert np.allclose(s["u_full"] + s["kinetic"], energy, atol=0.03)
    # the instantaneous temperature is 2K / (6N - 3)
    assert np.allclose(s["temperature_inst"], 2.0 * 27 * s["kinetic"] / (6 * 27 - 3), rtol=1e-12)


@pytest.fixture(scope="module")
def dilute_md(propane):
    """64 propane molecules at the 20-bar density by thermostatted MD as the energy route runs
    it (its time step and thermostat of 4 steps), equilibrated from the lattice for
    BODY_EQUILIBRATION_COLLISIONS mean free times, then 60 of them sampled every 20 steps."""
    b = body_box(propane, 400.0, 1.0, 64, 3.0, seed=4, shifted=True)
    box = np.full(3, (64 / RHO_20_BAR) ** (1 / 3))
    centre, quat = body_lattice_start(64, box, seed=4)
    dt = rigid_time_step(b.temperature, 1.0, b.inertia_i.min())
    md = BodyMDSampler(b.model, centre, quat, box, b.inertia_i, temperature=b.temperature,
                       seed=4, time_step=dt, thermostat_time=4 * dt)
    t_c = mean_free_time(SimpleNamespace(model=b.model, density=RHO_20_BAR), b.temperature)
    steps = t_c / dt
    md.equilibrate(math.ceil(BODY_EQUILIBRATION_COLLISIONS * steps))
    out = md.run(math.ceil(60 * steps / 20), 20)
    return b, box, centre, quat, steps, out


def test_md_equilibrated_in_mean_free_times_meets_monte_carlo_at_20_bar(propane, dilute_md):
    b, box, centre, quat, steps, out = dilute_md
    plain = body_box(propane, 400.0, 1.0, 64, 3.0, seed=4).model  # the plain cut
    mc = BodyMCSampler(plain, centre, quat, np.zeros(64, np.int64), box,
                       temperature=b.temperature, seed=5)
    mc.equilibrate(200)
    o = mc.run(3000, 1)
    # the same configurational distribution (a fact of the trade): MD's plain-cut energy
    # and pressure against Monte Carlo's, 4 combined block standard errors (10 blocks);
    # measured u_full -0.997 +- 0.023 against -1.033 +- 0.008 epsilon
    assert_md_meets_mc(out, o, 0.05)
    # the route's MD pilot spans BODY_PILOT_COLLISIONS mean free times: at least ten of the
    # energy's correlation times (measured 0.8 to 1.2 mean free times), so that its statistical
    # inefficiency, which spaces the production samples, is measured and not missed
    g_steps = mean_and_stderr(out["u_full"], False).g * 20
    assert BODY_PILOT_COLLISIONS * steps > 10 * g_steps, (g_steps, steps)


def test_dilute_fixed_energy_md_drifts_little(dilute_md):
    # the same box at fixed energy (the microcanonical route's final state is at half this
    # density): drift of the conserved energy below 2 K/ns per molecule (a 1 ns run moves T
    # by < 0.7 K, c_v = 3 k; the bound of tests/mdsim/test_body_md.py; measured 0.44 K/ns
    # over this 0.1 ns, 0.02 K/ns over the microcanonical route's 1.6 ns of propane at
    # 10 bar); common practice, no source
    b, box, centre, quat, steps, out = dilute_md
    md = BodyMDSampler(b.model, centre, quat, box, b.inertia_i, temperature=b.temperature,
                       seed=6, method="md-nve")
    md.equilibrate(math.ceil(BODY_EQUILIBRATION_COLLISIONS * steps))
    run = md.run(400, 50)
    assert abs(drift_K_per_ns(run["e_conserved"], 50, md.time_step, b.units)) < 2.0


def rigid_propane(routes, particles, target):
    """An edit of the propane study: ``routes``, ``particles`` and ``target`` (K), and the c_v_ig
    of the rigid model alone (vibrational part "0 R"), which the fixed-energy routes take."""
    def edit(text):
        return text.replace('routes = ["energy"]', f"routes = {routes}").replace(
            "particles = 128", f"particles = {particles}").replace(
            'target_stderr = "0.3 K"', f'target_stderr = "{target} K"').replace(
            '"propane_ideal_cv.csv"', '"0 R"').replace('counts = "all motions"',
                                                       'counts = "vibrations"')
    return edit


def test_microcanonical_route_of_propane_against_its_virial_route(tmp_path, monkeypatch):
    # fixed-energy rigid-body MD at the final density, E from the initial state by Monte
    # Carlo with F = 6N - 3; 64 molecules, 400 K from 20 bar, doubled, c_v_ig = 3 R
    run_dir, rows = run_propane_study(tmp_path, monkeypatch,
                                      edit=rigid_propane('["microcanonical"]', 64, 0.7))
    row = rows["microcanonical"]
    dT, se = float(row["delta_T_K"]), float(row["delta_T_stderr_K"])
    assert row["status"] == "done" and row["n_particles"] == "64"
    assert 0.0 < se <= 0.7  # the target met
    # against the model's own virial route (B2 + B3): 4 standard errors of both, plus a third
    # of the B3 part for the missing B4 term (the allowance of tests/mdsim/test_body_mc.py);
    # measured -16.53 +- 0.65 K against -16.80 K (a target of 0.5 K: -17.43 +- 0.39 K; 128
    # molecules: -16.92 +- 0.24 K). The tolerance, 2.6 K, is wide: this checks that the route
    # runs non-linear molecules end to end; the kinetic degrees of freedom are checked above
    vir, vir2 = rows["virial_b2b3"], rows["virial_b2"]
    v, v_se = float(vir["delta_T_K"]), float(vir["delta_T_stderr_K"] or 0.0)
    assert dT == pytest.approx(v, abs=4 * math.hypot(se, v_se)
                               + abs(v - float(vir2["delta_T_K"])) / 3)
    from mdsim.sampling import store
    stages = run_dir / "tasks" / "0000.stages"
    attrs = store.read_attrs(stages / "final-state-nve-pilot.h5")
    assert attrs["method"] == "rigid-body-md-nve"
    assert attrs["sampler_kinetic_dof_total"] == 6 * 64 - 3
