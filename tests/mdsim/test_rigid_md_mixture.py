"""Molecular dynamics of a mixture of rigid linear molecules and atoms: air (configs/air_2cljq.toml).

2CLJQ nitrogen and oxygen with Lennard-Jones argon (Vrabec, Stoll and Hasse 2001, values from
memory).  Checks: the step kernel against a slow NumPy step with per-type masses and moments of
inertia (an atom never turned); equipartition per molecule type and between translation and
rotation in NVT, reached from a start far from it; the conserved energy of NVE; thermostatted
MD against canonical Monte Carlo at air's initial state (295.15 K, 22 bar); the MD routes are
planned for a mixture, and the microcanonical route through the pipeline against the model's
virial route and CoolProp's air (Lemmon et al. 2000; test-only).  The dense-fluid state (rho sigma^3 = 0.3, kT = 4 epsilon of N2,
about 140 K, above the critical temperatures of N2 and O2) makes collisions frequent, so that
the checks are cheap.
"""
import json
import math
import pathlib

import numpy as np
import pytest

from analysis.block_error import block_stderr
from analysis.stats import mean_and_stderr
from mdsim.engine.rigid_md import RigidMDSampler
from mdsim.engine.rigid_md_steps import drift_K_per_ns
from mdsim.errors import SettingError
from mdsim.pipeline.plan import plan_tasks
from mdsim.sampling.rigid import sample_rigid_state
from mdsim.sampling.rigid_box import mixture_box
from mdsim.sampling.rigid_dynamics import sample_rigid_state_md
from mdsim.study.reader import read_study
from mdsim.units import N_A

from test_rigid_md import numpy_steps
from test_rigid_route import check_air_route, run_air

CONFIGS = pathlib.Path(__file__).resolve().parents[2] / "configs"
COUNTS = [28, 20, 16]  # N2, O2, Ar: enough of each for its own temperature
KT = 4.0  # reduced, epsilon of N2
DENSITY = 0.3  # reduced, molecules per sigma^3 of N2
CUTOFF = 2.5


@pytest.fixture(scope="module")
def air():
    """configs/air_2cljq.toml."""
    return read_study(CONFIGS / "air_2cljq.toml")


def _box(air, counts=COUNTS, density=DENSITY):
    units = air.units
    return mixture_box(air.gas.molecules, counts, KT * units.epsilon_K,
                       density / (units.sigma_m ** 3 * N_A), CUTOFF, seed=3, shifted=True)


def _sampler(box, **kw):
    kw.setdefault("temperature", KT)
    return RigidMDSampler(box.model, box.centre_ni, box.axis_ni, box.box_i, mass_t=box.mass_t,
                          inertia_t=box.inertia_t, type_n=box.type_n, seed=5, **kw)


def test_the_box_carries_each_types_mass_and_inertia(air):
    b = _box(air)
    # masses in N2's: O2 31.9988 / 28.0134, Ar 39.948 / 28.0134 g/mol (the study file)
    np.testing.assert_allclose(b.mass_t, [1.0, 31.9988 / 28.0134, 39.948 / 28.0134], rtol=1e-12)
    # a linear rotor of two equal sites at +-L/2: I = m L^2 / 4, here in m_N2 sigma_N2^2
    # (Goldstein, Classical Mechanics, ch. 5); an atom has none
    for t, half in ((0, 0.5232), (1, 0.48495)):
        ratio = half / 3.3211
        assert b.inertia_t[t] == pytest.approx(b.mass_t[t] * ratio ** 2, rel=1e-9)
    assert b.inertia_t[2] == 0.0


def test_mixture_steps_match_a_numpy_reference(air):
    # 30 steps of 24 molecules (all three types) against the slow all-pairs NumPy step with
    # each molecule's own mass and moment of inertia; tolerance: round-off over the steps
    b = _box(air, counts=[12, 8, 4], density=0.1)
    md = _sampler(b, method="md-nve", skin=0.3)
    assert md.nf_rot == 2 * 20  # the 20 rotors; the atoms have no rotation
    r0, e0 = md.configuration()
    v0, l0 = md.momenta()
    md.run(1, 30)
    order = np.argsort(md.id_n)  # the sampler's arrays back in the given order
    mass_n, inertia_n, type_n = md.mass_n[order], md.inertia_n[order], md.type_n[order]
    box = md.box_i[0]
    ref = numpy_steps(md.model, r0, e0, v0, l0, mass_n, inertia_n, box, md.time_step, 30, type_n)
    got = (*md.configuration(), *md.momenta())
    d = got[0] - ref[0]
    np.testing.assert_allclose(d - box * np.rint(d / box), 0.0, atol=1e-9)
    for a, want in zip(got[1:], ref[1:]):
        np.testing.assert_allclose(a, want, rtol=0, atol=1e-9)
    atoms = type_n == 2
    assert np.array_equal(got[1][atoms], e0[atoms])  # an atom's axis is never turned
    assert not np.any(got[3][atoms])  # nor does it gain angular momentum


@pytest.fixture(scope="module")
def thermostatted(air):
    """NVT from a start far from equipartition: argon 4 times too hot, the rotations 4 times
    too cold; the sampler after equilibration and the per-type temperatures of production."""
    b = _box(air)
    v, lm = _sampler(b).momenta()
    atoms = b.type_n == 2
    v[atoms] *= 2.0
    v -= np.sum(b.mass_t[b.type_n][:, None] * v, axis=0) / np.sum(b.mass_t[b.type_n])
    md = _sampler(b, momenta=(v, 0.5 * lm))
    t_trans0, t_rot0 = md.temperatures_by_type()
    assert t_trans0[2] > 2.5 * KT and np.all(t_rot0[:2] < 0.5 * KT)  # the start is far off
    md.equilibrate(1000)
    trans, rot = [], []
    for _ in range(1200):
        md.run(1, 10)
        t_trans, t_rot = md.temperatures_by_type()
        trans.append(t_trans)
        rot.append(t_rot)
    return md, np.array(trans), np.array(rot)


def test_nvt_shares_the_energy_equally_between_types_translations_and_rotations(
        thermostatted):
    # equipartition (common practice, no source): each type's translations (F_t = 3 (N_t -
    # M_t / M)) and each rotor type's rotations (2 N_t) at the thermostat's kT.  The
    # thermostat rescales all translations together and all rotations together, so the
    # share of each type comes from the collisions alone (and from the masses and moments of
    # inertia used in the step).  3 standard errors of each series' mean, the larger of the
    # statistical-inefficiency and the block estimate (the exchange between types is slow:
    # g of 10 to 40 samples, measured; runs of 3000 samples put every type within 0.03 of kT)
    md, trans, rot = thermostatted
    series = {"N2 trans": trans[:, 0], "O2 trans": trans[:, 1], "Ar trans": trans[:, 2],
              "N2 rot": rot[:, 0], "O2 rot": rot[:, 1]}
    for name, x in series.items():
        est = mean_and_stderr(x, False)
        se = max(est.stderr, block_stderr(x, 10))
        assert abs(est.mean - KT) < 3.0 * se, (name, est.mean, se)
        # the error bars mean something: an atom counted with 5 degrees of freedom instead
        # of 3 would read 40 % low, a rotor counted with 3 rotations a third low
        assert se < 0.06 * KT, (name, se)
    assert np.all(np.isnan(rot[:, 2]))  # the atoms have no rotational temperature
    atoms = md.type_n == 2
    assert not np.any(md.l_ni[atoms])


def test_nve_of_the_mixture_conserves_its_energy(air, thermostatted):
    md = thermostatted[0]
    md.set_method("md-nve")
    out = md.run(200, 20)
    e_t, kinetic_t = out["e_conserved"], out["kinetic_trans"] + out["kinetic_rot"]
    # common practice, no source: the conserved energy fluctuates by well under 1 % of the
    # kinetic energy's fluctuation (the pure-nitrogen test's bound)
    assert np.std(e_t) < 0.01 * np.std(kinetic_t)
    # no drift beyond the estimate's scatter: over these 4000 steps of a dense fluid the
    # slope scatters by 0.7 K/ns per molecule between runs (measured; 0.26 K/ns over 20000
    # steps), so 2.5 K/ns; an energy leak (a mass or moment of inertia used in the step but
    # not in the kinetic energy) gives many times more
    drift = drift_K_per_ns(e_t, 20, md.time_step, air.units)
    assert abs(drift) < 2.5, drift


def test_an_atom_with_a_moment_of_inertia_is_refused(air):
    b = _box(air)
    with pytest.raises(SettingError, match="type 2 is an atom"):
        RigidMDSampler(b.model, b.centre_ni, b.axis_ni, b.box_i, mass_t=b.mass_t,
                       inertia_t=[b.inertia_t[0], b.inertia_t[1], 0.01], type_n=b.type_n,
                       temperature=KT, seed=1)


def test_the_molecular_dynamics_routes_take_a_mixture(tmp_path):
    # air by the fixed-energy routes and by the energy route's MD is planned (it was refused
    # while the rigid MD took one kind of molecule); c_v_ig = 0 R vibrational plus the
    # mole-fraction mean of 5/2 R (N2, O2) and 3/2 R (Ar) is the constant classical heat
    # capacity the fixed-energy routes assume.  The density of 22 bar given (the model's
    # B2 + B3 one), so that planning does not integrate B3
    text = (CONFIGS / "air_2cljq.toml").read_text().replace(
        "\nroutes = []", '\nroutes = ["energy", "microcanonical", "direct"]\nsampler = "md"\n'
    ).replace('pressure = "22 bar"', 'density = "900.78 mol/m^3"')
    (tmp_path / "air.toml").write_text(text)
    tasks = plan_tasks(read_study(tmp_path / "air.toml"))
    assert [t["route"] for t in tasks] == ["energy", "microcanonical", "direct"]
    assert tasks[0]["sampler"] == "md"


def test_md_and_monte_carlo_agree_for_air_at_22_bar(air):
    """u_res and p of air at 295.15 K and 22 bar (900.78 mol/m^3, the model's B2 + B3
    density) by thermostatted MD and by canonical Monte Carlo, 100 molecules (78 N2, 21 O2,
    1 Ar), cut-off 3 sigma (common practice, no source: two samplers of one ensemble agree
    within their error bars).  The MD samples the shifted-energy model and reports the plain
    cut plus its tail, as for nitrogen (tests/mdsim/test_rigid_md.py)."""
    T, rho = 295.15, 900.78
    counts = air.counts(100)
    md = sample_rigid_state_md(air.gas.molecules, T, rho, n_molecules=100, cutoff=3.0,
                               counts_t=counts, equilibration_steps=3000, samples=2000,
                               interval=10, seed=2)
    mc = sample_rigid_state(air.gas.molecules, T, rho, n_molecules=100, cutoff=3.0,
                            counts_t=counts, equilibration_sweeps=100, samples=1500, interval=1,
                            seed=2)
    # 3 combined standard errors; the MD's error from runs of 4 seeds scatters as it says
    # (-125 to -132 J/mol, each +-3, against Monte Carlo's -126.5 +- 0.6, measured)
    assert abs(md.u_res_J_mol - mc.u_res_J_mol) < 3 * math.hypot(md.u_res_stderr,
                                                                 mc.u_res_stderr), (md, mc)
    assert abs(md.pressure_Pa - mc.pressure_Pa) < 3 * math.hypot(md.pressure_stderr,
                                                                 mc.pressure_stderr), (md, mc)
    # the error bars mean something: 4 % of u_res (about -126 J/mol); 0.1 bar on 22 (the
    # configurational part of p is about -0.1 bar here, so p checks the kinetic part, rho k T
    # with the mixture's molecules counted once each, and the virial's sign and size)
    assert md.u_res_stderr < 0.04 * abs(mc.u_res_J_mol)
    assert md.pressure_stderr < 0.1e5


@pytest.mark.slow
def test_air_microcanonical_route_through_the_pipeline(tmp_path, monkeypatch):
    # air (2CLJQ N2 and O2, LJ Ar) from 22 bar at 295.15 K doubled by the microcanonical route:
    # the initial state by canonical Monte Carlo, the final state by fixed-energy MD of the
    # mixture with F = 3N - 3 + 2 N_rot = 597 + 2 x 198 kinetic degrees of freedom (156 N2,
    # 42 O2, 2 Ar); against the model's virial route and CoolProp's air as the energy route's
    # test (tests/mdsim/test_rigid_route.py)
    pytest.importorskip("CoolProp.CoolProp")
    rows, run_dir = run_air(tmp_path, monkeypatch, 'routes = ["microcanonical"]\n'
                            'target_stderr = "0.15 K"\nseed = 7')
    check_air_route(rows, "microcanonical")
    task = json.loads((run_dir / "results.json").read_text())
    sim = task["state_points"][0]["simulation"]["microcanonical"]
    assert sim["stopped_by"] == "target"
    assert "F = 993 kinetic degrees of freedom" in (run_dir / "report.md").read_text()


def test_the_energy_routes_md_settings_take_a_rigid_system(air):
    # the energy route's MD settings read the cut-off of the system to choose the Verlet skin;
    # a rigid system has its model's molecular cut-off (sampler = "md" for rigid molecules
    # failed there), and the MD stage sampler takes that skin
    from types import SimpleNamespace
    from mdsim.pipeline.routes.sampler_choice import md_skin, state_md_settings
    from mdsim.sampling.rigid_md_stage import RigidMDStageSampler
    from mdsim.sampling.rigid_stage import mixture_system
    system = mixture_system(air.gas.molecules, [12, 8, 4], 295.15, 900.78, 3.0, seed=1)
    job = SimpleNamespace(study=air, md_time_step=lambda T_red: 0.0017)
    settings = state_md_settings(job, lambda: system, 8.46)
    assert settings["skin"] == md_skin(system.density, 3.0)
    md = RigidMDStageSampler(system, temperature=8.46, seed=1, **settings).md
    assert md.skin == settings["skin"] and md.time_step == 0.0017
