"""Running one task of a run directory, from its stage files to its task file.

:func:`run_task` builds the :class:`mdsim.pipeline.task.RunningTask`, runs
its route (:data:`mdsim.pipeline.routes.ROUTE_RUNNERS`: all the sampling
the route needs, as resumable stage files under ``tasks/NNNN.stages/``),
then the route's solver from :mod:`analysis.expansion`, and writes the task
file (:mod:`mdsim.pipeline.taskfile`).  A failure writes the failure file
and is raised again; a full or read-only disk becomes one clear line.
"""
import errno
import logging
import math
import os
import time

import numpy as np

from analysis.results import to_plain
from mdsim.errors import ConvergenceError, SimulationError, StudyError
from mdsim.pipeline.coexistence_route import coexistence_for_task
from mdsim.pipeline.initial_state import density_error_in_delta_T, sampled_pressure
from mdsim.pipeline.phase_check import check_phases
from mdsim.pipeline.route_entropy import sample_route_entropy
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline.routes import ROUTE_RUNNERS
from mdsim.pipeline.task import CpuLedger, RunningTask
from mdsim.pipeline.taskfile import read_task_result, write_failure, write_task_file

__all__ = ["run_task", "DISK_ERRNOS"]

log = logging.getLogger(__name__)

DISK_ERRNOS = (errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EACCES, errno.EPERM, errno.EFBIG)
"""OS errors of a full, read-only or forbidden disk: reported as one clear line."""


def run_task(run_dir, index, progress=None):
    """Run one task of a run directory and write ``tasks/NNNN.h5``.

    Parameters
    ----------
    run_dir : str or Path or RunDir
    index : int
        Task index (0-based, as in ``tasks.json``).
    progress : callable, optional
        Called as ``progress(stage=name, done=k, total=n)`` while sampling.

    Returns
    -------
    dict
        The task result: ``route``, ``state_point_index``, ``delta_T_K`` and
        ``final_temperature_K`` ({value, stderr}, K; the stderr combines the sampling error
        and, for a state given by pressure, the initial density's part, both in
        ``delta_T_stderr_parts_K``), ``initial_density_stderr_mol_m3``, ``initial_pressure_Pa``
        (sampled) and ``final_pressure_Pa`` ({value, stderr} or None), initial and
        final density (mol/m^3; the initial one found at a given pressure,
        :mod:`mdsim.pipeline.initial_state`), ``initial_density_from`` (how),
        ``planned_initial_density_mol_m3`` (the plan's), ``requested_initial_pressure_Pa``
        (or None), ``pressure_iteration`` (the densities tried), ``stopped_by``, ``cpu_seconds``,
        ``entropy_generated_J_molK`` (Delta s from the route's own end states, {value,
        stderr, ...} or value None with ``unavailable``,
        :func:`mdsim.pipeline.route_entropy.sample_route_entropy`), ``stopped_by``, ``cpu_seconds``,
        ``n_particles``, ``warnings``, ``notes``, ``method``, ``details``,
        ``n_stages``, ``target_stderr_K``, ``wall_seconds_last_run``, ``two_phase``
        (bool), ``phase_check`` (the evidence,
        :func:`mdsim.pipeline.phase_check.check_phases`) and ``coexistence`` (a two-phase
        final state's expansion through coexistence, its CPU time counted in
        ``cpu_seconds``: :func:`mdsim.pipeline.coexistence_route.coexistence_for_task`;
        None for one fluid).  A
        complete task file is read back, not run again.

    Raises
    ------
    StudyError, SimulationError, ConvergenceError
        After writing ``tasks/NNNN.failed.json`` with the error text.
    """
    rd = run_dir if isinstance(run_dir, RunDir) else RunDir(run_dir)
    tasks = rd.read_tasks()
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)) \
            or not 0 <= int(index) < len(tasks):
        raise StudyError(f"task index {index!r}: '{rd.path}' has tasks 0 to {len(tasks) - 1}")
    index = int(index)
    state, damage = rd.task_state_for_run(index)  # a damaged task file is moved aside, re-run
    if state == "done":
        return read_task_result(rd.task_file(index))[1]
    rd.failure_file(index).unlink(missing_ok=True)
    seen = {"damage": damage}
    try:
        result = _run_noting_failure(rd, index, tasks[index], progress, seen)
    except Exception as exc:
        _log_end(rd, index, seen.get("job"), error=exc)
        raise
    _log_end(rd, index, seen["job"], result=result)
    return result


def _run_noting_failure(rd, index, task, progress, seen):
    """:func:`_run`; a failure writes the failure file and is raised again."""
    try:
        return _run(rd, index, task, progress, seen)
    except (StudyError, SimulationError, ConvergenceError) as exc:
        write_failure(rd, index, exc, user=True)
        raise
    except OSError as exc:
        if exc.errno not in DISK_ERRNOS:
            write_failure(rd, index, exc, user=False)
            raise
        err = _disk_error(rd, index, exc)
        try:
            write_failure(rd, index, err, user=True)
        except OSError:
            log.error("%s (the failure file could not be written either)", err)
        raise err from None
    except Exception as exc:
        write_failure(rd, index, exc, user=False)
        raise


def _log_line(rd, message, level=logging.INFO):
    """One line of the task in ``log.txt``; a log that cannot be written does not stop the task."""
    try:
        rd.append_log(message, level=level, name=__name__)
    except OSError as exc:
        log.debug("'%s' cannot be written: %s", rd.log_file, exc)


def _log_start(rd, job, damage):
    """The task's start line; ``damage``: why its task file was moved aside (or None)."""
    task = job.task
    again = (f"; its task file was damaged ({damage}), moved aside: the task runs again"
             if damage else "")
    _log_line(rd, f"task {job.index:04d} started: {task['route']} route, state point "
                  f"{job.state_point_index} (T = {job.T_i:.6g} K, "
                  f"{job.rho_i:.6g} mol/m^3), {job.n_particles} particles{again}")


def _cpu_text(rd, index, job):
    """The task's CPU time so far, for its end line (the ledger when the task was not built)."""
    try:
        cpu = job.cpu_spent() if job is not None else CpuLedger(rd.cpu_ledger(index)).spent()
    except (OSError, ValueError, KeyError, TypeError):
        return "CPU time unknown: its ledger cannot be read"
    return f"{cpu:.1f} s CPU"


def _log_end(rd, index, job, result=None, error=None):
    """The task's end line: particles, the standard error reached against the target, the CPU
    time and what stopped it (the target, the CPU budget, or a failure with its error)."""
    if error is not None:
        who = f"{job.n_particles} particles, " if job is not None else ""
        text = str(error) if isinstance(error, (StudyError, SimulationError, ConvergenceError)) \
            else f"{type(error).__name__}: {error}"
        _log_line(rd, f"task {index:04d} ended: failed ({who}{_cpu_text(rd, index, job)}): "
                      f"{text}", logging.ERROR)
        return
    reached = result["delta_T_K"]["stderr"]
    _log_line(rd, f"task {index:04d} ended: stopped by {result['stopped_by']}; "
                  f"{result['n_particles']} particles, standard error of Delta T "
                  f"{reached:.3g} K (target {result['target_stderr_K']:g} K), "
                  f"{result['cpu_seconds']:.1f} s CPU")


def _run(rd, index, task, progress, seen):
    """Run the task's route, write its task file and return its result (``seen['job']``: the
    running task, once built)."""
    older = rd.older_stage_files(index)
    if older:
        raise StudyError(f"task {index:04d}: '{rd.stages_dir(index)}' holds stage files of an "
                         f"earlier version of the tool ({', '.join(older[:3])}"
                         f"{', ...' if len(older) > 3 else ''}): this version cannot resume "
                         "that task; run the study again into a new run directory (finished "
                         "task files stay readable)")
    wall0 = time.time()
    job = seen["job"] = RunningTask(rd, task, progress=progress)
    _log_start(rd, job, seen["damage"])
    res, series, pressure, extra = ROUTE_RUNNERS[task["route"]](job)
    job.stop_reason(res.delta_T_stderr_K)  # the target met is the reason, budget spent or not
    phases = check_phases(job, res, _initial_pressure(job), pressure)
    entropy = sample_route_entropy(job, res)
    coexistence = coexistence_for_task(job, res) if phases["two_phase"] else None
    result = _result(job, res, pressure, extra)
    result["two_phase"] = phases["two_phase"]
    result["coexistence"] = coexistence
    result["phase_check"] = to_plain(phases)
    result["entropy_generated_J_molK"] = entropy
    result["wall_seconds_last_run"] = time.time() - wall0
    if str(job.stopped_by or "").startswith("cpu budget"):
        result["warnings"].append(
            f"{task['route']} route: the CPU budget ({job.budget_s:g} s) ended sampling at a "
            f"standard error of {res.delta_T_stderr_K:.3g} K (target {job.target_K:g} K); "
            "raise [simulation] max_cpu_time for more precision")
    write_task_file(rd, index, task, result, series)
    return result


def _initial_pressure(job):
    """The pressure sampled at the initial state {value, stderr} in Pa, or None."""
    p = None if job.initial_chain is None else sampled_pressure(job, job.initial_chain)
    return None if p is None else {"value": p[0], "stderr": p[1]}


def _result(job, res, pressure, extra):
    """The task result (JSON-ready apart from numpy scalars) from the route's solver result."""
    task = job.task
    se = float(res.delta_T_stderr_K)
    from_rho_or_none, how = density_error_in_delta_T(job, res.delta_T_K)
    from_rho = from_rho_or_none or 0.0
    return {
        "route": task["route"],
        "initial_pressure_Pa": _initial_pressure(job),
        "state_point_index": int(task["state_point"]["index"]),
        "delta_T_K": {"value": float(res.delta_T_K), "stderr": math.hypot(se, from_rho)},
        "final_temperature_K": {"value": float(res.final_temperature_K),
                                "stderr": math.hypot(res.final_temperature_stderr_K, from_rho)},
        "delta_T_stderr_parts_K": {"sampling": se, "initial_density": from_rho_or_none,
                                   "initial_density_how": how},
        "initial_density_stderr_mol_m3": job.initial_density_stderr,
        "initial_density_mol_m3": job.rho_i,
        "initial_density_from": job.initial_density_from,
        "planned_initial_density_mol_m3": job.planned_rho_i,
        "requested_initial_pressure_Pa": task["state_point"].get("pressure_Pa"),
        "pressure_iteration": list(job.pressure_tries),
        "final_density_mol_m3": job.rho_f,
        "final_pressure_Pa": pressure,
        "stopped_by": job.stopped_by,
        "cpu_seconds": job.cpu_spent(),
        "n_particles": int(job.n_particles),
        "warnings": list(job.warnings) + list(res.warnings),
        "notes": list(job.notes) + list(res.notes),
        "method": res.method,
        "details": to_plain({**res.details, **extra}),
        "n_stages": job.n_stages,
        "target_stderr_K": job.target_K,
    }


def _disk_error(rd, index, exc):
    """A full, read-only or forbidden disk as one SimulationError saying what to do."""
    return SimulationError(
        f"task {index:04d}: cannot write '{exc.filename or rd.tasks_dir}': "
        f"{exc.strerror or os.strerror(exc.errno)}; free space in (or permission on) "
        f"'{rd.path}' and run again: finished stages are kept and the task resumes from its "
        "last checkpoint")
