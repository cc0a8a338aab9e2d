"""Shared fixtures for the analysis tests: correlated series, gases, heat capacities."""
import warnings

import numpy as np
import pytest

from analysis.heatcapacity import ConstantHeatCapacity
from analysis.virial_eos import VirialGas
from mdsim.engine.potentials import LennardJones

ARGON_MOLAR_MASS_KG_MOL = 0.039948  # IUPAC standard atomic weight of Ar (common practice, no source)


def ar1_series(phi, n_samples, seed, mean=0.0, sigma_noise=1.0):
    """Stationary AR(1) chain x_t = phi x_{t-1} + e_t, e_t ~ N(0, sigma_noise^2).

    Its statistical inefficiency is g = (1 + phi) / (1 - phi) and its variance
    sigma_noise^2 / (1 - phi^2) (closed forms).
    """
    rng = np.random.default_rng(seed)
    e = rng.normal(0.0, sigma_noise, n_samples)
    x = np.empty(n_samples)
    x[0] = e[0] / np.sqrt(1.0 - phi * phi)
    for t in range(1, n_samples):
        x[t] = phi * x[t - 1] + e[t]
    return x + mean


@pytest.fixture(scope="session")
def ar1():
    """The AR(1) generator above, as a fixture."""
    return ar1_series


@pytest.fixture(scope="session")
def argon_hcb():
    """Argon, LJ 119.8 K / 3.405 A fitted to second-virial data (Hirschfelder, Curtiss
    and Bird 1954; docs/references.md section 6, from memory)."""
    return VirialGas(LennardJones(119.8, 3.405), [1.0], ARGON_MOLAR_MASS_KG_MOL)


@pytest.fixture(scope="session")
def lj_unit_gas():
    """A Lennard-Jones gas with epsilon/k = 1 K and sigma = 1 A, so that K and
    reduced temperatures coincide (the de Boer warning is irrelevant: the
    comparison is with the classical reference EOS)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return VirialGas(LennardJones(1.0, 1.0), [1.0], ARGON_MOLAR_MASS_KG_MOL)


@pytest.fixture(scope="session")
def monatomic_cv():
    """c_v_ig = 3/2 R (fact of the trade for a monatomic ideal gas)."""
    return ConstantHeatCapacity.in_units_of_R(1.5)
