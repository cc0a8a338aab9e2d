"""Canonical Monte Carlo of rigid linear molecules (mdsim.engine.rigid_mc, mdsim.sampling.rigid).

The bookkeeping is checked against the pair-list kernel of
mdsim.engine.rigid_pair (itself checked against the analysis layer's pair
energy); the thermodynamics of nitrogen (configs/nitrogen.toml, the 2CLJQ
model of Vrabec, Stoll and Hasse 2001) at 300 K and 100 bar against the
model's own virial series and against CoolProp's nitrogen (Span et al.
2000; test-only).
"""
import math
from pathlib import Path

import numpy as np
import pytest

from analysis.molecules import MolecularVirialGas
from analysis.molecules.reduced import reduced_linear_type
from mdsim.engine.rigid_mc import RigidMCSampler, lattice_start
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.errors import SettingError
from mdsim.sampling.rigid import sample_rigid_state
from mdsim.study.reader import read_study
from mdsim.units import N_A, R_GAS

CONFIGS = Path(__file__).resolve().parents[2] / "configs"


@pytest.fixture(scope="module")
def nitrogen():
    return read_study(CONFIGS / "nitrogen.toml").gas.molecules[0]


def test_moves_keep_the_energy_books_and_the_cells_find_every_pair(nitrogen):
    # a liquid-like box (rho sigma^3 = 0.5, kT = 2 epsilon), so that moves are rejected too
    site = nitrogen.sites[0].potential
    model = LinearPairModel([reduced_linear_type(nitrogen, site.epsilon, site.sigma)], 2.4)
    n = 64
    box = np.full(3, (n / 0.5) ** (1 / 3))
    centre, axis = lattice_start(n, box, seed=4)
    s = RigidMCSampler(model, centre, axis, np.zeros(n, int), box, temperature=2.0, seed=5)
    s.equilibrate(30)
    steps = (s.max_displacement, s.max_angle)
    assert steps != (0.3, 0.5)  # tuned
    assert np.all((s.acceptance_m > 0.2) & (s.acceptance_m < 0.8))
    out = s.run(5, 2)
    assert (s.max_displacement, s.max_angle) == steps  # frozen in production
    # the running energy after the last moves equals the recomputed total (tolerance: round-off)
    s.equilibrate(3)
    running = s.u_trunc
    u, w = s.energy_and_virial()
    assert running == pytest.approx(u, rel=1e-10)
    # the cell sums against the all-pairs half list of the force kernel
    nb = np.array([list(range(i + 1, n)) + [0] * (i + 1) for i in range(n)], dtype=np.int32)
    f, t = np.zeros((n, 3)), np.zeros((n, 3))
    u2, w2 = model.forces(s.centre_ni, s.axis_ni, s.type_n, s.box_i, nb,
                          np.arange(n - 1, -1, -1, dtype=np.int32), f, t)
    assert (u, w) == pytest.approx((u2, w2), rel=1e-10)
    assert np.allclose(np.linalg.norm(s.axis_ni, axis=1), 1.0, atol=1e-12)
    assert out["u_full"][-1] == pytest.approx(out["u_trunc"][-1] + s.u_tail, rel=1e-12)
    # the same seed gives the same numbers (the random stream is the sampler's own)
    again = RigidMCSampler(model, centre, axis, np.zeros(n, int), box, temperature=2.0, seed=5)
    again.equilibrate(30)
    assert np.array_equal(again.run(5, 2)["u_trunc"], out["u_trunc"])
    with pytest.raises(SettingError, match="twice the cut-off"):
        RigidMCSampler(model, centre, axis, np.zeros(n, int), box / 2, temperature=2.0, seed=5)


@pytest.fixture(scope="module")
def nitrogen_100_bar(nitrogen):
    gas = MolecularVirialGas([nitrogen], [1.0])
    T = 300.0
    rho = gas.density_from_pressure(T, 100e5)  # the model's density at 100 bar (B2 + B3)
    est = sample_rigid_state(nitrogen, T, rho, n_molecules=128, cutoff=5.0,
                             equilibration_sweeps=50, samples=800, interval=1, seed=21)
    return gas, est


def test_nitrogen_at_100_bar_against_its_virial_series(nitrogen_100_bar):
    gas, est = nitrogen_100_bar
    T, rho = est.temperature_K, est.density_mol_m3
    # u_res = -R T^2 (rho dB2/dT + rho^2/2 dB3/dT) + O(rho^3) (virial expansion of the
    # internal energy, e.g. Mason and Spurling, The Virial Equation of State, 1969)
    u3 = gas.u_res_J_mol(T, rho, 3)
    u2 = gas.u_res_J_mol(T, rho, 2)
    assert u2 == pytest.approx(-R_GAS * T ** 2 * rho * float(gas.dB_dT(T)), rel=1e-12)
    u3_stderr = 0.5 * R_GAS * T ** 2 * rho ** 2 * gas.C_stderr(T)[1]  # MC error of dB3/dT
    # tolerance: 3 combined standard errors plus a third of the B3 term for the missing B4
    # term (the terms fall by more than 3x per order here: B3 term / B2 term = 1.3 %)
    tol = 3 * math.hypot(est.u_res_stderr, u3_stderr) + abs(u3 - u2) / 3
    assert est.u_res_J_mol == pytest.approx(u3, abs=tol)
    # p = rho R T (1 + B2 rho + B3 rho^2) = 100 bar at this density, within 3 standard errors
    assert est.pressure_Pa == pytest.approx(gas.pressure_Pa(T, rho, 3), abs=3 * est.pressure_stderr)


def test_nitrogen_at_100_bar_against_coolprop(nitrogen_100_bar):
    CP = pytest.importorskip("CoolProp.CoolProp")
    _, est = nitrogen_100_bar
    T, rho = est.temperature_K, est.density_mol_m3
    u_ref = (CP.PropsSI("Umolar", "T", T, "Dmolar", rho, "Nitrogen")
             - CP.PropsSI("Umolar", "T", T, "Dmolar", 1e-6, "Nitrogen"))
    p_ref = CP.PropsSI("P", "T", T, "Dmolar", rho, "Nitrogen")
    # the model's accuracy here: its Delta T (set by u_res) within 2 % of the reference EOS up
    # to 100 bar, its B2 within 1.6 cm^3/mol at 300 K (tests/analysis/molecules/
    # test_against_coolprop.py, measured), i.e. 0.6 % of p at 4000 mol/m^3; the 2CLJQ
    # parameters were fitted to vapour-liquid equilibria (Vrabec et al. 2001), not to this state
    assert est.u_res_J_mol == pytest.approx(u_ref, abs=3 * est.u_res_stderr + 0.03 * abs(u_ref))
    assert est.pressure_Pa == pytest.approx(p_ref, abs=3 * est.pressure_stderr + 0.01 * p_ref)


@pytest.mark.slow
def test_nitrogen_energy_route_from_100_bar_doubled_against_coolprop(nitrogen, nitrogen_100_bar):
    # the energy route: u(T_f, rho_i / 2) = u(T_i, rho_i) with the ideal part c_v = 5/2 R
    # (3 translations + 2 rotations of the rigid model, vibration frozen: configs/nitrogen.toml)
    CP = pytest.importorskip("CoolProp.CoolProp")
    from scipy.optimize import brentq
    from analysis.expansion import energy_route
    from analysis.heatcapacity import ConstantHeatCapacity
    _, initial = nitrogen_100_bar
    T_i, rho_f = initial.temperature_K, 0.5 * initial.density_mol_m3
    cv = ConstantHeatCapacity.in_units_of_R(2.5)
    # sample the final isochore where u_res halves with the density (lowest order in rho)
    T_guess = T_i + 0.5 * initial.u_res_J_mol / cv.cv(T_i)
    final = sample_rigid_state(nitrogen, T_guess, rho_f, n_molecules=128, cutoff=5.0,
                               equilibration_sweeps=50, samples=800, interval=1, seed=22)
    res = energy_route((initial.u_res_J_mol, initial.u_res_stderr), T_i, rho_f,
                       [final.state_sample()], cv)
    # the reference: CoolProp nitrogen (Span et al. 2000) from 100 bar at T_i, volume doubled
    rho_ref = CP.PropsSI("Dmolar", "T", T_i, "P", 100e5, "Nitrogen")
    u_ref = CP.PropsSI("Umolar", "T", T_i, "Dmolar", rho_ref, "Nitrogen")
    T_f = brentq(lambda t: CP.PropsSI("Umolar", "T", t, "Dmolar", rho_ref / 2, "Nitrogen") - u_ref,
                 T_i - 30.0, T_i, xtol=1e-9)
    # tolerance: 3 standard errors plus the model's 2 % on Delta T up to 100 bar (measured for
    # its virial route, tests/analysis/molecules/test_against_coolprop.py)
    assert res.delta_T_K == pytest.approx(T_f - T_i, abs=3 * res.delta_T_stderr_K
                                          + 0.02 * abs(T_f - T_i))


@pytest.fixture(scope="module")
def air():
    """configs/air_2cljq.toml: 2CLJQ N2 and O2 and LJ Ar (Vrabec et al. 2001, from memory)."""
    return read_study(CONFIGS / "air_2cljq.toml")


def test_a_mixture_keeps_its_books_and_never_turns_an_atom(air):
    # air's molecules at a liquid-like density (rho sigma^3 = 0.5, kT = 2 epsilon of N2), so
    # that moves are rejected too; 40 N2, 16 O2, 8 Ar
    from mdsim.sampling.rigid_box import mixture_box
    units = air.units
    rho = 0.5 / (units.sigma_m ** 3 * N_A)
    box = mixture_box(air.gas.molecules, [40, 16, 8], 2.0 * units.epsilon_K, rho, 2.4, seed=3)
    assert np.bincount(box.type_n).tolist() == [40, 16, 8]
    s = RigidMCSampler(box.model, box.centre_ni, box.axis_ni, box.type_n, box.box_i,
                       temperature=2.0, seed=5)
    axis0 = s.axis_ni.copy()
    s.equilibrate(20)
    s.run(3, 2)
    assert np.all((s.acceptance_m > 0.2) & (s.acceptance_m < 0.8))
    # the running energy equals the recomputed total (tolerance: round-off)
    assert s.u_trunc == pytest.approx(s.energy_and_virial()[0], rel=1e-10)
    atoms = box.type_n == 2
    assert np.array_equal(s.axis_ni[atoms], axis0[atoms])  # an atom is never turned
    turned = np.any(s.axis_ni[~atoms] != axis0[~atoms], axis=1)
    assert turned.mean() > 0.9  # the molecules were (about 13 rotations tried each)


def test_air_at_22_bar_against_its_virial_series(air):
    # the mixture's u_res and p at 295.15 K and the density of 22 bar by the model's B2 + B3
    # series (the virial routes' mixing: Lorentz-Berthelot per site pair), 200 molecules
    gas = MolecularVirialGas(air.gas.molecules, air.gas.fractions, n_draws=30000)
    T = 295.15
    rho = gas.density_from_pressure(T, 22e5)
    counts = air.counts(200)
    est = sample_rigid_state(air.gas.molecules, T, rho, n_molecules=200, cutoff=5.0,
                             equilibration_sweeps=50, samples=1000, interval=1, seed=3,
                             counts_t=counts)
    # the box's mole fractions are the study's rounded to whole molecules (156, 42, 2): the
    # series at the box's fractions
    box_gas = MolecularVirialGas(air.gas.molecules, counts / counts.sum(), n_draws=30000)
    u3, u2 = box_gas.u_res_J_mol(T, rho, 3), box_gas.u_res_J_mol(T, rho, 2)
    u3_stderr = 0.5 * R_GAS * T ** 2 * rho ** 2 * box_gas.C_stderr(T)[1]
    # tolerance: 3 combined standard errors plus a third of the B3 term for the missing B4
    # term (as for nitrogen above; the B3 term is 0.3 % of u_res here)
    tol = 3 * math.hypot(est.u_res_stderr, u3_stderr) + abs(u3 - u2) / 3
    assert est.u_res_J_mol == pytest.approx(u3, abs=tol)
    p3 = box_gas.pressure_Pa(T, rho, 3)
    assert est.pressure_Pa == pytest.approx(p3, abs=3 * est.pressure_stderr)
