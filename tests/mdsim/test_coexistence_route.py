"""Gibbs-ensemble-shaped coexistence points (reduced) to the expansion through coexistence.

The points carry the fields of the Gibbs-ensemble sampler's results (reduced
units, per particle) but their values come from the Lennard-Jones reference EOS
of Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp
(test-only), with standard errors invented for the test.  The reference answer
of the issue's example (epsilon/k = 100 K, 80 K, rho* = 0.75, volume doubled):
T_f* = 0.84785, 1.318 % vapour (tests/analysis/test_coexistence_expansion.py).
"""
from types import SimpleNamespace

import numpy as np
import pytest

from analysis.heatcapacity import ConstantHeatCapacity
from mdsim.pipeline.coexistence_route import (coexistence_table, expansion_through_coexistence,
                                              final_state_in_dome)
from mdsim.units import ReducedUnits

UNITS = ReducedUnits(100.0, 3.405e-10, 0.040)
ERR = 0.002  # invented standard error of every reduced density and energy


@pytest.fixture(scope="module")
def points(thol_lj):
    pts = []
    for t in np.arange(0.75, 0.951, 0.025):
        rl, rv = thol_lj.saturation(t)
        pts.append(SimpleNamespace(T_red=t, rho_liq=rl, rho_vap=rv, u_liq=thol_lj.u_res(t, rl),
                                   u_vap=thol_lj.u_res(t, rv), p_sat=0.0, rho_liq_err=ERR,
                                   rho_vap_err=ERR / 10, u_liq_err=ERR, u_vap_err=ERR,
                                   p_sat_err=0.0))
    return pts


def test_the_issue_example_through_reduced_points(thol_lj, points):
    u_i = UNITS.energy_to_J_mol(thol_lj.u_res(0.8, 0.75))
    rho_f = UNITS.density_to_mol_m3(0.375)
    res = expansion_through_coexistence(u_i, 0.0, 80.0, rho_f, points, UNITS,
                                        ConstantHeatCapacity.in_units_of_R(1.5))
    # Thol 2016 (teqp) through a 0.025 T* spline: 0.01 K
    assert res.final_temperature_K == pytest.approx(84.785, abs=0.01)
    assert res.vapour_fraction == pytest.approx(0.01318, abs=2e-4)


def test_propagated_error_matches_a_monte_carlo_of_the_point_errors(thol_lj, points):
    """Each of the four coexistence quantities shifted by one normal draw at every temperature
    (errors fully correlated along T, so the spline carries the shift unchanged) and the balance
    solved again: the spread of T_f is the first-order propagated error (delta method, common
    practice, no source) within 20 % (150 draws give the spread to about 6 %)."""
    cv = ConstantHeatCapacity.in_units_of_R(1.5)
    u_i = UNITS.energy_to_J_mol(thol_lj.u_res(0.8, 0.75))
    rho_f = UNITS.density_to_mol_m3(0.375)
    res = expansion_through_coexistence(u_i, 0.0, 80.0, rho_f, points, UNITS, cv)
    rng = np.random.default_rng(2024)
    names = ("rho_liq", "rho_vap", "u_liq", "u_vap")
    T_f = []
    for _ in range(150):
        z = rng.normal(size=4)
        moved = [SimpleNamespace(**{**vars(p), **{k: getattr(p, k) + zk * getattr(p, k + "_err")
                                                  for k, zk in zip(names, z)}}) for p in points]
        T_f.append(expansion_through_coexistence(u_i, 0.0, 80.0, rho_f, moved, UNITS, cv)
                   .final_temperature_K)
    assert np.std(T_f, ddof=1) == pytest.approx(res.final_temperature_stderr_K, rel=0.2)


def test_virial_final_state_checked_against_the_curve(points):
    table = coexistence_table(points, UNITS)
    inside = final_state_in_dome(table, 85.0, UNITS.density_to_mol_m3(0.375), "virial_b2b3")
    assert inside is not None and "TWO-PHASE" in inside
    # the saturated vapour at T* = 0.85 is rho* = 0.0075 (Thol 2016): rho* = 0.005 is vapour
    assert final_state_in_dome(table, 85.0, UNITS.density_to_mol_m3(0.005), "virial_b2") is None
    assert final_state_in_dome(None, 85.0, 1.0e4, "virial_b2") is None  # no curve, no check
