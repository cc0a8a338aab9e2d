"""The ``[simulation]`` settings of a study, as the tasks carry them.

The study reader (:mod:`mdsim.study.reader`) validates ``[simulation]`` once
and fills in every default from its schema; ``study.simulation`` holds the
values in SI (``target_stderr`` in K, ``max_cpu_time`` in s).  This module
only renames them with their units for the task list; it neither re-checks
nor re-defaults them.
"""

__all__ = ["simulation_settings"]


def simulation_settings(study):
    """The ``[simulation]`` settings the tasks use, with their units in their names.

    Parameters
    ----------
    study : mdsim.study.reader.Study

    Returns
    -------
    dict
        "routes" (list of str: the simulation routes, in the study's order),
        "particles" (int, or None: chosen by each task from its target),
        "target_stderr_K" (float, K), "max_cpu_time_s" (float, CPU seconds
        per task), "seed" (int), "sampler" ("auto", "mc" or "md").
    """
    sim = study.simulation
    particles = sim.get("particles")
    return {"routes": list(sim["routes"]),
            "particles": None if particles is None else int(particles),
            "target_stderr_K": float(sim["target_stderr"]),
            "max_cpu_time_s": float(sim["max_cpu_time"]),
            "seed": int(sim["seed"]),
            "sampler": str(sim["sampler"])}
