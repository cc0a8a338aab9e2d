"""Building a corresponding-states table: plan the grid, run its points on an executor, assemble.

The points run as jobs (:func:`mdsim.cstable.point.point_job`) on a local
process pool (:func:`mdsim.execute.local.run_local`) or a Dask cluster
(:func:`mdsim.execute.dask.run_dask`); an interrupted build is finished by
building again (complete points are skipped, a half-written point continues
from its checkpoint).
"""
import functools
import sys
import time
from pathlib import Path

from mdsim.cstable.assemble import assemble_table
from mdsim.cstable.coexistence import grid_points
from mdsim.cstable.plan import is_point_complete, points_dir_for, table_settings, write_plan
from mdsim.cstable.point import point_job
from mdsim.errors import SettingError, SimulationError

__all__ = ["build_table", "EXECUTORS"]

EXECUTORS = ("local", "dask")


def build_table(study, out_path, on="local", workers=None, progress=True, dask_address=None):
    """Build (or finish) the corresponding-states table of a study.

    Parameters
    ----------
    study : Study or str or Path
        A study with a pure gas of fixed-shape potential and a [table].
    out_path : str or Path
        The table file ``NAME.h5``; the per-point run files go to
        ``NAME.h5.points/``.
    on : {"local", "dask"}
        The executor: a local process pool (default) or a Dask cluster (a
        LocalCluster of ``workers`` processes unless ``dask_address`` names
        a scheduler).
    workers : int, optional
        Worker processes (default: the number of cores, at most the points;
        2 for a Dask LocalCluster).
    progress : bool
        A line on stderr as each point finishes (and per block of the
        Gibbs-ensemble runs of a coexistence grid).
    dask_address : str, optional
        An existing Dask scheduler ("tcp://host:8786").

    Returns
    -------
    Path
        The table file.

    Raises
    ------
    SettingError
        ``on`` or ``out_path`` not allowed.
    SimulationError
        When some points failed (the others are kept; run again to retry).
    """
    from mdsim.study.reader import Study, read_study
    if not isinstance(study, Study):
        study = read_study(study)
    if on not in EXECUTORS:
        raise SettingError("on", on, f"allowed {', '.join(EXECUTORS)}")
    settings = table_settings(study)
    out_path = Path(out_path).absolute()
    if out_path.suffix != ".h5":
        raise SettingError("out_path", str(out_path), "a table file ends in .h5")
    points_dir = points_dir_for(out_path)
    plan = write_plan(points_dir, settings, study)
    todo = [p["index"] for p in plan["points"] if not is_point_complete(points_dir, p["index"])]
    say = _Progress(plan, len(todo), on, progress)
    if todo:
        job = functools.partial(point_job, str(points_dir))
        if on == "dask":
            from mdsim.execute.dask import run_dask
            errors = run_dask(job, todo, address=dask_address, workers=int(workers or 2),
                              on_done=say.point_done)
        else:
            from mdsim.execute.local import run_local
            errors = run_local(job, todo, workers=workers, on_done=say.point_done)
        failed = {k: e for k, e in errors.items() if e is not None}
        if failed:
            first = min(failed)
            raise SimulationError(f"{len(failed)} of {len(plan['points'])} table points failed "
                                  f"(point {first}: {failed[first]}); the others are kept in "
                                  f"'{points_dir}'; run the same build again to retry")
    if plan.get("coexistence_temperatures"):
        grid_points(points_dir, plan, progress=say)
    path = assemble_table(points_dir, out_path)
    say(f"wrote {path}")
    return path


class _Progress:
    """Progress lines on stderr ("table: ..."), one as each point ends; silent unless ``on``."""

    def __init__(self, plan, n_todo, executor, on):
        self.plan, self.on, self.t0 = plan, on, time.time()
        self.n_points = len(plan["points"])
        self.done = self.n_points - n_todo
        self(f"{self.n_points} grid points, {self.done} already complete, {n_todo} to run "
             f"({executor} executor)")

    def __call__(self, text):
        if self.on:
            print(f"table: {text}", file=sys.stderr, flush=True)

    def point_done(self, index, err):
        self.done += 1
        pt = self.plan["points"][index]
        state = "done" if err is None else f"FAILED: {err}"
        self(f"point {self.done}/{self.n_points} (T* = {pt['temperature_red']:g}, rho* = "
             f"{pt['density_red']:g}, N = {pt['particles']}) {state} "
             f"[{time.time() - self.t0:.0f} s]")
