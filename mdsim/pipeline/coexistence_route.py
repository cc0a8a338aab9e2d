"""The expansion through coexistence from Gibbs-ensemble points of the study's potential.

The Gibbs-ensemble sampler (:mod:`mdsim.sampling.coexistence`, its
``coexistence_point``) gives, at a reduced temperature, the coexisting
densities ``rho_liq``, ``rho_vap``, the residual energies per particle
``u_liq``, ``u_vap`` and the vapour pressure ``p_sat``, each with ``*_err``,
in the reduced units of the potential.  :func:`coexistence_table` turns such
points into the SI table of :class:`analysis.expansion.CoexistenceTable`;
:func:`expansion_through_coexistence` solves the energy balance on it
(:func:`analysis.expansion.coexistence_expansion`).  :func:`final_state_in_dome`
is the virial routes' check of a final state against the model's coexistence
curve when one is known.
"""
import math
import time
from pathlib import Path

from analysis.expansion import (CoexistencePoint, CoexistenceTable, SinglePhaseFinalState,
                                coexistence_expansion)
from mdsim.errors import ConvergenceError, SettingError, StudyError

__all__ = ["coexistence_table", "expansion_through_coexistence", "final_state_in_dome",
           "coexistence_for_task", "coexistence_text", "warn_virial_in_dome", "GIBBS_SOURCE", "GIBBS_SETTINGS",
           "GRID_STEP_RED", "FIRST_POINTS", "MAX_POINTS", "LOWEST_T_RED", "gibbs_progress",
           "LOG_EVERY_S", "table_source"]

GIBBS_SOURCE = "Gibbs-ensemble Monte Carlo of the study's potential (rc and tail as every route)"


def coexistence_table(points_red, units, source=GIBBS_SOURCE):
    """An SI coexistence table from reduced coexistence points.

    Parameters
    ----------
    points_red : sequence
        Objects with ``T_red``, ``rho_liq``, ``rho_vap``, ``u_liq``,
        ``u_vap``, ``p_sat`` and their ``*_err`` (reduced; per particle).
    units : mdsim.units.ReducedUnits
        The study's reduced units.
    source : str

    Returns
    -------
    analysis.expansion.CoexistenceTable
    """
    pts = []
    for p in points_red:
        pts.append(CoexistencePoint(
            units.temperature_to_K(p.T_red),
            units.density_to_mol_m3(p.rho_liq), units.density_to_mol_m3(p.rho_vap),
            units.energy_to_J_mol(p.u_liq), units.energy_to_J_mol(p.u_vap),
            units.density_to_mol_m3(p.rho_liq_err), units.density_to_mol_m3(p.rho_vap_err),
            units.energy_to_J_mol(p.u_liq_err), units.energy_to_J_mol(p.u_vap_err),
            units.pressure_to_Pa(p.p_sat), units.pressure_to_Pa(p.p_sat_err)))
    return CoexistenceTable(pts, source)


def expansion_through_coexistence(initial_u_res_J_mol, initial_u_res_stderr_J_mol, T_i_K,
                                  rho_f_mol_m3, points_red, units, cv_ig):
    """T_f and the vapour fraction of an expansion ending in vapour and liquid.

    Parameters
    ----------
    initial_u_res_J_mol, initial_u_res_stderr_J_mol : float
        The sampled residual energy of the initial state and its standard error.
    T_i_K, rho_f_mol_m3 : float
    points_red : sequence
        Reduced coexistence points (:func:`coexistence_table`) spanning T_f.
    units : mdsim.units.ReducedUnits
    cv_ig : analysis.heatcapacity.IdealGasHeatCapacity

    Returns
    -------
    analysis.expansion.CoexistenceExpansionResult
    """
    table = coexistence_table(points_red, units)
    return coexistence_expansion(initial_u_res_J_mol, T_i_K, rho_f_mol_m3, table, cv_ig,
                                 initial_u_res_stderr_J_mol=initial_u_res_stderr_J_mol)


def final_state_in_dome(table, T_K, rho_mol_m3, route):
    """A warning when a route's final state lies inside the model's coexistence curve, or None.

    Parameters
    ----------
    table : analysis.expansion.CoexistenceTable or None
        The model's coexistence curve (None: not known, no check).
    T_K, rho_mol_m3 : float
        The route's final state.
    route : str

    Returns
    -------
    str or None

    Examples
    --------
    >>> pts = [CoexistencePoint(80.0, 34000.0, 80.0, -5500.0, -60.0),  # invented numbers
    ...        CoexistencePoint(100.0, 29000.0, 400.0, -4600.0, -250.0)]
    >>> final_state_in_dome(CoexistenceTable(pts, "invented"), 90.0, 15000.0, "virial_b2b3")[:40]
    'virial_b2b3: TWO-PHASE final state (T = '
    """
    if table is None or not table.contains(T_K, rho_mol_m3):
        return None
    c = table(T_K)
    return (f"{route}: TWO-PHASE final state (T = {T_K:.4g} K, {rho_mol_m3:.6g} mol/m^3 lies "
            f"between the coexisting densities {c.vapour_density_mol_m3:.6g} and "
            f"{c.liquid_density_mol_m3:.6g} mol/m^3 of {table.source}): the homogeneous "
            "answer does not describe it")


# -- the expansion through coexistence of a task whose final state is two-phase -------------
GIBBS_SETTINGS = {"n_particles": 300, "equilibration_cycles": 3000, "production_cycles": 6000,
                  "sample_interval": 5, "seed": 0}
"""The Gibbs-ensemble runs of a task (:func:`mdsim.sampling.coexistence.coexistence_point`)."""
GRID_STEP_RED = 0.05
"""Spacing of the reduced temperatures of the Gibbs points (a fixed grid, so tasks share the
cache)."""
FIRST_POINTS = 3
"""Gibbs points computed first, from the grid temperature at or below the route's T_f up."""
MAX_POINTS = 14
"""Most Gibbs points a task computes while looking for the two-phase T_f (one more at a time,
upward: the equilibrium T_f of a two-phase final state lies above the homogeneous sample's);
from :data:`LOWEST_T_RED` they reach T* = 1.35, above the Lennard-Jones critical point."""
LOWEST_T_RED = 0.70
"""Lowest reduced temperature of a Gibbs point: just above the Lennard-Jones triple point
(T* near 0.69, common practice); below it the stable final state holds a solid."""


def coexistence_for_task(job, res):
    """The expansion through coexistence of a task whose final state was found two-phase.

    Gibbs-ensemble points of the study's potential at reduced temperatures on
    a grid of :data:`GRID_STEP_RED` from the route's T_f (at least
    :data:`LOWEST_T_RED`) upward, read from the run directory's cache
    (:attr:`mdsim.pipeline.rundir.RunDir.coexistence_dir`) or computed (their
    CPU time booked in the task's ledger); the lever-rule balance
    (:func:`expansion_through_coexistence`) from the initial state the route
    sampled.  While the balance has no two-phase root one more point is added
    above, up to :data:`MAX_POINTS` or the critical temperature.  When the
    study names ``[simulation] coexistence_table``, the points are that table
    file's coexistence grid instead (:mod:`mdsim.sampling.coexistence_grid`:
    reduced Gibbs points of the potential's shape and cut-off, mapped to
    the study's epsilon and sigma) and no Gibbs run is made; the record's
    ``source`` names the table.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    res : analysis.expansion.SampledExpansionResult
        The route's result (its ``details["initial_u_res_J_mol"]`` when given,
        else the initial chain's mean energy is the initial residual energy).

    Returns
    -------
    dict
        ``available`` (bool); when True ``delta_T_K``, ``final_temperature_K``,
        ``vapour_fraction`` ({value, stderr}), ``vapour_density_mol_m3``,
        ``liquid_density_mol_m3``, ``source``, ``temperatures_K`` (the Gibbs
        points used); when False ``reason`` (one line, no number).
    """
    why = _not_applicable(job.study, job.feynman_hibbs)
    u_i = None if why else _initial_u_res(job, res)
    if why is None and u_i is None:
        why = "the route recorded no sampled energy of the initial state"
    if why is not None:
        return {"available": False, "reason": why}
    if job.study.simulation.get("coexistence_table"):
        return _from_table(job, u_i)
    T0 = max(LOWEST_T_RED, GRID_STEP_RED * math.floor(
        job.units.temperature_to_reduced(res.final_temperature_K) / GRID_STEP_RED + 1e-9))
    points, failure = [], None
    try:
        for k in range(MAX_POINTS):
            points.append(_gibbs_point(job, round(T0 + k * GRID_STEP_RED, 6)))
            if len(points) < FIRST_POINTS:
                continue
            try:
                out = expansion_through_coexistence(u_i[0], u_i[1], job.T_i, job.rho_f, points,
                                                    job.units, job.cv_ig)
                return _record(out, points, job.units)
            except SinglePhaseFinalState as exc:
                failure = str(exc)
    except (StudyError, ConvergenceError, SettingError) as exc:
        failure = f"the Gibbs ensemble stopped: {exc}"
    if not points:
        return {"available": False, "temperatures_K": [],
                "reason": f"{failure} (at T = {job.units.temperature_to_K(T0):.4g} K, the "
                          "first temperature tried)"}
    return {"available": False, "temperatures_K": _kelvins(points, job.units),
            "reason": f"no vapour-liquid final state found between "
                      f"{job.units.temperature_to_K(points[0].T_red):.4g} K and "
                      f"{job.units.temperature_to_K(points[-1].T_red):.4g} K ({failure}); "
                      "the equilibrium final state may hold a solid (below the triple point) "
                      "or be one fluid"}


def _from_table(job, u_i):
    """The expansion through coexistence on the grid of the study's table file (no Gibbs run)."""
    from mdsim.sampling.coexistence_grid import grid_for
    path = job.study.simulation["coexistence_table"]
    source = table_source(path)
    try:
        points = grid_for(path, job.study.reduced_pairs())
        out = expansion_through_coexistence(u_i[0], u_i[1], job.T_i, job.rho_f, points,
                                            job.units, job.cv_ig)
    except (StudyError, SinglePhaseFinalState) as exc:
        return {"available": False, "source": source, "reason": f"{source}: {exc}"}
    return _record(out, points, job.units, source)


def table_source(path):
    """The source line of a coexistence result read from a table file's grid.

    >>> table_source("inputs/lj_table.h5")
    "the coexistence grid of table 'lj_table.h5' (Gibbs-ensemble points of the potential's shape, reduced, mapped to this epsilon and sigma)"
    """
    return (f"the coexistence grid of table '{Path(path).name}' (Gibbs-ensemble points of the "
            "potential's shape, reduced, mapped to this epsilon and sigma)")


def _not_applicable(study, feynman_hibbs):
    """Why the Gibbs ensemble does not model this study (None when it does)."""
    gas = study.gas
    if gas.n_species != 1 or gas.molecules or getattr(gas, "three_body_c9_K_A9", 0.0):
        return ("the coexistence route treats a pure gas of spherical particles with a pair "
                "potential only (no mixtures, molecules or three-body term)")
    if feynman_hibbs:
        return "the coexistence route does not use the Feynman-Hibbs potential (classical only)"
    return None


def _initial_u_res(job, res):
    """(u_res, stderr) of the initial state in J/mol, or None."""
    d = res.details
    if "initial_u_res_J_mol" in d:
        return float(d["initial_u_res_J_mol"]), float(d.get("initial_u_res_stderr_J_mol", 0.0))
    if job.initial_chain is None:
        return None
    u = job.initial_chain.summary().get("u_full")
    if u is None:
        return None
    return job.units.energy_to_J_mol(u.value), job.units.energy_to_J_mol(u.stderr)


def _gibbs_point(job, T_red):
    """One Gibbs point of the study's potential (cached; computed CPU booked in the ledger)."""
    from mdsim.sampling.coexistence import coexistence_point
    c0 = time.process_time()
    name = f"coexistence-T{T_red:.6f}"
    point = coexistence_point(job.study.reduced_pairs(), T_red,
                              cache_dir=job.rd.coexistence_dir,
                              progress=gibbs_progress(job, name, T_red), **GIBBS_SETTINGS)
    cpu = time.process_time() - c0
    if name not in job.ledger:
        units = GIBBS_SETTINGS["n_particles"] * (GIBBS_SETTINGS["equilibration_cycles"]
                                                 + GIBBS_SETTINGS["production_cycles"])
        job.ledger.record(name, "gibbs", cpu, units)
    return point


LOG_EVERY_S = 10.0
"""Seconds between two lines of a Gibbs run in the run directory's ``log.txt``."""


def gibbs_progress(job, name, T_red):
    """The progress callback of a task's Gibbs run: the task's progress, and ``log.txt`` lines.

    Each block of the run (:func:`mdsim.sampling.coexistence.coexistence_point`)
    is passed on as the task's progress (``stage``, ``done``, ``total``: the
    progress file and the live line, :mod:`mdsim.execute.progress`), and at
    most every :data:`LOG_EVERY_S` seconds, and at its end, one line goes to
    the run directory's ``log.txt``, with or without a terminal.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    name : str
        The stage name shown (``coexistence-T...``).
    T_red : float

    Returns
    -------
    callable
        ``report(cycles_done, cycles_total, (rho_low, rho_high))``.
    """
    last = [-math.inf]

    def report(done, total, densities):
        if getattr(job, "progress", None) is not None:
            job.progress(stage=name, done=done, total=total)
        now = time.monotonic()
        if now - last[0] < LOG_EVERY_S and done < total:
            return
        last[0] = now
        try:
            job.rd.append_log(f"task {job.index:04d} {name}: Gibbs ensemble at T* = {T_red:g}, "
                              f"cycle {done}/{total}, box densities {densities[0]:.4g} and "
                              f"{densities[1]:.4g} (reduced)")
        except OSError:
            pass  # a log that cannot be written does not stop the task
    return report


def _kelvins(points, units):
    return [round(units.temperature_to_K(p.T_red), 9) for p in points]


def _record(out, points, units, source=GIBBS_SOURCE):
    def ve(value, stderr):
        return {"value": float(value), "stderr": float(stderr)}
    return {"available": True,
            "delta_T_K": ve(out.delta_T_K, out.delta_T_stderr_K),
            "final_temperature_K": ve(out.final_temperature_K, out.final_temperature_stderr_K),
            "vapour_fraction": ve(out.vapour_fraction, out.vapour_fraction_stderr),
            "vapour_density_mol_m3": float(out.vapour_density_mol_m3),
            "liquid_density_mol_m3": float(out.liquid_density_mol_m3),
            "source": source, "temperatures_K": _kelvins(points, units)}


def coexistence_text(record):
    """One line on the expansion through coexistence of a task record (or None without one).

    Examples
    --------
    >>> coexistence_text({"available": False, "reason": "above the critical temperature"})
    'through coexistence: no result: above the critical temperature'
    >>> rec = {"available": True, "delta_T_K": {"value": 4.8, "stderr": 0.31},
    ...        "final_temperature_K": {"value": 84.8, "stderr": 0.31},
    ...        "vapour_fraction": {"value": 0.0132, "stderr": 0.002},
    ...        "temperatures_K": [70.0, 75.0, 80.0, 85.0, 90.0]}  # invented numbers
    >>> print(coexistence_text(rec))  # doctest: +NORMALIZE_WHITESPACE
    through coexistence (lever rule on Gibbs-ensemble points at 70 to 90 K):
    Delta T = 4.80 ± 0.31 K, T_f = 84.80 ± 0.31 K, vapour fraction 0.0132 ± 0.0020
    """
    from mdsim.numbers import value_with_error
    if not record:
        return None
    if not record.get("available"):
        return f"through coexistence: no result: {record.get('reason')}"
    T = record["temperatures_K"]
    d, t, x = record["delta_T_K"], record["final_temperature_K"], record["vapour_fraction"]
    table = "" if record.get("source", GIBBS_SOURCE) == GIBBS_SOURCE else \
        f" from {record['source']}"
    return (f"through coexistence (lever rule on Gibbs-ensemble points at {min(T):.4g} to "
            f"{max(T):.4g} K{table}): Delta T = {value_with_error(d['value'], d['stderr'], 'K')}, "
            f"T_f = {value_with_error(t['value'], t['stderr'], 'K')}, vapour fraction "
            f"{value_with_error(x['value'], x['stderr'])}")


def warn_virial_in_dome(study, cache_dir, records):
    """Warn in each state-point record whose virial final state lies inside the cached dome.

    The model's coexistence curve is known when the run directory's cache
    holds at least two Gibbs points of the study's potential (those of
    two-phase tasks, :func:`coexistence_for_task`), or from the coexistence
    grid of the table file the study names (``[simulation] coexistence_table``); the virial routes' final
    states (T_i + Delta T, rho_i / r) are checked against it
    (:func:`final_state_in_dome`) at temperatures between its points.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    cache_dir : path-like
        :attr:`mdsim.pipeline.rundir.RunDir.coexistence_dir`.
    records : list of dict
        :func:`mdsim.pipeline.summary.state_point_record` outputs; their
        ``warnings`` are extended in place.

    Returns
    -------
    bool
        Whether a curve was known (and the check made).
    """
    from mdsim.sampling.coexistence import cached_points
    from mdsim.study.quantum_potential import uses_feynman_hibbs
    if _not_applicable(study, uses_feynman_hibbs(study)) is not None:
        return False
    if study.simulation.get("coexistence_table"):
        from mdsim.sampling.coexistence_grid import grid_for
        try:
            points = grid_for(study.simulation["coexistence_table"], study.reduced_pairs())
        except StudyError:
            points = []   # the tasks say why in their coexistence records
    else:
        points = cached_points(cache_dir, study.reduced_pairs())
    if len(points) < 2:
        return False
    table = coexistence_table(points, study.units)
    for rec in records:
        T_i = rec["initial"]["temperature_K"]
        rho_i = rec["initial"]["density_mol_m3"]
        for route in ("virial_b2b3", "virial_b2"):
            dT = (rec["delta_T_K"].get(route) or {}).get("value")
            if dT is None or rho_i is None:
                continue
            warning = final_state_in_dome(table, T_i + dT, rho_i / rec["volume_ratio"], route)
            if warning is not None:
                rec["warnings"].append(warning)
    return True
