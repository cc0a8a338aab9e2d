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
"""
from pathlib import Path

import numpy as np
import pytest

from analysis.virial.quantum_exact import spin_components
from analysis.virial_eos import VirialGas
from mdsim.engine.potentials import read_table
from mdsim.study import read_study

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
