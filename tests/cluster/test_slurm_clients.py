"""mdsim.execute.slurm without a cluster: Slurm's id and state syntax, the submission record, clear errors.

The syntax checked here is Slurm's own (sbatch --array lists, array job ids
'12_3' and pending ranges '12_[4-6%2]' as squeue and sacct print them, the
job state names of the sacct manual page): common practice, no source.
"""
import json

import pytest

from mdsim.execute import slurm
from mdsim.cli import main
from mdsim.errors import StudyError

from test_tasks import make_run_dir, write_study


def test_array_lists_are_written_as_ranges():
    assert slurm.array_spec([5, 0, 1, 2, 7, 8, 2]) == "0-2,5,7-8"
    assert slurm.array_spec([3]) == "3"
    with pytest.raises(StudyError, match="no array elements"):
        slurm.array_spec([])
    with pytest.raises(StudyError, match="0 or more"):
        slurm.array_spec([-1, 2])


def test_array_job_ids_as_squeue_and_sacct_print_them():
    assert slurm.parse_array_ids("12_3") == [("12", 3)]
    assert slurm.parse_array_ids("12_[1,4-6%2]") == [("12", 1), ("12", 4), ("12", 5), ("12", 6)]
    assert slurm.parse_array_ids("12") == [("12", None)]
    assert slurm.parse_array_ids("12_3.batch") == []  # a job step, not an element


def test_slurm_states_fall_into_four_groups():
    assert slurm.state_group("PENDING") == "pending"
    assert slurm.state_group("RUNNING") == "running"
    assert slurm.state_group("COMPLETED") == "done"
    for name in ("FAILED", "CANCELLED by 0", "TIMEOUT", "OUT_OF_MEMORY", "NODE_FAIL"):
        assert slurm.state_group(name) == "failed", name
    assert slurm.state_group("") == "unknown"


def test_submissions_are_recorded_latest_last(tmp_path):
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    jobs = rd.path / "jobs.json"
    assert slurm.read_submissions(jobs) == [] and slurm.latest_elements(jobs) == {}
    slurm.record_submission(jobs, "40", [0, 1, 2], rd.path / "array.sh")
    slurm.record_submission(jobs, "41", [1], rd.path / "array.sh")
    assert [s["job_id"] for s in slurm.read_submissions(jobs)] == ["40", "41"]
    assert slurm.latest_elements(jobs) == {0: "40", 1: "41", 2: "40"}
    jobs.write_text("{not json", encoding="utf-8")
    with pytest.raises(StudyError, match="jobs.json' is damaged"):
        slurm.read_submissions(jobs)


def test_submitting_without_slurm_is_one_clear_line(tmp_path, monkeypatch, capsys):
    study = write_study(tmp_path)
    monkeypatch.setenv("PATH", str(tmp_path / "empty-bin"))  # no sbatch anywhere
    out = tmp_path / "run"
    assert main(["run", str(study), "--out", str(out), "--on", "array", "--submit"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "'sbatch' command, which is not on PATH" in err
    assert "local process pool or a Dask cluster" in err
    assert not (out / "jobs.json").exists()


def test_resubmit_and_submit_need_the_array_executor(tmp_path, capsys):
    study = write_study(tmp_path)
    out = tmp_path / "run"
    assert main(["run", str(study), "--out", str(out), "--resubmit-failed"]) == 2
    assert "nothing was submitted" in capsys.readouterr().err
    assert main(["run", str(study), "--out", str(out), "--submit", "--on", "local"]) == 2
    assert "--submit goes with --on array" in capsys.readouterr().err
    assert not list((out / "tasks").glob("*.h5"))  # nothing ran


def test_status_says_when_the_scheduler_cannot_be_asked(tmp_path, monkeypatch, capsys):
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    slurm.record_submission(rd.path / "jobs.json", "40", [0], rd.path / "array.sh")
    monkeypatch.setenv("PATH", str(tmp_path / "empty-bin"))
    assert main(["status", str(rd.path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert "not on PATH" in data["scheduler"]["error"]
    assert data["tasks"][0]["state"] == "pending"  # the directory's own view is still there
