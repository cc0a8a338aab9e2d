"""``mdsim run STUDY --plan``: the tasks, their particles and expected CPU time; nothing written."""
import contextlib
import io
import json
import math
import os

import pytest

from mdsim.cli import main
from mdsim.pipeline.plan import CUTOFF_BOX_MARGIN, N_MIN
from mdsim.pipeline.plan_preview import describe_task, preview_plan
from mdsim.study.reader import read_study

EPS_K = 120.0  # epsilon/k of the test gas (K)
SIGMA_A = 3.4  # sigma of the test gas (angstrom)

STUDY = """
[study]
name = "tiny-plan"
description = "a small study for the plan preview tests"

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
pressure = ["20 bar", "60 bar"]

[simulation]
routes = {routes}
target_stderr = "{target}"
max_cpu_time = "{budget}"
seed = 5
{particles}
"""


def _study_file(tmp_path, routes='["energy", "microcanonical"]', target="5 K", budget="5 s",
                particles=""):
    path = tmp_path / "study.toml"
    path.write_text(STUDY.format(routes=routes, target=target, budget=budget,
                                 particles=particles), encoding="utf-8")
    return path


def _tree(path):
    return sorted(os.path.relpath(os.path.join(d, f), path)
                  for d, _, files in os.walk(path) for f in files + ["."])


def _run(args):
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(args)
    return status, out.getvalue()


def test_plan_prints_one_line_per_task_and_writes_nothing(tmp_path, monkeypatch):
    study = _study_file(tmp_path, particles="particles = 100")
    monkeypatch.chdir(tmp_path)  # where runs/<name> would go by default
    before = _tree(tmp_path)
    status, text = _run(["run", str(study), "--plan"])
    assert status == 0
    assert _tree(tmp_path) == before  # no run directory, no file
    lines = text.strip().splitlines()
    assert len(lines) == 4  # 2 state points x 2 routes
    assert lines[0].startswith("task 0: state point 0 (T_i 300 K, p_i 20 bar")
    assert "energy route, 100 particles (the study's)" in lines[0]
    assert "microcanonical route" in lines[1] and "state point 1" in lines[2]
    assert all("s CPU (estimate from an in-memory pilot" in line for line in lines)


def test_plan_json_matches_the_study_and_the_particle_rule(tmp_path, monkeypatch):
    study = _study_file(tmp_path, routes='["energy"]')
    monkeypatch.chdir(tmp_path)
    before = _tree(tmp_path)
    status, text = _run(["run", str(study), "--plan", "--json"])
    assert status == 0 and _tree(tmp_path) == before
    entries = json.loads(text)
    assert [e["index"] for e in entries] == [0, 1]
    assert [e["state_point"]["pressure_Pa"] for e in entries] == [2e6, 6e6]
    assert all(e["route"] == "energy" and e["particles_from"] == "chosen" for e in entries)
    for e in entries:
        # the cut-off rule by hand: a cubic box of N particles at rho_i must exceed
        # 2 r_c x 1.05 (r_c = 2.5 sigma); N_A from CODATA 2018
        rho_red = e["initial_density_mol_m3"] * 6.02214076e23 * (SIGMA_A * 1e-10) ** 3
        n_cut = math.floor(rho_red * 5.0 ** 3 * CUTOFF_BOX_MARGIN) + 1
        assert e["particles"] >= max(N_MIN, n_cut)
        assert 0 < e["cpu_time_s"] <= e["max_cpu_time_s"] == 5.0
        # sampler "auto" (the default): the sampler the task's pilots would choose
        assert 'as sampler "auto" chooses' in e["cpu_time_from"]
    # denser gas: a larger |Delta T|, so at least as many particles for the same bias
    assert entries[1]["particles"] >= entries[0]["particles"]


def test_plan_particles_and_cpu_time_agree_with_a_real_run(tmp_path):
    """The particles the plan names are those the task uses; its CPU time is the right size."""
    study = _study_file(tmp_path, routes='["energy"]', target="8 K")
    entries = preview_plan(read_study(study))
    # a first run compiles the kernels the pilot does not use (a fresh clone's cold numba
    # cache put 5.5 CPU-s of compiling into the ledger); the second run is the one compared
    for name in ("warm-up", "run"):
        out = tmp_path / name
        status, _ = _run(["run", str(study), "--no-plots", "--out", str(out), "--workers", "1",
                          "--quiet"])
        assert status == 0
    import h5py
    for e in entries:
        with h5py.File(out / "tasks" / f"{e['index']:04d}.h5", "r") as f:
            result = json.loads(f.attrs["result_json"])
        assert result["n_particles"] == e["particles"]
        ledger = json.loads((out / "tasks" / f"{e['index']:04d}.stages"
                             / "cpu-time-ledger.json").read_text())
        spent = sum(row["cpu_s"] for row in ledger.values())
        # an estimate, not a promise: within a factor of 5 of what the task spent
        assert spent / 5 < e["cpu_time_s"] < spent * 5, (e["cpu_time_s"], spent)


def test_a_small_budget_caps_the_estimate_and_says_so(tmp_path):
    entries = preview_plan(read_study(_study_file(tmp_path, routes='["direct"]',
                                                  budget="0.01 s", particles="particles = 64")))
    assert [e["cpu_time_s"] for e in entries] == [0.01, 0.01]
    assert all("capped at [simulation] max_cpu_time" in e["cpu_time_from"] for e in entries)
    assert all("steps after the wall is removed" in e["cpu_time_from"] for e in entries)
    line = describe_task(entries[0])
    assert "direct route, 64 particles (the study's), about 0.01 s CPU (estimate from" in line
    assert line.endswith(" s)")


def test_plan_without_pilot_and_a_virial_only_study(tmp_path, capsys):
    entries = preview_plan(read_study(_study_file(tmp_path, particles="particles = 64")),
                           pilot=False)
    assert len(entries) == 4 and all(e["cpu_time_s"] is None for e in entries)
    assert describe_task(entries[0]).endswith("CPU time not estimated")
    status, text = _run(["run", str(_study_file(tmp_path, routes="[]")), "--plan"])
    assert status == 0 and text == ""
    assert "plans no simulation task" in capsys.readouterr().err


@pytest.mark.parametrize("extra", [["--out", "somewhere"], ["--on", "local"], ["--workers", "2"],
                                   ["--submit"]])
def test_plan_refuses_options_that_run_or_write(tmp_path, capsys, extra):
    study = _study_file(tmp_path)
    assert main(["run", str(study), "--plan", *extra]) == 2
    err = capsys.readouterr().err
    assert extra[0] in err and "--plan" in err
    assert not (tmp_path / "somewhere").exists()
