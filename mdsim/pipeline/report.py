"""The results of a run directory: tables, plots and a written report.

:func:`build_report` reads what a run directory holds (the resolved study,
the planned tasks, every finished ``tasks/NNNN.h5``, the failure notes of
failed tasks), computes the virial routes, and writes

``results.json``
    :func:`mdsim.pipeline.summary.run_summary` of the per-state-point records (the
    shape ``mdsim run --json`` prints), plus ``tasks`` (done, failed and
    missing tasks) and ``files``.
``results.csv``
    One row per state point and route, columns with their units in their
    names (``delta_T_K``, ``delta_T_stderr_K``, ...); a route that did not
    finish has a row with its ``status`` and empty numbers.
``plots/``
    PNG and PDF: Delta T against the initial pressure or density per
    route with the virial curves; for each energy-route task the residual
    energy against temperature at both densities with the constant-U
    construction; for each direct-route task the temperature and the
    density profile against time; microcanonical convergence; the Joule
    inversion curve (virial route).
``report.md``
    What was run, the results table, the plots, the warnings, the
    assumptions and the cautions.

Missing and failed tasks are listed in every output, never dropped.
"""
import csv
import io
import json
import logging
import math
import os
import platform
import time
from pathlib import Path

import numpy as np

from mdsim.errors import ConvergenceError, StudyError
from mdsim.files import atomic_write_text
from mdsim.pipeline.rundir import RunDir
from mdsim.study.routes import ROUTE_LABELS as ROUTE_NAMES, ROUTES, SIMULATION_ROUTES, VIRIAL_ROUTES

log = logging.getLogger(__name__)


CSV_COLUMNS = (
    "state_point_index", "route", "status",
    "initial_temperature_K", "initial_pressure_Pa", "initial_density_mol_m3", "volume_ratio",
    "delta_T_K", "delta_T_stderr_K", "final_temperature_K", "final_temperature_stderr_K",
    "final_density_mol_m3", "final_pressure_Pa", "final_pressure_stderr_Pa",
    "task_index", "seed", "n_particles", "stopped_by", "cpu_seconds", "warnings",
)

# Text of DESIGN.md section 6, said in every report.
CAUTIONS = (
    "Pressurised gas vessels and cryogenic temperatures can injure. Opening a charged vessel, "
    "and the cold a large expansion produces, need the precautions of your laboratory.",
    "These numbers are model estimates from a pair potential, with the statistical uncertainty "
    "stated; they are not a design basis for pressure equipment or cryogenic service.",
    "Defer to your local pressure-equipment codes and to licensed engineering practice for any "
    "vessel, valve or piping decision.",
)

PACKAGES = ("free-expansion", "numpy", "scipy", "numba", "h5py", "pymbar", "pint", "matplotlib")

# Points on each virial curve of the Delta T plot.
CURVE_POINTS = 36


# -- gathering the task files -------------------------------------------------------

def _failure_message(path):
    try:
        info = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        return f"failure note '{path.name}' unreadable ({exc})"
    if isinstance(info, dict) and "error" in info:
        return str(info["error"])
    return json.dumps(info)


def gather_tasks(run_dir):
    """Read the planned tasks and whatever results exist.

    Parameters
    ----------
    run_dir : RunDir

    Returns
    -------
    dict
        ``planned``: the task list; ``results``: {index: (task, result,
        series)} for finished tasks; ``failed``: list of {index, route,
        state_point_index, error}; ``missing``: list of {index, route,
        state_point_index, state} for tasks not finished ("pending" or
        "partial", the latter with a checkpoint to resume).
    """
    from mdsim.pipeline.taskfile import read_task_result
    planned = run_dir.read_tasks()
    results, failed, missing = {}, [], []
    for task in planned:
        k = int(task["index"])
        ident = {"index": k, "route": task.get("route"),
                 "state_point_index": _sp_index(task)}
        state = run_dir.task_state(k)
        if state == "done":
            try:
                results[k] = read_task_result(run_dir.task_file(k))
                continue
            except (OSError, KeyError, ValueError, StudyError) as exc:
                failed.append({**ident, "error": f"task file '{run_dir.task_file(k).name}' "
                               f"unreadable ({exc}); delete it and run again"})
                continue
        if state == "failed":
            failed.append({**ident, "error": _failure_message(run_dir.failure_file(k))})
        else:
            missing.append({**ident, "state": state})
    return {"planned": planned, "results": results, "failed": failed, "missing": missing}


def _sp_index(task):
    sp = task.get("state_point")
    if isinstance(sp, dict) and "index" in sp:
        return int(sp["index"])
    return None


# -- the virial model of the study ---------------------------------------------------

def virial_model(study):
    """(VirialGas, c_v_ig model) of a study, for the virial curves (built once per study)."""
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    return virial_gas(study), ideal_heat_capacity(study)


def _virial_delta_T(vg, cv, T_i, r, order, p_i=None, rho_i=None):
    """Virial Delta T as the state-point records compute it, NaN where the series fails.

    Like :func:`mdsim.pipeline.summary.virial_summary`, both truncations start from
    one initial density: the given one, or the converged B2 + B3 solution of
    the given pressure.
    """
    from analysis.expansion import virial_expansion
    from mdsim.study.statepoints import PRESSURE_TO_DENSITY_ORDER
    try:
        if rho_i is None:
            rho_i = float(vg.density_from_pressure(T_i, p_i, order=PRESSURE_TO_DENSITY_ORDER))
            vg.check_converged(T_i, rho_i)
        return virial_expansion(vg, cv, T_i, r, rho_i=rho_i, order=order).delta_T_K
    except (StudyError, ConvergenceError):
        return math.nan  # the series does not hold here: the curve ends


def _best_simulation(record):
    """The {value, stderr} of the first simulation route with a value, or None."""
    for route in SIMULATION_ROUTES:
        entry = record["delta_T_K"].get(route)
        if entry and entry.get("value") is not None:
            return dict(entry, route=route)
    return None


def _delta_T_panels(study, points, records, vg, cv):
    """Panels of the Delta T plot, one per (T_i, volume ratio)."""
    groups = {}
    for sp, rec in zip(points, records):
        groups.setdefault((sp.temperature_K, sp.volume_ratio), []).append((sp, rec))
    panels = []
    for (T_i, r), members in groups.items():
        by_pressure = members[0][0].pressure_Pa is not None
        xs = np.array([(sp.pressure_Pa / 1e5) if by_pressure else sp.density_mol_m3
                       for sp, _ in members])
        pts = {}
        for route in ROUTES:
            rows = [(x, rec["delta_T_K"][route]) for x, (_, rec) in zip(xs, members)
                    if rec["delta_T_K"].get(route) and rec["delta_T_K"][route].get("value")
                    is not None]
            if rows:
                pts[route] = (np.array([x for x, _ in rows]),
                              np.array([e["value"] for _, e in rows], float),
                              np.array([math.nan if e.get("stderr") is None else e["stderr"]
                                        for _, e in rows], float))
        x_g = np.linspace(0.0, 1.15 * float(xs.max()), CURVE_POINTS + 1)[1:]
        curves = {}
        for route, order in (("virial_b2", 2), ("virial_b2b3", 3)):
            y_g = []
            for x in x_g:
                kw = {"p_i": x * 1e5} if by_pressure else {"rho_i": x}
                y_g.append(_virial_delta_T(vg, cv, T_i, r, order, **kw))
            curves[route] = (x_g, np.array(y_g))
        residuals = {}
        for route in VIRIAL_ROUTES:
            rows = []
            for x, (_, rec) in zip(xs, members):
                sim = _best_simulation(rec)
                vir = rec["delta_T_K"].get(route) or {}
                if sim is not None and vir.get("value") is not None:
                    rows.append((x, vir["value"] - sim["value"],
                                 math.nan if sim.get("stderr") is None else sim["stderr"]))
            if rows:
                residuals[route] = tuple(np.array(c, float) for c in zip(*rows))
        panels.append({"residuals": residuals,
            "title": f"{study.name}: T_i = {T_i:g} K, V_f/V_i = {r:g}",
            "x_label": "initial pressure (bar)" if by_pressure else "initial density (mol/m^3)",
            "points": pts, "curves": curves})
    return panels


# -- per-task plots ---------------------------------------------------------------------

def _arr(series, key):
    return np.atleast_1d(np.asarray(series[key], dtype=float))


def _energy_plot_data(study, sp, result, series, vg, cv):
    need = ("newton_T_K", "newton_u_res_J_mol", "newton_u_res_stderr_J_mol", "initial_T_K",
            "initial_u_res_J_mol", "initial_u_res_stderr_J_mol")
    absent = [k for k in need if k not in series]
    if absent:
        return None, f"series {', '.join(absent)} absent"
    T_i = sp.temperature_K
    u_i = float(np.mean(_arr(series, "initial_u_res_J_mol")))
    T_n = _arr(series, "newton_T_K")
    final = result.get("final_temperature_K") or {}
    T_f, s_f = final.get("value"), final.get("stderr")
    known = [T_i, *T_n.tolist()] + ([T_f] if T_f is not None else [])
    lo, hi = min(known), max(known)
    pad = max(0.15 * (hi - lo), 0.02 * T_i, 1.0)
    T_g = np.linspace(max(lo - pad, 0.05 * T_i), hi + pad, 120)
    rho_i = result.get("initial_density_mol_m3")
    rho_f = result.get("final_density_mol_m3")
    data = {
        "title": f"energy route, state point {sp.index}: T_i = {T_i:g} K, "
                 f"V_f/V_i = {sp.volume_ratio:g}",
        "initial_T_K": _arr(series, "initial_T_K"),
        "initial_u_res_J_mol": _arr(series, "initial_u_res_J_mol"),
        "initial_u_res_stderr_J_mol": _arr(series, "initial_u_res_stderr_J_mol"),
        "newton_T_K": T_n,
        "newton_u_res_J_mol": _arr(series, "newton_u_res_J_mol"),
        "newton_u_res_stderr_J_mol": _arr(series, "newton_u_res_stderr_J_mol"),
        "T_g_K": T_g,
        # U_ig(T) + u_res(T, rho_f) = U_ig(T_i) + u_res_i  =>  the u_res rho_f must have at T
        "u_res_required_g_J_mol": u_i - (cv.u(T_g) - cv.u(T_i)),
        "final_T_K": T_f, "final_T_stderr_K": s_f,
        "rho_i_mol_m3": rho_i if rho_i is not None else math.nan,
        "rho_f_mol_m3": rho_f if rho_f is not None else math.nan,
    }
    for key, rho in (("u_res_initial_g_J_mol", rho_i), ("u_res_final_g_J_mol", rho_f)):
        if rho is not None:
            data[key] = np.asarray(vg.u_res_J_mol(T_g, rho, order=3), dtype=float)
    return data, None


def _direct_plot_data(sp, result, series):
    need = ("time_s", "temperature_K_t", "profile_z_fraction", "density_profile_tz")
    absent = [k for k in need if k not in series]
    if absent:
        return None, f"series {', '.join(absent)} absent"
    rho_tz = np.atleast_2d(np.asarray(series["density_profile_tz"], dtype=float))
    # the profiles are snapshots with their own times (``profile_time_s``) or share time_s
    profile_t = series.get("profile_time_s", series["time_s"])
    profile_t = np.atleast_1d(np.asarray(profile_t, dtype=float))
    if profile_t.size != rho_tz.shape[0]:
        return None, (f"density_profile_tz has {rho_tz.shape[0]} rows but its time axis "
                      f"{profile_t.size} points")
    final = result.get("final_temperature_K") or {}
    return {
        "title": f"direct route, state point {sp.index}: the box enlarged "
                 f"{sp.volume_ratio:g}-fold along z at t = 0",
        "time_s": _arr(series, "time_s"),
        "temperature_K_t": _arr(series, "temperature_K_t"),
        "profile_z_fraction": _arr(series, "profile_z_fraction"),
        "density_profile_tz": rho_tz,
        "profile_time_s": profile_t,
        "final_T_K": final.get("value"), "final_T_stderr_K": final.get("stderr"),
        "T_i_K": sp.temperature_K,
    }, None


def _task_plots(study, points_by_index, gathered, vg, cv, plots_dir):
    """Per-task figures; returns ({task index: [paths]}, [notes on plots not drawn])."""
    from mdsim.pipeline import plots
    made, notes = {}, []
    for k, (task, result, series) in sorted(gathered["results"].items()):
        route = task.get("route")
        sp = points_by_index.get(_sp_index(task))
        if sp is None:
            notes.append(f"task {k}: its state point {_sp_index(task)} is not in the study; "
                         "no plot")
            continue
        stem = plots_dir / f"{route}_sp{sp.index:03d}_task{k:04d}"
        if route == "energy":
            data, why = _energy_plot_data(study, sp, result, series, vg, cv)
            if data is not None:
                made[k] = plots.plot_energy_route(data, stem)
        elif route == "direct":
            data, why = _direct_plot_data(sp, result, series)
            if data is not None:
                made[k] = plots.plot_direct(data, stem)
        else:
            one_d = {name: np.asarray(v, float) for name, v in series.items()
                     if np.ndim(v) == 1 and np.size(v) > 1}
            why = None if one_d else "no time series stored"
            x = one_d.pop("sample", None)  # an index series is the abscissa, not a panel
            why = None if one_d else "no time series stored"
            if one_d:
                final = result.get("final_temperature_K") or {}
                made[k] = plots.plot_series(one_d, f"{route} route, state point {sp.index}: "
                                            "convergence", stem, x=x,
                                            final_T_K=final.get("value"))
        if k not in made:
            notes.append(f"task {k} ({route}, state point {sp.index}): no plot ({why})")
    return made, notes


def _inversion(vg, points, records):
    """The virial Joule inversion (dict of JouleInversion) and its plot data."""
    from analysis.inversion import joule_inversion
    rho_max = max([float(r["initial"]["density_mol_m3"]) for r in records
                   if r["initial"].get("density_mol_m3") is not None] or [0.0])
    densities = np.linspace(0.0, max(2.0 * rho_max, 1.0), 9)[1:]
    inv = joule_inversion(vg, densities, order=3).to_dict()
    states = []
    for rec in records:
        rho_i = rec["initial"].get("density_mol_m3")
        T_i = rec["initial"].get("temperature_K")
        if rho_i is None or T_i is None:
            continue
        T_f = rec["final"].get("temperature_K")
        rho_f = rec["final"].get("density_mol_m3")
        states.append((rho_i, T_i, rho_f if rho_f is not None else math.nan,
                       T_f if T_f is not None else math.nan))
    return inv, states


# -- tables --------------------------------------------------------------------------------

def _num(value):
    return "" if value is None or (isinstance(value, float) and not math.isfinite(value)) \
        else repr(float(value))


def _value_stderr(entry):
    if not isinstance(entry, dict):
        return None, None
    return entry.get("value"), entry.get("stderr")


def csv_rows(points, records, gathered):
    """Rows of ``results.csv`` (dicts keyed by :data:`CSV_COLUMNS`)."""
    tasks_by_sp = {}
    for task in gathered["planned"]:
        tasks_by_sp.setdefault(_sp_index(task), []).append(task)
    failed = {f["index"]: f for f in gathered["failed"]}
    missing = {m["index"]: m for m in gathered["missing"]}
    rows = []
    for sp, rec in zip(points, records):
        ini = rec["initial"]
        base = {"state_point_index": sp.index,
                "initial_temperature_K": _num(ini.get("temperature_K")),
                "initial_pressure_Pa": _num(ini.get("pressure_Pa")),
                "initial_density_mol_m3": _num(ini.get("density_mol_m3")),
                "volume_ratio": _num(sp.volume_ratio)}
        for route in VIRIAL_ROUTES:
            value, _ = _value_stderr(rec["delta_T_K"].get(route))
            row = dict.fromkeys(CSV_COLUMNS, "")
            row.update(base, route=route, status="done" if value is not None else "unavailable")
            if value is not None:
                T_f = sp.temperature_K + value
                rho = ini.get("density_mol_m3")
                row.update(delta_T_K=_num(value), final_temperature_K=_num(T_f),
                           final_density_mol_m3=_num(None if rho is None
                                                     else rho / sp.volume_ratio))
            rows.append(row)
        for task in sorted(tasks_by_sp.get(sp.index, []), key=lambda t: int(t["index"])):
            k = int(task["index"])
            row = dict.fromkeys(CSV_COLUMNS, "")
            row.update(base, route=task.get("route"), task_index=k, seed=_seed_text(task))
            if k in gathered["results"]:
                _, res, _ = gathered["results"][k]
                dT, dTs = _value_stderr(res.get("delta_T_K"))
                Tf, Tfs = _value_stderr(res.get("final_temperature_K"))
                pf, pfs = _value_stderr(res.get("final_pressure_Pa"))
                row.update(status="done", delta_T_K=_num(dT), delta_T_stderr_K=_num(dTs),
                           final_temperature_K=_num(Tf), final_temperature_stderr_K=_num(Tfs),
                           final_density_mol_m3=_num(res.get("final_density_mol_m3")),
                           final_pressure_Pa=_num(pf), final_pressure_stderr_Pa=_num(pfs),
                           n_particles=res.get("n_particles", ""),
                           stopped_by=res.get("stopped_by", ""),
                           cpu_seconds=_num(res.get("cpu_seconds")),
                           warnings=" | ".join(res.get("warnings") or []))
            elif k in failed:
                row.update(status="failed", warnings=failed[k]["error"])
            else:
                state = missing.get(k, {}).get("state", "pending")
                row.update(status="missing (interrupted, checkpoint kept)" if state == "partial"
                           else "missing (not run)")
            rows.append(row)
    return rows


def _seed_text(task):
    seed = task.get("seed")
    return json.dumps(seed) if isinstance(seed, (list, tuple)) else ("" if seed is None
                                                                     else str(seed))


def _write_csv(path, rows):
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    atomic_write_text(path, buf.getvalue())




def _versions():
    from importlib.metadata import PackageNotFoundError, version
    out = {"python": platform.python_version()}
    for name in PACKAGES:
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = "not installed"
    return out


# -- report.md -------------------------------------------------------------------------------

def _fmt(value, stderr=None, digits=4):
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if stderr is None or not math.isfinite(stderr):
        return f"{value:.{digits}g}"
    return f"{value:.{digits}g} ± {stderr:.2g}"


def _potential_lines(study):
    gas = study.gas
    pairs = gas.pairs_K_angstrom
    lines = []
    for a, name in enumerate(gas.species_names):
        desc = pairs.pots[a][a].describe()
        extras = ", ".join(f"{k} = {v:.6g}" if isinstance(v, float) else f"{k} = {v}"
                           for k, v in desc.items() if k not in ("form", "epsilon", "sigma"))
        sig = desc.get("sigma")
        lines.append(f"- {name}: {desc['form']}, epsilon/k = {desc['epsilon']:.6g} K"
                     + (f", sigma = {sig:.6g} angstrom" if sig is not None else "")
                     + (f", {extras}" if extras else "")
                     + f", molar mass {gas.molar_masses_kg_mol[a] * 1e3:.6g} g/mol"
                     + (f", mole fraction {gas.fractions[a]:.6g}" if gas.n_species > 1 else ""))
    lines.append(f"- cut-off {pairs.cutoff:g} sigma, analytic long-range tail corrections "
                 "beyond it")
    raw = study.raw.get("potential", {})
    source = raw.get("source") if isinstance(raw, dict) else None
    lines.append(f"- provenance: {source}" if source else
                 "- provenance: not stated in the study file (add it to the study's description)")
    return lines


def _with_unit(value, unit):
    if value is None:
        return "default"
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f"{value:g} {unit}"
    return str(value)


def _settings_lines(study, gathered):
    sim = study.simulation or {}
    routes = sorted({t.get("route") for t in gathered["planned"]} - {None})
    seeds = sorted({_seed_text(t) for t in gathered["planned"]})
    particles = sorted({str(res.get("n_particles")) for _, res, _ in
                        gathered["results"].values() if res.get("n_particles") is not None})
    cpu = sum(float(res.get("cpu_seconds") or 0.0) for _, res, _ in gathered["results"].values())
    stopped = {}
    for _, res, _ in gathered["results"].values():
        stopped[res.get("stopped_by", "?")] = stopped.get(res.get("stopped_by", "?"), 0) + 1
    return [
        f"- routes: virial B2 and B2+B3 (always), simulation: "
        f"{', '.join(routes) if routes else 'none'}",
        f"- target standard error of Delta T: {_with_unit(sim.get('target_stderr'), 'K')}; "
        f"CPU budget per task: {_with_unit(sim.get('max_cpu_time'), 's')}",
        f"- particles: {', '.join(particles) if particles else 'no finished simulation task'}",
        f"- study seed: {sim.get('seed', 'default')}; task seeds: {', '.join(seeds) or '-'}",
        f"- simulation tasks: {len(gathered['planned'])} planned, {len(gathered['results'])} done "
        f"(stopped by: " + (", ".join(f"{k} {v}" for k, v in sorted(stopped.items())) or "-")
        + f"), {len(gathered['failed'])} failed, {len(gathered['missing'])} not finished; "
        f"CPU time of the finished tasks {cpu:.1f} s",
    ]


def _results_table(points, records):
    head = ["state point", "T_i (K)", "p_i (bar)", "rho_i (mol/m^3)", "V_f/V_i"]
    head += [f"ΔT {ROUTE_NAMES[r]} (K)" for r in ROUTES]
    head += ["T_f (K)", "T_f from", "Δs (J/(mol K))"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for sp, rec in zip(points, records):
        ini, fin = rec["initial"], rec["final"]
        p = ini.get("pressure_Pa")
        cells = [str(sp.index), _fmt(ini.get("temperature_K"), None, 6),
                 _fmt(None if p is None else p / 1e5), _fmt(ini.get("density_mol_m3")),
                 f"{sp.volume_ratio:g}"]
        for route in ROUTES:
            v, s = _value_stderr(rec["delta_T_K"].get(route))
            cells.append(_fmt(v, s))
        cells += [_fmt(fin.get("temperature_K"), None, 6), str(fin.get("source") or "-"),
                  _fmt(rec.get("entropy_generated_J_molK"))]
        lines.append("| " + " | ".join(cells) + " |")
    return lines


def _assumptions(study, cv):
    gas = study.gas
    lines = [
        f"- Ideal-gas heat capacity: {cv.describe()}. A simulation of spherical particles "
        "carries only translation (3/2 R); rotations and vibrations enter only through this "
        "c_v_ig, so a wrong c_v_ig gives a wrong Delta T (3/2 R for a diatomic gas overstates "
        "its cooling by about 2/3).",
        "- Pair-additive, spherical potential: three-body forces are neglected; B3 is the "
        "additive third virial coefficient of the same pair potential.",
        "- Quantum effects: " + ("the first-order Wigner-Kirkwood correction is added to B2 "
                                 "(virial routes); the simulations are classical."
                                 if gas.quantum_correction else
                                 "classical statistics throughout (no quantum correction asked "
                                 "for)."),
        "- Long-range part: the potential is cut at the cut-off and the analytic tail correction "
        "of the full potential added to energies and pressures; the direct route (NVE MD of "
        "the truncated and shifted potential) is corrected to the full potential by the change "
        "of <U_full - U_model> between the end states over the heat capacity.",
        "- The virial routes truncate the series after B2 and after B3; where the two differ "
        "noticeably the series is running out and only a simulation route can be trusted.",
        "- Error bars are one standard error from the statistical inefficiency of each sampled "
        "series (equilibration detected and discarded automatically); the virial routes have "
        "no statistical error but a truncation error that is not estimated.",
        "- The final state is the equilibrium state at the same internal energy in the larger "
        "volume (no heat, no work, no wall effects).",
    ]
    return lines


def _comparison_lines(points, records):
    """'Virial estimates against simulation': where the cheap estimates depart."""
    L = ["## Virial estimates against simulation", ""]
    rows = []
    for sp, rec in zip(points, records):
        sim = _best_simulation(rec)
        if sim is None:
            continue
        parts = []
        for route in VIRIAL_ROUTES:
            vir = rec["delta_T_K"].get(route)
            if not vir or vir.get("value") is None:
                parts.append(f"{ROUTE_NAMES[route]} not available")
                continue
            d = vir["value"] - sim["value"]
            z = abs(d) / sim["stderr"] if sim.get("stderr") else math.inf
            parts.append(f"{ROUTE_NAMES[route]} {d:+.3g} K ({z:.1f} standard errors"
                         + (", departs" if z > 3.0 else "") + ")")
        rows.append(f"- state point {sp.index} ({sp.label()}): against the {sim['route']} route "
                    f"({_fmt(sim['value'], sim.get('stderr'))} K): " + "; ".join(parts))
    if not rows:
        return L + ["No simulation route finished: the virial estimates stand unchecked.", ""]
    return L + ["Virial Delta T minus the simulation's; more than 3 standard errors apart is "
                "called a departure (the simulation's error bar only: the virial routes have "
                "no statistical error).", ""] + rows + [""]


def write_report_md(path, study, points, records, gathered, plot_files, plot_notes, inversion,
                    cv, run_dir, study_warnings=()):
    """Write report.md; returns its text."""
    rel = lambda p: os.path.relpath(p, run_dir)  # noqa: E731
    L = [f"# Free-expansion report: {study.name}", ""]
    if study.description:
        L += [study.description, ""]
    L += [f"Built {time.strftime('%Y-%m-%d %H:%M:%S %Z')} from the files in `{run_dir}` "
          f"(rebuild with `mdsim report {run_dir}`).", ""]
    L += ["## Cautions", ""] + [f"- {c}" for c in CAUTIONS] + [""]
    L += ["## What was run", "", f"- study: `{study.name}` (resolved copy: `study.toml`)",
          f"- gas: {study.gas.name}" + (f" (species {', '.join(study.gas.species_names)})"
                                        if study.gas.n_species > 1 else ""), ""]
    L += ["Potential:", ""] + _potential_lines(study) + [""]
    L += ["Settings:", ""] + _settings_lines(study, gathered) + [""]
    versions = _versions()
    L += ["Versions: " + ", ".join(f"{k} {v}" for k, v in versions.items()), ""]
    L += ["## Results", "",
          "Delta T = T_f - T_i (negative: the gas cools), one standard error after ±. "
          "T_f is from the best route available (energy, then microcanonical, then direct, "
          "then virial B2+B3). Δs is the entropy generated per mole.", ""]
    L += _results_table(points, records) + [""]
    L += ["Every state point and route, with the final states and the task settings, is in "
          "`results.csv`; the same numbers as JSON in `results.json`.", ""]
    L += _comparison_lines(points, records)
    unfinished = gathered["failed"] + gathered["missing"]
    L += ["## Missing and failed tasks", ""]
    if not unfinished:
        L += ["None: every planned task finished.", ""]
    else:
        L += ["These tasks have no result; their routes are absent from the table above. "
              "Run `mdsim run` on the same study and directory again to run or resume them "
              "(finished tasks are kept).", ""]
        for f in gathered["failed"]:
            L.append(f"- task {f['index']} ({f['route']}, state point {f['state_point_index']}): "
                     f"FAILED: {' '.join(str(f['error']).split())}")
        for m in gathered["missing"]:
            what = ("interrupted (a checkpoint is kept and will be resumed)"
                    if m["state"] == "partial" else "not run")
            L.append(f"- task {m['index']} ({m['route']}, state point "
                     f"{m['state_point_index']}): {what}")
        L.append("")
    L += ["## Plots", ""]
    for title, paths in plot_files:
        png = [p for p in paths if str(p).endswith(".png")]
        pdf = [p for p in paths if str(p).endswith(".pdf")]
        if png:
            L += [f"### {title}", "", f"![{title}]({rel(png[0])})", ""]
            if pdf:
                L += [f"(PDF: `{rel(pdf[0])}`)", ""]
    for note in plot_notes:
        L.append(f"- {note}")
    if plot_notes:
        L.append("")
    if inversion is not None:
        L += ["## Joule inversion (virial route, B2 + B3)", "",
              f"- zero-density Joule (free-expansion) inversion temperature, the maximum of "
              f"B2(T): {inversion['joule_inversion_zero_density_K']:.5g} K; a free expansion "
              "from a dilute state cools the gas below it and warms it above it.",
              f"- zero-pressure Joule-Thomson (throttling) inversion temperature: "
              f"{inversion['joule_thomson_inversion_zero_pressure_K']:.5g} K. This is a "
              "different process (flow through a valve at constant enthalpy), listed because "
              "the two are often confused.", ""]
        L += [f"- {n}" for n in inversion.get("notes", [])[1:]]
        L.append("")
    L += ["## Warnings", ""]
    warn = []
    for sp, rec in zip(points, records):
        warn += [f"- state point {sp.index}: {' '.join(str(w).split())}"
                 for w in rec.get("warnings", [])]
    warn = [f"- study: {' '.join(str(w).split())}" for w in study_warnings] + warn
    L += (warn or ["None."]) + [""]
    notes = [f"- task {k} ({task.get('route')}): {' '.join(str(n).split())}"
             for k, (task, res, _) in sorted(gathered["results"].items())
             for n in res.get("notes", [])]
    if notes:
        L += ["## Notes from the simulation tasks", ""] + notes + [""]
    L += ["## Assumptions", ""] + _assumptions(study, cv) + [""]
    L += ["## Files", "",
          "- `study.toml`: the study as run, every default filled in",
          "- `tasks.json`: the planned tasks; `tasks/NNNN.h5`: one file per finished task "
          "(its settings, result and series)",
          "- `results.csv`, `results.json`, `plots/`, this `report.md`, `log.txt`", ""]
    text = "\n".join(L)
    atomic_write_text(path, text)
    return text


# -- the entry point ---------------------------------------------------------------------------

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
        ``files`` (paths written, relative to the run directory); with
        plots, also ``inversion`` (the virial Joule inversion).

    Raises
    ------
    StudyError
        When ``run_dir`` is not a run directory or its study does not
        validate.  Missing or failed tasks never raise: they are listed.
    """
    from mdsim.study.reader import read_study
    from mdsim.pipeline.summary import run_summary, state_point_record
    rd = RunDir(run_dir)
    study_file = rd.path / "study.toml"
    if not study_file.is_file():
        raise StudyError(f"'{rd.path}' is not a run directory (no study.toml); "
                         "make one with 'mdsim run STUDY --out DIR'")
    study = read_study(study_file)
    gathered = gather_tasks(rd)
    points = study.state_points()
    by_sp = {}
    for k, (task, result, _) in gathered["results"].items():
        by_sp.setdefault(_sp_index(task), {})[task.get("route")] = result
    records = [state_point_record(study, sp, by_sp.get(sp.index, {})) for sp in points]
    summary = run_summary(study, records)
    summary["tasks"] = {"done": sorted(gathered["results"]), "failed": gathered["failed"],
                        "missing": gathered["missing"]}
    vg, cv = virial_model(study)
    written = []
    plot_files, plot_notes, inversion = [], [], None
    if plots:
        from mdsim.pipeline import plots as _plots
        rd.plots_dir.mkdir(parents=True, exist_ok=True)
        panels = _delta_T_panels(study, points, records, vg, cv)
        plot_files.append(("Delta T against the initial state",
                           _plots.plot_delta_T(panels, rd.plots_dir / "delta_T")))
        points_by_index = {sp.index: sp for sp in points}
        made, plot_notes = _task_plots(study, points_by_index, gathered, vg, cv, rd.plots_dir)
        for k, paths in sorted(made.items()):
            task = gathered["results"][k][0]
            plot_files.append((f"Task {k}: {task.get('route')} route, state point "
                               f"{_sp_index(task)}", paths))
        try:
            inversion, states = _inversion(vg, points, records)
        except (StudyError, ConvergenceError) as exc:
            plot_notes.append(f"Joule inversion curve not computed: {exc}")
        else:
            summary["inversion"] = inversion
            plot_files.append(("Joule inversion curve", _plots.plot_inversion(
                {**inversion, "states": states,
                 "title": f"{study.name}: Joule inversion curve (virial B2 + B3) and the run's "
                          "expansions"}, rd.plots_dir / "inversion")))
        for _, paths in plot_files:
            written += paths
    elif rd.plots_dir.is_dir():
        # not redrawn this time: keep pointing at the figures an earlier build made
        for png in sorted(rd.plots_dir.glob("*.png")):
            pdf = png.with_suffix(".pdf")
            plot_files.append((f"{png.stem} (from an earlier build; not redrawn)",
                               [png] + ([pdf] if pdf.is_file() else [])))
        if plot_files:
            plot_notes.append("plots were not redrawn in this rebuild (--no-plots); the figures "
                              "shown are those of an earlier build and may predate new results")
    rows = csv_rows(points, records, gathered)
    _write_csv(rd.path / "results.csv", rows)
    written.append(rd.path / "results.csv")
    written.append(rd.path / "report.md")
    written.append(rd.path / "results.json")
    summary["files"] = sorted(os.path.relpath(p, rd.path) for p in written)
    write_report_md(rd.path / "report.md", study, points, records, gathered, plot_files,
                    plot_notes, inversion, cv, rd.path, summary.get("warnings", []))
    summary = _plain(summary)
    atomic_write_text(rd.path / "results.json", json.dumps(summary, indent=2) + "\n")
    log.info("report written to %s (%d state points, %d of %d tasks done)", rd.path,
             len(points), len(gathered["results"]), len(gathered["planned"]))
    return summary


def _plain(value):
    """JSON-ready copy: numpy scalars and arrays to Python, non-finite floats to null."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return _plain(value.tolist())
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, Path):
        return str(value)
    return value
