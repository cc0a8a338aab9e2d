"""Evidence of two phases or a solid in sampled configurations (analysis.phases).

Configurations here are invented: lattices, uniform random points (an ideal
gas) and a slab of dense points beside dilute ones, with fixed seeds.
"""
import numpy as np
import pytest

from analysis.phases import (crystal_like_fraction, global_q6, local_density_check,
                             pressure_check)


def _fcc(cells, density):
    a = (4.0 / density) ** (1.0 / 3.0)
    basis = np.array([[0, 0, 0], [0.5, 0.5, 0], [0.5, 0, 0.5], [0, 0.5, 0.5]])
    grid = np.array([[i, j, k] for i in range(cells) for j in range(cells) for k in range(cells)])
    return ((grid[:, None, :] + basis[None]) * a).reshape(-1, 3), np.full(3, cells * a)


def test_fcc_global_q6():
    # Q6 of the fcc lattice (12 neighbours) = 0.5745 (Steinhardt, Nelson and Ronchetti,
    # Phys. Rev. B 28, 784 (1983), Table I; from memory)
    r, box = _fcc(4, 1.0)
    assert global_q6(r, box) == pytest.approx(0.5745, abs=5e-4)


def test_crystal_and_fluid_are_told_apart():
    rng = np.random.default_rng(11)
    r, box = _fcc(4, 1.0)
    warm_crystal = r + rng.normal(0.0, 0.07, r.shape)  # Lindemann ratio ~0.1 of 1.12 sigma
    assert crystal_like_fraction([warm_crystal], box) > 0.9
    fluid = [rng.uniform(0.0, box[0], r.shape) for _ in range(2)]  # ideal-gas positions
    # a disordered configuration has no crystal-like particles to speak of (common practice:
    # ten Wolde et al. 1996 count a few per cent in a supercooled LJ liquid; from memory)
    assert crystal_like_fraction(fluid, box) < 0.05


def _slab(rng, L, rho_dense, rho_dilute, depth):
    dense = rng.uniform(0.0, 1.0, (int(rho_dense * L * L * depth), 3)) * [L, L, depth]
    dilute = rng.uniform(0.0, 1.0, (int(rho_dilute * L * L * (L - depth)), 3)) * [L, L, L - depth]
    return np.vstack([dense, dilute + [0.0, 0.0, depth]])


def test_a_slab_of_liquid_beside_vapour_is_bimodal():
    rng = np.random.default_rng(5)
    L = 10.0
    check = local_density_check([_slab(rng, L, 0.6, 0.02, 4.0) for _ in range(3)], [L] * 3)
    assert check.bimodal and check.broad
    # the dilute class mixes vapour cells with cells cut by the interface; the dense class
    # holds the liquid cells: its mean local density is near the slab's 0.6
    assert check.high_peak_density_red == pytest.approx(0.6, abs=0.1)
    assert check.low_peak_density_red < 0.2


@pytest.mark.parametrize("density", [0.05, 0.15, 0.3, 0.6, 0.9])
def test_homogeneous_configurations_are_not_bimodal(density):
    # an ideal gas (S(0) = 1) at every density, and a jittered fcc lattice (S(0) << 1)
    rng = np.random.default_rng(int(density * 100))
    L = 10.0
    gas = [rng.uniform(0.0, L, (int(density * L ** 3), 3)) for _ in range(4)]
    check = local_density_check(gas, [L] * 3)
    assert check.bimodal is False and not check.broad and check.describe() is None
    # an ideal gas's counts have the multinomial variance exactly: ratio 1 within 4 standard
    # errors of a sample variance of 256 Poisson-like counts (about 0.11 at the lowest density)
    assert check.variance_ratio == pytest.approx(1.0, abs=0.45)
    r, box = _fcc(6, density)
    lattice = [r + rng.normal(0.0, 0.1, r.shape) for _ in range(4)]
    check = local_density_check(lattice, box)
    assert check.bimodal is False and check.variance_ratio < 1.0 and check.describe() is None


def test_too_few_cells_give_no_verdict():
    rng = np.random.default_rng(0)
    assert local_density_check([rng.uniform(0.0, 5.0, (100, 3))], [5.0] * 3).bimodal is None


def test_pressure_evidence():
    # z-scores against zero (common practice, no source): -88 bar +- 5 bar is negative
    assert pressure_check(-88e5, 5e5).negative_pressure
    assert not pressure_check(-5e5, 5e5).negative_pressure
    # pressure at rho 0.75 below that at 0.375 (a van der Waals loop): falling with density
    falling = pressure_check(-88e5, 5e5, (15750.0, 2e5, 1e5, 31500.0, -88e5, 5e5))
    assert falling.falling_with_density and falling.slope < 0.0
    rising = pressure_check(3e7, 1e5, (15750.0, 1e7, 1e5, 31500.0, 3e7, 1e5))
    assert rising.falling_with_density is False and rising.evidence == ()
