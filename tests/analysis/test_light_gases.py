"""Exact quantum B2 (phase shifts), the second-order Wigner-Kirkwood term and the light-gas studies.

References: CoolProp's reference equations of state (test-only) for helium
(Ortiz-Vega et al.), normal hydrogen (Leachman et al.) and neon (Katti et al.),
B2 from PropsSI('Bvirial', 'T', T, 'Dmolar', 1e-6, fluid).
"""
import math
from pathlib import Path

import numpy as np
import pytest

from analysis import virial
from analysis.virial.phase_shifts import MATCH_SIGMA, bound_states, phase_shifts_at
from analysis.virial_eos import VirialGas
from mdsim.engine.potentials import LennardJones, read_table
from mdsim.study import read_study
from mdsim.units import N_A

CP = pytest.importorskip("CoolProp.CoolProp")
CONFIGS = Path(__file__).resolve().parents[2] / "configs"
CM3 = virial.M3_MOL_PER_A3 * 1e6  # angstrom^3 per molecule -> cm^3/mol


def _coolprop_b2_cm3(fluid, T):
    return CP.PropsSI("Bvirial", "T", T, "Dmolar", 1e-6, fluid) * 1e6


def test_exact_b2_of_a_mildly_quantum_lj_gas_tends_to_the_wigner_kirkwood_series():
    # Lambda*^2 = 0.25 at T* = 2: exact B2 - classical - first order is the second-order
    # Wigner-Kirkwood term (HCB 1954 section 6.5) up to higher orders (measured: 0.5 %
    # of it); for the T-derivatives, where higher orders weigh more, adding the second
    # order shrinks the gap to a quarter (dB/dT) and a third (d2B/dT2).
    lj, q, T = LennardJones(1.0, 1.0), 0.5, 2.0
    exact = virial.b2_exact(lj, T, q, E_max=48.0)
    cl = virial.b2(lj, T)
    first = virial.b2_quantum(lj, T, q)
    second = virial.b2_second_order(lj, T, q)
    gap1 = [exact[k] - cl[k] - first[k] for k in range(3)]
    gap2 = [gap1[k] - second[k] for k in range(3)]
    assert abs(gap1[0]) < 0.03 * first[0]
    assert abs(gap2[0]) < 0.05 * abs(second[0])
    assert abs(gap2[1]) < 0.35 * abs(gap1[1])
    assert abs(gap2[2]) < 0.5 * abs(gap1[2])


def test_levinson_bound_states_of_neon():
    # Levinson's theorem: delta_l(k -> 0) = n_bound(l) pi (l >= 1, no threshold state);
    # the HFD-B neon dimer is bound (several vibrational levels, fact of the trade).
    pot = read_table(CONFIGS / "neon_hfdb.csv")
    c = virial.h2_over_mu_K_A2(20.1797e-3 / N_A, 20.1797e-3 / N_A) / (8.0 * math.pi ** 2)
    r_match = MATCH_SIGMA * pot.sigma
    levels = bound_states(pot, c, r_match)
    assert levels and all(-pot.epsilon < E < 0.0 for _, E in levels)
    for l in (1, 2):
        n_b = sum(1 for ll, _ in levels if ll == l)
        delta = phase_shifts_at(pot, c, 1e-3, [l], r_match)[0]
        assert delta == pytest.approx(n_b * math.pi, abs=1e-3)


@pytest.mark.parametrize("T, tol", [(10.0, 0.5), (100.0, 0.08), (300.0, 0.08), (1000.0, 0.08)])
def test_helium_exact_b2_against_the_reference_equation_of_state(T, tol):
    # CoolProp helium EOS; tolerance: the EOS's B2 uncertainty near 0.05 cm^3/mol above
    # 50 K (from memory), wider at 10 K near the EOS's low-T end.  Ab initio B2 of
    # helium-4 at 300 K is 11.8 cm^3/mol (Cencek et al. 2012, from memory).
    study = read_study(CONFIGS / "helium.toml")
    g = study.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum,
                    spin=g.spin_components())
    assert gas.B(T) * 1e6 == pytest.approx(_coolprop_b2_cm3("Helium", T), abs=tol)


@pytest.mark.parametrize("T", [50.0, 100.0, 300.0])
def test_hydrogen_exact_b2_against_the_reference_equation_of_state(T):
    # CoolProp normal hydrogen EOS.  The isotropic Silvera-Goldman potential's B2 differs
    # from it by up to 1.9 cm^3/mol (measured: +1.9 at 50 K, -0.2 at 100 K, -1.2 at 300 K;
    # a limit of the potential, not of the method: its classical + first-order B2 agrees
    # with the exact one to 0.04 cm^3/mol at 300 K).
    study = read_study(CONFIGS / "hydrogen.toml")
    g = study.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum,
                    spin=g.spin_components())
    assert gas.B(T) * 1e6 == pytest.approx(_coolprop_b2_cm3("Hydrogen", T), abs=2.0)


def test_hydrogen_b2_offset_lies_in_the_potential_not_in_the_quantum_method():
    """Silvera-Goldman's B2 below CoolProp's normal-hydrogen EOS: the potential or our code?
    (1) At 300 and 1000 K the exact B2 equals classical + first + second-order
    Wigner-Kirkwood (plain quadrature, no phase shifts, grids or partial waves) to within
    the next order (HCB 1954 section 6.5; allowed 0.02 cm^3/mol, measured 0.006 and
    0.002); (2) so the offset from the reference, over 1 cm^3/mol there, is already in the
    near-classical B2 of the potential; (3) the spin-isomer weighting (normal, para,
    Boltzmann) moves B2 by less than 0.01 cm^3/mol at 50 K (measured below 1e-5)."""
    from analysis.virial.quantum_exact import spin_components
    pot = read_table(CONFIGS / "hydrogen_sg.csv")
    m = 2.01588e-3 / N_A
    h2mu = virial.h2_over_mu_K_A2(m, m)
    T = np.array([300.0, 1000.0])
    exact = virial.b2_exact(pot, T, h2mu, components=spin_components("bose", ortho_fraction=0.75))
    series = (virial.b2(pot, T)[0] + virial.b2_quantum(pot, T, h2mu)[0]
              + virial.b2_second_order(pot, T, h2mu)[0])
    assert exact[0] * CM3 == pytest.approx(series * CM3, abs=0.02)
    reference = np.array([_coolprop_b2_cm3("Hydrogen", t) for t in T])
    assert np.all(reference - series * CM3 > 1.0)
    T_low = np.array([50.0])
    b = [virial.b2_exact(pot, T_low, h2mu, components=c)[0][0] * CM3
         for c in (spin_components("bose", ortho_fraction=0.75),
                   spin_components("bose", ortho_fraction=0.0), spin_components("boltzmann"))]
    assert max(b) - min(b) < 0.01


def test_neon_second_order_b2_against_the_reference_equation_of_state():
    # CoolProp neon EOS at 300 K: 11.57 cm^3/mol; HFD-B gives 11.36 (tolerance 0.3,
    # the spread between published neon B2 data near room temperature, from memory).
    pot = read_table(CONFIGS / "neon_hfdb.csv")
    gas = VirialGas(pot, [1.0], 20.1797e-3, quantum="second-order")
    assert gas.B(300.0) * 1e6 == pytest.approx(_coolprop_b2_cm3("Neon", 300.0), abs=0.3)


def _coolprop_free_expansion(fluid, T, p):
    from scipy.optimize import brentq
    rho = CP.PropsSI("Dmolar", "T", T, "P", p, fluid)
    u = CP.PropsSI("Umolar", "T", T, "P", p, fluid)
    return brentq(lambda t: CP.PropsSI("Umolar", "T", t, "Dmolar", rho / 2.0, fluid) - u,
                  T - 20.0, T + 20.0) - T


@pytest.mark.parametrize("name, fluid, tol", [("helium", "Helium", 0.05),
                                               ("hydrogen", "Hydrogen", 0.25),
                                               ("neon", "Neon", 0.1)])
def test_free_expansion_of_light_gases_against_the_reference_equations(name, fluid, tol):
    # Helium warms, hydrogen and neon cool at 295.15 K, 100 bar into twice the volume (fact
    # of the trade).  CoolProp: +0.52 K, -1.32 K, -2.29 K; tolerances: helium from the
    # 0.01 cm^3/mol B2 agreement and B3 within 3 cm^6/mol^2; hydrogen from the
    # Silvera-Goldman dB2/dT and the constant 2.5 R c_v (real normal hydrogen differs by
    # about 1 % at 295 K); neon from the 0.2 cm^3/mol B2 offset of HFD-B against the EOS.
    from mdsim.pipeline.virial_summary import virial_summary
    from mdsim.study.statepoints import state_points
    study = read_study(CONFIGS / f"{name}.toml")
    rec = virial_summary(study, state_points(study)[0])
    dT = rec["delta_T_K"]["virial_b2b3"]["value"]
    ref = _coolprop_free_expansion(fluid, 295.15, 1e7)
    assert np.sign(dT) == np.sign(ref)
    assert dT == pytest.approx(ref, abs=tol)


def test_helium_dimer_is_the_known_halo_state():
    # LM2M2 binds one He-4 dimer level, l = 0, at about -1.31 mK (Aziz and Slaman 1991;
    # from memory).  The full table (to 30 angstrom) is needed: the state reaches far out.
    pot = read_table(CONFIGS / "helium_lm2m2.csv")
    c = virial.h2_over_mu_K_A2(4.002602e-3 / N_A, 4.002602e-3 / N_A) / (8.0 * math.pi ** 2)
    levels = bound_states(pot, c, pot.r_max - 0.05)
    assert len(levels) == 1 and levels[0][0] == 0
    assert levels[0][1] * 1e3 == pytest.approx(-1.31, abs=0.05)


@pytest.mark.slow
@pytest.mark.parametrize("name, fluid, joule_range, jt_range, tol_joule, tol_jt", [
    ("helium", "Helium", (60.0, 400.0), (15.0, 100.0), 5.0, 3.0),
    ("hydrogen", "Hydrogen", (300.0, 1200.0), (60.0, 400.0), 50.0, 15.0),
])
def test_joule_and_joule_thomson_inversions_with_the_exact_b2(name, fluid, joule_range,
                                                              jt_range, tol_joule, tol_jt):
    # Free-expansion (Joule) inversion at zero density: the maximum of B2; the
    # zero-pressure Joule-Thomson inversion T dB/dT = B is another process, far lower
    # (facts of the trade: helium about 40 K, hydrogen about 200 K).  References:
    # the same roots of CoolProp's B2 (helium 174.5 K and 45.6 K, normal hydrogen
    # 657.6 K and 200.8 K); the hydrogen tolerance carries the Silvera-Goldman B2 error.
    from analysis.inversion import virial_series as vs
    from scipy.optimize import brentq
    study = read_study(CONFIGS / f"{name}.toml")
    g = study.gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum,
                    spin=g.spin_components())
    t_joule = vs.zero_density_joule_inversion_K(gas, temperature_range_K=joule_range)
    t_jt = vs.joule_thomson_inversion_zero_pressure_K(gas, temperature_range_K=jt_range)

    def dB(T):
        return CP.PropsSI("dBvirial_dT", "T", T, "Dmolar", 1e-6, fluid)

    ref_joule = brentq(dB, *joule_range)
    ref_jt = brentq(lambda T: T * dB(T) - CP.PropsSI("Bvirial", "T", T, "Dmolar", 1e-6, fluid),
                    *jt_range)
    assert t_joule == pytest.approx(ref_joule, abs=tol_joule)
    assert t_jt == pytest.approx(ref_jt, abs=tol_jt)
    assert t_joule > 3.0 * t_jt


def test_helium_b3_with_its_first_order_quantum_term():
    # CoolProp's helium EOS: C(100 K) = 165.3 cm^6/mol^2; the classical additive B3 of
    # LM2M2 is 146.1, with the first-order Wigner-Kirkwood term 164.3 (tolerance 3: the
    # non-additive three-body part, about -2 near room temperature for helium, from memory,
    # and higher quantum orders).
    pot = read_table(CONFIGS / "helium_lm2m2.csv")
    cm6 = virial.M6_MOL2_PER_A6 * 1e12
    ref = CP.PropsSI("Cvirial", "T", 100.0, "Dmolar", 1e-6, "Helium") * 1e12
    classical = virial.b3(pot, 100.0)[0] * cm6
    q = virial.h2_over_mu_K_A2(4.002602e-3 / N_A, 4.002602e-3 / N_A)
    quantum = classical + virial.b3_quantum_first_order(pot, 100.0, q)[0] * cm6
    assert abs(quantum - ref) < 3.0 < abs(classical - ref)


def test_exchange_lowers_b2_for_bosons_and_raises_it_for_fermions_at_low_temperature():
    # Statistical attraction of bosons and repulsion of fermions (common practice, no
    # source); the hard core (sigma ~ 2.6 angstrom) hides exchange once the thermal
    # wavelength is shorter (lambda = 1.95 angstrom at 20 K for helium-4): measured below
    # 1e-3 cm^3/mol at 20 K, 3.4 cm^3/mol at 2 K.
    pot = read_table(CONFIGS / "helium_lm2m2.csv")
    q = virial.h2_over_mu_K_A2(4.002602e-3 / N_A, 4.002602e-3 / N_A)
    T = np.array([2.0, 20.0])
    boltz = virial.b2_exact(pot, T, q)[0] * CM3
    bose = virial.b2_exact(pot, T, q, virial.spin_components("bose"))[0] * CM3
    fermi = virial.b2_exact(pot, T, q, virial.spin_components("fermi", 2))[0] * CM3
    assert bose[0] < boltz[0] - 1.0 and fermi[0] > boltz[0] + 0.5
    assert abs(bose[1] - boltz[1]) < 1e-3 and abs(fermi[1] - boltz[1]) < 1e-3
