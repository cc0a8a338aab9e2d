"""Where tasks run: a local process pool, a Dask cluster, or a scheduler job array.

Each executor takes the run directory and the indices of the tasks still to
do, and calls ``mdsim.pipeline.tasks.run_task(run_dir, index)`` for each.  Tasks are
independent and idempotent (a finished task is skipped, an interrupted one
resumes from its checkpoint), so every executor gives the same numbers.
"""
import logging
import math
import os
import shlex
import sys
from pathlib import Path

from mdsim.errors import StudyError

log = logging.getLogger(__name__)

EXECUTORS = ("local", "dask", "array")


def _worker_init(threads):
    import numba
    numba.set_num_threads(max(1, threads))


def _call_task(run_dir, index, on_tick=None):
    from mdsim.execute.progress import TaskProgressFile
    from mdsim.pipeline.rundir import RunDir
    from mdsim.pipeline.tasks import run_task
    rd = RunDir(run_dir)
    reporter = TaskProgressFile(rd.tasks_dir / f"{int(index):04d}.progress.json", on_tick)
    try:
        return run_task(run_dir, index, progress=reporter)
    finally:
        reporter.remove()


def run_local(run_dir, indices, workers=None, on_done=None, on_tick=None):
    """Run tasks in a pool of worker processes on this machine.

    ``workers`` processes (default: the number of cores, at most the number
    of tasks); each gets cores // workers numba threads so that cores are
    not oversubscribed.  ``on_done(index, error)`` is called as tasks end,
    ``on_tick()`` now and then while they run (for a progress line).
    Returns a dict {index: error message or None}.
    """
    import concurrent.futures as cf
    import multiprocessing as mp
    indices = list(indices)
    if not indices:
        return {}
    cores = os.cpu_count() or 1
    workers = min(int(workers or cores), len(indices))
    if workers < 1:
        raise StudyError(f"option --workers = {workers}: must be at least 1")
    threads = max(1, cores // workers)
    outcome = {}
    if workers == 1:
        _worker_init(threads)
        for k in indices:
            err = _guarded(run_dir, k, on_tick)
            outcome[k] = err
            if on_done:
                on_done(k, err)
        return outcome
    ctx = mp.get_context("spawn")  # no inherited numba/OpenMP thread state
    with cf.ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                                initializer=_worker_init, initargs=(threads,)) as pool:
        futures = {pool.submit(_guarded, str(run_dir), k): k for k in indices}
        pending = set(futures)
        while pending:
            finished, pending = cf.wait(pending, timeout=0.5, return_when=cf.FIRST_COMPLETED)
            for fut in sorted(finished, key=lambda f: futures[f]):
                k = futures[fut]
                try:
                    err = fut.result()
                except Exception as exc:  # a worker process died (killed, out of memory)
                    err = f"worker process failed: {exc!r}"
                outcome[k] = err
                if on_done:
                    on_done(k, err)
            if on_tick:
                on_tick()
    return outcome


def _guarded(run_dir, index, on_tick=None):
    """Run one task; return None on success or the error text (user errors as text).

    Other exceptions (bugs) propagate; the task has written their traceback
    to ``tasks/NNNN.failed.json``.
    """
    from mdsim.errors import StudyError as _SE, SimulationError, ConvergenceError
    try:
        _call_task(run_dir, index, on_tick)
        return None
    except (_SE, SimulationError, ConvergenceError) as exc:
        return str(exc)


def run_dask(run_dir, indices, address=None, workers=2, cluster_settings=None, on_done=None,
             on_tick=None):
    """Run tasks on a Dask distributed cluster.

    ``address``: an existing scheduler ("tcp://host:8786"); otherwise a
    job-queue cluster when ``cluster_settings`` names a scheduler system
    (dask-jobqueue), or a LocalCluster with ``workers`` single-threaded
    workers.  Tasks are retried twice on another worker if a worker dies.
    """
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise StudyError("the dask executor needs the 'cluster' extra: "
                         "python -m pip install -e '.[cluster]'") from None
    indices = list(indices)
    if not indices:
        return {}
    cluster = None
    if address:
        client = Client(address)
    elif cluster_settings and cluster_settings.get("system"):
        cluster = _jobqueue_cluster(cluster_settings, log_directory=Path(run_dir) / "logs")
        cluster.scale(jobs=int(cluster_settings.get("jobs", 1)))
        client = Client(cluster)
    else:
        cluster = LocalCluster(n_workers=int(workers), threads_per_worker=1,
                               processes=True, dashboard_address=None)
        client = Client(cluster)
    outcome = {}
    try:
        futures = [client.submit(_guarded, str(run_dir), k, key=f"task-{k:04d}-{os.getpid()}",
                                 retries=2, pure=False) for k in indices]
        index_of = {f.key: k for f, k in zip(futures, indices)}
        if on_tick:
            on_tick()
        for fut in as_completed(futures):
            k = index_of[fut.key]
            try:
                err = fut.result()
            except Exception as exc:
                err = f"dask task failed: {exc!r}"
            outcome[k] = err
            if on_done:
                on_done(k, err)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    return outcome


def _jobqueue_cluster(settings, log_directory=None):
    """A dask-jobqueue cluster from a study's [cluster] table (SLURMCluster or PBSCluster).

    Workers are batch jobs of ``cores``, ``memory`` and ``walltime`` in
    ``partition``, talking over ``interface``; their job logs go to
    ``log_directory`` (the run directory's ``logs/``), not the working
    directory.  The scheduler's dashboard takes any free port.
    """
    try:
        import dask_jobqueue
    except ImportError:
        raise StudyError("a [cluster] table needs dask-jobqueue: "
                         "python -m pip install -e '.[cluster]'") from None
    systems = {"slurm": "SLURMCluster", "pbs": "PBSCluster"}
    name = str(settings["system"]).lower()
    if name not in systems:
        raise StudyError(f"[cluster] system = {settings['system']!r}: allowed "
                         f"{', '.join(systems)}")
    cls = getattr(dask_jobqueue, systems[name])
    kw = {"cores": int(settings.get("cores", 1)), "memory": str(settings.get("memory", "2GB")),
          "walltime": str(settings.get("walltime", "01:00:00"))}
    if settings.get("partition"):
        kw["queue"] = str(settings["partition"])
    if settings.get("interface"):
        kw["interface"] = str(settings["interface"])
    if log_directory is not None:
        kw["log_directory"] = str(log_directory)
    kw["scheduler_options"] = {"dashboard_address": ":0"}
    return cls(**kw)


def _slurm_memory(text):
    """'2GB' / '512 MiB' / '2G' -> Slurm's '2G' / '512M' form."""
    import re
    m = re.fullmatch(r"\s*([0-9]+(?:\.[0-9]+)?)\s*([KMGT])(?:i?B)?\s*", str(text), re.I)
    if not m:
        raise StudyError(f"[cluster] memory = {text!r}: give a size such as \"2GB\" or \"512MB\"")
    value, unit = float(m.group(1)), m.group(2).upper()
    if value != int(value):  # Slurm takes whole numbers: go one unit down
        down = {"T": "G", "G": "M", "M": "K"}
        if unit in down:
            value, unit = value * 1024, down[unit]
    return f"{int(math.ceil(value))}{unit}"


def write_array_script(run_dir, n_tasks, settings=None):
    """Write RUN_DIR/array.sh: a Slurm job array whose element k runs task k.

    Returns the script path.  Submit it with ``sbatch RUN_DIR/array.sh``;
    afterwards ``mdsim report RUN_DIR`` gathers the results.
    """
    settings = settings or {}
    run_dir = Path(run_dir).resolve()
    exe = shlex.quote(sys.executable)
    lines = [
        "#!/usr/bin/env bash",
        f"#SBATCH --job-name={shlex.quote(settings.get('job_name', run_dir.name))}",
        f"#SBATCH --array=0-{int(n_tasks) - 1}",
        f"#SBATCH --cpus-per-task={int(settings.get('cores', 1))}",
        f"#SBATCH --time={settings.get('walltime', '01:00:00')}",
        f"#SBATCH --output={shlex.quote(str(run_dir / 'logs' / 'task-%a.out'))}",
    ]
    if settings.get("memory"):
        lines.append(f"#SBATCH --mem={_slurm_memory(settings['memory'])}")
    if settings.get("partition"):
        lines.append(f"#SBATCH --partition={settings['partition']}")
    lines += [
        "set -euo pipefail",
        "# element k of the array runs task k of the run directory",
        'index="${SLURM_ARRAY_TASK_ID:?run this script as a job array, or set SLURM_ARRAY_TASK_ID}"',
        'export NUMBA_NUM_THREADS="${SLURM_CPUS_PER_TASK:-1}"',
        f"exec {exe} -m mdsim task {shlex.quote(str(run_dir))} --index \"$index\"",
        "",
    ]
    (run_dir / "logs").mkdir(exist_ok=True)
    path = run_dir / "array.sh"
    path.write_text("\n".join(lines), encoding="utf-8")
    path.chmod(0o755)
    return path
