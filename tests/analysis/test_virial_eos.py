"""Tests of analysis.virial_eos: thermodynamic consistency, limits, errors and a
comparison with the reference equation of state of argon."""
import math
import warnings

import numpy as np
import pytest
from scipy.constants import N_A, R
from scipy.integrate import quad

from analysis import virial
from analysis.virial_eos import VirialGas, VirialSeriesError
from mdsim.errors import StudyError
from mdsim.engine.potentials import LennardJones, PairMatrix

# argon: LJ fitted to second-virial data, HCB 1954 (docs/references.md section 6, from memory);
# molar mass 39.948 g/mol (IUPAC)
ARGON_LJ = LennardJones(119.8, 3.405)
M_AR = 39.948e-3


@pytest.fixture(scope="module")
def argon():
    return VirialGas(ARGON_LJ, [1.0], M_AR)


def test_u_res_is_minus_R_T2_dBdT_rho(argon):
    T, rho = 250.0, 800.0
    h = 1e-3
    dB_fd = (argon.B(T + h) - argon.B(T - h)) / (2 * h)  # O(h^2) central difference
    assert argon.u_res_J_mol(T, rho, order=2) == pytest.approx(-R * T * T * argon.dB_dT(T) * rho,
                                                               rel=1e-13)
    assert argon.u_res_J_mol(T, rho, order=2) == pytest.approx(-R * T * T * dB_fd * rho, rel=1e-6)
    # with C: -R T^2 (B' rho + C' rho^2 / 2)  (docs/physics.md section 2.1)
    want = -R * T * T * (argon.dB_dT(T) * rho + 0.5 * argon.dC_dT(T) * rho ** 2)
    assert argon.u_res_J_mol(T, rho, order=3) == pytest.approx(want, rel=1e-13)


def test_ideal_gas_limit(argon):
    T = 300.0
    rho = 1e-6  # mol/m^3
    # Z - 1 = B rho ~ 1e-11 at this density
    assert argon.compressibility(T, rho) == pytest.approx(1.0, abs=1e-10)
    assert argon.pressure_Pa(T, rho) == pytest.approx(rho * R * T, rel=1e-10)
    # residual properties vanish like T B' rho ~ 1e-10 in units of R T and R
    assert abs(argon.u_res_J_mol(T, rho)) < 1e-9 * R * T
    assert abs(argon.s_res_J_molK(T, rho)) < 1e-9 * R
    assert abs(argon.cv_res_J_molK(T, rho)) < 1e-9 * R
    assert argon.dp_dT_Pa_K(T, rho) == pytest.approx(rho * R, rel=1e-10)
    assert argon.density_from_pressure(T, 1e-3) == pytest.approx(1e-3 / (R * T), rel=1e-10)
    # exactly ideal at zero density
    assert argon.u_res_J_mol(T, 0.0) == 0.0
    assert argon.compressibility(T, 0.0) == 1.0


@pytest.mark.parametrize("T", [150.0, 200.0, 300.0, 500.0])
def test_argon_B_agrees_with_reference_eos(T):
    CP = pytest.importorskip("CoolProp.CoolProp")
    ref = CP.PropsSI("Bvirial", "T", T, "Dmolar", 1e-6, "Argon")  # Tegeler et al. 1999 via CoolProp
    gas = VirialGas(ARGON_LJ, [1.0], M_AR)
    # LJ is a model: its virial-fitted parameters reproduce argon's B to
    # ~2 cm^3/mol over 150-500 K (measured 1.7 at 150 K, < 0.3 above 200 K)
    assert gas.B(T) == pytest.approx(ref, abs=2.5e-6)


def test_cv_res_is_dU_dT(argon):
    T, rho, h = 180.0, 3000.0, 1e-2
    for order in (2, 3):
        fd = (argon.u_res_J_mol(T + h, rho, order) - argon.u_res_J_mol(T - h, rho, order)) / (2 * h)
        # central difference, O(h^2 u''') ~ 1e-8 relative
        assert argon.cv_res_J_molK(T, rho, order) == pytest.approx(fd, rel=1e-6)


def test_dp_dT_is_the_derivative_of_p(argon):
    T, rho, h = 180.0, 3000.0, 1e-2
    for order in (2, 3):
        fd = (argon.pressure_Pa(T + h, rho, order) - argon.pressure_Pa(T - h, rho, order)) / (2 * h)
        assert argon.dp_dT_Pa_K(T, rho, order) == pytest.approx(fd, rel=1e-8)  # O(h^2)


def test_entropy_energy_and_helmholtz_are_consistent(argon):
    # a_res = RT int_0^rho (Z - 1) / rho' d rho' from the pressure alone, then
    # u_res = a_res + T s_res must hold (thermodynamic identity)
    T, rho = 200.0, 2500.0
    for order in (2, 3):
        a_res = R * T * quad(lambda d: (argon.compressibility(T, d, order) - 1.0) / d,
                             1e-9, rho, epsabs=1e-14, epsrel=1e-12)[0]
        lhs = argon.u_res_J_mol(T, rho, order)
        rhs = a_res + T * argon.s_res_J_molK(T, rho, order)
        assert lhs == pytest.approx(rhs, rel=1e-9)  # quad accuracy


@pytest.mark.parametrize("order", [2, 3])
def test_density_from_pressure_inverts_pressure(argon, order):
    T = 200.0
    for p in (1e4, 1e6, 5e6):
        rho = argon.density_from_pressure(T, p, order)
        assert argon.pressure_Pa(T, rho, order) == pytest.approx(p, rel=1e-12)
        # the physical branch: p rises with rho there
        assert argon.pressure_Pa(T, rho * 1.001, order) > p


@pytest.mark.parametrize("order", [2, 3])
def test_density_from_pressure_without_a_root(argon, order):
    with pytest.raises(VirialSeriesError, match="cannot give this pressure; simulation is needed"):
        argon.density_from_pressure(100.0, 5e7, order)


def test_density_from_pressure_broadcasts(argon):
    p = np.array([1e5, 2e5])
    out = argon.density_from_pressure(300.0, p)
    assert out.shape == (2,)
    assert out[1] > out[0]


def test_order_two_drops_C(argon):
    T = 250.0
    assert argon.C(T, order=2) == 0.0
    assert argon.C(T, order=3) > 0.0  # LJ B3 > 0 above T* ~ 0.8 (HCB Table I-C)
    assert argon.compressibility(T, 1000.0, 2) == pytest.approx(1.0 + argon.B(T) * 1000.0, rel=1e-14)


def test_coefficients_in_si_units(argon):
    T = 300.0
    b0 = 2.0 * math.pi / 3.0 * N_A * (3.405e-10) ** 3  # m^3/mol
    # B = b0 B*(T*) with T* = 300/119.8; B* from the reduced product function
    assert argon.B(T) == pytest.approx(b0 * virial.b2(LennardJones(1.0, 1.0), T / 119.8)[0]
                                       / (2.0 * math.pi / 3.0), rel=1e-12)
    assert argon.C(T) == pytest.approx(b0 ** 2 * virial.b3(LennardJones(1.0, 1.0), T / 119.8)[0]
                                       / (2.0 * math.pi / 3.0) ** 2, rel=1e-9)


def test_mixture_of_identical_species_is_the_pure_gas(argon):
    pairs = PairMatrix([ARGON_LJ, LennardJones(119.8, 3.405)], cutoff=3.0)
    mix = VirialGas(pairs, [0.4, 0.6], [M_AR, M_AR])
    T, rho = 220.0, 2000.0
    assert mix.pressure_Pa(T, rho) == pytest.approx(argon.pressure_Pa(T, rho), rel=1e-12)
    assert mix.u_res_J_mol(T, rho) == pytest.approx(argon.u_res_J_mol(T, rho), rel=1e-10)


def test_series_convergence_and_check(argon):
    T = 300.0
    low = argon.series_convergence(T, 100.0)
    assert low["z_ratio"] < 1e-4
    assert low["b_term"] == pytest.approx(argon.B(T) * 100.0, rel=1e-14)
    assert argon.check_converged(T, 100.0)["z_ratio"] == low["z_ratio"]
    with pytest.raises(VirialSeriesError, match="simulation is needed"):
        argon.check_converged(T, 20000.0)
    assert issubclass(VirialSeriesError, StudyError)
    with pytest.raises(StudyError, match="limit"):
        argon.check_converged(T, 100.0, limit=-1.0)


def test_quantum_correction_raises_B_and_warns_for_helium():
    helium = LennardJones(10.22, 2.556)  # HCB 1954 (docs/references.md section 6, from memory)
    with pytest.warns(virial.QuantumCorrectionWarning):
        quantum = VirialGas(helium, [1.0], 4.002602e-3, quantum_correction=True)
    with pytest.warns(virial.QuantumCorrectionWarning):
        classical = VirialGas(helium, [1.0], 4.002602e-3)
    T = 30.0
    dB = quantum.B(T) - classical.B(T)
    # Delta B = Lambda*^2 b_I(T*) sigma^3 N_A (HCB 1954 ch. 6; reduced form)
    lam = virial.de_boer_parameter(helium, 4.002602e-3 / N_A)
    b_I = virial.b2_quantum(LennardJones(1.0, 1.0), T / 10.22, 2.0)[0]
    assert dB == pytest.approx(lam ** 2 * b_I * (2.556e-10) ** 3 * N_A, rel=1e-9)
    assert dB > 0.0  # quantum effects are repulsive in B2
    # derivatives carry the correction too: u_res stays -R T^2 B' rho
    assert quantum.u_res_J_mol(T, 10.0, 2) == pytest.approx(-R * T * T * quantum.dB_dT(T) * 10.0,
                                                            rel=1e-13)


def test_no_warning_for_argon():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        VirialGas(ARGON_LJ, [1.0], M_AR)


def test_bad_inputs(argon):
    with pytest.raises(StudyError, match="g/mol"):
        VirialGas(ARGON_LJ, [1.0], 39.948)
    with pytest.raises(StudyError, match="order"):
        argon.pressure_Pa(300.0, 10.0, order=4)
    with pytest.raises(StudyError, match="'T'"):
        argon.B(-5.0)
    with pytest.raises(StudyError, match="rho_mol_m3"):
        argon.pressure_Pa(300.0, -1.0)
    with pytest.raises(StudyError, match="p_Pa"):
        argon.density_from_pressure(300.0, 0.0)
    with pytest.raises(StudyError, match="pairs_K_angstrom"):
        VirialGas("argon", [1.0], M_AR)
