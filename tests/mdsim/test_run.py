"""mdsim run / task / status: skipping, kill and resume, the lock, failures, the array script."""
import json
import math
import os
import signal
import subprocess
import sys
import time

import pytest

from mdsim.cli import main
from mdsim.numbers import value_with_error
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline import read_task_result

from test_tasks import write_study

SWEEP = '[sweep]\ntemperature = ["150 K", "180 K"]'


def _results(run_dir):
    rd = RunDir(run_dir)
    out = {}
    for t in rd.read_tasks():
        _, res, series = read_task_result(rd.task_file(t["index"]))
        out[t["index"]] = (res["delta_T_K"], res["final_temperature_K"],
                           {k: v.tolist() for k, v in series.items()})
    return out


def _cli(*args, env_extra=None, **kw):
    env = dict(os.environ, **(env_extra or {}))
    return subprocess.run([sys.executable, "-m", "mdsim", *args], capture_output=True, text=True,
                          env=env, **kw)


def test_run_json_then_rerun_skips_complete_tasks(tmp_path, capsys):
    study = write_study(tmp_path)
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--on", "local", "--workers",
                 "1", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    sp = summary["state_points"][0]
    assert {"virial_b2", "virial_b2b3", "energy"} <= set(sp["delta_T_K"])
    assert sp["delta_T_K"]["energy"]["stderr"] <= 0.5
    for name in ("study.toml", "tasks.json", "results.csv", "results.json", "report.md",
                 "log.txt", "tasks/0000.h5"):
        assert (out / name).is_file(), name
    assert not any((out / "plots").iterdir())  # --no-plots: the report without drawing
    assert "Joule inversion" in (out / "report.md").read_text(encoding="utf-8")
    first = _results(out)
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--workers", "1"]) == 0
    assert "1 of 1 tasks already complete; skipped" in capsys.readouterr().err
    assert _results(out) == first


def test_the_resolved_study_reads_back_with_the_same_tasks(tmp_path):
    from mdsim.study.reader import read_study
    from mdsim.pipeline import plan_tasks
    from mdsim.pipeline.prepare import prepare_run_dir
    study = read_study(write_study(tmp_path, particles=""))
    rd, tasks = prepare_run_dir(study, tmp_path / "run")
    again = read_study(rd.path / "study.toml")
    assert plan_tasks(again) == tasks
    assert again.simulation["max_cpu_time"] == pytest.approx(120.0)


def test_a_second_run_is_refused_while_the_lock_is_held(tmp_path, capsys):
    study = write_study(tmp_path)
    rd = RunDir(tmp_path / "run").create()
    rd.acquire_lock()  # held by this (living) process
    try:
        assert main(["run", str(study), "--no-plots", "--out", str(rd.path)]) == 2
        err = capsys.readouterr().err
        assert "is in use by process" in err and str(os.getpid()) in err
    finally:
        rd.release_lock()
    assert not (rd.path / ".lock").exists()


def test_a_failed_task_shows_its_error_and_status_lists_it(tmp_path, capsys):
    from test_tasks import cv_range_study
    study = cv_range_study(tmp_path)
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--workers", "1"]) == 1
    err = capsys.readouterr().err
    assert "task 0000 (energy, state point 0) failed" in err and "Traceback" not in err
    assert (out / "tasks" / "0000.failed.json").is_file()
    assert main(["status", str(out)]) == 0
    text = capsys.readouterr().out
    assert "0 done, 0 running, 1 failed, 0 left" in text
    assert "outside the range of the ideal-gas heat capacity" in text


def test_status_counts_done_and_left(tmp_path, capsys):
    study = write_study(tmp_path, extra=SWEEP, initial_T="")
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--on", "array"]) == 0
    assert main(["task", str(out), "--index", "1"]) == 0
    capsys.readouterr()
    assert main(["status", str(out), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["counts"] == {"done": 1, "running": 0, "failed": 0, "left": 1}
    assert [r["state"] for r in data["tasks"]] == ["pending", "done"]
    assert data["cpu_seconds_total"] > 0


@pytest.mark.slow
def test_array_script_elements_run_one_by_one_match_the_local_run(tmp_path):
    study = write_study(tmp_path, extra=SWEEP, initial_T="")
    local, array = tmp_path / "local", tmp_path / "array"
    assert main(["run", str(study), "--no-plots", "--out", str(local), "--workers", "1",
                 "--quiet"]) == 0
    assert main(["run", str(study), "--no-plots", "--out", str(array), "--on", "array",
                 "--quiet"]) == 0
    script = array / "array.sh"
    text = script.read_text()
    assert "#SBATCH --array=0-1" in text and "SLURM_ARRAY_TASK_ID" in text
    loop = f'for k in 0 1; do SLURM_ARRAY_TASK_ID=$k bash {script} || exit 1; done'
    done = subprocess.run(["bash", "-c", loop], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert main(["report", str(array)]) == 0
    assert _results(array) == _results(local)
    assert json.loads((array / "results.json").read_text())["state_points"][1]["delta_T_K"][
        "energy"] == json.loads((local / "results.json").read_text())["state_points"][1][
        "delta_T_K"]["energy"]


@pytest.mark.slow
def test_a_killed_run_restarted_gives_the_results_of_an_uninterrupted_one(tmp_path):
    study = write_study(tmp_path, extra=SWEEP, initial_T="", target="0.25 K")
    whole, killed = tmp_path / "whole", tmp_path / "killed"
    args = ["run", str(study), "--no-plots", "--workers", "1", "--quiet"]
    proc = subprocess.Popen([sys.executable, "-m", "mdsim", *args, "--out", str(killed)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    stages = killed / "tasks" / "0000.stages"
    deadline = time.time() + 120
    # kill while task 0 is part way: after its first stage file completed
    while time.time() < deadline and not (stages / "initial-state-pilot.h5").exists():
        time.sleep(0.05)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    assert (stages / "initial-state-pilot.h5").exists()
    assert not (killed / "tasks" / "0001.h5").exists()  # it really stopped part way
    assert (killed / ".lock").exists()  # left behind by the killed process: taken over below
    again = _cli(*args, "--out", str(killed), timeout=300)
    assert again.returncode == 0, again.stderr
    # the uninterrupted reference, task by task in this process (no report needed)
    from mdsim.pipeline.prepare import prepare_run_dir
    from mdsim.study.reader import read_study
    from mdsim.pipeline import run_task
    rd, tasks = prepare_run_dir(read_study(study), whole)
    for t in tasks:
        run_task(rd.path, t["index"])
    assert _results(killed) == _results(whole)


def test_run_directory_keeps_copies_of_the_data_files_it_needs(tmp_path):
    from pathlib import Path
    from mdsim.study.reader import read_study
    configs = Path(__file__).resolve().parents[2] / "configs"
    out = tmp_path / "moved-later"
    # plan only (array executor), so nothing is simulated
    assert main(["run", str(configs / "argon_table.toml"), "--no-plots", "--out", str(out),
                 "--on", "array", "--quiet"]) == 0
    copy = out / "inputs" / "argon_lj_table.csv"
    assert copy.read_bytes() == (configs / "argon_lj_table.csv").read_bytes()
    moved = tmp_path / "elsewhere"
    out.rename(moved)
    again = read_study(moved / "study.toml")  # reads the copy, relative to the run directory
    original = read_study(configs / "argon_table.toml")
    assert again.gas.pairs_K_angstrom.pots[0][0].epsilon == original.gas.pairs_K_angstrom.pots[0][0].epsilon


def test_status_reports_a_damaged_task_file_and_leaves_it_only_run_moves_it(tmp_path):
    import h5py
    study = write_study(tmp_path)
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--workers", "1",
                 "--quiet"]) == 0
    first = _results(out)
    task_file = out / "tasks" / "0000.h5"
    with h5py.File(task_file, "r+") as f:
        f.attrs["complete"] = False  # as a run cut short while writing leaves it
    damaged = task_file.read_bytes()
    for _ in range(2):  # looking twice changes nothing
        seen = _cli("status", str(out), timeout=120)
        assert seen.returncode == 0, seen.stderr
        assert seen.stderr == ""  # no warning text, no traceback
        line = [t for t in seen.stdout.splitlines() if t.startswith("  0000")]
        assert len(line) == 1 and " damaged " in line[0]
        assert "its completion marker is not set" in line[0]
        assert "1 left (1 with a damaged task file)" in seen.stdout
        assert task_file.read_bytes() == damaged
        assert not list(task_file.parent.glob("0000.h5.corrupt-*"))
    as_json = json.loads(_cli("status", str(out), "--json", timeout=120).stdout)
    assert as_json["tasks"][0]["state"] == "damaged"
    assert as_json["counts"] == {"done": 0, "running": 0, "failed": 0, "left": 1}
    rebuilt = _cli("report", str(out), "--no-plots", timeout=120)  # a report only reads, too
    assert rebuilt.returncode == 0, rebuilt.stderr
    assert "its task file is damaged" in (out / "report.md").read_text(encoding="utf-8")
    assert "task file damaged" in (out / "results.csv").read_text(encoding="utf-8")
    assert task_file.read_bytes() == damaged
    again = _cli("run", str(study), "--no-plots", "--out", str(out), "--workers", "1", "--quiet",
                 timeout=300)
    assert again.returncode == 0, again.stderr
    aside = list(task_file.parent.glob("0000.h5.corrupt-*"))
    assert len(aside) == 1 and aside[0].read_bytes() == damaged
    # the run says so in one line of its own, not Python's warning text with a source path
    said = [line for line in again.stderr.splitlines() if "moved aside" in line or "damaged" in line]
    assert said and all(line.startswith("mdsim: warning: ") for line in said), again.stderr
    assert "Warning:" not in again.stderr and ".py:" not in again.stderr
    assert RunDir(out).task_state(0) == "done"
    assert _results(out) == first  # redone from its stage files to the same numbers
    started = [line for line in (out / "log.txt").read_text(encoding="utf-8").splitlines()
               if "task 0000 started" in line]
    assert len(started) == 2  # the first run, then the run that redid it
    assert started[1].endswith("100 particles; its task file was damaged (its completion "
                               "marker is not set), moved aside: the task runs again")
    seen = _cli("status", str(out), timeout=120)
    _, res, _ = read_task_result(out / "tasks" / "0000.h5")
    d = res["delta_T_K"]
    assert f" done     Delta T = {value_with_error(d['value'], d['stderr'], 'K')} (stopped by " \
           f"target, {res['cpu_seconds']:.1f} s CPU)" in seen.stdout


@pytest.mark.parametrize("as_json", [True, False])
def test_status_into_a_closed_pipe_ends_quietly(tmp_path, as_json):
    from test_tasks import make_run_dir
    temps = ", ".join(f'"{150 + k} K"' for k in range(1000))
    study = write_study(tmp_path, routes='["energy", "direct"]', initial_T="",
                        extra=f"[sweep]\ntemperature = [{temps}]")
    rd, tasks = make_run_dir(tmp_path, study)  # planned only: 2000 pending tasks
    assert len(tasks) == 2000  # well over a pipe's 64 KiB of output, in either form
    flag = " --json" if as_json else ""
    shell = f"'{sys.executable}' -m mdsim status '{rd.path}'{flag} | head -c 10"
    done = subprocess.run(["bash", "-o", "pipefail", "-c", shell], capture_output=True,
                          text=True, timeout=120)
    assert done.stderr == ""
    assert done.returncode == 0
    assert len(done.stdout) == 10


def test_an_array_element_writes_its_start_and_end_into_log_txt(tmp_path):
    import re
    study = write_study(tmp_path, extra=SWEEP, initial_T="")
    out = tmp_path / "run"
    assert main(["run", str(study), "--no-plots", "--out", str(out), "--on", "array",
                 "--quiet"]) == 0
    before = (out / "log.txt").read_text(encoding="utf-8")
    # as a Slurm element runs it: no terminal on stdin, stdout or stderr
    done = _cli("task", str(out), "--index", "1", stdin=subprocess.DEVNULL, timeout=300)
    assert done.returncode == 0, done.stderr
    _, res, _ = read_task_result(out / "tasks" / "0001.h5")
    added = (out / "log.txt").read_text(encoding="utf-8")[len(before):].splitlines()
    ours = [line for line in added if "mdsim.pipeline.runner" in line]
    assert len(ours) == 2
    stamp = r"\d{4}-\d\d-\d\d \d\d:\d\d:\d\d,\d{3} INFO mdsim\.pipeline\.runner: "
    assert re.fullmatch(stamp + r"task 0001 started: energy route, state point 1 "
                        r"\(T = 180 K, 2000 mol/m\^3\), 100 particles", ours[0])
    end = re.fullmatch(stamp + r"task 0001 ended: stopped by (target|cpu budget); "
                       r"(\d+) particles, standard error of Delta T (\S+) K "
                       r"\(target (\S+) K\), (\S+) s CPU", ours[1])
    assert end is not None, ours[1]
    assert end.group(1) == res["stopped_by"] == "target"
    assert int(end.group(2)) == res["n_particles"] == 100
    assert float(end.group(3)) == pytest.approx(res["delta_T_K"]["stderr"], rel=5e-3)  # 3 figures
    assert float(end.group(3)) <= float(end.group(4)) == pytest.approx(0.5)
    assert float(end.group(5)) == pytest.approx(res["cpu_seconds"], abs=0.05)  # 0.1 s printed
    # its one line on stderr writes the error by the two-figure rule
    d = res["delta_T_K"]
    assert done.stderr.splitlines()[-1] == (
        f"task 0001 (energy): Delta T = {value_with_error(d['value'], d['stderr'], 'K')}, "
        f"stopped by target, {res['cpu_seconds']:.1f} s CPU")


def test_a_rerun_with_a_tighter_target_extends_the_tasks_and_a_new_volume_ratio_is_refused(
        tmp_path, capsys):
    # The same Markov chains continued: the task keeps its particles and stage files, its
    # samples grow, its error falls to the new target (or the budget says why), and T_f
    # moves by no more than the errors allow (common practice, no source: a longer run of
    # the same chain gives a consistent mean).
    loose = write_study(tmp_path, name="loose", target="0.5 K", particles="")
    out = tmp_path / "run"
    assert main(["run", str(loose), "--no-plots", "--out", str(out), "--workers", "1",
                 "--quiet"]) == 0
    _, first, _ = read_task_result(out / "tasks" / "0000.h5")
    tight = write_study(tmp_path, name="loose", target="0.25 K", particles="")
    assert main(["run", str(tight), "--no-plots", "--out", str(out), "--workers", "1",
                 "--quiet"]) == 0
    _, second, _ = read_task_result(out / "tasks" / "0000.h5")
    assert (out / "tasks" / "0000.h5.earlier").is_file()
    assert second["target_stderr_K"] == pytest.approx(0.25)
    assert second["n_particles"] == first["n_particles"]
    d1, d2 = first["details"], second["details"]
    assert d2["initial_samples"] + d2["final_samples"] > d1["initial_samples"] + d1["final_samples"]
    if second["stopped_by"] == "target":  # the sampling part meets the target
        assert second["delta_T_stderr_parts_K"]["sampling"] <= 0.25
    else:
        assert any("CPU budget" in w for w in second["warnings"])
    T1, T2 = first["final_temperature_K"], second["final_temperature_K"]
    assert abs(T1["value"] - T2["value"]) < 3.0 * math.hypot(T1["stderr"], T2["stderr"])
    ledger = json.loads((out / "tasks" / "0000.stages" / "cpu-time-ledger.json").read_text())
    assert second["cpu_seconds"] == pytest.approx(sum(r["cpu_s"] for r in ledger.values()))
    capsys.readouterr()
    wider = tmp_path / "loose.toml"
    wider.write_text(wider.read_text().replace("volume_ratio = 2.0", "volume_ratio = 3.0"))
    assert main(["run", str(wider), "--no-plots", "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "volume_ratio" in err[0] and "cannot be extended" in err[0]
