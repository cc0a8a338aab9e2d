"""Entropy generated in a free expansion and the lost work.

External checks: the ideal-gas closed form n R ln r (docs/references.md section 8, facts of
the trade), and the state-function difference
s(T_f, rho_f) - s(T_i, rho_i) = int c_v_ig / T dT + R ln r + s_res(f) - s_res(i)
assembled here from the equation of state's residual entropy and a scipy
quadrature of c_v_ig / T, which the path integral must reproduce.
"""
import math
import warnings

import pytest
from scipy import constants
from scipy.integrate import quad

from analysis import entropy as ent
from analysis.expansion import virial_expansion
from analysis.heatcapacity import ConstantHeatCapacity, PolynomialHeatCapacity
from analysis.virial_eos import VirialGas
from mdsim.errors import StudyError
from mdsim.engine.potentials import LennardJones

R = constants.gas_constant
ARGON = (119.8, 3.405, 0.039948)       # HCB 1954 B2 fit (docs/references.md section 6, from memory)
MONATOMIC = ConstantHeatCapacity.in_units_of_R(1.5)


@pytest.fixture(scope="module")
def argon():
    eps, sig, m = ARGON
    return VirialGas(LennardJones(eps, sig), [1.0], m)


def test_ideal_limit_is_R_ln_r():
    # A potential of negligible strength and size: B ~ 1e-15 m^3/mol, B rho ~ 1e-14,
    # so the gas is ideal to ~1e-14 (docs/references.md section 8: ideal gas, entropy up by n R ln r)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # de Boer warning for a pico-scale particle
        gas = VirialGas(LennardJones(1e-6, 1e-3), [1.0], 0.04)
    for r in (1.5, 2.0, 10.0):
        res = ent.free_expansion_entropy(gas, MONATOMIC, 300.0, r, density_mol_m3=40.0,
                                         amount_mol=2.5, reference_temperature_K=298.15)
        assert res.ideal_gas_entropy_J_molK == R * math.log(r)   # closed form, exactly
        # B rho ~ 1e-14 is the only departure from ideality
        assert res.entropy_generated_J_molK == pytest.approx(R * math.log(r), rel=1e-12)
        assert res.final_temperature_K == pytest.approx(300.0, rel=1e-12)
        assert res.entropy_generated_J_K == pytest.approx(2.5 * R * math.log(r), rel=1e-12)
        assert res.lost_work_J == pytest.approx(298.15 * 2.5 * R * math.log(r), rel=1e-12)


def test_low_density_tends_to_ideal(argon):
    # the residual part is R int B d rho ~ R B rho_i (1 - 1/r): it vanishes linearly in rho
    devs = []
    for rho in (400.0, 40.0, 4.0):
        res = ent.free_expansion_entropy(argon, MONATOMIC, 295.0, 2.0, density_mol_m3=rho)
        devs.append(res.entropy_generated_J_molK - R * math.log(2.0))
    assert devs[0] < 0.0   # attractive gas at room temperature (B < 0): less than ideal
    # successive tenfold dilutions cut the departure tenfold, to O(rho) corrections (3 %)
    assert devs[0] / devs[1] == pytest.approx(10.0, rel=0.03)
    assert devs[1] / devs[2] == pytest.approx(10.0, rel=0.003)


def _state_function_difference(gas, cv, T_i, rho_i, T_f, rho_f, order):
    s_ig = quad(lambda t: float(cv.cv(t)) / t, T_i, T_f, epsabs=0.0, epsrel=1e-13)[0]
    return (s_ig + R * math.log(rho_i / rho_f) + gas.s_res_J_molK(T_f, rho_f, order)
            - gas.s_res_J_molK(T_i, rho_i, order))


@pytest.mark.parametrize("order", [2, 3])
@pytest.mark.parametrize("cv", [
    MONATOMIC,
    # a molecular-like c_v_ig(T) (J/(mol K), T in K): exercises the T-dependent u_ig
    PolynomialHeatCapacity([20.0, 0.01]),
])
def test_path_integral_equals_state_function_difference(argon, order, cv):
    T_i, p_i, r = 295.0, 50e5, 3.0
    res = ent.free_expansion_entropy(argon, cv, T_i, r, pressure_Pa=p_i, order=order,
                                     reference_temperature_K=300.0)
    rho_i, rho_f, T_f = res.initial_density_mol_m3, res.final_density_mol_m3, res.final_temperature_K
    ds_state = _state_function_difference(argon, cv, T_i, rho_i, T_f, rho_f, order)
    # quadrature rtol 1e-10 and the 1e-12 K constant-U roots; the EOS derivatives
    # are exact Gauss-Legendre derivatives, consistent to ~1e-10
    assert res.entropy_generated_J_molK == pytest.approx(ds_state, rel=1e-8)
    # a real effect, far above that tolerance: below the ideal R ln r by ~3 %
    assert res.ideal_gas_entropy_J_molK - res.entropy_generated_J_molK > 1e-3 * ds_state
    # the final temperature agrees with the constant-U solver of analysis.expansion
    other = virial_expansion(argon, cv, T_i, r, p_i=p_i, order=order)
    assert T_f == pytest.approx(other.final_temperature_K, abs=1e-8)
    assert res.entropy_generated_J_molK == pytest.approx(other.entropy_generated_J_molK, rel=1e-8)
    assert res.lost_work_J_mol == pytest.approx(300.0 * ds_state, rel=1e-8)
    d = res.to_dict()
    assert d["lost_work_J"] == pytest.approx(res.lost_work_J_mol)
    assert d["entropy_generated_J_molK"] > 0.0


def test_constant_energy_temperature_reproduces_energy(argon):
    u_i = ent.internal_energy_J_mol(argon, MONATOMIC, 295.0, 2000.0, 3)
    t = ent.constant_energy_temperature_K(argon, MONATOMIC, u_i, 500.0, 3, temperature_guess_K=295.0)
    assert t < 295.0   # argon cools in a free expansion at room temperature
    # brentq xtol 1e-12 K times c_v ~ 12 J/(mol K)
    assert ent.internal_energy_J_mol(argon, MONATOMIC, t, 500.0, 3) == pytest.approx(u_i, abs=1e-9)


def test_bad_input(argon):
    with pytest.raises(StudyError, match="volume_ratio"):
        ent.free_expansion_entropy(argon, MONATOMIC, 295.0, 1.0, density_mol_m3=40.0)
    with pytest.raises(StudyError, match="exactly one"):
        ent.free_expansion_entropy(argon, MONATOMIC, 295.0, 2.0, density_mol_m3=40.0,
                                   pressure_Pa=1e5)
    with pytest.raises(StudyError, match="heat-capacity model"):
        ent.free_expansion_entropy(argon, 1.5, 295.0, 2.0, density_mol_m3=40.0)
    with pytest.raises(StudyError, match="reference_temperature_K"):
        ent.free_expansion_entropy(argon, MONATOMIC, 295.0, 2.0, density_mol_m3=40.0,
                                   reference_temperature_K=-5.0)
    with pytest.raises(StudyError, match="order"):
        ent.free_expansion_entropy(argon, MONATOMIC, 295.0, 2.0, density_mol_m3=40.0, order=1)
    with pytest.raises(StudyError, match="entropy_generated_J_K.*cannot destroy entropy"):
        ent.lost_work_J(-1.0, 300.0)
