"""The report refuses a run directory whose files come from two plans.

A finished tiny run (one state point, the energy route, 64 particles) is
copied and then altered: its ``study.toml`` edited after the run, or a task
file's stored task description made to differ from ``tasks.json``.  Each
time ``mdsim report`` must exit 2 with one line naming the field, and must
not touch the report files.
"""
import contextlib
import io
import json
import shutil

import pytest

from mdsim.cli import main
from mdsim.errors import StudyError
from mdsim.pipeline import build_report
from mdsim.pipeline.collect import first_difference
from mdsim.sampling import store

TINY_STUDY = """
[study]
name = "tiny-consistency"
description = "a one-task study for the consistency tests"

[gas]
name = "testgas"
molar_mass = "40 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "120 K"
sigma = "3.4 angstrom"
cutoff = 2.5
source = "made-up parameters for a test"

[initial]
temperature = "300 K"

[expansion]
volume_ratio = 2.0

[sweep]
pressure = ["20 bar"]

[simulation]
routes = ["energy"]
particles = 64
target_stderr = "5 K"
max_cpu_time = "5 s"
seed = 11
"""

REPORT_FILES = ("report.md", "results.json", "results.csv")


@pytest.fixture(scope="module")
def finished_run(tmp_path_factory):
    """A finished run directory of TINY_STUDY (made once for the module)."""
    base = tmp_path_factory.mktemp("consistency")
    study = base / "tiny.toml"
    study.write_text(TINY_STUDY, encoding="utf-8")
    out = base / "run"
    with contextlib.redirect_stdout(io.StringIO()):
        assert main(["run", str(study), "--out", str(out), "--workers", "1", "--quiet"]) == 0
    assert (out / "tasks" / "0000.h5").is_file()
    return out


@pytest.fixture()
def copy(finished_run, tmp_path):
    dest = tmp_path / "copy"
    shutil.copytree(finished_run, dest)
    return dest


def _snapshot(run_dir):
    return {name: (run_dir / name).read_bytes() for name in REPORT_FILES}


def _report_fails(run_dir, capsys):
    """Run 'mdsim report' expecting exit 2; return its one error line."""
    before = _snapshot(run_dir)
    assert main(["report", str(run_dir), "--no-plots", "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1
    assert _snapshot(run_dir) == before  # nothing written or changed
    return err


def test_an_unaltered_run_reports(copy):
    out = build_report(copy, plots=False)
    assert out["tasks"]["done"] == [0]


def test_edited_volume_ratio_is_refused(copy, capsys):
    text = (copy / "study.toml").read_text(encoding="utf-8")
    lines = text.splitlines()
    # the resolved study writes the key once, in [expansion]
    edited = [line.replace("2.0", "3.0") if line.strip().startswith("volume_ratio") else line
              for line in lines]
    assert edited != lines
    (copy / "study.toml").write_text("\n".join(edited) + "\n", encoding="utf-8")
    err = _report_fails(copy, capsys)
    assert "volume_ratio" in err
    assert "2.0" in err and "3.0" in err  # both values
    assert "task 0" in err and "restore study.toml" in err


def test_edited_seed_is_refused(copy):
    text = (copy / "study.toml").read_text(encoding="utf-8")
    lines = [("seed = 12" if line.strip().startswith("seed") else line)
             for line in text.splitlines()]
    (copy / "study.toml").write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(StudyError, match=r"seed\[0\] = 11 .* now plans 12"):
        build_report(copy, plots=False)


def test_task_file_made_for_another_task_is_refused(copy, capsys):
    import h5py
    path = copy / "tasks" / "0000.h5"
    with h5py.File(path, "r+") as f:
        task = json.loads(f.attrs["task_json"])
        task["state_point"]["temperature_K"] = 310.0
        f.attrs["task_json"] = json.dumps(task)
        f.attrs[store.CHECKSUM_ATTR] = store.checksum(f)  # intact, only for another task
    err = _report_fails(copy, capsys)
    assert "0000.h5" in err and "state_point.temperature_K" in err
    assert "310.0" in err and "300.0" in err


def test_first_difference_names_nested_fields():
    a = {"index": 1, "seed": [3, 1], "state_point": {"pressure_Pa": 2e6, "density": None}}
    assert first_difference(a, json.loads(json.dumps(a))) is None
    b = json.loads(json.dumps(a))
    b["seed"][1] = 2
    assert first_difference(a, b) == ("seed[1]", 1, 2)
    b = json.loads(json.dumps(a))
    b["state_point"]["density"] = 5.0
    assert first_difference(a, b) == ("state_point.density", None, 5.0)
    assert first_difference({"particles": None}, {}) == ("particles", None, "(absent)")
    assert first_difference({"n": 2}, {"n": 2.0}) is None
    assert first_difference({"f": True}, {"f": 1}) == ("f", True, 1)
