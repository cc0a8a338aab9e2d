"""Tasks: planning, the three simulation routes against the virial limit, task files, failures."""
import json
import math

import numpy as np
import pytest

from mdsim.errors import StudyError
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline.stage_names import stage_name
from mdsim.study.reader import read_study
from mdsim.pipeline import plan_tasks, read_task_result, run_task, simulation_settings

BASE = """\
[study]
name = "{name}"
[gas]
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "{cv}"
dof_per_particle = {dof}
[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
cutoff = 2.5
[initial]
{initial_T}
density = "{density}"
[expansion]
volume_ratio = 2.0
[simulation]
routes = {routes}
{particles}
target_stderr = "{target}"
max_cpu_time = "120 s"
seed = 3
{extra}
"""


def write_study(tmp_path, name="tiny", routes='["energy"]', particles="particles = 100",
                target="0.5 K", cv="1.5 R", dof=3, extra="", initial_T='temperature = "150 K"',
                density="2000 mol/m^3"):
    path = tmp_path / f"{name}.toml"
    path.write_text(BASE.format(name=name, routes=routes, particles=particles, target=target,
                                cv=cv, dof=dof, extra=extra,
                                initial_T=initial_T, density=density), encoding="utf-8")
    return path


def make_run_dir(tmp_path, study_path, name="run"):
    """A run directory as 'mdsim run' makes it, without running anything."""
    from mdsim.pipeline.prepare import prepare_run_dir
    rd, tasks = prepare_run_dir(read_study(study_path), tmp_path / name)
    return rd, tasks


def test_plan_one_task_per_state_point_and_route(tmp_path):
    extra = '[sweep]\ntemperature = ["150 K", "200 K"]'
    study = read_study(write_study(tmp_path, routes='["energy", "direct"]', extra=extra,
                                   initial_T=""))
    tasks = plan_tasks(study)
    assert len(tasks) == 4  # 2 state points x 2 routes
    assert [t["index"] for t in tasks] == [0, 1, 2, 3]
    assert [t["route"] for t in tasks] == ["energy", "direct"] * 2
    assert [t["state_point"]["index"] for t in tasks] == [0, 0, 1, 1]
    assert [t["seed"] for t in tasks] == [[3, 0], [3, 1], [3, 2], [3, 3]]
    assert tasks[2]["state_point"]["temperature_K"] == pytest.approx(200.0)
    assert tasks[0]["initial_density_mol_m3"] == pytest.approx(2000.0)
    assert tasks[0]["target_stderr_K"] == pytest.approx(0.5)
    assert tasks[0]["particles"] == 100
    json.dumps(tasks)  # JSON-ready


def test_settings_defaults_and_units(tmp_path):
    study = read_study(write_study(tmp_path, particles="", target="20 mK"))
    s = simulation_settings(study)
    assert s["particles"] is None
    assert s["target_stderr_K"] == pytest.approx(0.02)
    assert s["max_cpu_time_s"] == pytest.approx(120.0)
    assert s["sampler"] == "auto"


def test_microcanonical_route_refuses_a_molecular_heat_capacity(tmp_path):
    study = read_study(write_study(tmp_path, routes='["microcanonical"]', cv="3.5 R"))
    with pytest.raises(StudyError, match="microcanonical route assumes a constant classical"):
        plan_tasks(study)


def test_direct_route_refuses_molecules(tmp_path):
    study = read_study(write_study(tmp_path, routes='["direct"]', cv="2.5 R", dof=5))
    with pytest.raises(StudyError, match="direct route simulates atoms"):
        plan_tasks(study)


def test_unknown_route_is_a_user_error(tmp_path):
    with pytest.raises(StudyError, match="energy"):
        plan_tasks(read_study(write_study(tmp_path, routes='["energi"]')))


def test_too_few_particles_is_refused_when_planning(tmp_path):
    # rho* = 0.357: a cut-off of 2.5 sigma needs a box edge of 5 sigma, so 0.357 * 125 * 1.05
    # -> at least 47 particles
    path = write_study(tmp_path, particles="particles = 32", density="15000 mol/m^3")
    with pytest.raises(StudyError, match="at least 47 particles"):
        plan_tasks(read_study(path))


def cv_range_study(tmp_path):
    """A study whose expansion cools below the range of its c_v table: a user error
    that shows only when the task solves for T_f (150 K -> about 135 K)."""
    (tmp_path / "cv.csv").write_text("temperature_K, cv_J_molK\n140, 12.471566\n400, 12.471566\n")
    return write_study(tmp_path, cv="cv.csv")


def test_a_user_error_in_a_task_keeps_its_message(tmp_path):
    rd, _ = make_run_dir(tmp_path, cv_range_study(tmp_path))
    with pytest.raises(StudyError, match="outside the range of the ideal-gas heat capacity"):
        run_task(rd.path, 0)
    info = json.loads(rd.failure_file(0).read_text())
    assert "outside the range" in info["error"]
    # the task's own lines in log.txt: its start, then its failure with the error
    lines = rd.log_file.read_text(encoding="utf-8").splitlines()
    assert len(lines) == 2
    assert lines[0].endswith("INFO mdsim.pipeline.runner: task 0000 started: energy route, "
                             "state point 0 (T = 150 K, 2000 mol/m^3), 100 particles")
    assert "ERROR mdsim.pipeline.runner: task 0000 ended: failed (100 particles, " in lines[1]
    assert lines[1].endswith(": " + " ".join(info["error"].split()))
    assert "traceback" not in info  # a user error keeps its message, not a traceback
    assert rd.task_state(0) == "failed"


@pytest.mark.slow
def test_three_routes_agree_with_each_other_and_the_virial_limit(tmp_path):
    """150 K, 2000 mol/m^3 (rho* = 0.079), N = 100: all routes within their errors.

    Reference: at low density the virial series is exact (fact of the trade,
    common practice, no source); B2 and B3 of LJ are checked against the
    published tables in tests/analysis/test_virial.py.  Allowance: 3 combined
    standard errors plus the B2 to B2 + B3 spread as the truncation error.
    """
    from analysis.expansion import virial_expansion
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    path = write_study(tmp_path, routes='["energy", "microcanonical", "direct"]',
                       target="0.3 K")
    rd, tasks = make_run_dir(tmp_path, path)
    results = [run_task(rd.path, k) for k in range(len(tasks))]
    study = read_study(path)
    v = virial_expansion(virial_gas(study), ideal_heat_capacity(study), 150.0, 2.0,
                         rho_i=2000.0, order=3)
    trunc = abs(v.delta_T_B2B3_K - v.delta_T_B2_K)
    for res in results:
        d = res["delta_T_K"]
        assert res["stopped_by"] == "target"
        assert d["stderr"] <= 0.3
        assert abs(d["value"] - v.delta_T_K) < 3 * d["stderr"] + trunc, res["route"]
    for a in results:
        for b in results:
            s = math.hypot(a["delta_T_K"]["stderr"], b["delta_T_K"]["stderr"])
            assert abs(a["delta_T_K"]["value"] - b["delta_T_K"]["value"]) < 3 * s
    # the task files hold the agreed result keys and plot series
    keys = {"route", "state_point_index", "delta_T_K", "final_temperature_K",
            "initial_density_mol_m3", "final_density_mol_m3", "final_pressure_Pa", "stopped_by",
            "cpu_seconds", "n_particles", "warnings", "notes"}
    series_keys = {
        "energy": {"newton_T_K", "newton_u_res_J_mol", "newton_u_res_stderr_J_mol",
                   "initial_T_K", "initial_u_res_J_mol", "initial_u_res_stderr_J_mol"},
        "microcanonical": {"kinetic_temperature_K_t"},
        "direct": {"time_s", "temperature_K_t", "profile_z_fraction", "density_profile_tz"},
    }
    for k, t in enumerate(tasks):
        task, res, series = read_task_result(rd.task_file(k))
        assert task == t
        assert keys <= set(res)
        assert series_keys[t["route"]] <= set(series)
        assert not rd.partial_file(k).exists()
        assert res["final_density_mol_m3"] == pytest.approx(1000.0)
    _, _, s = read_task_result(rd.task_file(2))
    prof = s["density_profile_tz"]
    assert prof.shape == (s["profile_time_s"].size, s["profile_z_fraction"].size)
    # particle number is conserved in every profile: mean density over z is rho_f
    np.testing.assert_allclose(prof.mean(axis=1), 1000.0, rtol=1e-9)
    # when the box is opened the new half is empty (r = 2); at the end it is filled
    assert s["profile_time_s"][0] == 0.0
    assert np.all(prof[0, 10:] == 0.0)
    assert prof[-1, 10:].mean() > 0.6 * prof[-1, :10].mean()


def test_a_complete_task_is_read_back_not_run_again(tmp_path):
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    first = run_task(rd.path, 0)
    stamp = rd.task_file(0).stat().st_mtime_ns
    again = run_task(rd.path, 0)
    assert again == first
    assert rd.task_file(0).stat().st_mtime_ns == stamp
    assert first["delta_T_K"]["stderr"] <= 0.5
    # the stage files are named by what they sample and, with sampler = "auto", the pilots
    # that chose the sampler by it; the choices and the CPU ledger sit beside them.  This
    # small task's Monte Carlo pilots expect far less than COMPARE_ABOVE_CPU_S: no MD pilot
    names = {p.name for p in rd.stages_dir(0).iterdir()}
    assert {"initial-state-choice-mc-pilot.h5", "initial-state-pilot.h5", "initial-state-00.h5",
            "final-density-guess0-mc-pilot.h5", "final-density-guess0-mc-00.h5",
            "initial-state-choice-sampler.json", "final-density-guess0-sampler.json",
            rd.cpu_ledger(0).name} <= names
    assert not any("-md-" in name for name in names)
    assert first["details"]["sampler_chosen_by"] == "mc pilot"
    ledger = json.loads(rd.cpu_ledger(0).read_text())
    assert set(ledger) == {n[:-3] for n in names if n.endswith(".h5")}
    assert sum(v["cpu_s"] for v in ledger.values()) == pytest.approx(first["cpu_seconds"])


def test_every_simulation_route_has_one_runner():
    from mdsim.pipeline.routes import ROUTE_RUNNERS
    from mdsim.study.routes import SIMULATION_ROUTES
    assert sorted(ROUTE_RUNNERS) == sorted(SIMULATION_ROUTES)


@pytest.mark.parametrize("old_field, old_route, words", [
    ("initial_density_how", "energy", "field 'initial_density_how' (now 'initial_density_from')"),
    ("initial_density_from", "partition", "route 'partition' (now 'direct')"),
])
def test_a_run_directory_of_an_earlier_layout_is_refused_by_name(tmp_path, old_field, old_route,
                                                                   words):
    """A tasks.json written by an earlier version names old routes or fields: refused, not mixed."""
    import json
    rd, tasks = make_run_dir(tmp_path, write_study(tmp_path))
    old = [dict(t) for t in tasks]
    for t in old:
        t[old_field] = t.pop("initial_density_from")
        t["route"] = old_route
    (rd.path / "tasks.json").write_text(json.dumps(old))
    with pytest.raises(StudyError, match="earlier version of the tool") as err:
        rd.read_tasks()
    assert words in str(err.value)


def test_the_run_directory_layout_comes_from_run_dir(tmp_path):
    """Every path of the documented layout (docs/run-directory.md), from one class."""
    rd = RunDir(tmp_path / "run")
    p = rd.path
    assert [rd.study_file, rd.inputs_dir, rd.tasks_file, rd.tasks_dir] == [
        p / "study.toml", p / "inputs", p / "tasks.json", p / "tasks"]
    assert [rd.results_json, rd.results_csv, rd.report_md, rd.plots_dir, rd.log_file] == [
        p / "results.json", p / "results.csv", p / "report.md", p / "plots", p / "log.txt"]
    assert [rd.array_script, rd.logs_dir, rd.jobs_file, rd.lock_file] == [
        p / "array.sh", p / "logs", p / "jobs.json", p / ".lock"]
    t = p / "tasks"
    assert [rd.task_file(7), rd.partial_file(7), rd.failure_file(7), rd.progress_file(7)] == [
        t / "0007.h5", t / "0007.h5.part", t / "0007.failed.json", t / "0007.progress.json"]
    assert rd.stages_dir(12) == t / "0012.stages"
    assert rd.cpu_ledger(12) == t / "0012.stages" / "cpu-time-ledger.json"
    assert rd.stage_file(3, stage_name("final-state-nve", 2)) == \
        t / "0003.stages" / "final-state-nve-02.h5"


def test_a_task_with_stage_files_of_an_earlier_version_is_refused_not_mixed(tmp_path):
    """Stage files named by an earlier version (and its cpu.json ledger) are not resumed."""
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    rd.stages_dir(0).mkdir(parents=True)
    for name in ("initial-pilot.h5", "final0-00.h5", "cpu.json"):
        (rd.stages_dir(0) / name).write_bytes(b"")
    (rd.stages_dir(0) / "initial-state-pilot.h5.part").write_bytes(b"")  # a name of this version
    assert rd.older_stage_files(0) == ["cpu.json", "final0-00.h5", "initial-pilot.h5"]
    with pytest.raises(StudyError, match="earlier version of the tool") as err:
        run_task(rd.path, 0)
    assert "cpu.json, final0-00.h5, initial-pilot.h5" in str(err.value)
    assert "earlier version" in json.loads(rd.failure_file(0).read_text())["error"]
    assert not rd.task_file(0).exists()


@pytest.mark.parametrize("target, stopped_by", [("5 K", "target"), ("0.2 K", "cpu budget")])
def test_a_task_met_target_is_stopped_by_the_target_even_when_the_budget_ran_out(
        tmp_path, target, stopped_by):
    study = write_study(tmp_path, target=target)
    study.write_text(study.read_text().replace('max_cpu_time = "120 s"',
                                               'max_cpu_time = "0.01 s"'))
    rd, _ = make_run_dir(tmp_path, study)
    res = run_task(rd.path, 0)
    assert res["cpu_seconds"] > 0.01  # the budget ran out: the first stages always run
    reached, goal = res["delta_T_K"]["stderr"], res["target_stderr_K"]
    # the first stages are sized for the target and always run; then the spent budget allows
    # no more. 100 particles reach about 0.5 K for a 5 K target (met) and about 0.24 K for a
    # 0.2 K target (missed, by the seeded samples: the same on every machine)
    assert (reached <= goal) == (stopped_by == "target")
    assert res["stopped_by"] == stopped_by
    budget_warnings = [w for w in res["warnings"] if "CPU budget" in w]
    assert len(budget_warnings) == (stopped_by == "cpu budget")


def test_an_unsolved_energy_balance_is_not_called_stopped_by_the_target():
    """Temperature guesses used up with the Newton step unconverged: the error may meet the
    target, but T_f is not solved, and the stop reason says so (not 'target')."""
    from mdsim.pipeline.routes.energy import UNSOLVED
    from mdsim.pipeline.task import RunningTask
    job = RunningTask.__new__(RunningTask)  # only the stop bookkeeping is exercised
    job.target_K, job.stopped_by = 0.5, UNSOLVED
    assert job.stop_reason(0.1) == UNSOLVED
    job.stopped_by = "cpu budget"
    assert job.stop_reason(0.1) == "target"  # the budget ran out after the target was met
