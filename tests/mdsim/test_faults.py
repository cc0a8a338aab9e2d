"""Nothing lost: killed tasks, damaged files, two runs on one directory, dead Dask workers,
full and read-only disks.  Processes are real and killed by signal; reference numbers come
from an uninterrupted run of the same task (the tasks are deterministic given their seeds:
common practice, no source)."""
import errno
import json
import os
import signal
import socket
import subprocess
import sys
import textwrap
import threading
import time
import warnings
from pathlib import Path

import h5py
import numpy as np
import pytest

from mdsim.sampling import store
from mdsim.errors import SimulationError
from mdsim.pipeline.rundir import RunDir, space_needed_bytes
from mdsim.pipeline import read_task_result, run_task

from test_tasks import make_run_dir, write_study

HERE = Path(__file__).resolve().parent


def _numbers(rd):
    out = {}
    for t in rd.read_tasks():
        _, res, series = read_task_result(rd.task_file(t["index"]))
        out[t["index"]] = (res["delta_T_K"], res["final_temperature_K"],
                           {k: v.tolist() for k, v in series.items()})
    return out


def _python(code, *args, timeout=300):
    """Run a Python snippet in a fresh process (the tests directory on sys.path)."""
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(HERE), os.environ.get("PYTHONPATH", "")]))
    return subprocess.run([sys.executable, "-c", textwrap.dedent(code), *map(str, args)],
                          capture_output=True, text=True, timeout=timeout, env=env)


def _cli(*args, cwd=None, timeout=300):
    return subprocess.run([sys.executable, "-m", "mdsim", *map(str, args)], capture_output=True,
                          text=True, timeout=timeout, cwd=cwd)


def _flip_bytes_of(path, dataset):
    """Overwrite up to 8 bytes in the middle of a dataset's stored data (a silent disk error)."""
    with h5py.File(path, "r") as f:
        ds = f[dataset]
        if ds.chunks is None:
            offset, nbytes = ds.id.get_offset(), ds.id.get_storage_size()
        else:  # the first chunk of a chunked dataset
            info = ds.id.get_chunk_info(0)
            offset, nbytes = info.byte_offset, info.size
    assert offset is not None and nbytes >= 8  # one float64 at least
    width = 8
    start = offset + (nbytes - width) // 2
    with open(path, "r+b") as fh:
        fh.seek(start)
        old = fh.read(width)
        fh.seek(start)
        fh.write(bytes(b ^ 0xFF for b in old))


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """One small energy-route task run without interruption: (study path, numbers)."""
    tmp = tmp_path_factory.mktemp("reference")
    study = write_study(tmp)
    rd, _ = make_run_dir(tmp, study)
    run_task(rd.path, 0)
    return study, _numbers(rd), rd


# -- damaged files are detected, moved aside and redone ----------------------------------

def test_damaged_task_and_stage_files_are_moved_aside_and_redone(reference, tmp_path):
    study, expected, _ = reference
    rd, _ = make_run_dir(tmp_path, study)
    run_task(rd.path, 0)
    stages = rd.stages_dir(0)
    # three kinds of damage: flipped bytes in a dataset, a truncated file, a missing marker
    _flip_bytes_of(rd.task_file(0), "series/newton_T_K")
    _flip_bytes_of(stages / "initial-state-00.h5", "samples/u_full")
    size = (stages / "final-density-guess0-mc-pilot.h5").stat().st_size
    with open(stages / "final-density-guess0-mc-pilot.h5", "r+b") as fh:
        fh.truncate(size // 2)
    with h5py.File(stages / "initial-state-pilot.h5", "r+") as f:
        f.attrs["complete"] = False
    for name in ("initial-state-00.h5", "final-density-guess0-mc-pilot.h5", "initial-state-pilot.h5"):
        assert store.verify(stages / name) is not None, name
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the read-only look warns about nothing
        assert rd.task_look(0) == ("damaged", "its checksum does not match its contents")
    assert rd.task_file(0).is_file() and not list(rd.tasks_dir.glob("0000.h5.corrupt-*"))
    with pytest.warns(store.CorruptFileWarning, match="moved aside"):
        assert rd.task_state_for_run(0) == ("partial",  # its stages folder is kept
                                            "its checksum does not match its contents")
    assert len(list(rd.tasks_dir.glob("0000.h5.corrupt-*"))) == 1
    with pytest.warns(store.CorruptFileWarning) as caught:
        run_task(rd.path, 0)
    assert len(caught) == 3  # the three damaged stage files, each moved aside once
    assert len(list(stages.glob("*.h5.corrupt-*"))) == 3
    assert rd.task_state(0) == "done"
    assert _numbers(rd) == expected  # redone to the same numbers


def test_a_damaged_checkpoint_or_unreadable_part_file_restarts_the_stage(tmp_path):
    path = tmp_path / "run.h5"
    w = store.RunWriter.create(path, {"n_samples": 10})
    w.append({"x": np.arange(5.0)})
    w.write_checkpoint({"positions": np.ones((4, 3)), "step": 7}, 5, phase="production")
    w.close()
    opened = store.open_resumable(path)  # sound: resumes
    assert opened is not None and opened[1][1]["n_samples_done"] == 5
    opened[0].close()
    _flip_bytes_of(store.part_path(path), "checkpoint/state/positions")
    with pytest.raises(SimulationError, match="checkpoint .* damaged"):
        store.read_checkpoint(store.part_path(path))
    with pytest.warns(store.CorruptFileWarning, match="checkpoint"):
        assert store.open_resumable(path) is None
    assert not store.part_path(path).exists()
    # a .part cut short (for example by the disk filling up) cannot be opened at all
    w = store.RunWriter.create(path, {"n_samples": 10})
    w.append({"x": np.arange(5.0)})
    w.write_checkpoint({"step": 1}, 5)
    w.close()
    with open(store.part_path(path), "r+b") as fh:
        fh.truncate(200)
    with pytest.warns(store.CorruptFileWarning, match="cannot be opened"):
        assert store.open_resumable(path) is None
    assert len(list(tmp_path.glob("run.h5.part.corrupt-*"))) == 2


# -- SIGKILL at any moment ---------------------------------------------------------------

@pytest.mark.slow
def test_sigkill_while_sampling_resumes_to_the_same_numbers(reference, tmp_path):
    study, expected, _ = reference
    rd, _ = make_run_dir(tmp_path, study)
    stages = rd.stages_dir(0)
    kills = 0
    for delay in (0.3, 0.7, 1.1):  # seconds after a stage's .part file appears
        proc = subprocess.Popen([sys.executable, "-m", "mdsim", "task", str(rd.path),
                                 "--index", "0"], stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL)
        deadline = time.time() + 120
        while time.time() < deadline and proc.poll() is None and not list(stages.glob("*.part")):
            time.sleep(0.02)
        time.sleep(delay)
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGKILL)
            kills += 1
        proc.wait()
    assert kills >= 2  # the task really was killed part way
    done = _cli("task", rd.path, "--index", "0")
    assert done.returncode == 0, done.stderr
    assert _numbers(rd) == expected


KILL_IN_CHECKPOINT = """
import os, signal, sys
import mdsim.sampling.store as st
from mdsim.pipeline import run_task
orig = st.write_tree
calls = [0]
def dying(group, state):
    calls[0] += 1
    if calls[0] == int(sys.argv[2]):
        items = list(state.items())
        orig(group, dict(items[: len(items) // 2]))  # half of the state written, then death
        group.file.flush()
        os.kill(os.getpid(), signal.SIGKILL)
    orig(group, state)
st.write_tree = dying
run_task(sys.argv[1], 0)
"""

KILL_IN_TASK_FILE = """
import os, signal, sys
import h5py
from mdsim.pipeline import run_task
orig = h5py.Group.create_dataset
def dying(self, name, *a, **kw):
    out = orig(self, name, *a, **kw)
    if self.file.filename.endswith("0000.h5.part") and name == "initial_T_K":
        self.file.flush()
        os.kill(os.getpid(), signal.SIGKILL)  # half of the task file's series written
    return out
h5py.Group.create_dataset = dying
run_task(sys.argv[1], 0)
"""


@pytest.mark.slow
def test_sigkill_while_writing_a_checkpoint_or_the_task_file(reference, tmp_path):
    study, expected, _ = reference
    rd, _ = make_run_dir(tmp_path, study)
    # killed half way through rewriting a checkpoint of the second stage file
    died = _python(KILL_IN_CHECKPOINT, rd.path, 12)
    assert died.returncode == -signal.SIGKILL, died.stderr
    parts = list(rd.stages_dir(0).glob("*.h5.part"))
    assert len(parts) == 1
    with pytest.raises(SimulationError, match="damaged"):
        store.read_checkpoint(parts[0])
    # killed half way through the task file: every stage is done, the task file is not
    died = _python(KILL_IN_TASK_FILE, rd.path)
    assert died.returncode == -signal.SIGKILL, died.stderr
    assert "moved aside" in died.stderr  # it found the cut-short checkpoint and redid the stage
    assert not rd.task_file(0).exists()
    assert rd.partial_file(0).exists()
    assert rd.task_state(0) == "partial"
    again = _cli("task", rd.path, "--index", "0")
    assert again.returncode == 0, again.stderr
    assert not rd.partial_file(0).exists()
    assert _numbers(rd) == expected


# -- two runs on one directory ----------------------------------------------------------

@pytest.mark.slow
def test_a_second_run_is_refused_and_a_dead_owners_lock_taken_over(reference, tmp_path):
    study, expected, _ = reference
    out = tmp_path / "run"
    first = subprocess.Popen([sys.executable, "-m", "mdsim", "run", str(study), "--no-plots",
                              "--out", str(out), "--workers", "1", "--quiet"],
                             stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    lock = out / ".lock"
    deadline = time.time() + 60
    while time.time() < deadline and not lock.exists():
        time.sleep(0.02)
    assert json.loads(lock.read_text())["pid"] == first.pid
    second = _cli("run", study, "--no-plots", "--out", out, "--workers", "1", "--quiet")
    assert second.returncode == 2
    lines = second.stderr.strip().splitlines()
    assert len(lines) == 1 and f"in use by process {first.pid}" in lines[0]
    assert "Traceback" not in second.stderr
    assert first.wait(timeout=300) == 0, first.stderr.read()
    assert not lock.exists()
    assert _numbers(RunDir(out)) == expected
    # a lock left by a process that is gone (killed) is taken over
    dead = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    lock.write_text(json.dumps({"host": socket.gethostname(), "pid": dead.pid,
                                "since": time.time()}))
    os.kill(dead.pid, signal.SIGKILL)
    dead.wait()
    third = _cli("run", study, "--no-plots", "--out", out, "--workers", "1", "--quiet")
    assert third.returncode == 0, third.stderr
    assert not lock.exists()
    assert _numbers(RunDir(out)) == expected


# -- a Dask worker that dies mid-task -----------------------------------------------------

@pytest.mark.slow
def test_a_killed_dask_worker_s_task_is_retried_to_the_same_numbers(reference, tmp_path):
    pytest.importorskip("distributed")
    from dask.distributed import Client, LocalCluster
    import functools

    from mdsim.execute.dask import run_dask
    from mdsim.pipeline.jobs import task_job
    study, expected, _ = reference
    rd, _ = make_run_dir(tmp_path, study)
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                           dashboard_address=None)
    client = Client(cluster)
    try:
        outcome = {}
        runner = threading.Thread(target=lambda: outcome.update(
            run_dask(functools.partial(task_job, str(rd.path)), [0],
                     address=cluster.scheduler_address)))
        runner.start()
        stages = rd.stages_dir(0)
        deadline = time.time() + 120
        while time.time() < deadline and not list(stages.glob("initial-state-0*.h5*")):
            time.sleep(0.02)
        busy = [w for w, keys in client.processing().items() if keys]
        assert len(busy) == 1
        pid = client.run(os.getpid, workers=busy)[busy[0]]
        os.kill(pid, signal.SIGKILL)
        runner.join(timeout=300)
        assert not runner.is_alive()
    finally:
        client.close()
        cluster.close()
    assert outcome == {0: None}
    assert _numbers(rd) == expected


# -- full or read-only disks ----------------------------------------------------------------

def test_disk_full_while_writing_the_task_file_leaves_no_half_written_file(reference, tmp_path,
                                                                          monkeypatch):
    study, expected, _ = reference
    rd, _ = make_run_dir(tmp_path, study)
    orig = h5py.Group.create_dataset

    def full(self, name, *a, **kw):
        if self.file.filename.endswith("0000.h5.part"):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), self.file.filename)
        return orig(self, name, *a, **kw)

    monkeypatch.setattr(h5py.Group, "create_dataset", full)
    with pytest.raises(SimulationError, match="No space left on device.*run again"):
        run_task(rd.path, 0)
    assert not rd.task_file(0).exists() and not rd.partial_file(0).exists()
    assert rd.task_state(0) == "failed"
    monkeypatch.setattr(h5py.Group, "create_dataset", orig)
    run_task(rd.path, 0)  # the stage files kept the work
    assert _numbers(rd) == expected


@pytest.fixture
def tmpfs(tmp_path):
    """Mount small tmpfs file systems under tmp_path; unmounted at the end."""
    mounted = []

    def mount(name, options):
        where = tmp_path / name
        where.mkdir()
        done = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(where)],
                              capture_output=True, text=True)
        if done.returncode != 0:
            pytest.skip(f"cannot mount a tmpfs here (needs root): {done.stderr.strip()}")
        mounted.append(where)
        return where

    yield mount
    for where in reversed(mounted):
        subprocess.run(["umount", "-l", str(where)], capture_output=True)


def test_read_only_or_too_small_disk_is_refused_before_work_starts(reference, tmpfs):
    study, _, _ = reference
    assert space_needed_bytes(1) > 1_100_000  # so the 1 MB disk below is too small
    for name, options, words in (("small", "size=1m", "MB free"),
                                 ("readonly", "ro,size=1m", "cannot be written")):
        where = tmpfs(name, options)
        done = _cli("run", study, "--no-plots", "--out", where / "run", "--quiet")
        assert done.returncode == 2, done.stderr
        lines = done.stderr.strip().splitlines()
        assert len(lines) == 1 and words in lines[0] and str(where / "run") in lines[0]
        assert list(where.iterdir()) == []  # nothing written


@pytest.mark.slow
def test_disk_filling_up_mid_run_fails_clearly_and_resumes(reference, tmpfs):
    study, expected, _ = reference
    where = tmpfs("disk", f"size={space_needed_bytes(1) + 2_000_000}")
    out = where / "run"
    proc = subprocess.Popen([sys.executable, "-m", "mdsim", "run", str(study), "--no-plots",
                             "--out", str(out), "--workers", "1", "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    stages = out / "tasks" / "0000.stages"
    deadline = time.time() + 120
    while time.time() < deadline and not (stages / "initial-state-pilot.h5").exists():
        time.sleep(0.02)
    filler = where / "filler"
    with open(filler, "wb") as fh:  # another program fills the disk
        try:
            while True:
                fh.write(b"\0" * 65536)
                fh.flush()
        except OSError as exc:
            assert exc.errno == errno.ENOSPC
    err = proc.communicate(timeout=300)[1]
    assert proc.returncode == 1, err
    assert "Traceback" not in err and "No space left on device" in err
    assert not (out / "tasks" / "0000.h5").exists()
    leftovers = [p for p in out.rglob("*") if ".tmp" in p.name]
    assert leftovers == []  # no half-written results or bookkeeping files
    for p in stages.glob("*.h5"):  # every stage file under its final name is sound
        assert store.verify(p) is None, p
    filler.unlink()
    again = _cli("run", study, "--no-plots", "--out", out, "--workers", "1", "--quiet")
    assert again.returncode == 0, again.stderr
    assert _numbers(RunDir(out)) == expected
