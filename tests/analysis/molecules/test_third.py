"""B3 of rigid molecules by Monte Carlo integration: the exact atom, derivatives, mixtures."""
import numpy as np
import pytest

from analysis.molecules import TripletDraws
from analysis.virial import b3
from mdsim.engine.potentials import LennardJones


@pytest.fixture(scope="module")
def atom_draws(lj_atom):
    return TripletDraws([lj_atom], n_draws=60000, seed=3)


@pytest.mark.parametrize("T", [1.5, 3.0])
def test_lennard_jones_atom_within_error_of_the_quadrature(atom_draws, T):
    # the exact B3 quadrature of analysis.virial.b3 (itself checked against Hirschfelder,
    # Curtiss and Bird 1954, Table I-C); MC within 4 standard errors (fixed seed)
    value_k, err_k = atom_draws.b3([1.0], T)
    exact_k = b3(LennardJones(1.0, 1.0), T)
    for k in range(2):
        assert abs(value_k[k] - exact_k[k]) < 4.0 * err_k[k]


def test_derivatives_are_those_of_the_same_draws(atom_draws):
    # one set of draws at every T: the estimate is a smooth function of T and its
    # derivative is the derivative of the estimate (central difference, O(h^2))
    T, h = 2.0, 1e-3
    v = lambda t: atom_draws.b3([1.0], t)[0]  # noqa: E731
    assert v(T)[1] == pytest.approx((v(T + h)[0] - v(T - h)[0]) / (2 * h), rel=1e-5)
    assert v(T)[2] == pytest.approx((v(T + h)[1] - v(T - h)[1]) / (2 * h), rel=1e-5)


def test_mixture_of_identical_species_is_the_pure_gas(lj_atom):
    # x_a x_b x_c B_abc summed over species that are all the same molecule: the pure B3
    # exactly (the same draws; combinatorics of the species triples)
    pure = TripletDraws([lj_atom], n_draws=5000, seed=5).b3([1.0], 2.0)[0]
    mix = TripletDraws([lj_atom, lj_atom, lj_atom], n_draws=5000, seed=5).b3([0.5, 0.3, 0.2],
                                                                            2.0)[0]
    np.testing.assert_allclose(mix, pure, rtol=1e-12)


def test_same_seed_same_numbers(nitrogen):
    a = TripletDraws([nitrogen], n_draws=2000, seed=7).b3([1.0], 300.0)
    b = TripletDraws([nitrogen], n_draws=2000, seed=7).b3([1.0], 300.0)
    np.testing.assert_array_equal(a[0], b[0])
