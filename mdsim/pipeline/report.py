"""The results of a run directory: tables, plots and a written report.

:func:`build_report` reads what a run directory holds (the resolved study,
the planned tasks, every finished ``tasks/NNNN.h5``, the failure notes of
failed tasks: :mod:`mdsim.pipeline.collect`), computes the virial routes
(:mod:`mdsim.pipeline.summary`; a virial final state inside the model's
coexistence curve, when the run directory's cache knows it, gets a warning:
:func:`mdsim.pipeline.coexistence_route.warn_virial_in_dome`), and writes

``results.json``, ``results.csv``
    :mod:`mdsim.pipeline.results_files`.
``plots/``
    PNG and PDF (:mod:`mdsim.pipeline.figures`): Delta T against the
    initial pressure or density per route with the virial curves; for each
    energy-route task the residual energy against temperature at both
    densities with the constant-U construction; for each direct-route task
    the temperature and the density profile against time; microcanonical
    convergence; the Joule inversion curve (virial route).
``report.md``
    :mod:`mdsim.pipeline.report_md`: what was run, the results table, the
    plots, the warnings, the assumptions and the cautions.

Missing and failed tasks are listed in every output, never dropped.
"""
import logging
import os

from mdsim.errors import StudyError
from mdsim.pipeline.coexistence_route import warn_virial_in_dome
from mdsim.pipeline.collect import check_plan_consistent, gather_tasks, state_point_records
from mdsim.pipeline.figures import draw_figures, earlier_figures, run_inversion
from mdsim.pipeline.plan import plan_tasks
from mdsim.pipeline.plot_data import virial_model
from mdsim.pipeline.report_md import write_report_md
from mdsim.pipeline.results_files import csv_rows, write_csv, write_results_json
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline.summary import run_summary

__all__ = ["build_report"]

log = logging.getLogger(__name__)


def build_report(run_dir, *, plots=True):
    """Gather a run directory's results and write its tables, plots and report.

    Parameters
    ----------
    run_dir : str or os.PathLike
        A run directory made by ``mdsim run`` (it holds ``study.toml`` and
        ``tasks.json``).
    plots : bool
        Draw ``plots/`` (PNG and PDF).  True by default.

    Returns
    -------
    dict
        :func:`mdsim.pipeline.summary.run_summary` of the state-point records (the
        JSON of ``mdsim run --json``), with two more keys: ``tasks``
        (``done``: indices; ``failed``: {index, route, state_point_index,
        error}; ``missing``: {index, route, state_point_index, state}) and
        ``files`` (paths written, relative to the run directory); and
        ``inversion`` (the virial Joule inversion) when it could be
        computed, with or without plots.

    Raises
    ------
    StudyError
        When ``run_dir`` is not a run directory or its study does not
        validate; when its ``study.toml`` now plans other tasks than its
        ``tasks.json``, or a task file holds another task than its entry
        there (:func:`mdsim.pipeline.collect.check_plan_consistent`): then
        nothing is written.  Missing or failed tasks never raise: they are
        listed.
    """
    from mdsim.study.fitted_range import inversion_warnings
    from mdsim.study.reader import read_study
    rd = RunDir(run_dir)
    if not rd.study_file.is_file():
        raise StudyError(f"'{rd.path}' is not a run directory (no {rd.study_file.name}); "
                         "make one by running a study into it ('mdsim run')")
    study = read_study(rd.study_file)
    gathered = gather_tasks(rd)
    # before anything is written: one plan behind study.toml, tasks.json and every task file
    check_plan_consistent(rd, plan_tasks(study), gathered)
    points = study.state_points()
    records = state_point_records(study, points, gathered)
    warn_virial_in_dome(study, rd.coexistence_dir, records)
    summary = run_summary(study, records)
    summary["tasks"] = {"done": sorted(gathered["results"]), "failed": gathered["failed"],
                        "missing": gathered["missing"]}
    vg, cv = virial_model(study)
    # the inversion is a result, not a figure: computed with or without plots
    inversion, states, inversion_notes = run_inversion(vg, records)
    if inversion is not None:
        inversion["warnings"] = inversion_warnings(study.gas.fitted_range_K, inversion)
        summary["inversion"] = inversion
    written = []
    if plots:
        plot_files, plot_notes = draw_figures(rd, study, points, records, gathered, vg, cv,
                                              inversion, states)
        for _, paths in plot_files:
            written += paths
    else:  # not redrawn this time: keep pointing at the figures an earlier build made
        plot_files, plot_notes = earlier_figures(rd)
    plot_notes = plot_notes + inversion_notes
    write_csv(rd.results_csv, csv_rows(points, records, gathered))
    written += [rd.results_csv, rd.report_md, rd.results_json]
    summary["files"] = sorted(os.path.relpath(p, rd.path) for p in written)
    write_report_md(rd.report_md, study, points, records, gathered, plot_files, plot_notes,
                    inversion, cv, rd.path, summary.get("warnings", []))
    summary = write_results_json(rd.results_json, summary)
    log.info("report written to %s (%d state points, %d of %d tasks done)", rd.path,
             len(points), len(gathered["results"]), len(gathered["planned"]))
    return summary
