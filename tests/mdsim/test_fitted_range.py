"""[potential] fitted_range: read and checked, and a warning where a temperature lies far outside."""
import pytest

from mdsim.cli.cmd_inversion import format_inversion_table
from mdsim.errors import StudyError
from mdsim.pipeline.inversion_study import inversion_summary
from mdsim.pipeline.virial_summary import virial_summary
from mdsim.study.fitted_range import FAR_FACTOR, MARK, inversion_warnings
from mdsim.study.reader import read_study

# Lennard-Jones with epsilon/k = 120 K: the maximum of B2 (zero-density Joule inversion) at
# T* = 25.15 is 3018 K, the zero-pressure Joule-Thomson inversion at T* = 6.43 is 772 K
# (docs/references.md section 2.4)
STUDY = """[study]
name = "fitted"
[gas]
molar_mass = "40 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "120 K"
sigma = "3.4 angstrom"
{fitted}
[initial]
temperature = "{T}"
density = "100 mol/m^3"
[expansion]
volume_ratio = 2.0
"""


def _study(tmp_path, fitted, T="295 K"):
    path = tmp_path / "study.toml"
    path.write_text(STUDY.format(fitted=fitted, T=T), encoding="utf-8")
    return read_study(path)


def test_fitted_range_is_read_in_kelvin(tmp_path):
    assert _study(tmp_path, 'fitted_range = ["80 K", "400 K"]').gas.fitted_range_K == (80.0, 400.0)
    assert _study(tmp_path, "").gas.fitted_range_K is None


@pytest.mark.parametrize("bad, why", [('["400 K", "80 K"]', "not below"),
                                      ('["80 K"]', "has 1 temperatures"),
                                      ('["80 K", "200 K", "400 K"]', "has 3 temperatures"),
                                      ('["80 K", "-4 K"]', "out of range")])
def test_a_bad_fitted_range_is_refused_naming_the_key(tmp_path, bad, why):
    with pytest.raises(StudyError, match=f"fitted_range.*{why}"):
        _study(tmp_path, f"fitted_range = {bad}")


@pytest.fixture(scope="module")
def inversion(tmp_path_factory):
    """``mdsim inversion``'s summary of the study with fitted_range 80 K to 400 K."""
    study = _study(tmp_path_factory.mktemp("inversion"), 'fitted_range = ["80 K", "400 K"]')
    return inversion_summary(study, points=1)


def test_inversion_temperatures_far_outside_the_range_are_warned_about(inversion):
    assert inversion["joule_inversion_zero_density_K"] > FAR_FACTOR * 400.0
    assert len(inversion["warnings"]) == 3  # zero-density Joule, Joule-Thomson, the curve
    assert all(MARK in w for w in inversion["warnings"])
    text = "\n".join(format_inversion_table(inversion))
    assert "warning: the zero-density Joule (free-expansion) inversion temperature 3018 K" in text


def test_no_warning_when_the_inversion_lies_inside_the_range(inversion):
    # 500 K to 3500 K holds 772 K, 3018 K and the whole curve (about 2300 K to 3018 K)
    assert inversion_warnings((500.0, 3500.0), inversion) == []
    assert inversion_warnings(None, inversion) == []


@pytest.mark.parametrize("T, warned", [("295 K", False), ("590 K", False), ("610 K", True),
                                       ("60 K", False), ("50 K", True)])
def test_an_initial_temperature_far_outside_the_range_is_warned_about(tmp_path, T, warned):
    # "far": above 1.5 x 400 K = 600 K or below 80 K / 1.5 = 53.3 K
    study = _study(tmp_path, 'fitted_range = ["80 K", "400 K"]', T=T)
    sp = study.state_points()[0]
    flagged = [w for w in virial_summary(study, sp)["warnings"] if MARK in w]
    assert bool(flagged) == warned, flagged
