"""Test-body insertion and mixtures for non-linear rigid molecules (every species a rigid body).

The insertion kernel (mdsim.engine.body_insertion) against a slow NumPy sum of the virial
route's independent pair energy (analysis.molecules.pair_energy.pair_energy_rotated) with
the same random draws; the uniform quaternion against the moments of the uniform rotation;
the stage sampler's resume; propane's residual chemical potential (configs/propane.toml,
rigid TraPPE-UA, values from memory) and an invented propane + argon mixture's u_res and p
at gas densities against the models' own virial series (B2 by quadrature over both
rotations, B3 by Monte Carlo integration: analysis.molecules, independent code),

    mu_res,a / kT = 2 rho sum_b x_b B_ab + (3/2) rho^2 sum_bc x_b x_c C_abc

(common practice, no source; tests/mdsim/test_rigid_insertion.py derives it).
"""
import math
from pathlib import Path

import numpy as np
import pytest

from analysis.molecules import MolecularVirialGas, RigidMolecule, Site
from analysis.molecules.pair_energy import pair_energy_rotated
from analysis.molecules.reduced import principal_frame
from analysis.sampled_entropy import residual_entropy
from mdsim.engine import rng
from mdsim.engine.body_insertion import body_insertion_sums, uniform_quaternion
from mdsim.engine.body_mc import BodyMCSampler
from mdsim.engine.body_rotation import rotation_matrices
from mdsim.engine.potentials import LennardJones
from mdsim.errors import StudyError
from mdsim.sampling.body_box import body_mixture_box
from mdsim.sampling.body_insertion_stage import BODY_INSERTION_METHOD
from mdsim.sampling.body_stage import body_mixture_system, body_system
from mdsim.sampling.rigid_insertion_stage import insertion_tails
from mdsim.sampling.state_point import sample_state_point
from mdsim.study.reader import read_study
from mdsim.units import N_A, R_GAS

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
# argon as a Lennard-Jones atom (configs/air_2cljq.toml: Vrabec, Stoll and Hasse 2001,
# values from memory); with propane an INVENTED mixture for the checks, not a real gas's data
ARGON = RigidMolecule("argon", [Site(LennardJones(116.79, 3.3952), (0.0, 0.0, 0.0),
                                     0.039948)])


@pytest.fixture(scope="module")
def propane():
    return read_study(CONFIGS / "propane.toml").gas.molecules[0]


def test_uniform_quaternion_has_the_moments_of_the_uniform_rotation():
    # for rotations uniform over SO(3): <R_ij> = 0 and <R_ij^2> = 1/3 (Haar measure; common
    # practice, no source); 20000 draws give a standard error of 0.004 and 0.002: 5 of them
    state = rng.make_state(11)
    q = np.array([uniform_quaternion(state) for _ in range(20000)])
    assert np.allclose(np.linalg.norm(q, axis=1), 1.0, atol=1e-12)
    r = rotation_matrices(q)
    assert np.abs(r.mean(axis=0)).max() < 5 * math.sqrt(1.0 / 3.0 / 20000)
    assert np.abs((r ** 2).mean(axis=0) - 1.0 / 3.0).max() < 5 * 0.3 / math.sqrt(20000)


def _stirred_mixture(propane, seed):
    """A liquid-like box of the invented mixture (24 propane, 8 argon, rho sigma^3 = 0.25,
    kT = 3 epsilon of CH3) after a few Monte Carlo sweeps, so that bodies come close."""
    eps, sigma = propane.sites[0].potential.epsilon, propane.sites[0].potential.sigma
    rho = 0.25 / ((sigma * 1e-10) ** 3 * N_A)
    box = body_mixture_box([propane, ARGON], [24, 8], 3.0 * eps, rho, 2.0, seed=seed)
    mc = BodyMCSampler(box.model, box.centre_ni, box.quat_nq, box.type_n, box.box_i,
                       temperature=3.0, seed=seed)
    mc.equilibrate(5)
    return box, mc


def _energy_numpy(mols, box, mc, t, x, q):
    """Slow, obvious energy (epsilon) of a test body of type t at centre x (sigma) with
    orientation q: the analysis layer's pair energy (K, angstrom, the study's site frames)
    of every body whose centre is within the cut-off (minimum image)."""
    site = mols[0].sites[0].potential
    d = mc.centre_ni - x
    d -= box.box_i * np.rint(d / box.box_i)
    near = np.flatnonzero(np.sqrt((d ** 2).sum(axis=1)) < box.model.rc)
    frames = [principal_frame(m)[1] for m in mols]
    coms = [m.centre_of_mass_v() for m in mols]
    rot_a = rotation_matrices(q) @ frames[t].T
    u = 0.0
    for j in near:
        b = mc.type_n[j]
        rot_b = rotation_matrices(mc.quat_nq[j]) @ frames[b].T
        # a site sits at centre + R_body p_body = (centre - R com) + R p_site
        d_site = d[j] * site.sigma - rot_b @ coms[b] + rot_a @ coms[t]
        u += float(pair_energy_rotated(mols[t], mols[b], d_site, rot_a, rot_b))
    return u / site.epsilon


def test_insertion_sums_match_numpy_with_the_same_draws(propane):
    # the kernel and the NumPy sum with the same draws: equal to round-off (1e-10) where no
    # two sites overlap; where the NumPy sum finds two sites closer than half their sigma
    # (+inf) the kernel's site repulsion is above 4000 epsilon, so both weights are 0
    box, mc = _stirred_mixture(propane, seed=8)
    m, T, mols = box.model, 3.0, [propane, ARGON]
    for t in (0, 1):  # a propane body and an argon atom
        state = rng.make_state([6, t])
        draws = state.copy()
        s1, s2 = body_insertion_sums(mc.centre_ni, mc.offset_nsi, mc.type_n, mc.box_i,
                                     mc.ncell_i, mc.head_c, mc.next_n, m.site_start_t,
                                     m.site_body_ki, m.params_kk, m.form, m.rc, t, 1.0 / T, 150,
                                     state)
        w = []
        for _ in range(150):  # the kernel draws x, y, z, then the quaternion
            x = np.array([rng.uniform(draws) for _ in range(3)]) * box.box_i
            q = np.array(uniform_quaternion(draws))
            w.append(math.exp(-_energy_numpy(mols, box, mc, t, x, q) / T))
        w = np.array(w)
        assert s1 == pytest.approx(w.sum(), rel=1e-10, abs=1e-12)
        assert s2 == pytest.approx((w * w).sum(), rel=1e-10, abs=1e-12)
        assert np.array_equal(state, draws)  # both advanced the stream by the same draws
        assert np.any(w < 1e-30) and np.sum(w > 1e-3) > 20  # some overlapped, many did not


def test_insertion_tails_average_to_twice_the_tail_per_molecule(propane):
    # sum_a x_a dU_tail,a = 2 u_tail: mu_tail = 2 u_tail of a pure fluid (Frenkel and Smit,
    # Understanding Molecular Simulation, 2nd ed., section 7.2.1), per type of a mixture
    system = body_mixture_system([propane, ARGON], [20, 7], 400.0, 2000.0, 3.0, seed=1)
    tails = np.array(insertion_tails(system))
    u_tail, _ = system.model.tail(system.density, system.fractions_t)
    assert system.fractions_t @ tails == pytest.approx(2.0 * u_tail, rel=1e-12)
    assert tails[0] < tails[1] < 0.0  # three sites attract more than one


def test_body_insertion_stage_resumes_bit_for_bit(tmp_path, propane):
    from test_body_mc import interrupted_and_uninterrupted
    run = dict(n_equilibration=20, n_samples=40, interval=1, seed=[3, 1], checkpoint_every=20,
               insertions=16)
    interrupted_and_uninterrupted(tmp_path / "b.h5", lambda: body_system(propane, 400.0, 700.0,
                                                                         27, 3.0, seed=5),
                                  BODY_INSERTION_METHOD, 4.1, run)


@pytest.fixture(scope="module")
def propane_gas(propane):
    """The model's virial series (30000 Monte Carlo draws of B3)."""
    return MolecularVirialGas([propane], [1.0], n_draws=30000)


def test_propane_chemical_potential_at_20_bar_against_its_virial_series(propane, propane_gas):
    # 400 K, the model's density at 20 bar (B2 + B3, 680 mol/m^3), 64 bodies, 250 samples
    # (seed 4): mu_res / kT = 2 B rho + (3/2) C rho^2 (2 B rho = -0.241, the C term +0.0067);
    # measured -0.2317 +- 0.0067 against -0.2346
    T, gas = 400.0, propane_gas
    rho = gas.density_from_pressure(T, 20e5)
    system = body_system(propane, T, rho, 64, 4.0, seed=1)
    T_red = T / propane.sites[0].potential.epsilon
    run = sample_state_point(system, BODY_INSERTION_METHOD, T_red, n_equilibration=100,
                             n_samples=250, interval=1, seed=4)
    res = residual_entropy(run.samples, T_red, system.density, system.fractions_t,
                           insertion_tails(system), system.n_particles)
    assert res.available
    mu, se = res.mu_res_red / T_red, res.mu_res_stderr_red / T_red
    b_term, c_term = 2.0 * gas.B(T) * rho, 1.5 * gas.C(T) * rho ** 2
    # tolerance: 4 standard errors of the run and of the Monte Carlo C, plus the C term
    # again for the missing D term (its size, and D rho^3 / C rho^2 is about rho B)
    tol = 4.0 * math.hypot(se, 1.5 * gas.C_stderr(T)[0] * rho ** 2) + abs(c_term)
    assert mu == pytest.approx(b_term + c_term, abs=tol)
    assert se < 0.1 * abs(b_term)  # the check has teeth
    # s_res = (u_res - a_res) / T against the series' value; 4 standard errors plus a third
    # of its B3 part for the missing B4 term (measured: -0.124 +- 0.018 against -0.141)
    s3, s2 = (gas.s_res_J_molK(T, rho, k) / R_GAS for k in (3, 2))
    assert res.s_res_red == pytest.approx(s3, abs=4.0 * res.s_res_stderr_red + abs(s3 - s2) / 3)


def test_propane_argon_mixture_u_res_and_p_against_the_mixture_virial_series(propane):
    # the INVENTED mixture 0.75 propane + 0.25 argon at 400 K and the density of 20 bar
    # (646 mol/m^3), 64 bodies (48 + 16), seed 3: measured u_res -542 +- 13 J/mol against
    # -560, p 19.97 +- 0.24 bar against 20.00 (pure propane's series: -820 J/mol); u_res = -R T^2 (rho B' + rho^2 C' / 2) and p = rho R T (1 + B rho
    # + C rho^2) with the mixture's B and C (analysis.molecules: B_ab by rotation quadrature
    # with propane, the Lorentz-Berthelot cross sites); tolerance 4 standard errors plus a
    # third of the B3 part for the missing B4 term (the allowance of test_body_mc.py)
    from mdsim.sampling.rigid import sample_rigid_state
    T, x = 400.0, [0.75, 0.25]
    gas = MolecularVirialGas([propane, ARGON], x, n_draws=30000)
    rho = gas.density_from_pressure(T, 20e5)
    est = sample_rigid_state([propane, ARGON], T, rho, n_molecules=64, cutoff=4.0,
                             equilibration_sweeps=100, samples=400, interval=1, seed=3,
                             counts_t=[48, 16])
    u3, u2 = gas.u_res_J_mol(T, rho, 3), gas.u_res_J_mol(T, rho, 2)
    assert est.u_res_J_mol == pytest.approx(u3, abs=4 * est.u_res_stderr + abs(u3 - u2) / 3)
    p3, p2 = gas.pressure_Pa(T, rho, 3), gas.pressure_Pa(T, rho, 2)
    assert est.pressure_Pa == pytest.approx(p3, abs=4 * est.pressure_stderr + abs(p3 - p2) / 3)
    assert est.u_res_stderr < 0.1 * abs(u3)  # the check has teeth
    # argon is no propane: the pure-propane series is refused by these tolerances
    pure = MolecularVirialGas([propane], [1.0], n_draws=30000).u_res_J_mol(T, rho, 3)
    assert abs(est.u_res_J_mol - pure) > 4 * est.u_res_stderr + abs(u3 - u2) / 3


MIXTURE = """
[study]
name = "propane-argon"
description = "An INVENTED propane + argon mixture, for checks only"
[gas]
name = "propane-argon"
ideal_heat_capacity = "3 R"
ideal_heat_capacity_counts = "vibrations"
[[gas.species]]
name = "propane"
mole_fraction = 0.75
molar_mass = "44.0956 g/mol"
[gas.species.potential]
form = "rigid-molecule"
sites = [
  { form = "lennard-jones", epsilon = "98 K", sigma = "3.75 angstrom", position_angstrom = [-1.291553, -0.266801, 0.0], mass = "15.0345 g/mol" },
  { form = "lennard-jones", epsilon = "46 K", sigma = "3.95 angstrom", position_angstrom = [0.0, 0.571943, 0.0], mass = "14.0266 g/mol" },
  { form = "lennard-jones", epsilon = "98 K", sigma = "3.75 angstrom", position_angstrom = [1.291553, -0.266801, 0.0], mass = "15.0345 g/mol" },
]
[[gas.species]]
name = "argon"
mole_fraction = 0.25
molar_mass = "39.948 g/mol"
potential = { form = "lennard-jones", epsilon = "116.79 K", sigma = "3.3952 angstrom" }
[potential]
source = "invented mixture of TraPPE-UA propane and LJ argon (values from memory)"
[initial]
temperature = "400 K"
pressure = "20 bar"
[expansion]
volume_ratio = 2.0
[simulation]
routes = ROUTES
particles = 64
seed = 7
"""


@pytest.mark.parametrize("routes, change, match", [
    ('["energy", "microcanonical", "direct"]', ('potential = { form = "lennard-jones", epsilon = "116.79 K", sigma = '
                    '"3.3952 angstrom" }', 'potential = { form = "rigid-molecule", '
                    'quadrupole = "1 D angstrom", sites = [{ form = "lennard-jones", epsilon = '
                    '"116.79 K", sigma = "3.3952 angstrom", position_angstrom = [0.0, 0.0, '
                    '-0.5], mass = "19.974 g/mol" }, { form = "lennard-jones", epsilon = '
                    '"116.79 K", sigma = "3.3952 angstrom", position_angstrom = [0.0, 0.0, 0.5],'
                    ' mass = "19.974 g/mol" }] }'), "mixed with the non-linear 'propane'"),
])
def test_what_a_mixture_with_a_nonlinear_molecule_cannot_simulate_is_refused(
        tmp_path, routes, change, match):
    from mdsim.pipeline.plan import plan_tasks
    text = MIXTURE.replace("ROUTES", routes)
    if change:
        assert change[0] in text
        text = text.replace(*change)
    (tmp_path / "mix.toml").write_text(text)
    with pytest.raises(StudyError, match=match):
        plan_tasks(read_study(tmp_path / "mix.toml"))


def test_a_mixture_with_a_nonlinear_molecule_is_taken_by_every_simulation_route(tmp_path):
    # Monte Carlo and MD (tests/mdsim/test_body_md_mixture.py) of every species as a body
    from mdsim.study.molecule import check_simulation_supported
    (tmp_path / "mix.toml").write_text(MIXTURE.replace("ROUTES", '["energy"]'))
    gas = read_study(tmp_path / "mix.toml").gas
    assert check_simulation_supported(gas, "mix.toml", ["energy", "microcanonical",
                                                        "direct"]) is None
