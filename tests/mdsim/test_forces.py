"""Force kernels against a NumPy all-pairs reference and finite differences."""
import numpy as np
import pytest

from mdsim.errors import SimulationError
from mdsim.engine.forces import compute_forces
from mdsim.engine.neighbours import NeighbourList
from mdsim.engine.potentials import Exp6, PairMatrix
from mdsim.engine.system import System

FORMS = ["lj-mixture", "mie-mixture", "exp6-mixture", "table", "lj"]


def sorted_setup(system, skin=0.3):
    nl = NeighbourList(system.n_particles, system.box_i, system.pairs.rc_max, skin)
    r = system.r_ni.copy()
    order = nl.sort_order(r)
    r = np.ascontiguousarray(r[order])
    species = system.species_n[order].copy()
    nl.build(r)
    return nl, r, species


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("n", [150, 900])  # all-pairs list and cell list
def test_kernel_matches_numpy_all_pairs(form, n, pair_matrices, make_config, allpairs_reference):
    pairs = pair_matrices[form]
    counts = [n] if pairs.n_species == 1 else [n // 3, n - n // 3]
    system = make_config(pairs, counts, 0.75, seed=n)
    nl, r, species = sorted_setup(system)
    f, u, s, w = compute_forces(r, system.box_i, species, pairs, nl)
    f_ref, u_ref, s_ref, w_ref = allpairs_reference(r, system.box_i, species, pairs)
    # both sum the same finite terms in a different order: rounding only
    assert u == pytest.approx(u_ref, rel=1e-11)
    assert s == pytest.approx(s_ref, rel=1e-11)
    assert w == pytest.approx(w_ref, rel=1e-11)
    np.testing.assert_allclose(f, f_ref, rtol=0, atol=1e-9 * np.abs(f_ref).max())


@pytest.mark.parametrize("form", FORMS)
def test_parallel_kernel_equals_serial(form, pair_matrices, make_config):
    pairs = pair_matrices[form]
    counts = [600] if pairs.n_species == 1 else [300, 300]
    system = make_config(pairs, counts, 0.7, seed=4)
    nl, r, species = sorted_setup(system)
    f1, u1, s1, w1 = compute_forces(r, system.box_i, species, pairs, nl)
    f2, u2, s2, w2 = compute_forces(r, system.box_i, species, pairs, nl,
                                    f_cni=np.zeros((3, r.shape[0], 3)))
    # same terms, summed in another order: rounding only
    assert (u2, s2, w2) == pytest.approx((u1, s1, w1), rel=1e-12)
    np.testing.assert_allclose(f2, f1, rtol=0, atol=1e-10 * np.abs(f1).max())


@pytest.mark.parametrize("form", FORMS)
def test_forces_are_minus_the_energy_gradient(form, pair_matrices, make_config):
    pairs = pair_matrices[form]
    counts = [120] if pairs.n_species == 1 else [60, 60]
    system = make_config(pairs, counts, 0.6, seed=9)
    nl, r, species = sorted_setup(system, skin=0.5)
    f, _, _, _ = compute_forces(r, system.box_i, species, pairs, nl)

    def model_energy(x):
        _, u, s, _ = compute_forces(x, system.box_i, species, pairs, nl)
        return u - s  # truncated and shifted: continuous at rc

    h = 1e-5
    rng = np.random.default_rng(1)
    for k in rng.choice(r.shape[0], 6, replace=False):
        for d in range(3):
            rp, rm = r.copy(), r.copy()
            rp[k, d] += h
            rm[k, d] -= h
            grad = (model_energy(rp) - model_energy(rm)) / (2 * h)
            # central differences: O(h^2 u''') ~ 1e-8 plus rounding ~ 1e-16 |U| / h
            assert -grad == pytest.approx(f[k, d], abs=1e-5 * (1 + abs(f[k, d])))


def test_virial_gives_the_pressure_of_a_uniform_scaling(pair_matrices, make_config):
    """W = -3V dU/dV at fixed scaled coordinates: check by scaling the box."""
    pairs = pair_matrices["lj"]
    system = make_config(pairs, [500], 0.7, seed=2)
    nl, r, species = sorted_setup(system, skin=0.5)
    _, _, _, w = compute_forces(r, system.box_i, species, pairs, nl)

    def energy(scale):
        _, u, s, _ = compute_forces(r * scale, system.box_i * scale, species, pairs, nl)
        return u - s

    h = 1e-6
    dudl = (energy(1 + h) - energy(1 - h)) / (2 * h)  # dU/d(ln L) = 3V dU/dV
    assert w == pytest.approx(-dudl, rel=1e-6)  # finite-difference error, as above


def test_pair_inside_the_exp6_core_raises():
    pairs = PairMatrix([Exp6(1.0, 1.12, 14.0)], 2.5)
    system = System(pairs, [2], [8.0, 8.0, 8.0])
    core = pairs.pots[0][0].core_radius
    system.r_ni = np.array([[1.0, 1.0, 1.0], [1.0 + 0.5 * core, 1.0, 1.0]])
    nl, r, species = sorted_setup(system)
    with pytest.raises(SimulationError, match="hard core"):
        compute_forces(r, system.box_i, species, pairs, nl)


def test_pair_below_the_table_start_raises(pair_matrices):
    pairs = pair_matrices["table"]
    system = System(pairs, [2], [8.0, 8.0, 8.0])
    system.r_ni = np.array([[1.0, 1.0, 1.0], [1.55, 1.0, 1.0]])  # 0.55 < first point 0.6
    nl, r, species = sorted_setup(system)
    with pytest.raises(SimulationError, match="table"):
        compute_forces(r, system.box_i, species, pairs, nl)
