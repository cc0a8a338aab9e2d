"""Run jobs on a Dask distributed cluster: an existing scheduler, a batch-queue
cluster started from the study's ``[cluster]`` table, or a local cluster.

Jobs follow the contract of :mod:`mdsim.execute.local`.
"""
import os

from mdsim.errors import StudyError
from mdsim.execute.cluster_settings import jobqueue_arguments, jobqueue_class_name

__all__ = ["run_dask", "jobqueue_cluster"]


def run_dask(job, keys, address=None, workers=2, cluster_settings=None, log_directory=None,
             on_done=None, on_tick=None):
    """Call ``job(key)`` for every key on a Dask cluster; return {key: None or error text}.

    Parameters
    ----------
    job, keys, on_done, on_tick
        As for :func:`mdsim.execute.local.run_local`.
    address : str, optional
        An existing scheduler ("tcp://host:8786").
    workers : int
        Single-threaded workers of the LocalCluster started when there is
        neither an address nor a scheduler system.
    cluster_settings : dict, optional
        The study's ``[cluster]`` table; with a ``system`` a dask-jobqueue
        cluster of ``batch_jobs`` jobs is started (:func:`jobqueue_cluster`).
    log_directory : path-like, optional
        Where the batch jobs' logs go.

    Notes
    -----
    A job whose worker dies is retried twice on another worker.
    """
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise StudyError("running on dask needs the 'cluster' extra: "
                         "python -m pip install -e '.[cluster]'") from None
    keys = list(keys)
    if not keys:
        return {}
    cluster = None
    if address:
        client = Client(address)
    elif cluster_settings and cluster_settings.get("system"):
        cluster = jobqueue_cluster(cluster_settings, log_directory=log_directory)
        cluster.scale(jobs=int(cluster_settings.get("batch_jobs", 1)))
        client = Client(cluster)
    else:
        cluster = LocalCluster(n_workers=int(workers), threads_per_worker=1,
                               processes=True, dashboard_address=None)
        client = Client(cluster)
    outcome = {}
    try:
        futures = [client.submit(job, k, key=f"job-{k}-{os.getpid()}", retries=2, pure=False)
                   for k in keys]
        key_of = {f.key: k for f, k in zip(futures, keys)}
        if on_tick:
            on_tick()
        for fut in as_completed(futures):
            k = key_of[fut.key]
            try:
                err = fut.result()
            except Exception as exc:
                err = f"dask job failed: {exc!r}"
            outcome[k] = err
            if on_done:
                on_done(k, err)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    return outcome


def jobqueue_cluster(settings, log_directory=None):
    """A dask-jobqueue cluster (SLURMCluster or PBSCluster) from a ``[cluster]`` table.

    The batch jobs' logs go to ``log_directory`` (the run directory's
    ``logs/``), not the working directory; the dashboard takes any free port.
    """
    try:
        import dask_jobqueue
    except ImportError:
        raise StudyError("a [cluster] table with a system needs dask-jobqueue: "
                         "python -m pip install -e '.[cluster]'") from None
    cls = getattr(dask_jobqueue, jobqueue_class_name(settings))
    return cls(**jobqueue_arguments(settings, log_directory))
