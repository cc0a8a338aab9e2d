"""Ideal-gas heat capacity models against closed forms (analysis.heatcapacity)."""
import math

import numpy as np
import pytest
from scipy import constants

from analysis.heatcapacity import (ConstantHeatCapacity, PolynomialHeatCapacity,
                                   TabulatedHeatCapacity, heat_capacity_from_spec,
                                   read_heat_capacity_table)
from mdsim.errors import StudyError

R = constants.gas_constant  # J/(mol K)


def test_constant_from_strings():
    c = heat_capacity_from_spec("1.5 R")
    assert c.cv(300.0) == pytest.approx(1.5 * 8.31446261815324, rel=1e-12)  # R = N_A k, exact in the 2019 SI
    assert heat_capacity_from_spec("20.8 J/(mol K)").cv(250.0) == pytest.approx(20.8, rel=1e-12)
    assert heat_capacity_from_spec("20.8 kJ/(kmol K)").cv(250.0) == pytest.approx(20.8, rel=1e-12)
    # closed forms: u = c (T2 - T1), s = c ln(T2 / T1)
    assert c.delta_u(300.0, 290.0) == pytest.approx(-10.0 * 1.5 * R, rel=1e-12)
    assert c.delta_s(300.0, 600.0) == pytest.approx(1.5 * R * math.log(2.0), rel=1e-12)


def test_polynomial_closed_form():
    a = [20.0, 0.01, -2e-6]  # J/(mol K), T in K
    p = heat_capacity_from_spec({"polynomial": a, "unit": "J/(mol K)", "valid_range_K": [200, 1000]})
    T1, T2 = 250.0, 800.0
    u_exact = sum(a[k] * (T2 ** (k + 1) - T1 ** (k + 1)) / (k + 1) for k in range(3))
    s_exact = a[0] * math.log(T2 / T1) + a[1] * (T2 - T1) + a[2] * (T2 ** 2 - T1 ** 2) / 2
    assert p.delta_u(T1, T2) == pytest.approx(u_exact, rel=1e-12)  # exact arithmetic
    assert p.delta_s(T1, T2) == pytest.approx(s_exact, rel=1e-12)
    assert p.cv(500.0) == pytest.approx(20.0 + 5.0 - 0.5, rel=1e-12)
    in_R = heat_capacity_from_spec({"polynomial": [2.5], "unit": "R"})
    assert in_R.cv(300.0) == pytest.approx(2.5 * R, rel=1e-12)


def test_table_reproduces_linear_data_exactly(tmp_path):
    # PCHIP reproduces linear data exactly (its slopes are then all equal), so
    # u and s of the table must equal the closed forms of cv = 20 + 0.01 T.
    T = np.linspace(100.0, 1000.0, 10)
    path = tmp_path / "cv.csv"
    path.write_text("temperature_K, cv_J_molK\n" + "".join(f"{t}, {20 + 0.01 * t}\n" for t in T))
    tab = heat_capacity_from_spec(str(path))
    assert isinstance(tab, TabulatedHeatCapacity)
    assert tab.valid_range == (100.0, 1000.0)
    assert tab.delta_u(150.0, 950.0) == pytest.approx(20 * 800 + 0.005 * (950 ** 2 - 150 ** 2),
                                                      rel=1e-12)  # exact piecewise integral
    assert tab.delta_s(150.0, 950.0) == pytest.approx(20 * math.log(950 / 150) + 0.01 * 800,
                                                      rel=1e-10)  # quadrature, rel 1e-12 asked


def test_table_of_curved_data():
    # cv = 20 + 1e-5 T^2 on 46 knots: PCHIP's error is O(h^2)-O(h^3) in cv,
    # smaller in the integral; 1e-4 relative is a loose bound for h = 20 K.
    T = np.linspace(100.0, 1000.0, 46)
    tab = TabulatedHeatCapacity(T, 20 + 1e-5 * T ** 2)
    exact = 20 * 700 + 1e-5 * (900 ** 3 - 200 ** 3) / 3
    assert tab.delta_u(200.0, 900.0) == pytest.approx(exact, rel=1e-4)
    assert np.all(np.diff(tab.cv(np.linspace(100, 1000, 500))) >= 0)  # monotone data stay monotone


def test_out_of_range_names_the_range():
    tab = TabulatedHeatCapacity([200.0, 300.0, 400.0], [20.0, 21.0, 22.0], source="cv.csv")
    with pytest.raises(StudyError, match=r"150 K is outside .*200 K <= T <= 400 K"):
        tab.cv(150.0)
    with pytest.raises(StudyError, match="outside"):
        heat_capacity_from_spec({"polynomial": [20.0], "valid_range_K": [250, 350]}).u(400.0)


def test_bad_specs(tmp_path):
    with pytest.raises(StudyError, match="not a molar heat capacity"):
        heat_capacity_from_spec("20 K")
    with pytest.raises(StudyError, match="not a molar heat capacity"):
        heat_capacity_from_spec("1.5")
    with pytest.raises(StudyError, match="unknown key"):
        heat_capacity_from_spec({"polynom": [1.0]})
    with pytest.raises(StudyError, match="does not exist"):
        heat_capacity_from_spec("missing.csv")
    bad = tmp_path / "bad.csv"
    bad.write_text("T, cv\n300, 20\n400, 21\n")
    with pytest.raises(StudyError, match="header"):
        read_heat_capacity_table(bad)
    with pytest.raises(StudyError, match="strictly increasing"):
        TabulatedHeatCapacity([300.0, 200.0], [20.0, 21.0])
    with pytest.raises(StudyError, match="positive"):
        ConstantHeatCapacity(-1.0)
    with pytest.raises(StudyError, match="not positive"):
        PolynomialHeatCapacity([10.0, -0.1], valid_range=(50.0, 500.0))
