"""Molecular dynamics of non-linear rigid molecules (mdsim.engine.body_integrator, body_md).

The step against a slow NumPy version written here with rotation matrices;
energy conservation and its second order in the time step; equipartition
between translation and rotation (3 + 3); Monte Carlo and MD of propane
(configs/propane.toml, rigid TraPPE-UA) agree on energy and pressure.
"""
import math
from pathlib import Path

import numpy as np
import pytest

from analysis.block_error import block_stderr
from analysis.stats import mean_and_stderr
from mdsim.engine.body_integrator import body_block
from mdsim.engine.body_mc import BodyMCSampler
from mdsim.engine.body_md import BodyMDSampler
from mdsim.engine.body_rotation import rotation_matrices
from mdsim.engine.rigid_md_steps import drift_K_per_ns
from mdsim.errors import SettingError
from mdsim.sampling.body_box import body_box
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
T_K, RHO = 500.0, 2500.0  # supercritical propane, rho sigma^3 = 0.08: about 100 bar


@pytest.fixture(scope="module")
def propane():
    return read_study(CONFIGS / "propane.toml").gas.molecules[0]


def _md(propane, seed=7, **kw):
    b = body_box(propane, T_K, RHO, 64, 3.0, seed=seed, shifted=True)
    return b, BodyMDSampler(b.model, b.centre_ni, b.quat_nq, b.box_i, b.inertia_i,
                            temperature=b.temperature, seed=seed, **kw)


def _axis(k, phi):
    """The rotation matrix of angle phi about coordinate axis k."""
    c, s = math.cos(phi), math.sin(phi)
    a, b = (k + 1) % 3, (k + 2) % 3
    m = np.eye(3)
    m[a, a], m[a, b], m[b, a], m[b, b] = c, -s, s, c
    return m


def numpy_steps(model, r, v, rot, pb, inertia, box, dt, n_steps):
    """Steps of the splitting written with rotation matrices: kick, drift with the rotations
    about the principal axes 1, 2, 3, 2, 1 (Dullweber et al. 1997: each turns the body by
    Q R_k(phi) and its body momentum by R_k(-phi), phi = p_k t / I_k), kick."""
    body = model.site_body_ki

    def forces(r, rot):
        off = np.einsum("nij,sj->nsi", rot, body)
        f, tau = np.zeros_like(r), np.zeros_like(r)
        n = len(r)
        nb = np.array([list(range(i + 1, n)) + [0] * (i + 1) for i in range(n)], dtype=np.int32)
        model.forces(r, off, np.zeros(n, np.int64), box, nb,
                     np.arange(n - 1, -1, -1, dtype=np.int32), f, tau)
        return f, tau

    f, tau = forces(r, rot)
    for _ in range(n_steps):
        for half in range(2):
            if half:
                f, tau = forces(r, rot)
            v = v + 0.5 * dt * f
            pb = pb + 0.5 * dt * np.einsum("nji,nj->ni", rot, tau)
            if half:
                break
            r = r + dt * v
            for k, t in ((0, dt / 2), (1, dt / 2), (2, dt), (1, dt / 2), (0, dt / 2)):
                for n in range(len(r)):
                    phi = pb[n, k] * t / inertia[k]
                    rot[n] = rot[n] @ _axis(k, phi)
                    pb[n] = _axis(k, -phi) @ pb[n]
    return r, v, rot, pb


def test_steps_match_a_numpy_reference(propane):
    # 20 NVE steps of 27 molecules at a dense state, kernel against the NumPy version above:
    # equal to round-off (tolerance 1e-9; the two differ in the order of operations only)
    b = body_box(propane, T_K, 4000.0, 27, 2.6, seed=2, shifted=True)
    md = BodyMDSampler(b.model, b.centre_ni, b.quat_nq, b.box_i, b.inertia_i,
                       temperature=b.temperature, seed=3)
    r, v, q, pb = md.r_ni.copy(), md.v_ni.copy(), md.quat_nq.copy(), md.pb_ni.copy()
    dt, n_steps = md.time_step, 20
    r_ref, v_ref, rot_ref, pb_ref = numpy_steps(b.model, r.copy(), v.copy(),
                                                rotation_matrices(q), pb.copy(), b.inertia_i,
                                                b.box_i, dt, n_steps)
    off, f, tau = md.offset_nsi.copy(), md.f_ni.copy(), md.tau_ni.copy()
    n = len(r)
    nb = np.array([list(range(i + 1, n)) + [0] * (i + 1) for i in range(n)], dtype=np.int32)
    cnt = np.arange(n - 1, -1, -1, dtype=np.int32)
    m = b.model
    done, status = body_block(n_steps, False, dt, r, v, q, pb, off, f, tau, np.ones(n),
                              np.tile(b.inertia_i, (n, 1)), r.copy(), 1e30,
                              np.zeros(n, np.int64), b.box_i, m.site_start_t, m.site_body_ki,
                              m.params_kk, m.form, m.rc, 1, nb, cnt, False, 1.0, 1, 1, 1.0,
                              md.rng, np.zeros(5))
    assert (done, status) == (n_steps, 0)
    assert np.allclose(r, r_ref, atol=1e-9) and np.allclose(v, v_ref, atol=1e-9)
    assert np.allclose(pb, pb_ref, atol=1e-9)
    assert np.allclose(rotation_matrices(q), rot_ref, atol=1e-9)
    assert np.allclose(off, np.einsum("nij,sj->nsi", rot_ref, m.site_body_ki), atol=1e-9)


def test_md_refuses_the_plain_cut(propane):
    b = body_box(propane, T_K, RHO, 64, 3.0, seed=1)
    with pytest.raises(SettingError, match="shifted"):
        BodyMDSampler(b.model, b.centre_ni, b.quat_nq, b.box_i, b.inertia_i, temperature=5.0,
                      seed=1)


@pytest.fixture(scope="module")
def equilibrated(propane):
    b, md = _md(propane)
    md.equilibrate(2000)
    return b, md


def test_nve_conserves_energy_and_shares_it_between_translation_and_rotation(equilibrated):
    b, md = equilibrated
    md.method = "md-nve"
    dt = md.time_step
    out = md.run(400, 20)
    e_t = out["e_conserved"]
    kinetic_t = out["kinetic_trans"] + out["kinetic_rot"]
    # common practice, no source: the conserved energy of a usable NVE run fluctuates by
    # well under 1 % of the kinetic energy's fluctuation (measured 0.2 %)
    assert np.std(e_t) < 0.01 * np.std(kinetic_t)
    # drift below 2 K/ns per molecule (a 1 ns production moves T by < 0.7 K, c_v >= 3 k):
    # the estimate over this 8000-step run (22 ps) scatters by about 1 K/ns (measured)
    drift = drift_K_per_ns(e_t, 20, dt, b.units)
    assert abs(drift) < 2.0, drift
    # equipartition (a fact of the trade): <2 K_trans / (3N - 3)> = <2 K_rot / 3N> in NVE;
    # the difference's standard error from its inefficiency or block means, 3 of them
    diff = out["temperature_trans"] - out["temperature_rot"]
    est = mean_and_stderr(diff, discard_equilibration=False)
    se = max(est.stderr, block_stderr(diff, 5))
    assert abs(est.mean) < 3.0 * se, (est.mean, se)
    # and the check has teeth: a rotor counted with 2 rotational degrees of freedom instead
    # of 3 would be off by half
    assert se < 0.05 * b.temperature
    # second order: the conserved energy's fluctuation falls about 4-fold when dt halves
    # (Hairer, Lubich and Wanner, Geometric Numerical Integration, 2006, ch. IX; measured
    # 3.4 here, the kink of the shifted energy at the cut-off leaves room: 2.5 to 5.5)
    md.time_step = 0.5 * dt
    small = np.std(md.run(100, 40)["e_conserved"])
    md.time_step = dt
    big = np.std(md.run(100, 20)["e_conserved"])
    assert 2.5 < big / small < 5.5, (big, small)


def assert_md_meets_mc(md_out, mc_out, teeth):
    """MD's and Monte Carlo's u_full and pressure agree within 4 combined block standard errors
    (10 blocks), each error below ``teeth`` of the Monte Carlo mean."""
    for key in ("u_full", "pressure"):
        se = math.hypot(block_stderr(md_out[key], 10), block_stderr(mc_out[key], 10))
        assert md_out[key].mean() == pytest.approx(mc_out[key].mean(), abs=4 * se), key
        assert se < teeth * abs(mc_out[key].mean())  # the check has teeth


@pytest.mark.slow
def test_md_and_mc_agree_on_energy_and_pressure(propane):
    # thermostatted MD (shifted model, its plain-cut energy and virial beside) and canonical
    # Monte Carlo (plain cut) of the same state sample the same configurational distribution
    # (a fact of the trade); tolerance 4 combined standard errors from block means (measured
    # over 4000 MD samples: u = -3.211 +- 0.022 epsilon, p = 0.3279 +- 0.0019)
    b, md = _md(propane, seed=5)
    md.equilibrate(2000)
    out = md.run(1500, 10)
    mb = body_box(propane, T_K, RHO, 64, 3.0, seed=5)
    mc = BodyMCSampler(mb.model, mb.centre_ni, mb.quat_nq, mb.type_n, mb.box_i,
                       temperature=mb.temperature, seed=6)
    mc.equilibrate(200)
    o = mc.run(1500, 1)
    assert_md_meets_mc(out, o, 0.03)
    # the thermostat holds both groups at the set temperature (3 block standard errors)
    for key in ("temperature_trans", "temperature_rot"):
        assert out[key].mean() == pytest.approx(b.temperature, abs=3 * block_stderr(out[key], 10))
