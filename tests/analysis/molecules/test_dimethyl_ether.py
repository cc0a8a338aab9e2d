"""Rigid dimethyl ether with site charges (TraPPE-UA, configs/dimethyl_ether.toml): the config's
geometry, and the model's B2 against dimethyl ether's reference equation of state.

Model: Stubbs, Potoff and Siepmann, J. Phys. Chem. B 108, 17596 (2004), from memory: CH3 98 K,
3.75 angstrom, +0.25 e; O 55 K, 2.80 angstrom, -0.50 e; bond 1.41 angstrom; angle 112 degrees
(held rigid).  CoolProp is test-only (dimethyl ether: Wu, Zhou and Lemmon, J. Phys. Chem. Ref.
Data 40, 023104 (2011)); its B2 is PropsSI('Bvirial', 'T', T, 'Dmolar', 1e-6, 'DimethylEther').
"""
import math
import pathlib
import warnings

import numpy as np
import pytest

from analysis.molecules import RotationGrid
from analysis.virial import M3_MOL_PER_A3
from mdsim.study.reader import read_study

CONFIGS = pathlib.Path(__file__).resolve().parents[3] / "configs"


@pytest.fixture(scope="module")
def dme():
    (mol,) = read_study(CONFIGS / "dimethyl_ether.toml").gas.molecules
    return mol


def test_config_geometry_and_charges_are_the_published_ones(dme):
    # bond 1.41 angstrom, angle 112 degrees, charges +0.25, -0.50, +0.25 e (Stubbs, Potoff and
    # Siepmann 2004, from memory); the centre of mass at the origin, the molecule neutral
    ch3_a, o, ch3_b = dme.position_sv
    assert np.linalg.norm(ch3_a - o) == pytest.approx(1.41, abs=1e-5)
    assert np.linalg.norm(ch3_b - o) == pytest.approx(1.41, abs=1e-5)
    cos = (ch3_a - o) @ (ch3_b - o) / 1.41 ** 2
    assert math.degrees(math.acos(cos)) == pytest.approx(112.0, abs=1e-3)
    np.testing.assert_allclose(dme.centre_of_mass_v(), 0.0, atol=1e-5)
    assert dme.charge_s.tolist() == [0.25, -0.5, 0.25]
    assert dme.is_nonlinear and dme.has_charges


def test_b2_against_the_reference_equation_of_state(dme):
    # measured: model -373.5, -262.1, -192.4 cm^3/mol at 300, 350, 400 K against CoolProp's
    # -434.4, -300.2, -223.8: 13-14 % less negative (the quadrature converged: degrees 9, 11
    # and 15 agree to 1e-3, and a brute-force Monte Carlo integration gives dB2/dT at 350 K
    # within 0.3 % +- 1.8 %).  TraPPE-UA was fitted to vapour-liquid coexistence, not to B2;
    # such effective pair potentials come out too weakly attractive for an isolated pair
    # (as propane's, tests/analysis/molecules/test_propane.py; common practice, no source),
    # and the model's fixed charges overstate the gas's dipole (1.89 D against about 1.3 D,
    # from memory).  Tolerance: 20 % of B2, and the sign of the deviation
    CP = pytest.importorskip("CoolProp.CoolProp")
    T = np.array([300.0, 350.0, 400.0])
    with warnings.catch_warnings():  # the rotation degree's note on charged non-linear B2
        warnings.simplefilter("ignore")
        model = np.asarray(RotationGrid(dme, dme).b2(T)[0]) * M3_MOL_PER_A3 * 1e6
    reference = np.array([CP.PropsSI("Bvirial", "T", t, "Dmolar", 1e-6, "DimethylEther") * 1e6
                          for t in T])
    np.testing.assert_allclose(model, reference, rtol=0.20)
    assert np.all(model > reference)
