"""Free-expansion solvers (analysis.expansion) and result objects (analysis.results).

External checks: the ideal gas (closed forms: Delta T = 0, p_f = p_i / r,
Delta s = R ln r; docs/physics.md section 1.4; common practice, no source), the reference
equation of state of the Lennard-Jones fluid (Thol et al., J. Phys. Chem.
Ref. Data 45, 023101, 2016, through teqp), synthetic canonical and
microcanonical samples whose answers are closed forms, and Ray's exact
harmonic check of the microcanonical estimator (Phys. Rev. A 44, 4061, 1991;
docs/references.md section 5.1).
"""
import json
import math
import warnings

import numpy as np
import pytest
from scipy import constants
from scipy.optimize import brentq

from analysis import expansion as ex
from analysis import stats
from analysis.heatcapacity import TabulatedHeatCapacity
from analysis.virial_eos import VirialGas, VirialSeriesError
from mdsim.errors import ConvergenceError, SettingError, StudyError
from mdsim.engine.potentials import LennardJones

R = constants.gas_constant
N_A = constants.Avogadro


# --- ideal gas ---------------------------------------------------------------------

@pytest.fixture(scope="module")
def near_ideal_gas():
    # eps/k = 1e-9 K, sigma = 1e-3 A: B2 ~ 1e-33 m^3/mol, so B rho ~ 1e-30 at
    # 1000 mol/m^3: the residual part is switched off to double precision.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # de Boer warning: irrelevant for this check
        return VirialGas(LennardJones(1e-9, 1e-3), [1.0], 0.04)


@pytest.mark.parametrize("order", [2, 3])
def test_ideal_gas_closed_forms(near_ideal_gas, monatomic_cv, order):
    r = 3.0
    res = ex.virial_expansion(near_ideal_gas, monatomic_cv, 300.0, r, p_i=20e5, order=order)
    # closed forms (fact of the trade): no temperature change, p / r, Delta s = R ln r;
    # tolerances: double precision round-off of the root finder and of rho = p / (R T)
    assert abs(res.delta_T_K) < 1e-9
    assert res.final_pressure_Pa == pytest.approx(20e5 / r, rel=1e-12)
    assert res.initial_density_mol_m3 == pytest.approx(20e5 / (R * 300.0), rel=1e-12)
    assert res.entropy_generated_J_molK == pytest.approx(R * math.log(r), rel=1e-10)
    assert res.warnings == []


def test_ideal_gas_energy_route(monatomic_cv):
    # u_res = 0 at both ends: T_f = T_i, no error
    sample = ex.StateSample(300.0, 0.0, 0.0, 0.0, 0.0)
    res = ex.energy_route(stats.mean_and_stderr(np.zeros(50)), 300.0, 100.0, [sample], monatomic_cv)
    assert res.delta_T_K == 0.0 and res.delta_T_stderr_K == 0.0


# --- dilute Lennard-Jones against the reference EOS -----------------------------------

@pytest.fixture(scope="module")
def thol_u_res():
    teqp = pytest.importorskip("teqp")
    model = teqp.build_LJ126_TholJPCRD2016()
    z = np.array([1.0])
    return lambda T, rho: T * model.get_Ar10(T, rho, z)  # u_res / eps per particle (docs/references.md section 5.1)


@pytest.mark.parametrize("T_red", [1.5, 3.0, 6.0])
@pytest.mark.parametrize("rho_red", [0.002, 0.01])
def test_dilute_lj_against_thol(lj_unit_gas, monatomic_cv, thol_u_res, T_red, rho_red):
    r = 2.0
    u_i = 1.5 * T_red + thol_u_res(T_red, rho_red)
    T_f = brentq(lambda t: 1.5 * t + thol_u_res(t, rho_red / r) - u_i, 0.5 * T_red, 1.5 * T_red,
                 xtol=1e-14)
    dT_ref = T_f - T_red
    # eps/k = 1 K and sigma = 1 A: T in K equals T*, rho* = rho N_A sigma^3
    rho_si = rho_red / (1e-30 * N_A)
    res = ex.virial_expansion(lj_unit_gas, monatomic_cv, T_red, r, rho_i=rho_si, order=3)
    # 1 %: at rho* <= 0.01 the omitted fourth virial term is ~1e-4 of Delta T; the rest is
    # the reference EOS's own dilute-gas accuracy (Thol et al. 2016 fit B2 to ~0.1-1 %)
    assert res.delta_T_K == pytest.approx(dT_ref, rel=0.01)
    assert res.delta_T_K < 0  # below the B2 maximum (T* ~ 25) a free expansion cools


# --- energy route on synthetic canonical samples --------------------------------------
# A system whose configurational energy is U0 + (a quadratic form in 2a coordinates)
# has U_total ~ U0 + Gamma(a, kT) in the canonical ensemble (closed form), so
# u_res(T) = u0 + a R T / N per mole and c_v,res = a R / N, exactly.

N_SYN, A_SYN, U0_SYN = 100, 150.0, -2000.0  # particles, shape, J/mol


def _canonical_series(T, n, seed):
    rng = np.random.default_rng(seed)
    return U0_SYN + R * T / N_SYN * rng.gamma(A_SYN, 1.0, n)


def _sample(T, series):
    m = stats.mean_and_stderr(series, discard_equilibration=False)
    v = stats.variance_and_stderr(series, discard_equilibration=False)
    return ex.StateSample(T, m.mean, m.stderr, N_SYN * v.value / (R * T * T),
                          N_SYN * v.stderr / (R * T * T))


def _exact_T_f(T_i, delta_J_mol):
    # 1.5 R T_f + a R T_f / N = 1.5 R T_i + a R T_i / N + delta (closed form)
    return T_i + delta_J_mol / (R * (1.5 + A_SYN / N_SYN))


def test_newton_step_and_mbar_find_known_T_f(monatomic_cv):
    T_i, delta = 300.0, -3.0 * R * 5.0  # exact T_f = 295 K
    u_i = (U0_SYN + A_SYN * R * T_i / N_SYN + delta, 2.0)
    T_exact = _exact_T_f(T_i, delta)
    temps = [292.0, 298.0]
    series = [_canonical_series(T, 4000, seed=40 + k) for k, T in enumerate(temps)]
    samples = [_sample(T, s) for T, s in zip(temps, series)]

    step = ex.newton_step(samples[0], u_i, T_i, monatomic_cv)
    # the model is linear in T, so one Newton step lands on T_exact up to noise
    assert abs(step.next_temperature_K - T_exact) < 4 * step.temperature_stderr_K  # z < 4
    assert not step.converged  # a 3 K step is far above its ~0.2 K noise

    newton = ex.energy_route(u_i, T_i, 400.0, samples, monatomic_cv)
    assert newton.method == "newton"
    assert abs(newton.final_temperature_K - T_exact) < 4 * newton.delta_T_stderr_K

    mbar = ex.energy_route(u_i, T_i, 400.0, samples, monatomic_cv, series_final=series,
                           n_particles=N_SYN)
    assert mbar.method == "mbar"
    assert abs(mbar.final_temperature_K - T_exact) < 4 * mbar.delta_T_stderr_K  # z < 4
    # the stderr follows sqrt(s_i^2 + s_f^2) / c_v with c_v = 3 R: s_f ~ R T sqrt(a) / N / sqrt(n)
    s_f = R * T_exact * math.sqrt(A_SYN) / N_SYN / math.sqrt(4000)
    assert mbar.delta_T_stderr_K == pytest.approx(math.hypot(2.0, s_f) / (3 * R), rel=0.3)
    # MBAR's residual heat capacity recovers a R / N (sampling noise of a variance ~ 5 %)
    assert mbar.details["mbar_cv_res_J_molK"] == pytest.approx(A_SYN * R / N_SYN, rel=0.1)
    json.dumps(mbar.to_dict())  # JSON-ready


def test_mbar_is_not_trusted_between_temperatures_whose_samples_do_not_overlap(monatomic_cv):
    """Samples at 180 and 296 K share almost no configurations: reweighting between them
    would extrapolate.

    The route keeps the Newton estimate, says why in a note, and still lands on the exact
    T_f of the linear model (z < 4 on the sampled noise).
    """
    T_i, delta = 300.0, -3.0 * R * 5.0
    u_i = (U0_SYN + A_SYN * R * T_i / N_SYN + delta, 2.0)
    temps = [180.0, 296.0]
    series = [_canonical_series(T, 4000, seed=60 + k) for k, T in enumerate(temps)]
    samples = [_sample(T, s) for T, s in zip(temps, series)]
    mbar = ex.MBARInterpolant(temps, series, N_SYN)
    # gamma(150) energies scale with T: at 180 and 296 K the means differ by ~6 standard
    # deviations (relative width 1/sqrt(150)), an overlap of order 1e-3
    assert mbar.overlap_between(270.0, 280.0) < ex.MIN_NEIGHBOUR_OVERLAP
    res = ex.energy_route(u_i, T_i, 400.0, samples, monatomic_cv, series_final=series,
                          n_particles=N_SYN)
    assert res.method == "newton"
    # caught before reweighting (the means ~6 standard deviations apart) or after it
    assert any("MBAR not used" in n and "overlap" in n for n in res.notes)
    assert abs(res.final_temperature_K - _exact_T_f(T_i, delta)) < 4 * res.delta_T_stderr_K


def test_a_reweighting_that_does_not_converge_never_fails_the_route(monatomic_cv, monkeypatch):
    """pymbar's 'free energies are not converged' (ParameterError) from both of its solvers:
    the route reports the Newton estimate with a warning instead of raising."""
    import pymbar
    from pymbar.utils import ParameterError
    tried = []

    def failing_mbar(u_kn, N_k, solver_protocol=None, **kw):
        tried.append(solver_protocol)
        raise ParameterError("Warning: Should have \\sum_n W_nk = 1. This generally indicates "
                             "the free energies are not converged.")

    monkeypatch.setattr(pymbar, "MBAR", failing_mbar)
    T_i, delta = 300.0, -3.0 * R * 5.0
    u_i = (U0_SYN + A_SYN * R * T_i / N_SYN + delta, 2.0)
    temps = [294.0, 296.0]
    series = [_canonical_series(T, 4000, seed=70 + k) for k, T in enumerate(temps)]
    samples = [_sample(T, s) for T, s in zip(temps, series)]
    res = ex.energy_route(u_i, T_i, 400.0, samples, monatomic_cv, series_final=series,
                          n_particles=N_SYN)
    assert tried == [None, "robust"]  # the default solver first, then pymbar's robust protocol
    assert res.method == "newton"
    assert any("MBAR did not converge" in w and "Newton estimate is reported" in w
               for w in res.warnings)
    assert abs(res.final_temperature_K - _exact_T_f(T_i, delta)) < 4 * res.delta_T_stderr_K


def test_newton_converges_at_the_root(monatomic_cv):
    T_i, delta = 300.0, -3.0 * R * 5.0
    T_exact = _exact_T_f(T_i, delta)
    u_exact = U0_SYN + A_SYN * R * T_exact / N_SYN
    sample = ex.StateSample(T_exact, u_exact, 3.0, A_SYN * R / N_SYN, 0.0)
    step = ex.newton_step(sample, (U0_SYN + A_SYN * R * T_i / N_SYN + delta, 3.0), T_i, monatomic_cv)
    assert abs(step.step_K) < 1e-9 and step.converged  # exact data: zero step


# --- microcanonical route -------------------------------------------------------------

def test_microcanonical_exact_harmonic_check():
    # Ray (1991), docs/references.md section 7: F kinetic and f_c harmonic coordinates at total E give
    # 1/kT = ((F + f_c)/2 - 1) / E; U / E ~ Beta(f_c/2, F/2) samples that ensemble exactly.
    N, f, f_c, T_red = 50, 3, 150, 2.0
    F = f * N
    E = T_red * ((F + f_c) / 2 - 1)
    rng = np.random.default_rng(8)
    U_t = E * rng.beta(f_c / 2, F / 2, 20_000)
    eps_K = 100.0
    res = ex.microcanonical_route((E - U_t) / N, N, f, eps_K, T_i=210.0,
                                  initial_energy_stderr_red=0.002)
    assert abs(res.final_temperature_K - T_red * eps_K) < 4 * res.final_temperature_stderr_K
    assert res.delta_T_K == pytest.approx(res.final_temperature_K - 210.0)
    # the initial-energy error enters as s_E / (f/2)
    assert res.delta_T_stderr_K == pytest.approx(
        math.hypot(res.final_temperature_stderr_K, 0.002 / 1.5 * eps_K), rel=1e-12)


# --- direct route ------------------------------------------------------------------

def test_direct_route_bookkeeping():
    # a synthetic NVE run: the temperature relaxes from 2.0 to 1.95 and the model
    # energy E = K + u_model stays constant, 0.01 above the canonical mean of the
    # initial state; <u_full - u_model> goes from -0.02 (initial) to -0.01 (final).
    rng = np.random.default_rng(4)
    N, eps_K = 100, 120.0
    kin = (3 * N - 3) / (2 * N)
    u_model_i = -0.1 + 0.005 * rng.normal(size=2000)
    T_t = 1.95 + 0.05 * np.exp(-np.arange(3000) / 100.0) + 0.01 * rng.normal(size=3000)
    E = kin * 2.0 + u_model_i.mean() + 0.01
    u_model_t = E - kin * T_t
    res = ex.direct_route(T_t, u_model_t, u_model_t - 0.01, u_model_i, u_model_i - 0.02,
                             T_i_red=2.0, n_particles=N, epsilon_K=eps_K)
    # closed form: T_f = 1.95 - 0.01 / kin (anchor) - (-0.01 + 0.02) / kin (full potential)
    expected = (1.95 - 0.01 / kin - 0.01 / kin) * eps_K
    assert abs(res.final_temperature_K - expected) < 4 * res.final_temperature_stderr_K
    assert res.details["potential_correction_K"] == pytest.approx(-0.01 / kin * eps_K, rel=1e-9)
    assert any("full potential" in n for n in res.notes)
    assert res.warnings == []


def test_direct_route_ideal_gas():
    N = 64
    zeros = np.zeros(100)
    res = ex.direct_route(np.full(100, 1.3), zeros, zeros, zeros, zeros, 1.3, N, 100.0)
    assert res.delta_T_K == pytest.approx(0.0, abs=1e-12)  # ideal gas: no change (closed form)


# --- bad input ------------------------------------------------------------------------

def test_errors(argon_hcb, monatomic_cv):
    with pytest.raises(StudyError, match="volume_ratio.*must be > 1"):
        ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 1.0, p_i=20e5)
    with pytest.raises(StudyError, match="volume_ratio"):
        ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 0.5, p_i=20e5)
    with pytest.raises(StudyError, match="exactly one"):
        ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 2.0)
    with pytest.raises(StudyError, match="order"):
        ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 2.0, p_i=20e5, order=4)
    narrow = TabulatedHeatCapacity([250.0, 350.0], [12.47, 12.47])
    with pytest.raises(StudyError, match="initial temperature.*outside"):
        ex.virial_expansion(argon_hcb, narrow, 400.0, 2.0, p_i=20e5)
    # the root (T_f ~ 290 K) lies below a table that starts at 293 K
    tight = TabulatedHeatCapacity([293.0, 300.0], [12.47, 12.47])
    with pytest.raises(ConvergenceError, match="no root"):
        ex.virial_expansion(argon_hcb, tight, 295.0, 2.0, p_i=20e5)
    # argon at 295 K and 25 kmol/m^3 (~ 600 bar): the series does not converge
    with pytest.raises(VirialSeriesError, match="simulation is needed"):
        ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 2.0, rho_i=25_000.0, order=3)
    with pytest.raises(StudyError, match="empty"):
        ex.energy_route((0.0, 1.0), 300.0, 1.0, [], monatomic_cv)
    with pytest.raises(StudyError, match="> 0"):
        ex.microcanonical_route(np.r_[np.ones(30), -1.0], 10, 3, 100.0, 300.0)
    # settings are named as the function spells them; a particle count is a whole number
    with pytest.raises(SettingError, match="setting 'T_i' = -5.0: must be a positive"):
        ex.virial_expansion(argon_hcb, monatomic_cv, -5.0, 2.0, p_i=20e5)
    with pytest.raises(SettingError, match="setting 'n_particles' = 10.5: must be a whole"):
        ex.microcanonical_route(np.ones(30), 10.5, 3, 100.0, 300.0)
    with pytest.raises(SettingError, match="setting 'kinetic_dof' = 0"):
        ex.direct_route(np.ones(30), *[np.zeros(30)] * 4, 1.0, 10, 100.0, kinetic_dof=0)


def test_result_rendering(argon_hcb, monatomic_cv):
    res = ex.virial_expansion(argon_hcb, monatomic_cv, 295.0, 2.0, p_i=20e5, order=3)
    d = json.loads(json.dumps(res.to_dict()))
    for key in ("delta_T_K", "final_pressure_Pa", "final_temperature_K",
                "initial_density_mol_m3", "entropy_generated_J_molK", "warnings"):
        assert key in d
    table = res.to_table()
    assert "delta_T_K" in table and f"{res.delta_T_K:.6g}" in table
    nan_res = ex.SampledExpansionResult("energy", "newton", 1.0, math.nan, 0.0, 0.0, 0.0,
                                        warnings=["w"])
    assert nan_res.to_dict()["final_temperature_K"] is None  # JSON has no NaN
    assert "  - w" in nan_res.to_table()
