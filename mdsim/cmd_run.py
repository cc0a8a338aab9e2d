"""``mdsim run``, ``mdsim task`` and ``mdsim status``: plan, execute and watch a study's tasks.

``mdsim run STUDY`` makes (or reopens) a run directory, writes the resolved
study (``study.toml``, every default filled in) and the task list
(``tasks.json``), runs the tasks not yet complete on the chosen executor
(complete tasks are skipped, interrupted ones resume from their stage
files, failed ones are tried again), then builds the report.  The run
directory's lock keeps a second ``mdsim run`` out.  ``mdsim task RUN_DIR
--index K`` runs one task (what an array-job element does); ``mdsim status
RUN_DIR`` lists the tasks' states and the time spent.

JSON goes to stdout, messages and progress to stderr; a user error prints
one line and exits with status 2.
"""
import json
import logging
import math
import sys
import time
from pathlib import Path

from .cli import command, _positive_int, _nonnegative_int
from .errors import StudyError
from .rundir import RunDir

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


def resolved_study_document(study):
    """The study file's tables with every pipeline default filled in.

    The simulation settings are written with their units; paths to table
    and CSV files are made absolute, so ``RUN_DIR/study.toml`` reads the
    same wherever the run directory is.
    """
    from .tasks import simulation_settings
    doc = json.loads(json.dumps(study.raw))  # a deep copy of plain data
    base = Path(study.path).parent

    def absolute(pot):
        if isinstance(pot, dict) and isinstance(pot.get("table_file"), str):
            p = Path(pot["table_file"])
            pot["table_file"] = str(p if p.is_absolute() else (base / p).resolve())

    absolute(doc.get("potential"))
    for sp in doc.get("gas", {}).get("species", []) or []:
        absolute(sp.get("potential"))
    gas = doc.setdefault("gas", {})
    gas["ideal_heat_capacity"] = study.gas.ideal_heat_capacity  # CSV paths already absolute
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
    p.add_argument("--executor", default="local", choices=("local", "dask", "array"),
                   help="local process pool (default), a Dask cluster, or a scheduler job array")
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
    from .tasks import plan_tasks
    rd = RunDir(out)
    tasks = json.loads(json.dumps(plan_tasks(study)))
    text = dumps_toml(resolved_study_document(study))
    if rd.exists():
        old = rd.read_tasks()
        if old != tasks:
            raise StudyError(f"run directory '{rd.path}' holds other tasks than this study plans "
                             f"({len(old)} there, {len(tasks)} now, or other settings); "
                             "choose another --out, or delete the directory to start over")
        return rd, tasks
    rd.create()
    (rd.path / "study.toml").write_text(text, encoding="utf-8")
    rd.write_tasks(tasks)
    return rd, tasks


@command("run", "run a study: plan its tasks, run them, write the run directory and report",
         _run_arguments)
def run_run(args):
    from .study import read_study
    from . import executors
    study = read_study(args.study)
    out = Path(args.out) if args.out else Path("runs") / study.name
    rd = RunDir(out)
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
        if args.executor == "array":
            path = executors.write_array_script(rd.path, len(tasks), study.cluster)
            _say(args, f"wrote {path} ({len(tasks)} array elements).\n"
                       f"Submit it with:   sbatch {path}\n"
                       f"Afterwards gather the results with:   mdsim report {rd.path}\n"
                       f"Watch it with:    mdsim status {rd.path}")
            if args.json:
                print(json.dumps({"run_dir": str(rd.path), "array_script": str(path),
                                  "tasks": len(tasks)}, indent=2))
            return 0
        outcome = execute(rd, todo, len(tasks), args.executor, args.workers, study.cluster,
                          quiet=args.quiet)
        failed = {k: e for k, e in outcome.items() if e is not None}
        for k, err in sorted(failed.items()):
            _say(args, f"task {k:04d} ({tasks[k]['route']}, state point "
                       f"{tasks[k]['state_point']['index']}) failed: {err}")
            log.error("task %04d failed: %s", k, err)
        from .report import build_report
        summary = build_report(rd.path)
        if args.json:
            print(json.dumps(summary, indent=2))
        _say(args, f"run directory {rd.path}: {len(tasks) - len(failed)} of {len(tasks)} tasks "
                   f"complete; report {rd.path / 'report.md'}")
        return EXIT_TASKS_FAILED if failed else 0
    finally:
        _teardown_logging(handlers)
        rd.release_lock()


def execute(rd, indices, n_total, executor, workers, cluster, quiet=False):
    """Run task indices on an executor with a progress line; return {index: error or None}."""
    from . import executors
    from .progress import ProgressLine
    n_workers = workers or (2 if executor == "dask" else None)
    line = ProgressLine(rd, indices, n_total, enabled=False if quiet else None,
                        workers=n_workers or 1)
    try:
        if executor == "local":
            return executors.run_local(rd.path, indices, workers=workers, on_done=line.done,
                                       on_tick=line.draw)
        if executor == "dask":
            return executors.run_dask(rd.path, indices, address=(cluster or {}).get("address"),
                                      workers=n_workers, cluster_settings=cluster,
                                      on_done=line.done, on_tick=line.draw)
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
    from .tasks import run_task
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
    from .progress import read_progress
    from .tasks import read_task_result
    rd = RunDir(run_dir)
    tasks = rd.read_tasks()
    rows = []
    counts = {"done": 0, "running": 0, "failed": 0, "left": 0}
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
            if info is not None and time.time() - float(info.get("time", 0)) < 120:
                row["state"] = "running"
                row["progress"] = info
                counts["running"] += 1
            else:
                counts["left"] += 1
        rows.append(row)
    return {"run_dir": str(rd.path), "tasks": rows, "counts": counts,
            "cpu_seconds_total": cpu_total, "locked": (rd.path / ".lock").is_file()}


@command("status", "show the tasks of a run directory: done, running, failed, left; time spent",
         _status_arguments)
def run_status(args):
    from .progress import describe_task
    data = run_status_data(args.run_dir)
    if args.json:
        print(json.dumps(data, indent=2))
        return 0
    c = data["counts"]
    lines = [f"{data['run_dir']}: {len(data['tasks'])} tasks: {c['done']} done, "
             f"{c['running']} running, {c['failed']} failed, {c['left']} left; "
             f"{data['cpu_seconds_total']:.1f} s CPU spent"]
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
        lines.append(head)
    print("\n".join(lines))
    return 0
