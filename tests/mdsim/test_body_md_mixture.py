"""Molecular dynamics of mixtures of rigid bodies: non-linear molecules with atoms and linear ones
(mdsim.engine.body_md, body_integrator, body_inertia).

A linear molecule as a body has the moments (0, I, I): the body integrator turns it about its
angular momentum, as the linear-molecule integrator (mdsim.engine.rigid_integrator, separate
code) does, and the two must follow the same trajectory.  An INVENTED 0.75 propane + 0.25
argon mixture (configs/propane.toml: rigid TraPPE-UA; argon LJ of configs/air_2cljq.toml,
values from memory) at 400 K and 20 bar: thermostatted MD's u_res and p against the model's
own virial series (analysis.molecules: B2 by quadrature over both rotations, B3 by Monte
Carlo integration, independent code), its energy conservation and equipartition at fixed
energy; propane with nitrogen (configs/nitrogen.toml's sites, no quadrupole: the rigid-body
kernels carry none) keeps the linear bodies' axial momentum at 0 and shares the energy
between their rotations and the translations.
"""
import math
from types import SimpleNamespace
from pathlib import Path

import numpy as np
import pytest

from analysis.block_error import block_stderr
from analysis.molecules import MolecularVirialGas, RigidMolecule, Site
from analysis.stats import mean_and_stderr
from mdsim.engine.body_inertia import body_inertia_table
from mdsim.engine.body_md import BodyMDSampler
from mdsim.engine.body_rotation import rotation_matrices
from mdsim.engine.potentials import LennardJones
from mdsim.engine.rigid_md import RigidMDSampler
from mdsim.engine.rigid_md_steps import drift_K_per_ns
from mdsim.errors import SettingError
from mdsim.sampling.body_box import body_mixture_box
from mdsim.sampling.rigid_box import mixture_box
from mdsim.study.reader import read_study
from mdsim.units import R_GAS

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
# argon as a Lennard-Jones atom (configs/air_2cljq.toml: Vrabec, Stoll and Hasse 2001,
# values from memory); with propane an INVENTED mixture for the checks, not a real gas's data
ARGON = RigidMolecule("argon", [Site(LennardJones(116.79, 3.3952), (0.0, 0.0, 0.0), 0.039948)])


@pytest.fixture(scope="module")
def propane():
    return read_study(CONFIGS / "propane.toml").gas.molecules[0]


@pytest.fixture(scope="module")
def nitrogen():
    """configs/nitrogen.toml's two sites (Vrabec et al. 2001, values from memory) without its
    quadrupole."""
    n2 = read_study(CONFIGS / "nitrogen.toml").gas.molecules[0]
    return RigidMolecule("N2", list(n2.sites))


def _md(molecules, counts, T, rho, rc, seed, **kw):
    b = body_mixture_box(molecules, counts, T, rho, rc, seed=seed, shifted=True)
    return b, BodyMDSampler(b.model, b.centre_ni, b.quat_nq, b.box_i, b.inertia_ti,
                            mass_t=b.mass_t, type_n=b.type_n, temperature=b.temperature,
                            seed=seed, **kw)


def test_a_linear_body_follows_the_linear_molecule_integrator(nitrogen):
    # nitrogen + argon at a liquid-like density (rho sigma^3 = 0.25), 200 steps at fixed
    # energy from the same state: the body integrator (quaternions, body-frame momenta, the
    # linear body turned about its momentum) and the linear one (axes, lab-frame angular
    # momenta) are the same splitting, so they agree to round-off (tolerance 1e-8, measured
    # 2e-13 with angular momenta up to 1.1; a turn about the wrong axis or a wrong moment
    # departs at the first step)
    b, body = _md([nitrogen, ARGON], [48, 16], 300.0, 11000.0, 2.6, seed=4)
    dt = body.time_step
    lin = mixture_box([nitrogen, ARGON], [48, 16], 300.0, 11000.0, 2.6, seed=4, shifted=True)
    assert np.array_equal(lin.type_n, b.type_n)
    rot = rotation_matrices(body.in_given_order("quat_nq"))
    axis, ang = rot[:, :, 0], np.einsum("nij,nj->ni", rot, body.in_given_order("pb_ni"))
    md = RigidMDSampler(lin.model, body.in_given_order("r_ni"), axis, lin.box_i,
                        mass_t=lin.mass_t, inertia_t=lin.inertia_t, type_n=lin.type_n,
                        temperature=None, seed=1, method="md-nve", time_step=dt,
                        momenta=(body.in_given_order("v_ni"), ang))
    body.set_method("md-nve")
    body.run(1, 200)
    md.run(1, 200)
    r, e = md.configuration()
    v, ang = md.momenta()
    rot = rotation_matrices(body.in_given_order("quat_nq"))
    assert np.allclose(body.in_given_order("r_ni"), r, atol=1e-8, rtol=0)
    assert np.allclose(body.in_given_order("v_ni"), v, atol=1e-8, rtol=0)
    assert np.allclose(rot[:, :, 0], e, atol=1e-8, rtol=0)
    assert np.allclose(np.einsum("nij,nj->ni", rot, body.in_given_order("pb_ni")), ang,
                       atol=1e-8, rtol=0)
    assert np.max(np.abs(ang)) > 0.1  # the molecules do turn


def test_moments_that_no_body_can_have_are_refused(propane, nitrogen):
    b = body_mixture_box([propane, nitrogen, ARGON], [2, 2, 2], 300.0, 1000.0, 2.0, seed=1)
    table = body_inertia_table(b.model, b.inertia_ti)
    # a linear body's axial moment is 0 and its other two equal (common practice, no source)
    assert table[1, 0] == 0.0 and table[1, 1] == table[1, 2] > 0.0
    assert np.array_equal(table[0], b.inertia_ti[0]) and not table[2].any()
    for t, bad in ((1, [0.0, 0.5, 1.0]), (2, [0.0, 0.1, 0.1]), (0, [0.0, 0.0, 0.0])):
        wrong = b.inertia_ti.copy()
        wrong[t] = bad
        with pytest.raises(SettingError, match=f"body type {t}"):
            body_inertia_table(b.model, wrong)


@pytest.fixture(scope="module")
def propane_argon(propane):
    """The invented mixture at 400 K and the density of 20 bar (646 mol/m^3), 48 + 16 bodies,
    after 3000 thermostatted steps (5 mean free times)."""
    b, md = _md([propane, ARGON], [48, 16], 400.0, 646.0, 4.0, seed=3)
    md.equilibrate(3000)
    return b, md


def test_propane_argon_md_meets_the_mixture_virial_series(propane, propane_argon):
    # thermostatted MD, 2000 samples 20 steps apart (67 mean free times): measured u_res
    # -548 +- 14 J/mol, p 20.00 +- 0.07 bar against the series' -560 J/mol, 20.00 bar (the
    # body Monte Carlo of the same box: -542 +- 13, 19.97 +- 0.24, docs/physics.md 7a.1);
    # tolerance 4 standard errors plus a third of the B3 part for the missing B4 term, as
    # for the Monte Carlo (tests/mdsim/test_body_insertion.py)
    b, md = propane_argon
    out = md.run(2000, 20)
    T, rho = b.temperature_K, b.density_mol_m3
    gas = MolecularVirialGas([propane, ARGON], [0.75, 0.25], n_draws=30000)
    eps = b.units.epsilon_K * R_GAS
    u = mean_and_stderr(out["u_full"] * eps, discard_equilibration=False)
    u_se = max(u.stderr, block_stderr(out["u_full"] * eps, 10))
    u3, u2 = gas.u_res_J_mol(T, rho, 3), gas.u_res_J_mol(T, rho, 2)
    assert u.mean == pytest.approx(u3, abs=4 * u_se + abs(u3 - u2) / 3)
    assert u_se < 0.05 * abs(u3)  # the check has teeth
    p_Pa = b.units.pressure_to_Pa(out["pressure"])
    p = mean_and_stderr(p_Pa, discard_equilibration=False)
    p_se = max(p.stderr, block_stderr(p_Pa, 10))
    p3, p2 = gas.pressure_Pa(T, rho, 3), gas.pressure_Pa(T, rho, 2)
    assert p.mean == pytest.approx(p3, abs=4 * p_se + abs(p3 - p2) / 3)
    # the thermostat holds translations and the propane rotations at the set temperature
    # (4 block standard errors; measured over seeds 3 to 8: T_rot / T = 0.959 to 1.017, this
    # seed's 0.959 the farthest, 3.4 of its standard errors)
    for key in ("temperature_trans", "temperature_rot"):
        assert out[key].mean() == pytest.approx(b.temperature, abs=4 * block_stderr(out[key], 10))
    assert md.nf_rot == 3 * 48  # argon atoms have no rotation


def assert_nve_holds_and_shares(out, md, box, interval):
    """Fixed-energy samples ``out`` of ``md`` (one every ``interval`` steps) of a
    :func:`body_mixture_box` ``box``: the energy held and shared.

    Common practice, no source: the conserved energy fluctuates by well under 1 % of the
    kinetic energy's fluctuation and drifts by less than 2 K/ns per molecule (the bound of
    test_body_md.py).  Equipartition (a fact of the trade): 2 K_trans / (3N - 3) = 2 K_rot /
    F_rot within 4 standard errors (the larger of the series' own and 5 blocks'), an error
    below 5 % of kT so that the check has teeth.
    """
    e_t, k_t = out["e_conserved"], out["kinetic_trans"] + out["kinetic_rot"]
    assert np.std(e_t) < 0.01 * np.std(k_t)
    assert abs(drift_K_per_ns(e_t, interval, md.time_step, box.units)) < 2.0
    diff = out["temperature_trans"] - out["temperature_rot"]
    est = mean_and_stderr(diff, discard_equilibration=False)
    se = max(est.stderr, block_stderr(diff, 5))
    assert abs(est.mean) < 4.0 * se
    assert se < 0.05 * box.temperature


def test_propane_argon_nve_conserves_energy_and_shares_it(propane_argon):
    # measured: conserved-energy fluctuation 0.14 % of the kinetic one, drift -0.07 K/ns over
    # 30000 steps, T_trans - T_rot = -0.16 +- 0.12 at kT = 4.0; teeth: the argon atoms counted
    # as rotors would put T_rot 25 % low
    b, md = propane_argon
    md.set_method("md-nve")
    assert_nve_holds_and_shares(md.run(1500, 20), md, b, 20)


def test_linear_bodies_keep_no_axial_spin_and_share_the_energy(propane, nitrogen):
    # 32 propane + 32 nitrogen at 300 K and 4000 mol/m^3 (rho sigma^3 = 0.13): thermostatted
    # start, then fixed energy
    b, md = _md([propane, nitrogen], [32, 32], 300.0, 4000.0, 3.0, seed=2)
    md.equilibrate(2000)
    md.set_method("md-nve")
    lin = md.type_n == 1
    # the torque on a sited-on-axis body has no axial part but round-off (the kick projects
    # that out): measured 5e-16 of the torque
    rot = rotation_matrices(md.quat_nq)
    tau_b = np.einsum("nji,nj->ni", rot, md.tau_ni)
    assert np.all(np.abs(tau_b[lin, 0]) <= 1e-12 * np.linalg.norm(tau_b[lin], axis=1) + 1e-300)
    t_trans, t_rot_n2, t_rot_c3 = [], [], []
    for _ in range(300):
        md.run(1, 20)
        k_rot = 0.5 * np.sum(np.where(md.inertia_ni > 0, md.pb_ni ** 2, 0.0)
                             / np.where(md.inertia_ni > 0, md.inertia_ni, 1.0), axis=1)
        t_trans.append(np.sum(md.mass_n * np.sum(md.v_ni ** 2, axis=1)) / md.nf_trans)
        t_rot_n2.append(np.sum(k_rot[lin]) / np.count_nonzero(lin))  # 2 K / 2 N
        t_rot_c3.append(2.0 * np.sum(k_rot[~lin]) / (3 * np.count_nonzero(~lin)))
    assert np.all(md.pb_ni[lin, 0] == 0.0)  # no spin about a linear body's axis
    assert md.nf_rot == 3 * 32 + 2 * 32
    # equipartition (a fact of the trade): each rotation group at the translational
    # temperature within 4 standard errors (block means; measured at kT = 3.06: T_trans 2.91,
    # nitrogen's T_rot 3.04, propane's 2.86, standard errors of the differences 0.17 and
    # 0.16); teeth: nitrogen counted with three rotations would put its T_rot a third low
    t_trans = np.array(t_trans)
    for t_rot in (np.array(t_rot_n2), np.array(t_rot_c3)):
        diff = t_trans - t_rot
        se = max(mean_and_stderr(diff, discard_equilibration=False).stderr,
                 block_stderr(diff, 5))
        assert abs(diff.mean()) < 4.0 * se, (diff.mean(), se)
        assert se < 0.1 * b.temperature
    assert math.isfinite(md.temperature_now())


def test_a_mixture_stage_resumes_bit_for_bit_and_continues_its_types(tmp_path, propane,
                                                                     nitrogen):
    # a fixed-energy stage of 32 propane + 16 nitrogen + 16 argon (a box of 4 neighbour cells
    # a side, so the engine sorts the bodies): interrupted and resumed equal to an
    # uninterrupted run (the checkpoint holds the engine's cell-ordered types, and the resumed
    # neighbour list the build-time cell boundaries); F and the
    # instantaneous temperature count 3 rotations per propane, 2 per nitrogen, none per argon
    # (a fact of the trade); the next stage starts from the types in the system's order
    from mdsim.pipeline.rigid_chain import RigidChain
    from mdsim.sampling import store
    from mdsim.sampling.body_md_stage import BODY_MD_NVE_METHOD
    from mdsim.sampling.body_stage import body_mixture_system
    from test_body_mc import interrupted_and_uninterrupted

    def system():
        return body_mixture_system([propane, nitrogen, ARGON], [32, 16, 16], 400.0, 700.0, 3.0,
                                   seed=5)
    run = dict(n_equilibration=300, n_samples=60, interval=10, seed=[3, 1], checkpoint_every=20,
               start_temperature=4.1, energy=9.7)
    path = tmp_path / "mix.h5"
    interrupted_and_uninterrupted(path, system, BODY_MD_NVE_METHOD, None, run)
    f = 3 * 64 - 3 + 3 * 32 + 2 * 16
    assert store.read_attrs(path)["sampler_kinetic_dof_total"] == f
    s = store.read_samples(path)
    assert np.allclose(s["temperature_inst"], 2.0 * 64 * s["kinetic"] / f, rtol=1e-12)
    state, _ = store.read_checkpoint(path)
    assert np.array_equal(state["type_n"], system().type_n)
    assert not np.array_equal(state["engine_type_n"], state["type_n"])  # the cell order
    chain = RigidChain.__new__(RigidChain)  # only its continue_system, on a fresh system
    chain.make_system = system
    nxt = chain.continue_system(SimpleNamespace(path=path))
    assert np.array_equal(nxt.type_n, system().type_n)


def test_routes_count_the_rotations_the_dynamics_count(tmp_path):
    # the microcanonical and direct routes' F (pipeline.rigid_chain.box_kinetic_dof, from the
    # study's counts) is the MD's own 3N - 3 + F_rot: 3 rotations per propane, none per argon
    # atom (a fact of the trade); 64 bodies of the invented mixture: 48 propane + 16 argon
    from mdsim.pipeline.rigid_chain import box_kinetic_dof
    from mdsim.sampling.body_stage import body_mixture_system
    from test_body_insertion import MIXTURE
    (tmp_path / "mix.toml").write_text(MIXTURE.replace("ROUTES", '["energy"]'))
    study = read_study(tmp_path / "mix.toml")
    f = box_kinetic_dof(SimpleNamespace(study=study, n_particles=64))
    assert f == 3 * 64 - 3 + 3 * 48
    system = body_mixture_system(study.gas.molecules, study.counts(64), 400.0, 646.0, 3.0,
                                 seed=1)
    assert 3 * 64 - 3 + system.rotational_dof == f
