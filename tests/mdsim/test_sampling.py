"""The run driver: determinism, file output, resume after SIGKILL, summaries."""
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from mdsim.sampling import store
from mdsim.errors import StudyError
from mdsim.sampling.estimates import summarise
from mdsim.sampling.state_point import sample_state_point
from mdsim.study.reader import read_study

ROOT = Path(__file__).resolve().parents[2]
ARGON = ROOT / "configs" / "argon.toml"

# a moderately dense argon gas, 64 particles: fast, and the samples are correlated
RUN = dict(n_equilibration=30, n_samples=120, interval=2, seed=11, checkpoint_every=25)
N, RHO_MOL, T_RED = 64, 6000.0, 1.3


def argon_system(seed=5):
    return read_study(ARGON).system(N, RHO_MOL, seed=seed)


def test_same_seed_same_numbers_with_and_without_file(tmp_path):
    a = sample_state_point(argon_system(), "mc-nvt", T_RED, **RUN)
    b = sample_state_point(argon_system(), "mc-nvt", T_RED, path=tmp_path / "b.h5", **RUN)
    assert b.path == tmp_path / "b.h5" and store.is_complete(b.path)
    for key in a.samples:
        assert np.array_equal(a.samples[key], b.samples[key]), key
        assert np.array_equal(store.read_samples(b.path)[key], a.samples[key]), key
    c = sample_state_point(argon_system(), "mc-nvt", T_RED, **dict(RUN, seed=12))
    assert not np.array_equal(a.samples["u_full"], c.samples["u_full"])
    attrs = store.read_attrs(b.path)
    assert attrs["seed"] == 11 and attrs["method"] == "mc-nvt"
    assert attrs["rng_state_initial"].dtype == np.uint64
    assert store.read_final(b.path)["positions"].shape == (N, 3)


def test_completed_file_is_read_not_rerun(tmp_path):
    path = tmp_path / "r.h5"
    first = sample_state_point(argon_system(), "mc-nvt", T_RED, path=path, **RUN)
    mtime = path.stat().st_mtime_ns
    again = sample_state_point(argon_system(), "mc-nvt", T_RED, path=path, **RUN)
    assert again.resumed and path.stat().st_mtime_ns == mtime
    assert np.array_equal(again.samples["u_full"], first.samples["u_full"])
    with pytest.raises(StudyError, match="other settings: temperature_red"):
        sample_state_point(argon_system(), "mc-nvt", 1.4, path=path, **RUN)


def test_part_file_with_other_settings_is_refused(tmp_path):
    path = tmp_path / "p.h5"
    store.RunWriter.create(path, {"method": "mc-nvt", "seed": 99}).close()
    with pytest.raises(StudyError, match="seed"):
        sample_state_point(argon_system(), "mc-nvt", T_RED, path=path, **RUN)


KILL_SCRIPT = """
import os, signal, sys
from pathlib import Path
import mdsim.sampling.store as store
import mdsim.engine.montecarlo as mc
from mdsim.sampling.state_point import sample_state_point
from mdsim.study.reader import read_study

where, out = sys.argv[1], Path(sys.argv[2])

def die():
    os.kill(os.getpid(), signal.SIGKILL)

if where == "equilibration":
    mc.MCSampler.equilibrate = lambda self, n: die()
elif where == "after_append":
    original = store.RunWriter.append
    calls = []
    def append(self, block):
        original(self, block)
        self.file.flush()
        calls.append(1)
        if len(calls) == 3:   # samples on disk beyond the last checkpoint
            die()
    store.RunWriter.append = append
progress = (lambda done, total: die() if done >= 50 else None) if where == "after_checkpoint" else None
system = read_study({argon!r}).system({n}, {rho}, seed=5)
sample_state_point(system, sys.argv[3], {t}, path=out, progress=progress, **{run!r})
print("finished without being killed")
"""


@pytest.mark.parametrize("method, where", [("mc-nvt", "equilibration"), ("mc-nvt", "after_append"),
                                           ("mc-nvt", "after_checkpoint"), ("md-nvt", "after_append")])
def test_resume_after_sigkill_gives_identical_numbers(tmp_path, method, where):
    script = tmp_path / "killed.py"
    script.write_text(textwrap.dedent(KILL_SCRIPT).format(argon=str(ARGON), n=N, rho=RHO_MOL,
                                                         t=T_RED, run=RUN))
    path = tmp_path / "run.h5"
    proc = subprocess.run([sys.executable, str(script), where, str(path), method],
                          capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == -signal.SIGKILL, proc.stderr
    assert store.part_path(path).exists() and not path.exists()
    resumed = sample_state_point(argon_system(), method, T_RED, path=path, **RUN)
    reference = sample_state_point(argon_system(), method, T_RED, **RUN)
    assert resumed.resumed == (where != "equilibration")
    assert store.is_complete(path) and not store.part_path(path).exists()
    for key in reference.samples:
        assert np.array_equal(resumed.samples[key], reference.samples[key]), key
    assert store.read_final(path)["positions"].shape == (N, 3)


def test_interrupted_in_process_resume(tmp_path):
    path = tmp_path / "i.h5"

    def stop(done, total):
        if done == 75:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        sample_state_point(argon_system(), "mc-nvt", T_RED, path=path, progress=stop, **RUN)
    assert store.read_checkpoint(store.part_path(path))[1]["n_samples_done"] == 75
    seen = []
    done = sample_state_point(argon_system(), "mc-nvt", T_RED, path=path,
                              progress=lambda d, t: seen.append(d), **RUN)
    assert seen == [100, 120]   # only the remaining blocks ran
    ref = sample_state_point(argon_system(), "mc-nvt", T_RED, **RUN)
    assert np.array_equal(done.samples["u_full"], ref.samples["u_full"])


def test_md_with_file_and_in_process_resume(tmp_path):
    path = tmp_path / "md.h5"

    def stop(done, total):
        if done == 50:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        sample_state_point(argon_system(), "md-nvt", T_RED, path=path, progress=stop, **RUN)
    done = sample_state_point(argon_system(), "md-nvt", T_RED, path=path, **RUN)
    ref = sample_state_point(argon_system(), "md-nvt", T_RED, **RUN)
    assert done.resumed
    for key in ref.samples:
        assert np.array_equal(done.samples[key], ref.samples[key]), key
    final = store.read_final(path)
    assert final["velocities"].shape == (N, 3)
    assert np.isfinite(done.summary["c_v_res"].value)


def test_summary_follows_the_fluctuation_formula():
    res = sample_state_point(argon_system(), "mc-nvt", T_RED, **RUN)
    u = res.samples["u_full"]
    s = res.summary
    cv = s["c_v_res"]
    from analysis.stats import variance_and_stderr
    var = variance_and_stderr(u)
    # c_v_res = N Var(u_full) / T^2 (docs/physics.md section 3.1, canonical fluctuation formula)
    assert cv.value == pytest.approx(N * var.value / T_RED ** 2, rel=1e-12)
    assert s["temperature"].value == T_RED and s["temperature"].stderr == 0.0
    assert np.min(u) <= s["u_full"].value <= np.max(u)
    assert 0.0 < s["u_full"].stderr < np.std(u)
    assert s["pressure"].stderr > 0.0


def test_microcanonical_summary():
    system = argon_system()
    res_nvt = sample_state_point(system, "mc-nvt", T_RED, **RUN)
    # total energy per particle: kinetic (f/2) T with f = 3, plus the mean configurational energy
    e = 1.5 * T_RED + res_nvt.summary["u_full"].value
    res = sample_state_point(argon_system(), "mc-nve", energy=e, **RUN)
    s = res.summary
    assert not s["c_v_res"].available and "constant energy" in s["c_v_res"].reason
    # Ray's estimator should land near the NVT temperature that gave this energy:
    # 5 standard errors (estimator error plus the NVT mean's error) and the O(1/N) ensemble difference
    tol = 5 * (s["temperature"].stderr + res_nvt.summary["u_full"].stderr / 1.5) + 2 * T_RED / N
    assert s["temperature"].value == pytest.approx(T_RED, abs=tol)
    assert np.isfinite(s["pressure"].value) and s["pressure"].stderr > 0


def test_summarise_rejects_short_series():
    with pytest.raises(StudyError, match="samples"):
        summarise({"u_full": np.zeros(5), "pressure": np.zeros(5)}, "mc-nvt", 10, 100.0, 1.0)


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(RUN, n_samples=5), "'samples' = 5"),
    (dict(RUN, interval=0), "'interval' = 0"),
    (dict(RUN, n_equilibration=-1), "'equilibration' = -1"),
    (dict(RUN, checkpoint_every=0), "'checkpoint_every'"),
])
def test_bad_run_settings(kwargs, fragment):
    with pytest.raises(StudyError, match=fragment):
        sample_state_point(argon_system(), "mc-nvt", T_RED, **kwargs)


def test_unknown_method():
    with pytest.raises(StudyError, match="allowed mc-nvt, mc-nve, md-nvt, md-nve"):
        sample_state_point(argon_system(), "mc-npt", T_RED, **RUN)
