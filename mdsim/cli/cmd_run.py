"""``mdsim run``, ``mdsim task`` and ``mdsim status``: plan, execute and watch a study's tasks.

``mdsim run STUDY`` makes (or reopens) a run directory, writes the resolved
study (``study.toml``, every default filled in) and the task list
(``tasks.json``), runs the tasks not yet complete on the chosen executor
(complete tasks are skipped, interrupted ones resume from their stage
files, failed ones are tried again), then builds the report.  The run
directory's lock keeps a second ``mdsim run`` out.  ``mdsim task RUN_DIR
--index K`` runs one task (what an array-job element does); ``mdsim status
RUN_DIR`` lists the tasks' states and the time spent, and, when a job array
was submitted, the scheduler's view of each element beside them.

``--executor array`` writes the Slurm job array; ``--submit`` submits it
(the job id goes to ``RUN_DIR/jobs.json``, see :mod:`mdsim.execute.slurm`); a later
``mdsim run`` on that directory waits for nothing and runs nothing while
elements are pending or running, and afterwards only gathers and reports;
``--resubmit-failed`` submits again the elements whose tasks have no result.

JSON goes to stdout, messages and progress to stderr; a user error prints
one line and exits with status 2.
"""
import json
import shutil
import logging
import math
import sys
import time
from pathlib import Path

from mdsim.cli import command, _positive_int, _nonnegative_int
from mdsim.errors import StudyError
from mdsim.pipeline.rundir import RunDir

log = logging.getLogger("mdsim")
EXIT_TASKS_FAILED = 1


# -- the resolved study as TOML -------------------------------------------------------

def _toml_value(value, where):
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise StudyError(f"{where} = {value!r}: not a finite number")
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)  # a TOML basic string
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v, where) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{_toml_key(k)} = {_toml_value(v, f'{where}.{k}')}"
                                for k, v in value.items()) + " }"
    raise StudyError(f"{where} = {value!r}: cannot be written to the resolved study")


def _toml_key(key):
    key = str(key)
    if key and all(c.isalnum() or c in "-_" for c in key):
        return key
    return json.dumps(key)


INPUTS_DIR = "inputs"


def resolved_study_document(study, copies=None):
    """The study file's tables with every pipeline default filled in.

    The simulation settings are written with their units.  Data files the
    study names (potential tables, heat-capacity CSV files) are referred to
    as ``inputs/<path relative to the study file>``: ``mdsim run`` copies
    them there, so ``RUN_DIR/study.toml`` reads the same wherever the run
    directory is.  ``copies``, a dict, receives {destination relative to the
    run directory: absolute source path}.
    """
    copies = {} if copies is None else copies
    base = Path(study.path).parent.resolve()

    def inputs_name(source):
        src = Path(source).resolve()
        rel = Path(INPUTS_DIR) / src.relative_to(base)
        copies[rel.as_posix()] = str(src)
        return rel.as_posix()

    from mdsim.pipeline import simulation_settings
    doc = json.loads(json.dumps(study.raw))  # a deep copy of plain data

    def relocate(pot):
        if isinstance(pot, dict) and isinstance(pot.get("table_file"), str):
            pot["table_file"] = inputs_name(base / pot["table_file"])

    relocate(doc.get("potential"))
    for sp in doc.get("gas", {}).get("species", []) or []:
        relocate(sp.get("potential"))
    gas = doc.setdefault("gas", {})
    cv = study.gas.ideal_heat_capacity  # CSV paths in it are absolute, inside the study folder
    if isinstance(cv, str) and cv.strip().lower().endswith(".csv"):
        cv = inputs_name(cv)
    elif isinstance(cv, dict) and "table" in cv:
        cv = {"table": inputs_name(cv["table"])}
    gas["ideal_heat_capacity"] = cv
    gas.setdefault("quantum_correction", bool(study.gas.quantum_correction))
    gas.setdefault("dof_per_particle", int(study.gas.dof_per_particle))
    doc.setdefault("potential", {})
    if "species" not in gas:
        doc["potential"].setdefault("cutoff", float(study.gas.pairs_K_angstrom.rc_max
                                                    / study.gas.pairs_K_angstrom.pots[0][0].sigma))
    s = simulation_settings(study)
    sim = doc.setdefault("simulation", {})
    sim["routes"] = s["routes"]
    sim["target_stderr"] = f"{s['target_stderr_K']!r} K"
    sim["max_cpu_time"] = f"{s['max_cpu_time_s']!r} s"
    sim["seed"] = s["seed"]
    sim["sampler"] = s["sampler"]
    if s["particles"] is not None:
        sim["particles"] = s["particles"]
    return doc


def dumps_toml(doc):
    """TOML text of a document of tables (values: strings, numbers, bools, lists, inline tables)."""
    lines = ["# The resolved study: the study file with every default filled in, "
             "written by 'mdsim run'.", ""]
    for table, body in doc.items():
        if not isinstance(body, dict):
            raise StudyError(f"top-level '{table}' is not a table")
        lines.append(f"[{_toml_key(table)}]")
        for key, value in body.items():
            lines.append(f"{_toml_key(key)} = {_toml_value(value, f'[{table}] {key}')}")
        lines.append("")
    return "\n".join(lines)


# -- logging --------------------------------------------------------------------------

def _setup_logging(run_dir, verbose):
    root = logging.getLogger("mdsim")
    root.setLevel(logging.DEBUG if verbose else logging.INFO)
    handlers = []
    if run_dir is not None:
        fh = logging.FileHandler(Path(run_dir) / "log.txt", encoding="utf-8")
        fh.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(name)s: %(message)s"))
        handlers.append(fh)
    if verbose:
        sh = logging.StreamHandler(sys.stderr)
        sh.setFormatter(logging.Formatter("%(levelname)s %(name)s: %(message)s"))
        handlers.append(sh)
    for h in handlers:
        root.addHandler(h)
    return handlers


def _teardown_logging(handlers):
    root = logging.getLogger("mdsim")
    for h in handlers:
        root.removeHandler(h)
        h.close()


def _say(args, text):
    if not getattr(args, "quiet", False):
        print(text, file=sys.stderr)


# -- mdsim run --------------------------------------------------------------------------

def _run_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--out", help="run directory (default runs/<study name>)")
    p.add_argument("--executor", default=None, choices=("local", "dask", "array"),
                   help="local process pool (default), a Dask cluster, or a scheduler job array "
                   "(default array when a job array was submitted from the run directory)")
    p.add_argument("--submit", action="store_true",
                   help="with --executor array: submit the job array with sbatch and record its "
                   "job id; run again after it finished to gather and report")
    p.add_argument("--resubmit-failed", action="store_true",
                   help="submit again the array elements that failed or were killed (the tasks "
                   "not done); the others are kept")
    p.add_argument("--workers", type=_positive_int("--workers"),
                   help="tasks at once (local: default the number of cores; dask LocalCluster: "
                   "default 2)")
    p.add_argument("--json", action="store_true", help="print the run summary as JSON on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress line or messages")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


def prepare_run_dir(study, out):
    """Create or reopen a run directory for a study; return (RunDir, tasks).

    A new directory gets ``study.toml`` and ``tasks.json``.  An existing one
    must hold the same task list (the same study and settings), otherwise
    nothing is touched and a StudyError says what differs.
    """
    from mdsim.pipeline import plan_tasks
    rd = RunDir(out)
    tasks = json.loads(json.dumps(plan_tasks(study)))
    copies = {}
    text = dumps_toml(resolved_study_document(study, copies))
    if rd.exists():
        old = rd.read_tasks()
        if old != tasks:
            raise StudyError(f"run directory '{rd.path}' holds other tasks than this study plans "
                             f"({len(old)} there, {len(tasks)} now, or other settings); "
                             "choose another --out, or delete the directory to start over")
        return rd, tasks
    rd.create()
    for dest, src in copies.items():  # the data files the study names, next to its copy
        target = rd.path / dest
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(src, target)
    (rd.path / "study.toml").write_text(text, encoding="utf-8")
    rd.write_tasks(tasks)
    return rd, tasks


@command("run", "run a study: plan its tasks, run them, write the run directory and report",
         _run_arguments)
def run_run(args):
    from mdsim.study.reader import read_study
    from mdsim.pipeline import plan_tasks
    study = read_study(args.study)
    out = Path(args.out) if args.out else Path("runs") / study.name
    rd = RunDir(out)
    # every setting is checked, and the place too, before anything is written
    dumps_toml(resolved_study_document(study))
    rd.preflight(len(plan_tasks(study)))
    rd.create()
    rd.acquire_lock()
    handlers = []
    try:
        handlers = _setup_logging(rd.path, args.verbose)
        rd, tasks = prepare_run_dir(study, out)
        log.info("run directory %s: %d tasks", rd.path, len(tasks))
        todo = [t["index"] for t in tasks if rd.task_state(t["index"]) != "done"]
        skipped = len(tasks) - len(todo)
        if skipped:
            _say(args, f"{skipped} of {len(tasks)} tasks already complete; skipped")
        executor = _choose_executor(args, rd)
        if executor == "array":
            outcome = run_array(args, rd, tasks, study, todo)
            if outcome is None:  # submitted, or still running, or only the script written
                return 0
        else:
            _refuse_while_array_runs(rd)
            outcome = execute(rd, todo, len(tasks), executor, args.workers, study.cluster,
                              quiet=args.quiet)
        failed = {k: e for k, e in outcome.items() if e is not None}
        for k, err in sorted(failed.items()):
            _say(args, f"task {k:04d} ({tasks[k]['route']}, state point "
                       f"{tasks[k]['state_point']['index']}) failed: {err}")
            log.error("task %04d failed: %s", k, err)
        from mdsim.pipeline.report import build_report
        summary = build_report(rd.path)
        if args.json:
            print(json.dumps(summary, indent=2))
        _say(args, f"run directory {rd.path}: {len(tasks) - len(failed)} of {len(tasks)} tasks "
                   f"complete; report {rd.path / 'report.md'}")
        return EXIT_TASKS_FAILED if failed else 0
    finally:
        _teardown_logging(handlers)
        rd.release_lock()


# -- the job array (--executor array) ------------------------------------------------------

def _choose_executor(args, rd):
    """--executor as given; by default array when the directory has a submitted array."""
    from mdsim.execute import slurm
    submitted = bool(slurm.read_submissions(rd.path))
    if args.resubmit_failed:
        if args.executor not in (None, "array"):
            raise StudyError(f"option --resubmit-failed goes with --executor array, not "
                             f"--executor {args.executor}; leave --executor out or give array")
        if not submitted:
            raise StudyError(f"option --resubmit-failed: nothing was submitted from '{rd.path}' "
                             "(no jobs.json); submit first with --executor array --submit")
        return "array"
    if args.submit and args.executor not in (None, "array"):
        raise StudyError(f"option --submit goes with --executor array, not --executor "
                         f"{args.executor}")
    if args.executor is None:
        return "array" if (submitted or args.submit) else "local"
    return args.executor


def _refuse_while_array_runs(rd):
    """A local or Dask run must not run tasks that elements of a job array are running."""
    from mdsim.execute import slurm
    if not slurm.read_submissions(rd.path):
        return
    view = slurm.scheduler_view(rd.path)
    active = sorted(k for k, v in view.items() if v["state"] in slurm.ACTIVE)
    if active:
        jobs = ", ".join(sorted({view[k]["job_id"].split("_")[0] for k in active}, key=int))
        raise StudyError(f"run directory '{rd.path}': {len(active)} element(s) of job array "
                         f"{jobs} are still pending or running; wait for them (mdsim status "
                         f"{rd.path}) or cancel them (scancel {jobs}) before running here")


def _element_error(rd, k, sched):
    """Why task k has no result after its array element ended: its own error, or the scheduler's."""
    path = rd.failure_file(k)
    if path.is_file():
        try:
            return json.loads(path.read_text(encoding="utf-8"))["error"]
        except (OSError, ValueError, KeyError, UnicodeDecodeError):
            return "(the failure file cannot be read)"
    if sched is None:
        return "not submitted"
    state = sched.get("slurm_state") or "unknown to the scheduler"
    code = f", exit code {sched['exit_code']}" if sched.get("exit_code") else ""
    return f"array element {sched['job_id']} ended {state}{code} without a result"


def run_array(args, rd, tasks, study, todo):
    """``mdsim run --executor array``: write the script; submit, resubmit, or gather.

    Returns None when the command ends here (script written, array
    submitted, or elements still pending or running), otherwise
    ``{index: error}`` of the tasks without a result, for the report.
    """
    from mdsim.execute import slurm
    from mdsim.execute.array import write_array_script
    path = write_array_script(rd.path, len(tasks), study.cluster)
    submitted = slurm.read_submissions(rd.path)
    view = slurm.scheduler_view(rd.path) if submitted else {}
    active = sorted(k for k, v in view.items() if v["state"] in slurm.ACTIVE)
    info = {"run_dir": str(rd.path), "array_script": str(path), "tasks": len(tasks)}
    if active:
        jobs = sorted({view[k]["job_id"].split("_")[0] for k in active}, key=int)
        _say(args, f"{len(active)} of {len(tasks)} array elements (job {', '.join(jobs)}) are "
                   f"still pending or running; watch them with:   mdsim status {rd.path}\n"
                   "run this command again when they have finished to gather the results")
        if args.json:
            print(json.dumps({**info, "job_ids": jobs, "active": active}, indent=2))
        return None
    if (args.resubmit_failed or (args.submit and not submitted)) and todo:
        job = slurm.submit_tasks(rd.path, todo, path)
        log.info("submitted array job %s: elements %s", job, slurm.array_spec(todo))
        what = "resubmitted" if submitted else "submitted"
        _say(args, f"{what} {len(todo)} array element(s) ({slurm.array_spec(todo)}) as job {job}\n"
                   f"Watch it with:    mdsim status {rd.path}\n"
                   f"When it finished, gather the results with the same 'mdsim run' command "
                   f"(or:   mdsim report {rd.path})")
        if args.json:
            print(json.dumps({**info, "job_id": job, "submitted": todo}, indent=2))
        return None
    if not submitted:
        _say(args, f"wrote {path} ({len(tasks)} array elements).\n"
                   f"Submit it with:   mdsim run {args.study} --out {rd.path} --executor array "
                   f"--submit   (or: sbatch {path})\n"
                   f"Afterwards gather the results with:   mdsim report {rd.path}\n"
                   f"Watch it with:    mdsim status {rd.path}")
        if args.json:
            print(json.dumps(info, indent=2))
        return None
    outcome = {k: _element_error(rd, k, view.get(k)) for k in todo}
    if outcome:
        _say(args, f"{len(outcome)} task(s) have no result; submit them again with:   mdsim run "
                   f"{args.study} --out {rd.path} --resubmit-failed")
    return outcome


def execute(rd, indices, n_total, executor, workers, cluster, quiet=False):
    """Run task indices on an executor with a progress line; return {index: error or None}."""
    import functools
    from mdsim.execute.dask import run_dask
    from mdsim.execute.local import run_local
    from mdsim.execute.progress import ProgressLine
    from mdsim.pipeline.jobs import task_job
    job = functools.partial(task_job, str(rd.path))
    n_workers = workers or (2 if executor == "dask" else None)
    line = ProgressLine(rd, indices, n_total, enabled=False if quiet else None,
                        workers=n_workers or 1)
    try:
        if executor == "local":
            return run_local(job, indices, workers=workers, on_done=line.done,
                             on_tick=line.draw)
        if executor == "dask":
            return run_dask(job, indices, address=(cluster or {}).get("address"),
                            workers=n_workers, cluster_settings=cluster,
                            log_directory=rd.path / "logs", on_done=line.done,
                            on_tick=line.draw)
        raise StudyError(f"option --executor = {executor!r}: allowed local, dask, array")
    finally:
        line.close()


# -- mdsim task ---------------------------------------------------------------------------

def _task_arguments(p):
    p.add_argument("run_dir", help="run directory made by 'mdsim run'")
    p.add_argument("--index", required=True, type=_nonnegative_int("--index"),
                   help="task index (0-based, as in tasks.json)")
    p.add_argument("--json", action="store_true", help="print the task result as JSON")
    p.add_argument("--verbose", action="store_true", help="debug logging on stderr")


@command("task", "run one task of a run directory (what an array-job element does)",
         _task_arguments)
def run_one_task(args):
    from mdsim.pipeline import run_task
    rd = RunDir(args.run_dir)
    tasks = rd.read_tasks()
    if args.index >= len(tasks):
        raise StudyError(f"option --index = {args.index}: '{rd.path}' has tasks 0 to "
                         f"{len(tasks) - 1}")
    handlers = _setup_logging(rd.path, args.verbose)
    try:
        result = run_task(rd.path, args.index)
    finally:
        _teardown_logging(handlers)
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        d = result["delta_T_K"]
        print(f"task {args.index:04d} ({result['route']}): Delta T = {d['value']:.5g} +/- "
              f"{d['stderr']:.2g} K, stopped by {result['stopped_by']}, "
              f"{result['cpu_seconds']:.1f} s CPU", file=sys.stderr)
    return 0


# -- mdsim status -----------------------------------------------------------------------

def _status_arguments(p):
    p.add_argument("run_dir", help="run directory made by 'mdsim run'")
    p.add_argument("--json", action="store_true", help="print the status as JSON")


def run_status_data(run_dir):
    """States and times of a run directory's tasks (a dict, JSON-ready)."""
    from mdsim.execute.progress import read_progress
    from mdsim.pipeline import read_task_result
    rd = RunDir(run_dir)
    tasks = rd.read_tasks()
    rows = []
    counts = {"done": 0, "running": 0, "failed": 0, "left": 0}
    sched, sched_error = _scheduler_view_or_error(rd)
    cpu_total = 0.0
    for t in tasks:
        k = t["index"]
        state = rd.task_state(k)
        row = {"index": k, "route": t["route"], "state_point_index": t["state_point"]["index"],
               "state": state}
        if state == "done":
            _, res, _ = read_task_result(rd.task_file(k))
            row.update({"cpu_seconds": res["cpu_seconds"], "delta_T_K": res["delta_T_K"],
                        "stopped_by": res["stopped_by"]})
            cpu_total += float(res["cpu_seconds"])
            counts["done"] += 1
        elif state == "failed":
            try:
                row["error"] = json.loads(rd.failure_file(k).read_text(encoding="utf-8"))["error"]
            except (OSError, ValueError, KeyError):
                row["error"] = "(the failure file cannot be read)"
            counts["failed"] += 1
        else:
            info = read_progress(rd.tasks_dir / f"{k:04d}.progress.json")
            ledger = rd.tasks_dir / f"{k:04d}.stages" / "cpu.json"
            spent = 0.0
            if ledger.is_file():
                try:
                    spent = sum(v["cpu_s"] for v in json.loads(ledger.read_text()).values())
                except (OSError, ValueError, KeyError):
                    spent = 0.0
            row["cpu_seconds"] = spent
            cpu_total += spent
            ended = k in sched and sched[k]["state"] in ("done", "failed")
            if info is not None and time.time() - float(info.get("time", 0)) < 120 and not ended:
                row["state"] = "running"
                row["progress"] = info
                counts["running"] += 1
            else:
                counts["left"] += 1
        rows.append(row)
    return {"run_dir": str(rd.path), "tasks": rows, "counts": counts,
            "cpu_seconds_total": cpu_total, "locked": (rd.path / ".lock").is_file(),
            **_scheduler_fields(rows, sched, sched_error)}


def _scheduler_view_or_error(rd):
    """(scheduler view of the run's array elements, None) or ({}, the error text)."""
    from mdsim.execute import slurm
    from mdsim.errors import SimulationError
    try:
        return slurm.scheduler_view(rd.path), None
    except (StudyError, SimulationError) as exc:
        return {}, str(exc)


def _scheduler_fields(rows, sched, error):
    """Add each row's 'scheduler' entry; return the run-level scheduler fields."""
    from mdsim.execute import slurm
    if not sched and error is None:
        return {}
    counts = {"pending": 0, "running": 0, "done": 0, "failed": 0, "unknown": 0}
    for row in rows:
        view = sched.get(row["index"])
        row["scheduler"] = view
        if view is not None:
            counts[view["state"]] += 1
    jobs = sorted({v["job_id"].split("_")[0] for v in sched.values()}, key=int)
    return {"scheduler": {"job_ids": jobs, "counts": counts, "error": error,
                          "active": sum(counts[s] for s in slurm.ACTIVE)}}


@command("status", "show the tasks of a run directory: done, running, failed, left; time spent",
         _status_arguments)
def run_status(args):
    from mdsim.execute.progress import describe_task
    data = run_status_data(args.run_dir)
    if args.json:
        print(json.dumps(data, indent=2))
        return 0
    c = data["counts"]
    lines = [f"{data['run_dir']}: {len(data['tasks'])} tasks: {c['done']} done, "
             f"{c['running']} running, {c['failed']} failed, {c['left']} left; "
             f"{data['cpu_seconds_total']:.1f} s CPU spent"]
    sched = data.get("scheduler")
    if sched is not None:
        if sched["error"]:
            lines.append(f"  scheduler: cannot be asked: {sched['error']}")
        else:
            s = sched["counts"]
            lines.append(f"  scheduler (job array {', '.join(sched['job_ids'])}): "
                         f"{s['pending']} pending, {s['running']} running, {s['done']} done, "
                         f"{s['failed']} failed" + (f", {s['unknown']} not known"
                                                   if s["unknown"] else ""))
    for row in data["tasks"]:
        head = f"  {row['index']:04d} {row['route']:<14} point {row['state_point_index']:<3} " \
               f"{row['state']:<8}"
        if row["state"] == "done":
            d = row["delta_T_K"]
            head += f" Delta T = {d['value']:.5g} +/- {d['stderr']:.2g} K " \
                    f"({row['stopped_by']}, {row['cpu_seconds']:.1f} s CPU)"
        elif row["state"] == "failed":
            head += f" {row['error']}"
        elif row["state"] == "running":
            head += " " + describe_task(row["index"], row["progress"])
        elif row.get("cpu_seconds"):
            head += f" (interrupted; {row['cpu_seconds']:.1f} s CPU so far, resumes)"
        view = row.get("scheduler")
        if view is not None:
            code = f", exit {view['exit_code']}" if view.get("exit_code") else ""
            head += f"  [scheduler: {view['state']} ({view['slurm_state'] or 'not known'}{code}, " \
                    f"job {view['job_id']})]"
        lines.append(head)
    print("\n".join(lines))
    return 0
