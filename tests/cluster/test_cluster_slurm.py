"""Against a real Slurm (tests/cluster/slurm_up.sh): job arrays, scancel, resubmission, Dask.

Each study is tiny (100 LJ argon atoms, a 0.5 K target): an element takes
a few seconds.  The numbers from the scheduler must be identical to those
of the local pool: tasks are deterministic given their seeds and resume
exactly from their checkpoints (the engine's contract, tested in
tests/mdsim/test_run.py), so any difference is a bug in the batch path.
"""
import json
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

from mdsim.execute import slurm
from mdsim.cli import main
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline import read_task_result

from test_tasks import write_study

pytestmark = pytest.mark.slurm

SWEEP = '[sweep]\ntemperature = ["150 K", "180 K"]'
WAIT_S = 240  # an element is a few seconds of CPU; the margin covers a busy 2-core machine


def _results(run_dir):
    rd = RunDir(run_dir)
    out = {}
    for t in rd.read_tasks():
        _, res, series = read_task_result(rd.task_file(t["index"]))
        out[t["index"]] = (res["delta_T_K"], res["final_temperature_K"],
                           {k: v.tolist() for k, v in series.items()})
    return out


def _cli(*args, **kw):
    return subprocess.run([sys.executable, "-m", "mdsim", *args], capture_output=True, text=True,
                          env=dict(os.environ), stdin=subprocess.DEVNULL, **kw)


def _wait_until_finished(run_dir, cluster, timeout=WAIT_S):
    """Poll the scheduler until no element of the run directory is pending or running."""
    jobs = Path(run_dir) / "jobs.json"
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        view = slurm.scheduler_view(jobs)
        if view and all(v["state"] not in slurm.ACTIVE for v in view.values()):
            return view
        time.sleep(0.5)
    raise AssertionError(f"array elements still active after {timeout} s: "
                         f"{slurm.scheduler_view(jobs)}\n{cluster.log('slurmctld')[-2000:]}")


def _local_pool(tmp_path, study, name="local"):
    """The same study on the local process pool (no report): the uninterrupted local numbers."""
    from mdsim.pipeline.prepare import prepare_run_dir
    import functools

    from mdsim.execute.local import run_local
    from mdsim.pipeline.jobs import task_job
    from mdsim.study.reader import read_study
    rd, tasks = prepare_run_dir(read_study(study), tmp_path / name)
    indices = [t["index"] for t in tasks]
    assert run_local(functools.partial(task_job, str(rd.path)), indices,
                     workers=min(2, len(indices))) == {k: None for k in indices}
    return _results(rd.path)


def test_the_cluster_came_up_quickly_with_accounting(slurm_cluster):
    # the issue asks for a bring-up under a minute (about 15 s was seen on this kind of machine)
    assert slurm_cluster.up_seconds < 60.0
    # job accounting answers: sacct reaches slurmdbd and its MariaDB
    proc = subprocess.run(["sacct", "-n", "-X", "-P", "-o", "JobID,State"], capture_output=True,
                          text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    out = subprocess.run(["sinfo", "-h", "-N", "-o", "%T"], capture_output=True, text=True,
                         timeout=60).stdout.split()
    assert out and out[0] in ("idle", "mixed", "allocated")


def test_an_array_study_ends_with_the_numbers_of_the_local_pool(slurm_cluster, tmp_path, capsys):
    study = write_study(tmp_path, extra=SWEEP, initial_T="")
    array = tmp_path / "array"
    t0 = time.monotonic()
    assert main(["run", str(study), "--no-plots", "--out", str(array), "--on", "array", "--submit",
                 "--json"]) == 0
    submitted = json.loads(capsys.readouterr().out)
    assert submitted["submitted"] == [0, 1] and submitted["job_id"].isdigit()
    subs = json.loads((array / "jobs.json").read_text())
    assert [s["job_id"] for s in subs] == [submitted["job_id"]]
    # while it runs, 'mdsim run' again neither runs nor resubmits anything
    status = json.loads(_cli("status", str(array), "--json", timeout=60).stdout)
    assert status["scheduler"]["job_ids"] == [submitted["job_id"]]
    # each element needs seconds of CPU, so a second after submission they are still active
    assert status["scheduler"]["active"] >= 1, status
    assert main(["run", str(study), "--no-plots", "--out", str(array)]) == 0
    assert "still pending or running" in capsys.readouterr().err
    assert len(json.loads((array / "jobs.json").read_text())) == 1
    # nor does a local run start the same tasks beside the array
    assert main(["run", str(study), "--no-plots", "--out", str(array), "--on", "local"]) == 2
    assert "still pending or running" in capsys.readouterr().err
    view = _wait_until_finished(array, slurm_cluster)
    elapsed = time.monotonic() - t0
    assert {v["state"] for v in view.values()} == {"done"}
    assert {v["slurm_state"] for v in view.values()} == {"COMPLETED"}
    # after the array: 'mdsim run' (the executor is known from the directory) only gathers
    assert main(["run", str(study), "--no-plots", "--out", str(array), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert len(json.loads((array / "jobs.json").read_text())) == 1  # nothing resubmitted
    local = _local_pool(tmp_path, study)
    assert _results(array) == local
    for sp in summary["state_points"]:
        k = sp["index"]  # one energy task per state point, in order
        assert sp["delta_T_K"]["energy"]["value"] == local[k][0]["value"]
    text = _cli("status", str(array), timeout=60).stdout
    assert "2 done" in text and "COMPLETED" in text
    print(f"array of 2 tiny tasks: {elapsed:.1f} s from submission to the end")


def test_an_element_killed_by_scancel_is_reported_and_resubmitted(slurm_cluster, tmp_path,
                                                                    capsys):
    study = write_study(tmp_path, target="0.25 K")
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--on", "array", "--submit",
                 "--quiet", "--json"]) == 0
    job = json.loads(capsys.readouterr().out)["job_id"]
    stages = out / "tasks" / "0000.stages"
    deadline = time.monotonic() + WAIT_S
    # kill the element part way: after its first sampling stage is complete
    while time.monotonic() < deadline and not (stages / "initial-state-pilot.h5").exists():
        time.sleep(0.05)
    assert (stages / "initial-state-pilot.h5").exists(), slurm_cluster.log("slurmd")[-2000:]
    slurm.cancel(job, 0)
    view = _wait_until_finished(out, slurm_cluster)
    assert view[0]["state"] == "failed" and view[0]["slurm_state"] == "CANCELLED"
    assert not (out / "tasks" / "0000.h5").exists()  # it really stopped part way
    # mdsim status: the scheduler's view (killed) next to the directory's (not done, resumes)
    status = _cli("status", str(out), "--json", timeout=60)
    data = json.loads(status.stdout)
    row = data["tasks"][0]
    assert row["state"] != "done" and row["scheduler"]["slurm_state"] == "CANCELLED"
    assert data["scheduler"]["counts"]["failed"] == 1
    text = _cli("status", str(out), timeout=60).stdout
    assert "CANCELLED" in text and f"job {job}_0" in text
    # gathering reports the kill and exits 1; it does not resubmit by itself
    gather = _cli("run", str(study), "--no-plots", "--out", str(out), timeout=300)
    assert gather.returncode == 1, gather.stderr
    assert "CANCELLED" in gather.stderr and "--resubmit-failed" in gather.stderr
    assert "Traceback" not in gather.stderr
    # resubmit only what failed, then gather: identical to an uninterrupted run
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--resubmit-failed", "--quiet",
                 "--json"]) == 0
    again = json.loads(capsys.readouterr().out)
    assert again["submitted"] == [0] and again["job_id"] != job
    view = _wait_until_finished(out, slurm_cluster)
    assert view[0] == {**view[0], "state": "done", "job_id": f"{again['job_id']}_0"}
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--quiet"]) == 0
    assert _results(out) == _local_pool(tmp_path, study)


CV_CSV = "temperature_K, cv_J_molK\n50, 12.4717\n300, 12.4717\n600, 12.4717\n"


def test_an_element_failing_for_a_user_error_reports_it_without_a_traceback(slurm_cluster,
                                                                               tmp_path, capsys):
    (tmp_path / "cv.csv").write_text(CV_CSV, encoding="utf-8")
    study = write_study(tmp_path, cv="cv.csv")
    out = tmp_path / "run"
    # plan and write the script only, then spoil the heat-capacity file the tasks read
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--on", "array",
                 "--quiet"]) == 0
    assert (out / "array.sh").is_file() and not (out / "jobs.json").exists()
    import tomllib
    resolved = tomllib.loads((out / "study.toml").read_text())["gas"]["ideal_heat_capacity"]
    read_by_tasks = out / resolved  # the run directory's copy, or the original (absolute)
    assert read_by_tasks.name == "cv.csv" and read_by_tasks.is_file()
    read_by_tasks.write_text("temperature_K, cv_J_molK\n50, lots\n", encoding="utf-8")
    job = slurm.submit_tasks(out / "jobs.json", [0], out / "array.sh")
    view = _wait_until_finished(out, slurm_cluster)
    deadline = time.monotonic() + 60  # the accounting database learns the exit code a bit later
    while view[0]["exit_code"] is None and time.monotonic() < deadline:
        time.sleep(0.5)
        view = slurm.scheduler_view(out / "jobs.json")
    assert view[0]["slurm_state"] == "FAILED" and view[0]["exit_code"] == "2:0"  # usage error
    log = (out / "logs" / "task-0.out").read_text()
    assert "Traceback" not in log
    lines = [ln for ln in log.splitlines() if ln.startswith("mdsim: error:")]
    assert len(lines) == 1 and "cv.csv" in lines[0]
    data = json.loads(_cli("status", str(out), "--json", timeout=60).stdout)
    row = data["tasks"][0]
    assert row["state"] == "failed" and "cv.csv" in row["error"]
    assert row["scheduler"]["job_id"] == f"{job}_0"
    gather = _cli("run", str(study), "--no-plots", "--out", str(out), timeout=300)
    # gathering (or the study check, if it sees the spoilt copy) names the file, in one line
    assert gather.returncode in (1, 2) and "cv.csv" in gather.stderr, gather.stderr
    assert "Traceback" not in gather.stderr


def test_a_dask_job_queue_cluster_on_slurm_gives_the_numbers_of_the_local_pool(
        slurm_cluster, tmp_path, monkeypatch):
    pytest.importorskip("dask_jobqueue")
    monkeypatch.chdir(tmp_path)
    cluster = ('[cluster]\nsystem = "slurm"\npartition = "debug"\ncpus_per_job = 1\n'
               'memory_per_job = "1GB"\ntime_limit = "00:10:00"\nnetwork_interface = "lo"\n'
               'batch_jobs = 2\n')
    study = write_study(tmp_path, extra=SWEEP + "\n" + cluster, initial_T="")
    dask = tmp_path / "dask"
    proc = _cli("run", str(study), "--no-plots", "--out", str(dask), "--on", "dask", "--quiet",
                timeout=600)
    assert proc.returncode == 0, proc.stderr[-3000:]
    assert _results(dask) == _local_pool(tmp_path, study)
    # the workers really were Slurm jobs: their logs are in the run directory
    assert list((dask / "logs").glob("dask-worker-*.err"))
