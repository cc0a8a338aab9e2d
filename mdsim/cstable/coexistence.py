"""The optional coexistence grid of a table: Gibbs-ensemble points over T* for the table's shape.

With ``[table] coexistence_temperatures`` a build also runs one Gibbs-ensemble
point (:func:`mdsim.sampling.coexistence.coexistence_point`) per reduced
temperature, for the reduced potential of the table (its shape and
cut-off, the analytic tail per box as in every route), cached in
``OUT.h5.points/coexistence/`` so that an interrupted build keeps the points
it finished; the table file then carries them as its coexistence grid
(:mod:`mdsim.sampling.coexistence_grid`), read by the coexistence route for
any epsilon and sigma of the same shape.
"""
from pathlib import Path

from mdsim.cstable.plan import reduced_potential
from mdsim.errors import ConvergenceError, StudyError

__all__ = ["coexistence_dir_for", "grid_pairs", "grid_points", "EQUILIBRATION_FRACTION",
           "SAMPLE_INTERVAL"]

EQUILIBRATION_FRACTION = 0.5
"""Equilibration cycles of a grid point, as a fraction of its production cycles (the
pipeline's Gibbs runs use the same: 3000 and 6000)."""
SAMPLE_INTERVAL = 5
"""Cycles between recorded samples of a grid point."""


def coexistence_dir_for(points_dir):
    """The cache of a build's Gibbs points, ``OUT.h5.points/coexistence``."""
    return Path(points_dir) / "coexistence"


def grid_pairs(plan):
    """The table's reduced potential as a PairMatrix (epsilon = sigma = 1, the plan's cut-off)."""
    from mdsim.engine.potentials import PairMatrix
    return PairMatrix([reduced_potential(plan)], float(plan["cutoff"]))


def grid_points(points_dir, plan, progress=None):
    """The coexistence points of a build's plan, run now or read from its cache.

    Parameters
    ----------
    points_dir : path-like
        The build's directory.
    plan : dict
        Its plan (:func:`mdsim.cstable.plan.read_plan`); no
        ``coexistence_temperatures``: no points.
    progress : callable, optional
        ``progress(text)``: a line before each point and per block of a run.

    Returns
    -------
    list of mdsim.sampling.coexistence.CoexistencePoint

    Raises
    ------
    StudyError
        A temperature without coexistence (at or above the critical
        temperature) or a run that did not settle, naming the setting.
    """
    from mdsim.sampling.coexistence import coexistence_point
    temps = plan.get("coexistence_temperatures") or []
    pairs = grid_pairs(plan)
    cycles = int(plan["coexistence_cycles"])
    out = []
    for k, T in enumerate(temps):
        def report(done, total, rho, T=T):
            progress(f"coexistence T* = {T:g}: cycle {done}/{total}, box densities "
                     f"{rho[0]:.4g} and {rho[1]:.4g}")
        if progress is not None:
            progress(f"coexistence point {k + 1}/{len(temps)} (T* = {T:g})")
        try:
            out.append(coexistence_point(
                pairs, T, n_particles=int(plan["coexistence_particles"]),
                equilibration_cycles=int(EQUILIBRATION_FRACTION * cycles),
                production_cycles=cycles, sample_interval=SAMPLE_INTERVAL,
                seed=int(plan["seed"]), cache_dir=coexistence_dir_for(points_dir),
                progress=None if progress is None else report))
        except (StudyError, ConvergenceError) as exc:
            raise StudyError(f"[table] coexistence_temperatures: T* = {T:g}: {exc}") from None
    return out
