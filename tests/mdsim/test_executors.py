"""Executors: the local pool and a Dask LocalCluster give identical numbers; Slurm details."""
import pytest

from mdsim.errors import StudyError
import functools

from mdsim.execute.array import write_array_script
from mdsim.execute.cluster_settings import jobqueue_arguments, slurm_memory
from mdsim.execute.dask import run_dask
from mdsim.execute.local import run_local
from mdsim.pipeline.jobs import task_job
from mdsim.pipeline import read_task_result

from test_tasks import make_run_dir, write_study

SWEEP = '[sweep]\ntemperature = ["150 K", "180 K"]'


def _numbers(rd, n):
    out = []
    for k in range(n):
        _, res, series = read_task_result(rd.task_file(k))
        out.append((res["delta_T_K"], res["final_temperature_K"],
                    {key: v.tolist() for key, v in series.items()}))
    return out


@pytest.mark.slow
def test_local_pool_and_dask_local_cluster_give_identical_numbers(tmp_path):
    pytest.importorskip("distributed")
    study = write_study(tmp_path, extra=SWEEP, initial_T="")
    rd_local, tasks = make_run_dir(tmp_path, study, "local")
    rd_dask, _ = make_run_dir(tmp_path, study, "dask")
    assert len(tasks) == 2
    done = []
    assert run_local(functools.partial(task_job, str(rd_local.path)), [0, 1], workers=2,
                     on_done=lambda k, e: done.append(k)) == {0: None, 1: None}
    assert sorted(done) == [0, 1]
    assert run_dask(functools.partial(task_job, str(rd_dask.path)), [0, 1],
                    workers=2) == {0: None, 1: None}
    assert _numbers(rd_local, 2) == _numbers(rd_dask, 2)
    assert not list(rd_dask.tasks_dir.glob("*.progress.json"))  # removed when tasks end


def test_slurm_memory_is_written_in_slurm_units():
    assert slurm_memory("2GB") == "2G"
    assert slurm_memory("512 MiB") == "512M"
    assert slurm_memory("1.5GB") == "1536M"
    with pytest.raises(StudyError, match="memory"):
        slurm_memory("lots")


def test_array_script_has_one_element_per_task(tmp_path):
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    settings = {"memory_per_job": "2GB", "partition": "short", "time_limit": "00:30:00",
                "cpus_per_job": 2}
    path = write_array_script(rd.path / "array.sh", rd.path / "logs", rd.path, 7, settings)
    text = path.read_text()
    assert "#SBATCH --array=0-6" in text
    assert "#SBATCH --mem=2G" in text and "#SBATCH --partition=short" in text
    assert "#SBATCH --cpus-per-task=2" in text and "#SBATCH --time=00:30:00" in text
    assert "-m mdsim task" in text and "--index \"$index\"" in text
    assert f"#SBATCH --output={rd.path.resolve() / 'logs' / 'task-%a.out'}" in text
    assert (rd.path / "logs").is_dir() and path == rd.path / "array.sh"


def test_cluster_settings_become_the_job_queue_arguments_in_one_place():
    """The study's names in, dask-jobqueue's names out (its documented SLURMCluster arguments)."""
    kw = jobqueue_arguments({"system": "slurm", "partition": "short", "cpus_per_job": 4,
                             "memory_per_job": "8GB", "time_limit": "02:00:00",
                             "network_interface": "ib0", "batch_jobs": 3}, "/tmp/logs")
    assert kw["cores"] == 4 and kw["memory"] == "8GB" and kw["walltime"] == "02:00:00"
    assert kw["queue"] == "short" and kw["interface"] == "ib0"
    assert kw["log_directory"] == "/tmp/logs"
    assert not {"cpus_per_job", "memory_per_job", "time_limit", "batch_jobs"} & set(kw)
