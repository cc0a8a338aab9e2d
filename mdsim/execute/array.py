"""A scheduler job array whose element k runs task k of a run directory."""
import shlex
import sys
from pathlib import Path

from mdsim.execute.cluster_settings import sbatch_directives

__all__ = ["write_array_script"]


def write_array_script(run_dir, n_tasks, settings=None):
    """Write RUN_DIR/array.sh: a Slurm job array whose element k runs task k.

    Parameters
    ----------
    run_dir : path-like
    n_tasks : int
    settings : dict, optional
        The study's ``[cluster]`` table (:mod:`mdsim.execute.cluster_settings`).

    Returns
    -------
    pathlib.Path
        The script.  Submit it with ``sbatch RUN_DIR/array.sh``; afterwards
        ``mdsim report RUN_DIR`` gathers the results.
    """
    settings = settings or {}
    run_dir = Path(run_dir).resolve()
    exe = shlex.quote(sys.executable)
    lines = [
        "#!/usr/bin/env bash",
        f"#SBATCH --job-name={shlex.quote(settings.get('job_name', run_dir.name))}",
        f"#SBATCH --array=0-{int(n_tasks) - 1}",
        *sbatch_directives(settings),
        f"#SBATCH --output={shlex.quote(str(run_dir / 'logs' / 'task-%a.out'))}",
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
