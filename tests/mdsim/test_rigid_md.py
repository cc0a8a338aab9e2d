"""Molecular dynamics of rigid nitrogen (configs/nitrogen.toml, the 2CLJQ model) in a small box.

Checks: the step kernel against a slow NumPy step over all pairs; the
conserved energy's error is second order in dt and shows no drift; in NVE
the energy is shared equally between the 3 translational and the 2
rotational degrees of freedom of a linear molecule (equipartition, a fact
of the trade); canonical MD and Monte Carlo agree on the energy and the
pressure.  The state (300 K, about 100 bar, a reduced density of 0.088) is
a dense gas; the molecular cut-off of 3 sigma is shorter than a production
run would use, to keep the tests cheap (the checks do not depend on it).
"""
import math
from pathlib import Path

import numpy as np
import pytest

from analysis.block_error import block_stderr
from analysis.stats import mean_and_stderr
from mdsim.engine.rigid_md import RigidMDSampler
from mdsim.engine.rigid_md_steps import drift_K_per_ns
from mdsim.errors import SettingError
from mdsim.sampling.rigid import sample_rigid_state
from mdsim.sampling.rigid_box import rigid_box
from mdsim.study import read_study

CONFIG = Path(__file__).resolve().parents[2] / "configs" / "nitrogen.toml"
N_MOLECULES = 100
DENSITY = 0.088  # reduced; about 4000 mol/m^3, 100 bar at 300 K
CUTOFF = 3.0


@pytest.fixture(scope="module")
def nitrogen():
    """The study's N2 molecule, its reduced units and the reduced temperature."""
    gas = read_study(CONFIG).gas
    return dict(molecule=gas.molecules[0], units=gas.units,
                temperature=300.0 / gas.units.epsilon_K)


def _box(nitrogen, n=N_MOLECULES, density=DENSITY, shifted=True):
    return rigid_box(nitrogen["molecule"], 300.0, density * nitrogen["units"].density_mol_m3, n,
                     CUTOFF, seed=1, shifted=shifted)


def _sampler(nitrogen, n=N_MOLECULES, density=DENSITY, centres=None, axes=None, **kw):
    b = _box(nitrogen, n, density)
    kw.setdefault("temperature", b.temperature)
    kw.setdefault("seed", 7)
    return RigidMDSampler(b.model, b.centre_ni if centres is None else centres,
                          b.axis_ni if axes is None else axes, b.box_i, mass_t=[1.0],
                          inertia_t=[b.inertia], **kw)


@pytest.fixture(scope="module")
def equilibrated(nitrogen):
    """An N2 box after canonical equilibration: (centres, axes, velocities, angular momenta)."""
    md = _sampler(nitrogen)
    md.equilibrate(1500)
    return (*md.configuration(), *md.momenta(), md.time_step)


# --- the step against a slow NumPy version -----------------------------------------------

def numpy_forces(model, r, e, box, type_n=None):
    """Forces and torques over all pairs by the model's one-pair method (minimum image)."""
    t = np.zeros(len(r), dtype=int) if type_n is None else type_n
    f, tau = np.zeros_like(r), np.zeros_like(r)
    for i in range(len(r)):
        for j in range(i + 1, len(r)):
            d = r[j] - r[i]
            d -= box * np.rint(d / box)
            _, fb, ta, tb = model.pair(d, e[i], e[j], t[i], t[j])  # zero beyond the cut-off
            f[j] += fb
            f[i] -= fb
            tau[i] += ta
            tau[j] += tb
    return f, tau


def numpy_steps(model, r, e, v, lm, mass_n, inertia_n, box, dt, n_steps, type_n=None):
    """Half kick, drift, free rotation by Rodrigues' formula, half kick; per-molecule masses
    and moments of inertia, an atom's (inertia 0) axis never turned."""
    r, e, v, lm = (x.copy() for x in (r, e, v, lm))
    rotor = inertia_n > 0
    f, tau = numpy_forces(model, r, e, box, type_n)
    for _ in range(n_steps):
        for _half in range(2):
            v += 0.5 * dt * f / mass_n[:, None]
            lm += 0.5 * dt * (tau - np.sum(tau * e, axis=1)[:, None] * e)
            if _half == 0:
                r += dt * v
                w = np.linalg.norm(lm[rotor], axis=1)
                u = lm[rotor] / w[:, None]
                angle = (w * dt / inertia_n[rotor])[:, None]
                e[rotor] = e[rotor] * np.cos(angle) + np.cross(u, e[rotor]) * np.sin(angle)
                f, tau = numpy_forces(model, r, e, box, type_n)
    return r, e, v, lm


def test_steps_match_a_numpy_reference(nitrogen):
    n, density = 40, 0.12  # denser, so that pairs interact strongly within the steps
    md = _sampler(nitrogen, n=n, density=density, method="md-nve", skin=0.3)
    r0, e0 = md.configuration()
    v0, l0 = md.momenta()
    md.run(1, 40)  # 40 steps, a few list rebuilds with this thin skin
    assert md.nlist.n_builds > 1
    box = md.box_i[0]
    ref = numpy_steps(md.model, r0, e0, v0, l0, np.ones(n), np.full(n, md.inertia_n[0]), box,
                      md.time_step, 40)
    got = (*md.configuration(), *md.momenta())
    d = got[0] - ref[0]
    np.testing.assert_allclose(d - box * np.rint(d / box), 0.0, atol=1e-9)  # periodic images
    for a, b in zip(got[1:], ref[1:]):
        np.testing.assert_allclose(a, b, rtol=0, atol=1e-9)


def test_md_refuses_the_plain_cut(nitrogen):
    b = _box(nitrogen, shifted=False)
    with pytest.raises(SettingError, match="shifted"):
        RigidMDSampler(b.model, b.centre_ni, b.axis_ni, b.box_i, mass_t=[1.0],
                       inertia_t=[b.inertia], temperature=1.0, seed=1)


# --- energy conservation -----------------------------------------------------------------

def _nve(nitrogen, equilibrated, dt, n_samples, interval):
    r, e, v, lm, _ = equilibrated
    md = _sampler(nitrogen, centres=r, axes=e, method="md-nve", time_step=dt, momenta=(v, lm))
    return md.run(n_samples, interval)


def test_nve_energy_error_is_second_order(nitrogen, equilibrated):
    dt = equilibrated[-1]
    sd_big = np.std(_nve(nitrogen, equilibrated, dt, 60, 10)["e_conserved"])
    sd_small = np.std(_nve(nitrogen, equilibrated, 0.5 * dt, 60, 20)["e_conserved"])
    # a symmetric second-order splitting: the fluctuation of the conserved energy falls
    # 4-fold when dt halves (Hairer, Lubich and Wanner, Geometric Numerical Integration,
    # 2006, ch. IX); 60 samples and the kink of the shifted pair energy at the cut-off
    # leave room: 3 to 5.3 (measured 4.1 at dt and dt/2, 3.6 at dt/2 and dt/4)
    assert 3.0 < sd_big / sd_small < 5.3, (sd_big, sd_small)


def test_nve_conserves_energy_and_shares_it_between_translation_and_rotation(
        nitrogen, equilibrated):
    dt = equilibrated[-1]
    out = _nve(nitrogen, equilibrated, dt, 200, 40)
    units = nitrogen["units"]
    e_t = out["e_conserved"]
    kinetic_t = out["kinetic_trans"] + out["kinetic_rot"]
    # common practice, no source: the conserved energy of a usable NVE run fluctuates by
    # well under 1 % of the kinetic energy's fluctuation (measured 0.3 %)
    assert np.std(e_t) < 0.01 * np.std(kinetic_t)
    # drift below 0.5 K/ns per molecule: over a 1 ns production it moves the temperature
    # by 0.2 K (c_v >= 5/2 k), below the error of a free-expansion Delta T (common
    # practice, no source); the estimate over this 8000-step run scatters by ~0.1 K/ns
    drift = drift_K_per_ns(e_t, 40, dt, units)
    assert abs(drift) < 0.5, drift
    # equipartition (a fact of the trade): <2 K_trans / (3N - 3)> = <2 K_rot / 2N> in NVE;
    # the difference series' standard error from its statistical inefficiency (or block
    # means, whichever is larger), 3 of them
    diff = out["temperature_trans"] - out["temperature_rot"]
    est = mean_and_stderr(diff, discard_equilibration=False)
    se = max(est.stderr, block_stderr(diff, 5))
    assert abs(est.mean) < 3.0 * se, (est.mean, se)
    # and the error bar is small enough to mean something: a rotor counted with 3
    # rotational degrees of freedom instead of 2 would be off by a third
    assert se < 0.05 * nitrogen["temperature"]


def test_same_seed_same_numbers_also_after_a_checkpoint(nitrogen):
    whole = _sampler(nitrogen, n=40, density=0.12, seed=3)
    first = whole.run(2, 30)
    part = _sampler(nitrogen, n=40, density=0.12, seed=3)
    part.run(1, 30)
    resumed = _sampler(nitrogen, n=40, density=0.12, seed=99)  # another stream, then replaced
    resumed.set_state(part.get_state())
    second = resumed.run(1, 30)
    for key in ("e_conserved", "u_cut", "pressure", "temperature_rot"):
        assert second[key][0] == first[key][1], key


def test_canonical_md_and_monte_carlo_agree(nitrogen, equilibrated):
    """Energy and pressure of the same gas by NVT MD and by canonical Monte Carlo (common
    practice, no source: two samplers of one ensemble agree within their error bars).

    The MD samples the shifted-energy model and reports the plain cut plus its tail; the
    Boltzmann factor of the shift (below 0.03 epsilon per pair at 3 sigma, beta epsilon =
    0.12) moves u_res by about 0.005 epsilon per molecule (from the covariance of the
    energy with the number of pairs inside the cut-off), a fifth of the error bar.
    """
    r, e, v, lm, _ = equilibrated
    md = _sampler(nitrogen, centres=r, axes=e, momenta=(v, lm))
    out = md.run(200, 40)
    units = nitrogen["units"]
    mc = sample_rigid_state(nitrogen["molecule"], 300.0,
                            DENSITY * units.density_mol_m3, n_molecules=N_MOLECULES,
                            cutoff=CUTOFF, equilibration_sweeps=100, samples=200, interval=2,
                            seed=1)
    u = mean_and_stderr(out["u_full"])
    p = mean_and_stderr(out["pressure"])
    u_md, u_se = units.energy_to_J_mol(u.mean), units.energy_to_J_mol(u.stderr)
    p_md, p_se = units.pressure_to_Pa(p.mean), units.pressure_to_Pa(p.stderr)
    # 3 combined standard errors
    assert abs(u_md - mc.u_res_J_mol) < 3 * math.hypot(u_se, mc.u_res_stderr), (u_md, mc)
    assert abs(p_md - mc.pressure_Pa) < 3 * math.hypot(p_se, mc.pressure_stderr), (p_md, mc)
    # and the error bars are tight enough to mean something: 3 % of u_res (about -540 J/mol)
    assert u_se < 0.03 * abs(u_md)


def test_thermostat_refuses_a_start_from_rest(nitrogen):
    b = _box(nitrogen)
    moving, still = np.ones((N_MOLECULES, 3)), np.zeros((N_MOLECULES, 3))
    with pytest.raises(SettingError, match="momenta"):
        RigidMDSampler(b.model, b.centre_ni, b.axis_ni, b.box_i, mass_t=[1.0],
                       inertia_t=[b.inertia], temperature=1.0, seed=1, momenta=(moving, still))


def test_box_must_hold_twice_the_cut_off(nitrogen):
    b = _box(nitrogen, n=27, density=0.2)  # edge 5.1 sigma, cut-off 3
    with pytest.raises(SettingError, match="twice the cut-off"):
        RigidMDSampler(b.model, b.centre_ni, b.axis_ni, b.box_i, mass_t=[1.0],
                       inertia_t=[b.inertia], temperature=1.0, seed=1)
