"""The run's results as files: ``results.csv`` and ``results.json``.

``results.csv``
    One row per state point and route, columns with their units in their
    names (:data:`CSV_COLUMNS`); a route that did not finish has a row with
    its ``status`` and empty numbers.  ``initial_density_mol_m3`` is the
    route's own (a simulation route's found from a given pressure, the
    virial routes' from the B2 + B3 series), ``initial_density_from`` says
    how, and ``initial_pressure_sampled_*`` is the pressure a simulation
    route sampled at its initial state.
    ``entropy_generated_J_molK`` is each route's own Delta s (empty where it is
    not available; the reason is in ``results.json``).
``results.json``
    :func:`mdsim.pipeline.summary.run_summary` of the state-point records
    (the shape ``mdsim run --json`` prints), plus ``tasks`` and ``files``
    (:func:`mdsim.pipeline.report.build_report`).
"""
import csv
import io
import json
import math

from analysis.results import to_plain
from mdsim.files import atomic_write_text
from mdsim.pipeline.collect import task_state_point
from mdsim.pipeline.record_values import value_stderr
from mdsim.study.routes import VIRIAL_ROUTES

__all__ = ["CSV_COLUMNS", "csv_rows", "write_csv", "write_results_json", "seed_text"]

CSV_COLUMNS = (
    "state_point_index", "route", "status",
    "initial_temperature_K", "initial_pressure_Pa", "initial_density_mol_m3", "volume_ratio",
    "initial_density_from", "initial_pressure_sampled_Pa", "initial_pressure_sampled_stderr_Pa",
    "delta_T_K", "delta_T_stderr_K", "final_temperature_K", "final_temperature_stderr_K",
    "final_density_mol_m3", "final_pressure_Pa", "final_pressure_stderr_Pa",
    "task_index", "seed", "n_particles", "stopped_by", "cpu_seconds", "warnings",
    "entropy_generated_J_molK", "entropy_generated_stderr_J_molK",
)


def _num(value):
    """A number as CSV text (full precision), empty when absent or not finite."""
    return "" if value is None or (isinstance(value, float) and not math.isfinite(value)) \
        else repr(float(value))


def seed_text(task):
    """A task's seed as text: JSON for a list of seeds, empty when it has none."""
    seed = task.get("seed")
    return json.dumps(seed) if isinstance(seed, (list, tuple)) else ("" if seed is None
                                                                     else str(seed))


def _virial_rows(sp, rec, base):
    """The rows of the virial routes of one state point."""
    rows = []
    ini = rec["initial"]
    for route in VIRIAL_ROUTES:
        value, _ = value_stderr(rec["delta_T_K"].get(route))
        row = dict.fromkeys(CSV_COLUMNS, "")
        row.update(base, route=route, status="done" if value is not None else "unavailable",
                   initial_density_from=ini.get("density_from") or "")
        ds, _ = value_stderr((rec.get("delta_s_J_molK") or {}).get(route))
        row.update(entropy_generated_J_molK=_num(ds))
        if value is not None:
            T_f = sp.temperature_K + value
            rho = ini.get("density_mol_m3")
            row.update(delta_T_K=_num(value), final_temperature_K=_num(T_f),
                       final_density_mol_m3=_num(None if rho is None
                                                 else rho / sp.volume_ratio))
        rows.append(row)
    return rows


#: How a planned task without a result is described, by its state (RunDir.task_state).
MISSING_STATUS = {
    "partial": "missing (interrupted, checkpoint kept)",
    "damaged": "missing (task file damaged; 'mdsim run' moves it aside and redoes the task)",
    "pending": "missing (not run)",
}


def _task_row(task, base, gathered, failed, missing):
    """The row of one planned simulation task: its result, its failure or what is missing."""
    k = int(task["index"])
    row = dict.fromkeys(CSV_COLUMNS, "")
    row.update(base, route=task.get("route"), task_index=k, seed=seed_text(task))
    if k in gathered["results"]:
        _, res, _ = gathered["results"][k]
        dT, dTs = value_stderr(res.get("delta_T_K"))
        Tf, Tfs = value_stderr(res.get("final_temperature_K"))
        pf, pfs = value_stderr(res.get("final_pressure_Pa"))
        pi, pis = value_stderr(res.get("initial_pressure_Pa"))
        if res.get("initial_density_mol_m3") is not None:
            row["initial_density_mol_m3"] = _num(res["initial_density_mol_m3"])
        row.update(initial_density_from=res.get("initial_density_from") or "",
                   initial_pressure_sampled_Pa=_num(pi),
                   initial_pressure_sampled_stderr_Pa=_num(pis))
        ds, dss = value_stderr(res.get("entropy_generated_J_molK"))
        row.update(status="done", entropy_generated_J_molK=_num(ds),
                   entropy_generated_stderr_J_molK=_num(dss),
                   delta_T_K=_num(dT), delta_T_stderr_K=_num(dTs),
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
        row.update(status=MISSING_STATUS.get(state, "missing (not run)"))
    return row


def csv_rows(points, records, gathered):
    """Rows of ``results.csv`` (dicts keyed by :data:`CSV_COLUMNS`).

    Per state point: the virial routes, then every planned task in index order.
    """
    tasks_by_sp = {}
    for task in gathered["planned"]:
        tasks_by_sp.setdefault(task_state_point(task), []).append(task)
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
        rows += _virial_rows(sp, rec, base)
        for task in sorted(tasks_by_sp.get(sp.index, []), key=lambda t: int(t["index"])):
            rows.append(_task_row(task, base, gathered, failed, missing))
    return rows


def write_csv(path, rows):
    """Write ``results.csv`` (atomically)."""
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    atomic_write_text(path, buf.getvalue())


def write_results_json(path, summary):
    """Write ``results.json`` (atomically); returns the JSON-ready summary written."""
    summary = to_plain(summary)
    atomic_write_text(path, json.dumps(summary, indent=2) + "\n")
    return summary
