"""TraPPE carbon dioxide with site charges (configs/co2_charges.toml) by the virial routes.

The model: Potoff and Siepmann, AIChE J. 47, 1676 (2001), values from memory
(C 27.0 K, 2.80 angstrom, +0.70 e; O 79.0 K, 3.05 angstrom, -0.35 e; C=O 1.16
angstrom).  Against the reference equation of state of CO2 in CoolProp (Span
and Wagner, J. Phys. Chem. Ref. Data 25, 1509 (1996); test-only): B2 from 250
to 500 K and the free-expansion Delta T from 10 to 40 bar, doubled.
"""
from pathlib import Path

import pytest

from analysis.expansion import virial_expansion
from analysis.molecules import MolecularVirialGas
from mdsim.study.reader import read_study
from mdsim.study.statepoints import ideal_heat_capacity
from test_against_coolprop import delta_T_reference

CP = pytest.importorskip("CoolProp.CoolProp")
CONFIG = Path(__file__).resolve().parents[3] / "configs" / "co2_charges.toml"


@pytest.fixture(scope="module")
def study():
    return read_study(CONFIG)


def test_b2_against_the_reference_equation_of_state(study):
    # measured (cm^3/mol, model against reference): 250 K -167.1 / -184.0, 300 K -110.8 /
    # -121.3, 350 K -76.7 / -84.4, 400 K -53.8 / -60.3, 500 K -25.4 / -30.7: 9 to 11 % less
    # negative up to 400 K, 5.4 cm^3/mol at 500 K (the model was fitted to vapour-liquid
    # equilibria, where a pair potential absorbs the three-body attraction; the 2CLJQ model
    # of configs/co2.toml is 10 % less negative too, docs/physics.md section 7a.5).
    # Tolerance: 13 % or 7 cm^3/mol, whichever is larger
    gas = MolecularVirialGas(study.gas.molecules, [1.0], n_draws=1000)  # B2 only here
    for T in (250.0, 300.0, 400.0, 500.0):
        b2 = float(gas.B(T)) * 1e6
        ref = CP.PropsSI("Bvirial", "T", T, "Dmolar", 1e-3, "CO2") * 1e6
        assert b2 == pytest.approx(ref, abs=max(0.13 * abs(ref), 7.0)), T
        assert b2 > ref  # less bound than the real gas, as measured, at every temperature


def test_delta_T_from_10_to_40_bar(study):
    # B2 + B3 route, doubled at 298.15 K; measured -4.64, -9.61, -20.94 K against the
    # reference's -5.06, -10.46, -22.66 K (8 % low: T dB2/dT is); tolerance 10 % (as for
    # the 2CLJQ model, tests/analysis/molecules/test_against_coolprop.py)
    gas = MolecularVirialGas(study.gas.molecules, [1.0], n_draws=50000)
    cv = ideal_heat_capacity(study)
    for p in (10e5, 20e5, 40e5):
        res = virial_expansion(gas, cv, 298.15, 2.0, p_i=p, order=3)
        assert res.delta_T_K == pytest.approx(delta_T_reference("CO2", 298.15, p), rel=0.10), p
