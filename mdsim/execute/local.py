"""Run jobs in a pool of worker processes on this machine.

A *job* is a module-level callable ``job(key, on_tick=None)`` that returns
None on success or the text of a user-facing error; it must be picklable
(a module-level function, or a :func:`functools.partial` of one), because
it is sent to spawned worker processes.  ``on_tick`` is given only when the
job runs in this process (one worker): the job may call it now and then,
so that a progress line can be redrawn while it works.  Jobs are
independent and idempotent, so any executor gives the same numbers
(``docs/architecture.md``).
"""
import os

from mdsim.errors import SettingError

__all__ = ["run_local", "set_worker_threads"]


def set_worker_threads(threads):
    """Give this process ``threads`` numba threads (at least one)."""
    import numba
    numba.set_num_threads(max(1, int(threads)))


def run_local(job, keys, workers=None, on_done=None, on_tick=None):
    """Call ``job(key)`` for every key in a pool of worker processes.

    Parameters
    ----------
    job : callable
        ``job(key, on_tick=None) -> None or str`` (see the module notes).
    keys : iterable
        The jobs' keys (task indices, grid-point indices), each picklable.
    workers : int, optional
        Worker processes (default: the number of cores, at most the number
        of keys); each gets cores // workers numba threads so that cores are
        not oversubscribed.  With one worker the jobs run in this process.
    on_done : callable, optional
        ``on_done(key, error)`` as each job ends.
    on_tick : callable, optional
        Called now and then while jobs run (for a progress line).

    Returns
    -------
    dict
        {key: None or the error text}.  A worker process that dies (killed,
        out of memory) gives its jobs an error text, not an exception.

    Raises
    ------
    StudyError
        ``workers`` below 1 (the setting is named ``workers``).
    """
    import concurrent.futures as cf
    import multiprocessing as mp
    keys = list(keys)
    if not keys:
        return {}
    cores = os.cpu_count() or 1
    workers = min(int(workers or cores), len(keys))
    if workers < 1:
        raise SettingError("workers", workers, "must be at least 1")
    threads = max(1, cores // workers)
    outcome = {}
    if workers == 1:
        set_worker_threads(threads)
        for k in keys:
            err = job(k, on_tick=on_tick)
            outcome[k] = err
            if on_done:
                on_done(k, err)
        return outcome
    ctx = mp.get_context("spawn")  # no inherited numba/OpenMP thread state
    with cf.ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                                initializer=set_worker_threads, initargs=(threads,)) as pool:
        futures = {pool.submit(job, k): k for k in keys}
        pending = set(futures)
        while pending:
            finished, pending = cf.wait(pending, timeout=0.5, return_when=cf.FIRST_COMPLETED)
            for fut in sorted(finished, key=lambda f: str(futures[f])):
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
