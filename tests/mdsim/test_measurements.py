"""Readers of measured data: good files, units, and every kind of bad row by line and column."""
import pytest

from mdsim.errors import StudyError
from mdsim.check.measurements import MAX_REPORTED, read_expansion_data, read_virial_data

HEADER = "initial_temperature_K,initial_pressure_bar,volume_ratio,delta_T_K,delta_T_uncertainty_K\n"


def _write(tmp_path, text, name="data.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_good_file_with_comments_and_units(tmp_path):
    p = _write(tmp_path, "# invented numbers\n\n"
               "initial_temperature_C,initial_pressure_MPa,volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K,label\n"
               "  # a comment inside\n"
               "21.85,2.2,2,-3.1,0.2,run A\n"
               "0,1,3,-1.5,0.1,run B\n")
    d = read_expansion_data(p)
    assert len(d) == 2
    assert d.temperature_K.tolist() == pytest.approx([295.0, 273.15])  # C + 273.15 exactly
    assert d.pressure_Pa.tolist() == pytest.approx([2.2e6, 1e6])
    assert d.density_mol_m3 is None
    assert d.line_n.tolist() == [5, 6]
    assert d.labels == ["run A", "run B"]
    assert d.delta_T_uncertainty_K.tolist() == [0.2, 0.1]


@pytest.mark.parametrize("unit, factor", [("Pa", 1.0), ("kPa", 1e3), ("bar", 1e5),
                                          ("atm", 101325.0)])
def test_pressure_units(tmp_path, unit, factor):
    p = _write(tmp_path, f"initial_temperature_K,initial_pressure_{unit},volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K\n300,2,2,-1,0.1\n")
    assert read_expansion_data(p).pressure_Pa[0] == pytest.approx(2 * factor)


def test_density_column(tmp_path):
    p = _write(tmp_path, "initial_temperature_K,initial_density_mol_L,volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K\n300,0.5,2,-1,0.1\n")
    d = read_expansion_data(p)
    assert d.pressure_Pa is None and d.density_mol_m3[0] == pytest.approx(500.0)


@pytest.mark.parametrize("row, column, words", [
    ("300,,2,-1,0.1", "initial_pressure_bar", "missing value"),
    ("300,abc,2,-1,0.1", "initial_pressure_bar", "not a number"),
    ("300,10,1.0,-1,0.1", "volume_ratio", "greater than 1"),
    ("300,10,0.5,-1,0.1", "volume_ratio", "greater than 1"),
    ("-5,10,2,-1,0.1", "initial_temperature_K", "above 0 K"),
    ("300,-10,2,-1,0.1", "initial_pressure_bar", "positive"),
    ("300,10,2,-1,0", "delta_T_uncertainty_K", "positive"),
    ("300,10,2,nan,0.1", "delta_T_K", "finite"),
])
def test_bad_row_named_by_line_and_column(tmp_path, row, column, words):
    p = _write(tmp_path, "# comment\n" + HEADER + "300,10,2,-1,0.1\n" + row + "\n")
    with pytest.raises(StudyError) as exc:
        read_expansion_data(p)
    msg = str(exc.value)
    assert f"line 4, column '{column}'" in msg and words in msg
    assert "nothing was computed" in msg


def test_celsius_below_absolute_zero(tmp_path):
    p = _write(tmp_path, "initial_temperature_C,initial_pressure_bar,volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K\n-300,10,2,-1,0.1\n")
    with pytest.raises(StudyError, match=r"line 2, column 'initial_temperature_C'.*above 0 K"):
        read_expansion_data(p)


def test_wrong_number_of_fields(tmp_path):
    p = _write(tmp_path, HEADER + "300,10,2,-1\n")
    with pytest.raises(StudyError, match=r"line 2: 4 values for 5 columns"):
        read_expansion_data(p)


def test_all_problems_in_one_message_capped(tmp_path):
    rows = "".join("300,10,0.5,-1,0.1\n" for _ in range(MAX_REPORTED + 5))
    p = _write(tmp_path, HEADER + "300,x,2,-1,0.1\n" + rows)
    with pytest.raises(StudyError) as exc:
        read_expansion_data(p)
    msg = str(exc.value)
    assert f"{MAX_REPORTED + 6} problem(s)" in msg
    assert "line 2, column 'initial_pressure_bar'" in msg and "line 3, column 'volume_ratio'" in msg
    assert "and 6 more" in msg


def test_unknown_unit_suggests_the_column(tmp_path):
    p = _write(tmp_path, "initial_temperature_F,initial_pressure_psi,volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K\n300,10,2,-1,0.1\n")
    with pytest.raises(StudyError) as exc:
        read_expansion_data(p)
    msg = str(exc.value)
    assert "column 'initial_temperature_F': unknown column or unit" in msg
    assert "column 'initial_pressure_psi'" in msg and "did you mean" in msg


def test_pressure_and_density_together_refused(tmp_path):
    p = _write(tmp_path, "initial_temperature_K,initial_pressure_bar,initial_density_mol_m3,"
               "volume_ratio,delta_T_K,delta_T_uncertainty_K\n300,10,400,2,-1,0.1\n")
    with pytest.raises(StudyError, match="give one initial pressure or density column"):
        read_expansion_data(p)


def test_missing_required_column(tmp_path):
    p = _write(tmp_path, "initial_temperature_K,initial_pressure_bar,delta_T_K,"
               "delta_T_uncertainty_K\n300,10,-1,0.1\n")
    with pytest.raises(StudyError, match="no volume ratio column"):
        read_expansion_data(p)


def test_empty_and_missing_file(tmp_path):
    with pytest.raises(StudyError, match="no data rows"):
        read_expansion_data(_write(tmp_path, "# only a comment\n" + HEADER))
    with pytest.raises(StudyError, match="cannot be read"):
        read_expansion_data(tmp_path / "absent.csv")


def test_virial_file(tmp_path):
    p = _write(tmp_path, "# invented\ntemperature_K,B_cm3_mol,B_uncertainty_cm3_mol\n"
               "300,-15.5,0.5\n400,-1.0,0.3\n", "b.csv")
    v = read_virial_data(p)
    assert v.B_m3_mol.tolist() == pytest.approx([-15.5e-6, -1.0e-6])  # cm^3 = 1e-6 m^3
    assert v.B_uncertainty_m3_mol.tolist() == pytest.approx([0.5e-6, 0.3e-6])


def test_virial_file_bad_uncertainty(tmp_path):
    p = _write(tmp_path, "temperature_K,B_cm3_mol,B_uncertainty_cm3_mol\n300,-15.5,-1\n", "b.csv")
    with pytest.raises(StudyError, match=r"line 2, column 'B_uncertainty_cm3_mol'.*positive"):
        read_virial_data(p)


def test_demo_files_read():
    from pathlib import Path
    configs = Path(__file__).resolve().parents[2] / "configs"
    d = read_expansion_data(configs / "demo_measurements.csv")
    v = read_virial_data(configs / "demo_virial.csv")
    assert len(d) == 14 and len(v) == 5
    assert "INVENTED" in (configs / "demo_measurements.csv").read_text().splitlines()[0]
