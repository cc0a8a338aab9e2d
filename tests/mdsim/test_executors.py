"""Executors: the local pool and a Dask LocalCluster give identical numbers; Slurm details."""
import pytest

from mdsim.errors import StudyError
from mdsim.execute.executors import _slurm_memory, run_dask, run_local, write_array_script
from mdsim.pipeline.tasks import read_task_result

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
    assert run_local(rd_local.path, [0, 1], workers=2,
                     on_done=lambda k, e: done.append(k)) == {0: None, 1: None}
    assert sorted(done) == [0, 1]
    assert run_dask(rd_dask.path, [0, 1], workers=2) == {0: None, 1: None}
    assert _numbers(rd_local, 2) == _numbers(rd_dask, 2)
    assert not list(rd_dask.tasks_dir.glob("*.progress.json"))  # removed when tasks end


def test_slurm_memory_is_written_in_slurm_units():
    assert _slurm_memory("2GB") == "2G"
    assert _slurm_memory("512 MiB") == "512M"
    assert _slurm_memory("1.5GB") == "1536M"
    with pytest.raises(StudyError, match="memory"):
        _slurm_memory("lots")


def test_array_script_has_one_element_per_task(tmp_path):
    rd, _ = make_run_dir(tmp_path, write_study(tmp_path))
    path = write_array_script(rd.path, 7, {"memory": "2GB", "partition": "short",
                                           "walltime": "00:30:00", "cores": 2})
    text = path.read_text()
    assert "#SBATCH --array=0-6" in text
    assert "#SBATCH --mem=2G" in text and "#SBATCH --partition=short" in text
    assert "#SBATCH --cpus-per-task=2" in text and "#SBATCH --time=00:30:00" in text
    assert "-m mdsim task" in text and "--index \"$index\"" in text
