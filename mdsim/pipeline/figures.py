"""Drawing the report's figures into ``plots/`` (PNG and PDF).

The data come from :mod:`mdsim.pipeline.plot_data`, the drawing from
:mod:`mdsim.pipeline.plots`.  Each function returns ``(title, paths)``
entries for report.md and notes on figures not drawn.
"""
from mdsim.errors import ConvergenceError, StudyError
from mdsim.pipeline import plot_data, plots
from mdsim.pipeline.collect import task_state_point

__all__ = ["draw_figures", "task_figures", "earlier_figures", "run_inversion"]


def task_figures(study, points_by_index, gathered, vg, cv, plots_dir):
    """Per-task figures; returns ({task index: [paths]}, [notes on plots not drawn])."""
    made, notes = {}, []
    for k, (task, result, series) in sorted(gathered["results"].items()):
        route = task.get("route")
        sp = points_by_index.get(task_state_point(task))
        if sp is None:
            notes.append(f"task {k}: its state point {task_state_point(task)} is not in the "
                         "study; no plot")
            continue
        stem = plots_dir / f"{route}_sp{sp.index:03d}_task{k:04d}"
        if route == "energy":
            data, why = plot_data.energy_plot_data(study, sp, result, series, vg, cv)
            if data is not None:
                made[k] = plots.plot_energy_route(data, stem)
        elif route == "direct":
            data, why = plot_data.direct_plot_data(sp, result, series)
            if data is not None:
                made[k] = plots.plot_direct(data, stem)
        else:
            data, why = plot_data.series_plot_data(sp, route, result, series)
            if data is not None:
                made[k] = plots.plot_series(data["series"], data["title"], stem, x=data["x"],
                                            final_T_K=data["final_T_K"],
                                            final_T_stderr_K=data["final_T_stderr_K"])
        if k not in made:
            notes.append(f"task {k} ({route}, state point {sp.index}): no plot ({why})")
    return made, notes


def run_inversion(vg, records):
    """The virial Joule inversion of a run, computed whether or not figures are drawn.

    Parameters
    ----------
    vg : analysis.virial.VirialGas
    records : list of dict
        The state-point records.

    Returns
    -------
    inversion : dict or None
        :func:`mdsim.pipeline.plot_data.inversion_data`'s inversion; None
        when it could not be computed.
    states : list of tuple
        The run's expansions (rho_i, T_i, rho_f, T_f) for the inversion plot.
    notes : list of str
        Why the inversion is absent, when it is.
    """
    try:
        inversion, states = plot_data.inversion_data(vg, records)
    except (StudyError, ConvergenceError) as exc:
        return None, [], [f"Joule inversion curve not computed: {exc}"]
    return inversion, states, []


def draw_figures(rd, study, points, records, gathered, vg, cv, inversion=None, states=()):
    """Draw every figure of a run.

    Parameters
    ----------
    rd : mdsim.pipeline.rundir.RunDir
    study : mdsim.study.reader.Study
    points : list of StatePoint
    records : list of dict
        The state-point records, in the order of ``points``.
    gathered : dict
        :func:`mdsim.pipeline.collect.gather_tasks`.
    vg, cv
        :func:`mdsim.pipeline.plot_data.virial_model`.
    inversion : dict or None
        :func:`run_inversion`; its curve is drawn when given.
    states : sequence of tuple
        The run's expansions, from :func:`run_inversion`.

    Returns
    -------
    plot_files : list of (str, list of Path)
        Title and files of each figure drawn.
    plot_notes : list of str
        Figures not drawn, and why.
    """
    rd.plots_dir.mkdir(parents=True, exist_ok=True)
    panels = plot_data.delta_T_panels(study, points, records, vg, cv)
    plot_files = [("Delta T against the initial state",
                   plots.plot_delta_T(panels, rd.plots_dir / "delta_T"))]
    points_by_index = {sp.index: sp for sp in points}
    made, plot_notes = task_figures(study, points_by_index, gathered, vg, cv, rd.plots_dir)
    for k, paths in sorted(made.items()):
        task = gathered["results"][k][0]
        plot_files.append((f"Task {k}: {task.get('route')} route, state point "
                           f"{task_state_point(task)}", paths))
    if inversion is not None:
        plot_files.append(("Joule inversion curve", plots.plot_inversion(
            {**inversion, "states": list(states),
             "title": f"{study.name}: Joule inversion curve (virial B2 + B3) and the run's "
                      "expansions"}, rd.plots_dir / "inversion")))
    return plot_files, plot_notes


def earlier_figures(rd):
    """The figures an earlier build left in ``plots/`` (not redrawn): (plot_files, notes)."""
    plot_files = []
    if rd.plots_dir.is_dir():
        for png in sorted(rd.plots_dir.glob("*.png")):
            pdf = png.with_suffix(".pdf")
            plot_files.append((f"{png.stem} (from an earlier build; not redrawn)",
                               [png] + ([pdf] if pdf.is_file() else [])))
    notes = []
    if plot_files:
        notes.append("plots were not redrawn in this rebuild (--no-plots); the figures "
                     "shown are those of an earlier build and may predate new results")
    return plot_files, notes
