"""Where jobs run: a local process pool, a Dask cluster, or a scheduler job array.

The executors know nothing of studies or run directories: they call a job
``job(key, on_tick=None) -> None | error text`` for each key
(:mod:`mdsim.execute.local`), and the files they write (the job-array
script, the submission record) are given to them as paths.  The
``[cluster]`` table is translated for the scheduler in one place
(:mod:`mdsim.execute.cluster_settings`).
"""
from mdsim.execute.array import write_array_script
from mdsim.execute.cluster_settings import jobqueue_arguments, sbatch_directives, slurm_memory
from mdsim.execute.dask import jobqueue_cluster, run_dask
from mdsim.execute.local import run_local, set_worker_threads
from mdsim.execute.progress import ProgressLine, TaskProgressFile, read_progress

__all__ = ["run_local", "run_dask", "set_worker_threads", "jobqueue_cluster",
           "jobqueue_arguments", "sbatch_directives", "slurm_memory", "write_array_script",
           "ProgressLine", "TaskProgressFile", "read_progress"]
