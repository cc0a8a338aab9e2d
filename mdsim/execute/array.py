"""A scheduler job array whose element k runs task k of a run directory."""
import shlex
import sys
from pathlib import Path

from mdsim.execute.cluster_settings import sbatch_directives

__all__ = ["write_array_script"]


def write_array_script(script_path, logs_dir, run_dir, n_tasks, settings=None):
    """Write a Slurm job array whose element k runs ``mdsim task RUN_DIR --index k``.

    Parameters
    ----------
    script_path : path-like
        The script to write (executable).
    logs_dir : path-like
        Where each element writes its output, ``task-K.out`` (made if missing).
    run_dir : path-like
        The run directory whose tasks the elements run; also the default
        job name.
    n_tasks : int
        Elements 0 to n_tasks - 1.
    settings : dict, optional
        The study's ``[cluster]`` table (:mod:`mdsim.execute.cluster_settings`).

    Returns
    -------
    pathlib.Path
        The script.  Submit it with ``sbatch``; afterwards ``mdsim report
        RUN_DIR`` gathers the results.
    """
    settings = settings or {}
    run_dir = Path(run_dir).resolve()
    logs_dir = Path(logs_dir).resolve()
    exe = shlex.quote(sys.executable)
    lines = [
        "#!/usr/bin/env bash",
        f"#SBATCH --job-name={shlex.quote(settings.get('job_name', run_dir.name))}",
        f"#SBATCH --array=0-{int(n_tasks) - 1}",
        *sbatch_directives(settings),
        f"#SBATCH --output={shlex.quote(str(logs_dir / 'task-%a.out'))}",
        "set -euo pipefail",
        "# element k of the array runs task k of the run directory",
        'index="${SLURM_ARRAY_TASK_ID:?run this script as a job array, or set SLURM_ARRAY_TASK_ID}"',
        'export NUMBA_NUM_THREADS="${SLURM_CPUS_PER_TASK:-1}"',
        f"exec {exe} -m mdsim task {shlex.quote(str(run_dir))} --index \"$index\"",
        "",
    ]
    logs_dir.mkdir(exist_ok=True)
    path = Path(script_path)
    path.write_text("\n".join(lines), encoding="utf-8")
    path.chmod(0o755)
    return path
