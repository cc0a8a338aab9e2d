"""One grid point of a table build: its reduced system, its sampling, and the job for executors.

A point is sampled by NVT Monte Carlo
(:func:`mdsim.sampling.state_point.sample_state_point`, full potential:
cut-off plus the analytic tail) into its own run file, checkpointed, so that
an interrupted build continues where it stopped and a complete point is
never run twice.
"""
from mdsim.cstable.plan import METHOD, point_path, read_plan, reduced_potential
from mdsim.errors import ConvergenceError, SimulationError, StudyError

__all__ = ["system_for", "run_point", "point_job"]

CHECKPOINT_EVERY = 500
# Below this reduced density the particles start at random positions, above on a lattice.
RANDOM_START_MAX_DENSITY = 0.1


def system_for(plan, point):
    """The reduced system (epsilon = sigma = 1) of one grid point, particles placed.

    Parameters
    ----------
    plan : dict
        ``form``, ``shape`` and ``cutoff`` of the build (:func:`mdsim.cstable.plan.write_plan`).
    point : dict
        ``particles``, ``density_red`` and ``seed`` (a list of ints).

    Returns
    -------
    mdsim.engine.system.System
    """
    import numpy as np
    from mdsim.engine.potentials import PairMatrix
    from mdsim.engine.system import System
    pairs = PairMatrix([reduced_potential(plan)], plan["cutoff"])
    system = System.cubic(pairs, [point["particles"]], point["density_red"])
    seed = int(np.sum(np.asarray(point["seed"]) * np.array([1000003, 1009, 1])))
    if point["density_red"] < RANDOM_START_MAX_DENSITY:
        system.place_at_random(seed)
    else:
        system.place_on_lattice(seed)
    return system


def run_point(points_dir, index, progress=None):
    """Sample grid point ``index`` of the plan in ``points_dir`` (idempotent, resumable).

    Parameters
    ----------
    points_dir : str or Path
        The build's directory (with ``plan.json``).
    index : int
    progress : callable, optional
        ``progress(samples_done, n_samples)`` after each block of samples.

    Returns
    -------
    str
        The path of the complete run file.
    """
    import json
    from mdsim.sampling.state_point import sample_state_point
    plan = read_plan(points_dir)
    point = plan["points"][int(index)]
    path = point_path(points_dir, index)
    system = system_for(plan, point)
    attrs = {"table_form": plan["form"], "table_point": int(index),
             "table_shape": json.dumps(plan["shape"])}
    sample_state_point(system, METHOD, point["temperature_red"],
                       n_equilibration=plan["equilibration"], n_samples=plan["samples"],
                       interval=1, seed=point["seed"], path=path, attrs=attrs,
                       checkpoint_every=min(CHECKPOINT_EVERY, plan["samples"]),
                       progress=progress)
    return str(path)


def point_job(points_dir, index, on_tick=None):
    """Grid point ``index`` as a job of :mod:`mdsim.execute`: None on success, else the error text.

    Use it as ``functools.partial(point_job, str(points_dir))``.  User errors
    and numerical failures come back as text; other exceptions (bugs)
    propagate.
    """
    progress = None if on_tick is None else (lambda done, total: on_tick())
    try:
        run_point(points_dir, index, progress=progress)
        return None
    except (StudyError, SimulationError, ConvergenceError) as exc:
        return str(exc)
