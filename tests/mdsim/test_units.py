"""Quantity parsing and reduced-unit conversions."""
import math
import subprocess
import sys

import pytest

from mdsim.errors import StudyError
from mdsim.units import R_GAS, ReducedUnits, parse_epsilon_K, parse_quantity

# CODATA 2018 exact values (SI definition since 2019).
K_B = 1.380649e-23
N_A = 6.02214076e23


@pytest.mark.parametrize("text, kind, si", [
    ("295.15 K", "temperature", 295.15),
    ("25 degC", "temperature", 298.15),          # definition of the Celsius scale
    ("22 bar", "pressure", 2.2e6),               # 1 bar = 1e5 Pa by definition
    ("1 atm", "pressure", 101325.0),             # standard atmosphere, by definition
    ("3.405 angstrom", "length", 3.405e-10),
    ("0.3405 nm", "length", 3.405e-10),
    ("39.948 g/mol", "molar_mass", 0.039948),
    ("20.8 J/(mol K)", "molar_heat_capacity", 20.8),
    ("1.5 R", "molar_heat_capacity", 1.5 * K_B * N_A),
    ("996 J/mol", "molar_energy", 996.0),
    ("500 mol/m^3", "molar_density", 500.0),
    ("0.5 mol/L", "molar_density", 500.0),
    ("10 ps", "time", 1e-11),
])
def test_parse_quantity_converts_to_si(text, kind, si):
    # relative 1e-12: unit factors are exact decimal definitions, only round-off remains
    assert parse_quantity(text, kind, "test") == pytest.approx(si, rel=1e-12)


def test_gas_constant_is_codata():
    # R = N_A k exactly (SI 2019)
    assert R_GAS == pytest.approx(K_B * N_A, rel=1e-15)


def test_wrong_dimension_names_where_value_expected_and_example():
    with pytest.raises(StudyError) as err:
        parse_quantity("22 kg", "pressure", ("study.toml", "[initial]", "pressure"))
    msg = str(err.value)
    for part in ("study.toml", "[initial]", "pressure", "'22 kg'", "[mass]", "22 bar"):
        assert part in msg


@pytest.mark.parametrize("value, fragment", [
    ("twenty bar", "cannot read"),
    (22.0, "without a unit"),
    (True, "bool"),
    ("22", "has no unit"),
    ("nan bar", "not finite"),
])
def test_bad_quantities_raise(value, fragment):
    with pytest.raises(StudyError, match=fragment):
        parse_quantity(value, "pressure", "x")


def test_unknown_kind_is_a_programming_error():
    with pytest.raises(ValueError, match="unknown quantity kind"):
        parse_quantity("1 K", "colour")


def test_epsilon_as_temperature_molar_energy_or_molecular_energy():
    assert parse_epsilon_K("119.8 K") == pytest.approx(119.8, rel=1e-14)
    assert parse_epsilon_K("996 J/mol") == pytest.approx(996.0 / (K_B * N_A), rel=1e-12)
    assert parse_epsilon_K(f"{119.8 * K_B!r} J") == pytest.approx(119.8, rel=1e-12)
    with pytest.raises(StudyError, match="not a well depth"):
        parse_epsilon_K("3 angstrom", "epsilon")
    with pytest.raises(StudyError, match="cannot read"):
        parse_epsilon_K("deep", "epsilon")


ARGON = ReducedUnits(119.8, 3.405e-10, 0.039948)  # Hirschfelder-Curtiss-Bird LJ argon (from memory)


def test_argon_scales_against_closed_forms():
    eps = 119.8 * K_B
    m = 0.039948 / N_A
    sig = 3.405e-10
    assert ARGON.time_s == pytest.approx(sig * math.sqrt(m / eps), rel=1e-14)
    # argon's LJ time unit is about 2.15 ps (common practice, no source)
    assert ARGON.time_s == pytest.approx(2.15e-12, rel=0.01)
    # eps/sigma^3 for argon is about 41.9 MPa (common practice, no source)
    assert ARGON.pressure_Pa == pytest.approx(eps / sig ** 3, rel=1e-14)
    assert ARGON.pressure_Pa == pytest.approx(41.9e6, rel=0.01)
    assert ARGON.density_mol_m3 == pytest.approx(1.0 / (N_A * sig ** 3), rel=1e-14)
    assert ARGON.energy_to_J_mol(1.0) == pytest.approx(119.8 * K_B * N_A, rel=1e-14)
    assert ARGON.heat_capacity_to_J_molK(1.5) == pytest.approx(1.5 * K_B * N_A, rel=1e-14)


@pytest.mark.parametrize("to_red, to_si, value", [
    ("temperature_to_reduced", "temperature_to_K", 295.15),
    ("density_to_reduced", "density_to_mol_m3", 500.0),
    ("pressure_to_reduced", "pressure_to_Pa", 2.2e6),
    ("energy_to_reduced", "energy_to_J_mol", -120.0),
    ("heat_capacity_to_reduced", "heat_capacity_to_J_molK", 3.1),
    ("time_to_reduced", "time_to_s", 1e-12),
])
def test_round_trips(to_red, to_si, value):
    # round-off only
    assert getattr(ARGON, to_si)(getattr(ARGON, to_red)(value)) == pytest.approx(value, rel=1e-14)


def test_ideal_gas_pressure_is_unit_independent():
    # p = rho R T in SI equals p* = rho* T* in reduced units (closed form)
    T, rho = 295.15, 900.0
    p_red = ARGON.density_to_reduced(rho) * ARGON.temperature_to_reduced(T)
    assert ARGON.pressure_to_Pa(p_red) == pytest.approx(rho * R_GAS * T, rel=1e-13)


def test_reduced_units_reject_bad_scales():
    with pytest.raises(StudyError, match="sigma_m"):
        ReducedUnits(119.8, -1.0, 0.04)
    with pytest.raises(StudyError, match="epsilon_K"):
        ReducedUnits(float("nan"), 3e-10, 0.04)


def test_no_unit_registry_on_import():
    code = "import mdsim.units as u; print(u._REGISTRY is None)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "True"
    assert out.stderr == ""
