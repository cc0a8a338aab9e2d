"""Exact quantum B2 of helium and neon against published ab initio values.

Reference numbers (read, not from memory): the README.TXT of the open data set
TAPPS ("Thermophysical Ab-initio Properties from Phase Shifts", G. Garberoglio,
https://github.com/gioGarbe/TAPPS, files README.TXT and README.md). It lists
B(T), T dB/dT and T^2 d2B/dT2 in cm^3/mol from phase shifts of the ab initio
pair potentials of

- helium: Czachorowski, Przybytek, Lesiuk, Puchalski and Jeziorski,
  Phys. Rev. A 102, 042810 (2020), doi:10.1103/PhysRevA.102.042810;
- neon (the natural isotopic mixture): Hellmann et al., J. Chem. Phys. 154,
  164304 (2021), doi:10.1063/5.0047999,

and states that these phase shifts reproduce the virial coefficients within
the published uncertainties.  Those uncertainties are below 0.01 cm^3/mol for
helium at and above 1 K and below 0.05 cm^3/mol for neon above 100 K (from
memory); they are negligible beside the differences between our potentials and
the ab initio ones, which set the tolerances below.

Our helium is LM2M2 (Aziz and Slaman 1991), not the ab initio potential, so the
check is "method + an older potential" against "ab initio": measured offsets
(ours minus ab initio) are in docs/physics.md section 2.4a.

Hydrogen: no published ab initio B2 could be read in a stored source, so its
check is against MEASURED B2 (tests/analysis/data/hydrogen_b2_measured.csv,
from the compilations of Dymond and Smith 1980 and Dymond et al. 2002 as the
open data set named in that file lists them; docs/references.md 5.4).
"""
import csv
from pathlib import Path

import numpy as np
import pytest

from analysis import virial
from analysis.virial.quantum_exact import spin_components
from analysis.virial_eos import VirialGas
from mdsim.engine.potentials import read_table
from mdsim.study import read_study
from mdsim.units import N_A

CONFIGS = Path(__file__).resolve().parents[2] / "configs"

# T (K): B, T dB/dT, T^2 d2B/dT2 of helium-4 (cm^3/mol), TAPPS README.TXT, Czachorowski et al.
# 2020 potential.
HELIUM4_AB_INITIO = {
    1.0: (-475.697195, 670.284965, -1793.712314),
    10.0: (-23.123061, 41.020085, -82.473578),
    100.0: (11.675048, 2.090648, -6.998566),
    273.16: (11.928088, -1.077099, -0.748414),
    1000.0: (9.550472, -2.255590, 1.992370),
}
# Helium-3 at 273.16 K, same source: B = 12.028842 cm^3/mol.
HELIUM3_AB_INITIO_273 = 12.028842
# Natural neon, B (cm^3/mol), same source, Hellmann et al. 2021 potential.
NEON_AB_INITIO = {273.16: 11.018930, 1000.0: 13.913426}

HELIUM3_MOLAR_MASS_KG_MOL = 3.0160293e-3  # atomic mass of helium-3 (common practice, no source)
# Published uncertainty of the ab initio helium values, cm^3/mol (from memory, an upper bound).
U_PUBLISHED_HELIUM = 0.01


def _lm2m2_tolerance(T):
    """Relative band within which LM2M2's B2 (and its T-derivatives) should meet the ab
    initio values.

    At and below 10 K, B2 is governed by the well: LM2M2's (10.97 K) is about 0.25 %
    shallower than the ab initio one (near 11.00 K, from memory), which alone raises
    B2 by 0.7 % at 10 K (docs/physics.md 2.4a: 0.16 cm^3/mol); twice that for the rest of
    the potential's shape gives 1.5 %.  From 100 K up, B2 probes the repulsive wall, where
    LM2M2 meets modern ab initio B2 to 0.1-0.5 % (from memory): 0.5 %.
    """
    return 0.015 if T <= 10.0 else 0.005


@pytest.fixture(scope="module")
def helium4():
    """The shipped helium study (configs/helium.toml): LM2M2, exact B2, Bose statistics."""
    g = read_study(CONFIGS / "helium.toml").gas
    return VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum,
                     spin=g.spin_components())


@pytest.mark.parametrize("T", sorted(HELIUM4_AB_INITIO))
def test_helium4_exact_b2_and_its_derivatives_against_ab_initio(helium4, T):
    # Tolerance: the LM2M2 band times the largest of |B|, |T dB/dT|, |T^2 d2B/dT2| (an
    # offset of the potential that stays within a band over a decade of T moves the
    # T-derivatives by the same order; common practice, no source) plus the published
    # uncertainty.  Measured (ours minus ab initio, cm^3/mol): B +3.9 at 1 K (0.8 %),
    # +0.21 at 10 K (0.9 %), +0.021 at 100 K, +0.009 at 273.16 K, +0.007 at 1000 K;
    # T dB/dT -6.8, -0.22, -0.019, -0.006, +0.001.
    ref = np.array(HELIUM4_AB_INITIO[T])
    ours = np.array([helium4.B(T), T * helium4.dB_dT(T), T * T * helium4.d2B_dT2(T)]) * 1e6
    rel = _lm2m2_tolerance(T)
    assert ours[0] == pytest.approx(ref[0], abs=rel * abs(ref[0]) + U_PUBLISHED_HELIUM)
    assert ours[1] == pytest.approx(
        ref[1], abs=rel * max(abs(ref[0]), abs(ref[1])) + U_PUBLISHED_HELIUM)
    assert ours[2] == pytest.approx(
        ref[2], abs=rel * np.max(np.abs(ref)) + U_PUBLISHED_HELIUM)


def test_helium4_at_1K_needs_bose_statistics():
    # The 1 K check above can fail on the statistics: with Boltzmann statistics the same
    # LM2M2 B2 is -415.7 cm^3/mol (measured), 13 % above the ab initio -475.7 (TAPPS
    # README.TXT), far outside the 1.5 % band that the Bose value meets.
    pot = read_table(CONFIGS / "helium_lm2m2.csv")
    boltzmann = VirialGas(pot, [1.0], 4.002602e-3, quantum="exact",
                          spin=spin_components("boltzmann")).B(1.0) * 1e6
    ref = HELIUM4_AB_INITIO[1.0][0]
    assert abs(boltzmann - ref) > 5.0 * _lm2m2_tolerance(1.0) * abs(ref)


def test_helium3_and_the_isotope_difference_at_the_triple_point_of_water():
    # Helium-3: fermions, nuclear spin 1/2.  B(3He) - B(4He) at 273.16 K is the mass
    # dependence of the quantum terms alone (same potential): ab initio 0.100754 cm^3/mol
    # (TAPPS README.TXT: 12.028842 - 11.928088).  The potential's error enters it only
    # through the size of the quantum term, which LM2M2's wall sets to a few % (its B2 to
    # 0.5 %, above): tolerance 3 % of the difference, 0.003 cm^3/mol.  Measured
    # 0.10140 (+0.6 %); B(3He) 12.0387 against 12.0288.
    pot = read_table(CONFIGS / "helium_lm2m2.csv")
    he3 = VirialGas(pot, [1.0], HELIUM3_MOLAR_MASS_KG_MOL, quantum="exact",
                    spin=spin_components("fermi", internal_states=2))
    he4 = VirialGas(pot, [1.0], 4.002602e-3, quantum="exact", spin=spin_components("bose"))
    T = 273.16
    b3, b4 = he3.B(T) * 1e6, he4.B(T) * 1e6
    assert b3 - b4 == pytest.approx(HELIUM3_AB_INITIO_273 - HELIUM4_AB_INITIO[T][0], abs=0.003)
    assert b3 == pytest.approx(HELIUM3_AB_INITIO_273,
                               abs=_lm2m2_tolerance(T) * HELIUM3_AB_INITIO_273
                               + U_PUBLISHED_HELIUM)


@pytest.mark.parametrize("T", sorted(NEON_AB_INITIO))
def test_neon_b2_of_the_shipped_study_against_ab_initio(T):
    # configs/neon.toml: HFD-B (Aziz and Slaman 1989), second-order Wigner-Kirkwood (0.01 %
    # from the exact B2 here).  Tolerance 0.3 cm^3/mol: the spread of measured neon B2 near
    # room temperature that HFD-B was fitted within (from memory), as in
    # test_light_gases.py.  Measured HFD-B minus ab initio: -0.27 at 273.16 K, -0.12 at
    # 1000 K (and -0.65 at 100 K, not asserted); the reference EOS (CoolProp) meets the ab
    # initio values to 0.06 there, so the offset is the potential's (docs/physics.md 2.4a).
    g = read_study(CONFIGS / "neon.toml").gas
    gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum)
    assert gas.B(T) * 1e6 == pytest.approx(NEON_AB_INITIO[T], abs=0.3)


# -- hydrogen against measured B2 ------------------------------------------------------------
HYDROGEN_MEASURED = Path(__file__).resolve().parent / "data" / "hydrogen_b2_measured.csv"
# Exact Silvera-Goldman B2 minus CoolProp's normal-hydrogen EOS (Leachman et al. 2009), cm^3/mol:
# the potential's known offset, measured and documented in docs/physics.md 2.4a.
SG_OFFSET_TO_EOS = {50.0: 1.9, 100.0: -0.2, 200.0: -0.9, 300.0: -1.2, 500.0: -1.4}
# The two sources that give B2 at both 14 K and 21 K (their own runs, one method each).
LOW_T_SOURCES = ("Varekamp and Beenakker 1959", "Knaap et al. 1962 (recommended)")


def _measured_hydrogen(t_min, t_max, source=None):
    """Rows of the compiled measurements with t_min <= T <= t_max: T (K), B and u (cm^3/mol)."""
    with open(HYDROGEN_MEASURED, encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(line for line in fh if not line.startswith("#"))
                if source is None or r["source"] == source]
    T, B, u = (np.array([float(r[k]) for r in rows]) for k in ("T_K", "B_cm3_mol", "u_cm3_mol"))
    keep = (T >= t_min) & (T <= t_max)
    return T[keep], B[keep], u[keep]


def _window_mean(residual, u):
    """Mean of ours - measured, each point weighted by 1/u^2."""
    w = 1.0 / u ** 2
    return float(np.sum(w * residual) / np.sum(w))


@pytest.fixture(scope="module")
def hydrogen():
    """The shipped hydrogen study (configs/hydrogen.toml): Silvera-Goldman, exact B2, normal
    hydrogen (3:1 ortho:para spin isomers)."""
    g = read_study(CONFIGS / "hydrogen.toml").gas
    return VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol, quantum=g.quantum,
                     spin=g.spin_components())


def _hydrogen_b2_cm3(gas, T, level):
    """B2 of the same potential and mass: the exact B2 or classical + Wigner-Kirkwood terms."""
    if level == "exact":
        return gas.B(T) * 1e6
    pot = gas.pairs.pots[0][0]
    m = gas.molar_masses_kg_mol[0] / N_A
    q = virial.h2_over_mu_K_A2(m, m)
    b = virial.b2(pot, T)[0] + virial.b2_quantum(pot, T, q)[0]
    if level == "second-order":
        b = b + virial.b2_second_order(pot, T, q)[0]
    return b * virial.M3_MOL_PER_A3 * 1e6


def test_hydrogen_exact_b2_against_measured_values_from_50_to_450_K(hydrogen):
    # Per point, |ours - measured| <= 2 u + |offset|: u is the compilation's uncertainty
    # (class I: 2 % or 1 cm^3/mol), the offset the potential's known one to the reference EOS
    # (SG_OFFSET_TO_EOS, interpolated in T).  Were u a standard uncertainty and the offset the
    # whole model error, 95 % of points would pass; the sources scatter beyond their u (at
    # 273.15 K class I values run from 13.02 to 14.64), so 90 % are asked.  Measured: all
    # 103 points (97 % even without the offset).  Windows, u^-2-weighted mean of ours -
    # measured: within the class I
    # uncertainty (systematic per source, so it does not average away) plus the largest
    # |offset| in the window; measured +1.03 (50-100 K), -0.01 (100-200 K), -0.90
    # (200-450 K), the last near the potential's offset (-1.2 at 300 K).  The classical B2
    # of the same potential fails them (-5.2 at 50-100 K, -2.3 at 100-200 K).
    T, B, u = _measured_hydrogen(50.0, 450.0)
    ours = _hydrogen_b2_cm3(hydrogen, T, "exact")
    offset = np.abs(np.interp(T, list(SG_OFFSET_TO_EOS), list(SG_OFFSET_TO_EOS.values())))
    assert np.mean(np.abs(ours - B) <= 2.0 * u + offset) >= 0.9
    for lo, hi in ((50.0, 100.0), (100.0, 200.0), (200.0, 450.0)):
        w = (T >= lo) & (T <= hi)
        assert w.sum() >= 10
        assert abs(_window_mean(ours[w] - B[w], u[w])) <= 1.0 + offset[w].max()


def test_hydrogen_b2_from_14_to_21_K_needs_the_exact_quantum_b2(hydrogen):
    # Level: the 34 points from 14 to 21.5 K are mostly class II (10 %); within 2 u lie 85 %
    # for the exact B2 (asked: 80 %), none for classical + first-order Wigner-Kirkwood (B2
    # = +45 cm^3/mol at 14 K against -255 measured; asked: at most 10 %).  The best points,
    # 20.4-20.6 K (u = 1 and 3), lie 20 cm^3/mol (13 %) below the exact Silvera-Goldman B2
    # and 10 below the reference EOS: the potential's well is too shallow for the gas
    # (docs/physics.md 2.4a), which is why 2 u is not met everywhere.
    T, B, u = _measured_hydrogen(14.0, 21.5)
    assert T.size == 34
    exact = _hydrogen_b2_cm3(hydrogen, T, "exact")
    first = _hydrogen_b2_cm3(hydrogen, T, "first-order")
    assert np.mean(np.abs(exact - B) <= 2.0 * u) >= 0.8
    assert np.mean(np.abs(first - B) <= 2.0 * u) <= 0.1
    # Slope: B(21 K) - B(14 K) within one source, with sigma = hypot(u14, u21) (errors taken
    # as independent, the cautious choice).  Measured +109 (both sources, sigma 29); exact
    # +98, second-order Wigner-Kirkwood +226 (it overshoots at 14 K: -356), first order -123.
    # A smooth potential offset moves the difference little (Silvera-Goldman minus the EOS:
    # +15 at 14 K, +10 at 21 K), so the exact value must lie within 2 sigma and the series,
    # whose error is the method's, beyond 3 sigma.
    ends = np.array([14.0, 21.0])
    b = {level: _hydrogen_b2_cm3(hydrogen, ends, level)
         for level in ("exact", "first-order", "second-order")}
    for source in LOW_T_SOURCES:
        Ts, Bs, us = _measured_hydrogen(14.0, 21.0, source)
        lo, hi = np.argmin(Ts), np.argmax(Ts)
        assert (Ts[lo], Ts[hi]) == (14.0, 21.0)
        measured, sigma = Bs[hi] - Bs[lo], np.hypot(us[lo], us[hi])
        assert abs(b["exact"][1] - b["exact"][0] - measured) <= 2.0 * sigma
        for level in ("first-order", "second-order"):
            assert abs(b[level][1] - b[level][0] - measured) > 3.0 * sigma


def test_reference_equation_of_state_against_the_same_measured_values(hydrogen):
    # Control: CoolProp's normal-hydrogen EOS (Leachman et al. 2009, test-only), fitted to
    # such data.  Measured: 94 % of the 161 points from 14 to 450 K within 2 u (asked 90 %,
    # as above); weighted mean of EOS - measured +0.55 (100-200 K) and +0.33 (200-450 K),
    # within the class I uncertainty of 1 cm^3/mol; there the exact Silvera-Goldman B2 lies
    # further from the data (-0.90 at 200-450 K), so that offset is the potential's.
    CP = pytest.importorskip("CoolProp.CoolProp")
    T, B, u = _measured_hydrogen(14.0, 450.0)
    eos = np.array([CP.PropsSI("Bvirial", "T", t, "Dmolar", 1e-6, "Hydrogen") for t in T]) * 1e6
    assert np.mean(np.abs(eos - B) <= 2.0 * u) >= 0.9
    for lo, hi in ((100.0, 200.0), (200.0, 450.0)):
        w = (T >= lo) & (T <= hi)
        assert abs(_window_mean(eos[w] - B[w], u[w])) <= 1.0
    w = T >= 200.0
    ours = _hydrogen_b2_cm3(hydrogen, T[w], "exact")
    assert abs(_window_mean(eos[w] - B[w], u[w])) < abs(_window_mean(ours - B[w], u[w]))
