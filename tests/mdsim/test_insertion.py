"""Test-particle insertion: the kernel against NumPy, the chemical potential against the
Lennard-Jones reference equation of state, and where insertion stops serving."""
import math

import numpy as np
import pytest

from analysis.sampled_entropy import MIN_EFFECTIVE_INSERTIONS, residual_entropy
from mdsim.engine import rng
from mdsim.engine.insertion import (InsertionSampler, insertion_sums, insertion_tail,
                                    inserted_particle_energy)
from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.potentials import LennardJones, Mie, PairMatrix
from mdsim.engine.system import System
from mdsim.sampling.state_point import sample_state_point


def _mixture(seed=3):
    """A two-species fluid at rho* = 0.5 (Mie 12-6 and 14-6, combined): 60 + 40 particles."""
    pairs = PairMatrix([Mie(1.0, 1.0, 12.0, 6.0), Mie(0.8, 1.1, 14.0, 6.0)], cutoff=2.5)
    return System.cubic(pairs, [60, 40], 0.5).place_at_random(seed=seed)


def _energy_numpy(system, x, s_test):
    """Slow, obvious sum of the truncated pair energies of a test particle at x."""
    d = system.r_ni - x
    d -= system.box_i * np.round(d / system.box_i)
    r = np.sqrt((d ** 2).sum(axis=1))
    total = 0.0
    for b in range(system.pairs.n_species):
        rb = r[system.species_n == b]
        rc = system.pairs.params_ab[s_test, b, 8]  # the RC column
        total += float(system.pairs.pots[s_test][b].energy(rb[rb < rc]).sum())
    return total


def test_inserted_particle_energy_matches_numpy_for_a_mixture():
    system = _mixture()
    mc = MCSampler(system, temperature=1.5, seed=1)
    gen = np.random.default_rng(5)
    for _ in range(40):
        x = gen.uniform(0.0, 1.0, 3) * system.box_i
        for s in (0, 1):
            got = inserted_particle_energy(x[0], x[1], x[2], s, mc.r_ni, mc.species_n, mc.params_ab,
                                       mc.form, mc.table, mc.box_i, mc.ncell_i, mc.head_c,
                                       mc.next_n)
            want = _energy_numpy(system, x, s)
            if math.isinf(want):
                assert math.isinf(got)
            else:
                assert got == pytest.approx(want, rel=1e-10, abs=1e-10)


def test_insertion_sums_match_numpy_with_the_same_random_points():
    system = _mixture(seed=8)
    mc = MCSampler(system, temperature=1.5, seed=1)
    state = rng.make_state([4, 2])
    points = state.copy()
    s1, s2 = insertion_sums(mc.r_ni, mc.species_n, mc.params_ab, mc.form, mc.table, mc.box_i,
                            mc.ncell_i, mc.head_c, mc.next_n, 1, 1 / 1.5, 300, state)
    w = []
    for _ in range(300):  # the kernel draws x, y, z in that order from the same stream
        x = np.array([rng.uniform(points) for _ in range(3)]) * system.box_i
        w.append(math.exp(-_energy_numpy(system, x, 1) / 1.5))
    w = np.array(w)
    assert s1 == pytest.approx(w.sum(), rel=1e-10)
    assert s2 == pytest.approx((w * w).sum(), rel=1e-10)
    assert np.array_equal(state, points)  # both advanced the stream by the same draws


def test_insertion_tail_is_twice_the_tail_per_particle_for_one_species():
    # mu_tail = 2 u_tail (Frenkel and Smit, Understanding Molecular Simulation, 2nd ed., 7.2.1)
    s = System.cubic(PairMatrix([Mie(1.0, 1.0, 12.0, 6.0)], cutoff=2.5), [50], 0.3)
    assert insertion_tail(s) == pytest.approx(2.0 * s.tail()[0], rel=1e-12)


def test_sampler_resumes_bit_for_bit():
    system = _mixture()
    whole = InsertionSampler(system, temperature=1.5, seed=[3, 1], insertions=20)
    a = whole.run(6, 2)
    first = InsertionSampler(system, temperature=1.5, seed=[3, 1], insertions=20)
    first.run(3, 2)
    state = first.get_state()
    second = InsertionSampler(system, temperature=1.5, seed=[9, 9], insertions=20)
    second.set_state(state)
    b = second.run(3, 2)
    for key in ("u_full", "insertion_factor_0", "insertion_factor_sq_1"):
        assert np.array_equal(a[key][3:], b[key])


def _thol():
    """Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp (docs/references.md 5.1)."""
    teqp = pytest.importorskip("teqp")
    return teqp.build_LJ126_TholJPCRD2016()


def test_chemical_potential_and_residual_entropy_agree_with_the_reference_eos():
    # a dilute supercritical gas, T* = 2, rho* = 0.1 (256 particles, rc = 3 sigma with tails);
    # measured: 12 runs of 200 samples scatter by 0.0100 k in s_res against a mean reported
    # error of 0.011 k, their mean 0.0005 k from the reference
    T, rho = 2.0, 0.1
    system = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], cutoff=3.0), [256], rho)
    system.place_on_lattice(seed=1)
    run = sample_state_point(system, "mc-nvt-insertion", temperature=T, n_equilibration=200,
                             n_samples=400, interval=1, seed=11)
    res = residual_entropy(run.samples, T, rho, [1.0], [insertion_tail(system)], 256)
    assert res.available and res.effective_insertions > MIN_EFFECTIVE_INSERTIONS
    model, z = _thol(), np.array([1.0])
    ar00, ar01, ar10 = (model.get_Ar00(T, rho, z), model.get_Ar01(T, rho, z),
                        model.get_Ar10(T, rho, z))
    mu_ref = T * (ar00 + ar01)  # mu_res / epsilon = a_res + (Z - 1) kT
    s_ref = ar10 - ar00         # s_res / k = u_res / kT - a_res / kT
    # 4 standard errors (fixed seed); the reference's own uncertainty and the tail's g = 1
    # beyond 3 sigma are far below them at this density (u_tail = -0.031 epsilon)
    assert abs(res.mu_res_red - mu_ref) < 4.0 * res.mu_res_stderr_red, (res.mu_res_red, mu_ref)
    assert abs(res.s_res_red - s_ref) < 4.0 * res.s_res_stderr_red, (res.s_res_red, s_ref)
    assert abs(res.compressibility - (1.0 + ar01)) < 0.01  # Z, a cross-check of the run


def test_insertion_reports_unavailable_in_a_dense_liquid():
    # T* = 1.0, rho* = 0.85: a dense LJ liquid, where random insertions almost never find
    # room (common practice, no source); 200 samples of 108 particles
    system = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], cutoff=2.5), [108], 0.85)
    system.place_on_lattice(seed=2)
    run = sample_state_point(system, "mc-nvt-insertion", temperature=1.0, n_equilibration=800,
                             n_samples=200, interval=1, seed=5)
    res = residual_entropy(run.samples, 1.0, 0.85, [1.0], [insertion_tail(system)], 108)
    assert not res.available
    assert "does not serve at this density" in res.reason or "drift" in res.reason
    assert math.isnan(res.s_res_red)
