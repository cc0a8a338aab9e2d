"""State points of a study: sweep expansion, and the initial density from a pressure."""
import textwrap
from pathlib import Path

import numpy as np
import pytest

from mdsim.errors import StudyError
from mdsim.study.statepoints import StatePoint, resolve_initial_density, virial_gas
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
R = 1.380649e-23 * 6.02214076e23  # CODATA 2018, exact

GAS = """
[study]
name = "sp-test"

[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
"""


def study_with(tmp_path, tables):
    path = tmp_path / "study.toml"
    path.write_text(textwrap.dedent(GAS) + textwrap.dedent(tables), encoding="utf-8")
    return read_study(path)


def test_sweep_order_and_count(tmp_path):
    study = study_with(tmp_path, """
        [initial]
        [sweep]
        temperature = ["200 K", "300 K"]
        density = ["100 mol/m^3", "200 mol/m^3", "400 mol/m^3"]
        volume_ratio = [1.5, 2.0]
    """)
    points = study.state_points()
    assert len(points) == 2 * 3 * 2
    assert [p.index for p in points] == list(range(12))
    # temperature outermost, then density, volume ratio fastest (documented order)
    got = [(p.temperature_K, p.density_mol_m3, p.volume_ratio) for p in points]
    want = [(T, rho, r) for T in (200.0, 300.0) for rho in (100.0, 200.0, 400.0)
            for r in (1.5, 2.0)]
    assert got == want
    assert all(p.pressure_Pa is None for p in points)
    assert StatePoint.from_dict(points[5].as_dict()) == points[5]


def test_single_state_and_sweep_example():
    points = read_study(CONFIGS / "argon.toml").state_points()
    assert points == [StatePoint(0, 295.15, 2.0, 22e5, None)]
    sweep = read_study(CONFIGS / "argon_sweep.toml").state_points()
    assert len(sweep) == 8
    assert [p.pressure_Pa for p in sweep[:4]] == [5e5, 10e5, 22e5, 50e5]
    assert {p.temperature_K for p in sweep[:4]} == {200.0}


def test_pressure_gives_density_of_the_b2_b3_series(tmp_path):
    study = study_with(tmp_path, """
        [initial]
        temperature = "295.15 K"
        pressure = "22 bar"
        [expansion]
        volume_ratio = 2.0
    """)
    sp = study.state_points()[0]
    rho, how = resolve_initial_density(study, sp)
    assert how == "virial B2+B3"
    # invert p = rho R T (1 + B rho + C rho^2) directly: the smallest positive real root
    gas = virial_gas(study)
    T, p = 295.15, 22e5
    B, C = gas.B(T), gas.C(T)
    roots = np.roots([C * R * T, B * R * T, R * T, -p])
    real = sorted(r.real for r in roots if abs(r.imag) < 1e-9 * abs(r) and r.real > 0)
    assert rho == pytest.approx(real[0], rel=1e-9)  # root-finder tolerance
    # the ideal gas would give p / RT; argon at 22 bar is about 1 % denser (B < 0)
    assert 1.0 < rho / (p / (R * T)) < 1.03


def test_given_density_is_used_as_is(tmp_path):
    study = study_with(tmp_path, """
        [initial]
        temperature = "150 K"
        density = "25000 mol/m^3"
        [expansion]
        volume_ratio = 3.0
    """)
    assert resolve_initial_density(study, study.state_points()[0]) == (25000.0, "given")


def test_dense_pressure_asks_for_density(tmp_path):
    # 150 K and 300 bar: liquid-like argon, far beyond the virial series
    path = tmp_path / "study.toml"
    path.write_text(textwrap.dedent(GAS) + textwrap.dedent("""
        [initial]
        temperature = "150 K"
        pressure = "300 bar"
        [expansion]
        volume_ratio = 2.0
    """), encoding="utf-8")
    study = read_study(path)
    with pytest.raises(StudyError, match="give the initial density"):
        resolve_initial_density(study, study.state_points()[0])


@pytest.mark.parametrize("tables, fragment", [
    ('[expansion]\nvolume_ratio = 2.0\n', "'temperature': missing"),
    ('[initial]\ntemperature = "300 K"\n[expansion]\nvolume_ratio = 2.0\n',
     "neither 'pressure' nor 'density'"),
    ('[initial]\ntemperature = "300 K"\npressure = "1 bar"\n', "'volume_ratio': missing"),
])
def test_missing_parts_of_the_state(tmp_path, tables, fragment):
    with pytest.raises(StudyError, match=fragment):
        study_with(tmp_path, tables)


def test_no_run_tables_is_fine_until_state_points_are_asked(tmp_path):
    study = study_with(tmp_path, "")
    with pytest.raises(StudyError, match="temperature"):
        study.state_points()
