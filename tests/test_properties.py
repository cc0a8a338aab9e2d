"""Property-based tests (hypothesis) of the unit parser and the study validator, and the
safety rules: study files are data, HDF5 files are read without unpickling."""
import re
from pathlib import Path

import h5py
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from mdsim.errors import StudyError
from mdsim.units import parse_quantity

FAST = settings(max_examples=60, deadline=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture])

# kelvin, bar and angstrom are exact SI multiples: common practice, no source
UNITS = {"temperature": [("K", 1.0), ("mK", 1e-3)], "pressure": [("bar", 1e5), ("Pa", 1.0),
         ("kPa", 1e3)], "length": [("angstrom", 1e-10), ("nm", 1e-9)]}


@FAST
@given(kind=st.sampled_from(sorted(UNITS)), data=st.data(),
       value=st.floats(min_value=1e-6, max_value=1e6, allow_nan=False))
def test_quantities_parse_to_si(kind, data, value):
    unit, factor = data.draw(st.sampled_from(UNITS[kind]))
    got = parse_quantity(f"{value!r} {unit}", kind, "here")
    assert got == pytest.approx(value * factor, rel=1e-12)  # float round-off only


@FAST
@given(text=st.one_of(st.text(max_size=40), st.integers(), st.floats(), st.none(),
                      st.lists(st.integers(), max_size=3)),
       kind=st.sampled_from(["temperature", "pressure", "length", "molar_mass", "time"]))
def test_garbage_quantities_never_give_a_traceback(text, kind):
    try:
        value = parse_quantity(text, kind, "here")
    except StudyError as exc:
        assert str(exc).startswith("here: ")
    else:
        assert np.isfinite(value)


def _study(temperature_K, density, ratio, eps_K, sigma_A, cutoff, seed):
    return f"""
[study]
name = "prop"
[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "{eps_K!r} K"
sigma = "{sigma_A!r} angstrom"
cutoff = {cutoff!r}
[initial]
temperature = "{temperature_K!r} K"
density = "{density!r} mol/m^3"
[expansion]
volume_ratio = {ratio!r}
[simulation]
routes = []
seed = {seed}
"""


@FAST
@given(T=st.floats(50.0, 2000.0), rho=st.floats(1.0, 5000.0), ratio=st.floats(1.01, 100.0),
       eps=st.floats(10.0, 500.0), sigma=st.floats(2.0, 5.0), cutoff=st.floats(1.5, 6.0),
       seed=st.integers(0, 2 ** 31))
def test_random_valid_studies_validate_and_round_trip(tmp_path, T, rho, ratio, eps, sigma, cutoff,
                                                      seed):
    from mdsim.study.writer import dumps_toml, resolved_study_document
    from mdsim.study.reader import read_study
    path = tmp_path / "prop.toml"
    path.write_text(_study(T, rho, ratio, eps, sigma, cutoff, seed), encoding="utf-8")
    study = read_study(path)
    resolved = tmp_path / "resolved.toml"
    resolved.write_text(dumps_toml(resolved_study_document(study)), encoding="utf-8")
    again = read_study(resolved)
    assert again.state_points() == study.state_points()
    assert again.simulation == study.simulation
    assert again.units.as_dict() == study.units.as_dict()


@FAST
@given(blob=st.one_of(st.binary(max_size=200), st.text(max_size=200)))
def test_random_garbage_studies_never_give_a_traceback(tmp_path, blob):
    from mdsim.study.reader import read_study
    path = tmp_path / "garbage.toml"
    if isinstance(blob, str):
        path.write_text(blob, encoding="utf-8")
    else:
        path.write_bytes(blob)
    with pytest.raises(StudyError, match=re.escape(str(path))):
        read_study(path)


def test_product_code_never_unpickles_or_evaluates():
    root = Path(__file__).resolve().parents[1]
    banned = re.compile(r"(?<![.\w])(pickle\.\w+|marshal\.\w+|shelve\.\w+|eval|exec|compile)\s*\(|import pickle"
                        r"|dtype\s*=\s*object|allow_pickle\s*=\s*True|yaml\.load\(")
    hits = []
    for package in ("mdsim", "analysis"):
        for path in sorted((root / package).rglob("*.py")):
            for k, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
                if banned.search(line.split("#", 1)[0]):
                    hits.append(f"{path.relative_to(root)}:{k}: {line.strip()}")
    assert hits == []


def test_an_hdf5_file_with_object_data_is_refused(tmp_path):
    from mdsim.sampling import store
    path = tmp_path / "odd.h5"
    with h5py.File(path, "w") as f:
        f.attrs["complete"] = True
        g = f.create_group("samples")
        g.create_dataset("u_full", data=np.array([b"a", b"b"], dtype=object),
                         dtype=h5py.string_dtype())
    with pytest.raises(StudyError, match="only numeric datasets"):
        store.read_samples(path)
    assert store.verify(path) is not None  # and it does not count as a finished file
