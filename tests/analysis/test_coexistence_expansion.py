"""The free expansion through vapour-liquid coexistence against the Thol 2016 LJ reference EOS.

The coexistence table the solver gets is built from the reference equation of
state of Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp
(test-only): coexisting densities from teqp's ``pure_VLE_T``, residual energies
u_res = T Ar10 (docs/references.md section 5.1), every 0.025 in T*.  The
expected answers solve the same balance on the EOS itself (saturation traced at
each trial temperature, no table, no interpolation), so the comparison checks
the solver and the interpolation of the table.  epsilon/k = 100 K,
sigma = 3.405 angstrom (rho* = 0.75 is 31 500 mol/m^3).
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from analysis.expansion import (CoexistencePoint, CoexistenceTable, SinglePhaseFinalState,
                                coexistence_expansion, vapour_fraction)
from analysis.heatcapacity import ConstantHeatCapacity
from mdsim.units import N_A, R_GAS

EPS_K = 100.0
RHO_UNIT = 1.0 / (N_A * (3.405e-10) ** 3)  # mol/m^3 per unit of rho*


def _table(model, t_lo=0.70, t_hi=1.25):
    pts = []
    for t in np.arange(t_lo, t_hi + 1e-9, 0.025):
        rl, rv = model.saturation(t)
        pts.append(CoexistencePoint(t * EPS_K, rl * RHO_UNIT, rv * RHO_UNIT,
                                    model.u_res(t, rl) * EPS_K * R_GAS,
                                    model.u_res(t, rv) * EPS_K * R_GAS))
    return CoexistenceTable(pts, "Thol 2016 via teqp")


def _reference(model, t_i, rho_i, r):
    """(T_f*, x) solving the balance on the EOS with exact saturation at each trial T*."""
    u_i = 1.5 * t_i + model.u_res(t_i, rho_i)
    rho_f = rho_i / r

    def u_two_phase(t):
        rl, rv = model.saturation(t)
        x = (1.0 / rho_f - 1.0 / rl) / (1.0 / rv - 1.0 / rl)
        return 1.5 * t + x * model.u_res(t, rv) + (1.0 - x) * model.u_res(t, rl), x

    t_f = brentq(lambda t: u_two_phase(t)[0] - u_i, 0.71, 1.249, xtol=1e-10)
    return t_f, u_two_phase(t_f)[1]


@pytest.fixture(scope="module")
def table(thol_lj):
    return _table(thol_lj)


@pytest.mark.parametrize("t_i, rho_i", [(0.8, 0.75), (1.5, 0.5)])
def test_two_phase_final_temperature_matches_the_reference_eos(thol_lj, table, t_i, rho_i):
    # (0.8, 0.75) doubled: the issue's example (80 K, 31 500 mol/m^3).  Its initial density is
    # itself inside the dome of the reference (saturated liquid 0.799 at T* = 0.8), a stretched
    # homogeneous liquid: the equilibrium final state is warmer, T_f* = 0.8479, 1.3 % vapour.
    # (1.5, 0.5) doubled: the supercritical fluid of tests/mdsim/test_routes_across_states.py,
    # whose equilibrium Delta T there is -28.06 K (T_f* = 1.2194, 70 % liquid).
    t_f, x = _reference(thol_lj, t_i, rho_i, 2.0)
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    res = coexistence_expansion(thol_lj.u_res( t_i, rho_i) * EPS_K * R_GAS, t_i * EPS_K,
                                rho_i / 2.0 * RHO_UNIT, table, cv)
    # tolerance: the cubic spline over a 0.025 T* grid (2.5 K) of smooth EOS data, 0.01 K
    assert res.final_temperature_K == pytest.approx(t_f * EPS_K, abs=0.01)
    assert res.vapour_fraction == pytest.approx(x, abs=2e-4)
    assert res.final_temperature_stderr_K == 0.0  # exact inputs, no error to propagate
    assert 0.0 < res.vapour_fraction < 1.0


def test_the_issue_example_numbers(thol_lj):
    """Recorded numbers of the reference for the issue's example (computed with teqp 0.23.2 here,
    so a change of the EOS implementation or of the tracing shows): T_f* = 0.84785."""
    t_f, x = _reference(thol_lj, 0.8, 0.75, 2.0)
    assert t_f == pytest.approx(0.84785, abs=1e-4)
    assert x == pytest.approx(0.01318, abs=1e-4)


def test_error_propagates_from_the_initial_energy(table, thol_lj):
    # sigma_T = sigma_u / |dg/dT|: shifting u_i by one sigma moves T_f by sigma_T to first order
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    u_i = thol_lj.u_res( 0.8, 0.75) * EPS_K * R_GAS
    rho_f = 0.375 * RHO_UNIT
    s = 5.0  # J/mol
    res = coexistence_expansion(u_i, 80.0, rho_f, table, cv, initial_u_res_stderr_J_mol=s)
    moved = coexistence_expansion(u_i + s, 80.0, rho_f, table, cv)
    assert res.final_temperature_stderr_K == pytest.approx(
        moved.final_temperature_K - res.final_temperature_K, rel=0.02)


def test_a_homogeneous_final_state_is_refused(table, thol_lj):
    # T* = 2, rho* = 0.3 -> 0.15 stays supercritical (T_c* = 1.32, Thol 2016): no two-phase root
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    with pytest.raises(SinglePhaseFinalState, match="single-phase routes"):
        coexistence_expansion(thol_lj.u_res( 2.0, 0.3) * EPS_K * R_GAS, 200.0, 0.15 * RHO_UNIT,
                              table, cv)


def test_lever_rule_conserves_volume_and_particles():
    # x / rho_v + (1 - x) / rho_l = 1 / rho (the lever rule; common practice, no source)
    x = vapour_fraction(3000.0, 30000.0, 100.0)
    assert x / 100.0 + (1.0 - x) / 30000.0 == pytest.approx(1.0 / 3000.0, rel=1e-12)
