"""Assembling a table file from the complete point files of a build.

:func:`assemble_table` reads every grid point (its residual energy, Z and
c_v,res with standard errors), adds the exact rho* = 0 column and the fine
B2, B3 nodes of the reduced potential, measures the interpolation error by
holding grid nodes out, and writes one HDF5 file with the provenance
(atomically: a ``.part`` file renamed into place).
"""
import datetime
import json
import os
from pathlib import Path

import numpy as np

from mdsim.cstable.coexistence import grid_pairs, grid_points
from mdsim.cstable.plan import (METHOD, is_point_complete, point_path, read_plan,
                                reduced_potential)
from mdsim.cstable.series import VirialSeries, virial_nodes
from mdsim.cstable.table import FORMAT_NAME, FORMAT_VERSION, QUANTITIES, CorrespondingStatesTable
from mdsim.errors import StudyError

__all__ = ["assemble_table", "read_point"]


def read_point(points_dir, index, T):
    """The reduced averages of one complete grid point at reduced temperature ``T``.

    Returns
    -------
    dict
        ``u_res``, ``Z``, ``cv_res`` as (value, stderr); ``g`` (the
        statistical inefficiency of u_res) and ``n_particles``.
    """
    from mdsim.sampling.estimates import summarise
    from mdsim.sampling.store import read_attrs, read_samples
    path = point_path(points_dir, index)
    samples = read_samples(path)
    attrs = read_attrs(path)
    s = summarise(samples, METHOD, attrs["n_particles"], attrs["volume_red"], T)
    rho = attrs["n_particles"] / attrs["volume_red"]
    u, p, cv = s["u_full"], s["pressure"], s["c_v_res"]
    return {"u_res": (u.value, u.stderr), "Z": (p.value / (rho * T), p.stderr / (rho * T)),
            "cv_res": (cv.value, cv.stderr), "g": u.g, "n_particles": int(attrs["n_particles"])}


def _gather(points_dir, plan, T_t, rho_d, vir_nodes):
    """Grid arrays, shape=(n_t, n_d): values and errors per quantity, inefficiency, N."""
    series = VirialSeries(vir_nodes)
    shape = (len(T_t), len(rho_d))
    data = {q: np.zeros(shape) for q in QUANTITIES}
    err = {q: np.zeros(shape) for q in QUANTITIES}
    g_td = np.full(shape, np.nan)
    n_td = np.zeros(shape, dtype=np.int64)
    for i, T in enumerate(T_t):
        for q in QUANTITIES:
            data[q][i, 0] = series(q, T, 0.0)
    for pt in plan["points"]:
        i, j = pt["i_t"], pt["i_d"]
        r = read_point(points_dir, pt["index"], pt["temperature_red"])
        for q in QUANTITIES:
            data[q][i, j], err[q][i, j] = r[q]
        g_td[i, j] = r["g"]
        n_td[i, j] = r["n_particles"]
    return data, err, g_td, n_td


def assemble_table(points_dir, out_path):
    """Gather the complete point files of a build into the table file (atomic write).

    A plan with ``coexistence_temperatures`` adds its Gibbs-ensemble points
    (:func:`mdsim.cstable.coexistence.grid_points`, read from the build's
    cache) as the file's coexistence grid.

    Parameters
    ----------
    points_dir : str or Path
        The build's directory (``plan.json`` and one run file per point).
    out_path : str or Path
        The table file to write.

    Returns
    -------
    Path
        ``out_path``.
    """
    points_dir = Path(points_dir)
    plan = read_plan(points_dir)
    T_t = np.asarray(plan["temperatures"], dtype=float)
    rho_d = np.concatenate([[0.0], np.asarray(plan["densities"], dtype=float)])
    missing = [p["index"] for p in plan["points"] if not is_point_complete(points_dir, p["index"])]
    if missing:
        raise StudyError(f"table build in '{points_dir}': {len(missing)} points are not complete "
                         f"(first: {missing[0]}); run 'mdsim table build' again to finish them")
    vir_nodes = virial_nodes(reduced_potential(plan), T_t[0], T_t[-1])
    data, err, g_td, n_td = _gather(points_dir, plan, T_t, rho_d, vir_nodes)
    table = CorrespondingStatesTable(T_t, rho_d, data, err, vir_nodes, plan["form"],
                                     plan["shape"], plan["cutoff"], plan["virial_below"],
                                     plan["simulation_above"], {})
    holdout = table.hold_out()
    out_path = Path(out_path)
    tmp = out_path.with_name(out_path.name + ".part")
    coexistence = grid_points(points_dir, plan)  # read from the build's cache
    _write_file(tmp, plan, holdout, T_t, rho_d, data, err, g_td, n_td, vir_nodes)
    if coexistence:
        _write_grid(tmp, coexistence, grid_pairs(plan))
    os.replace(tmp, out_path)
    return out_path


def _provenance(plan, holdout):
    """The table file's attributes: format, shape, sampling, versions, interpolation error."""
    from mdsim.sampling.store import package_versions
    return {
        "format": FORMAT_NAME, "format_version": FORMAT_VERSION,
        "form": plan["form"], "shape": json.dumps(plan["shape"]),
        "cutoff_sigma": float(plan["cutoff"]), "tail_corrections": "analytic, beyond the cut-off",
        "method": METHOD, "particles_requested": int(plan["particles"]),
        "equilibration_sweeps": int(plan["equilibration"]),
        "samples": int(plan["samples"]), "seed": int(plan["seed"]),
        "virial_below": float(plan["virial_below"]),
        "simulation_above": float(plan["simulation_above"]),
        "study_name": plan["study_name"], "study_file": plan["study_file"],
        "versions": json.dumps(package_versions()),
        "created": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
        "interpolation": "u = u_vir(B2+B3) + w(rho) * tensor spline (ln T*, rho*) of the "
                         "simulated departures; degree min(3, nodes - 1) per axis",
        "units": "reduced: T* = kT/eps, rho* = rho sigma^3, u_res per particle / eps, "
                 "cv_res per particle / k, Z = p/(rho k T)",
        "interpolation_error": json.dumps(holdout["summary"]),
    }


def _write_file(path, plan, holdout, T_t, rho_d, data, err, g_td, n_td, vir_nodes):
    import h5py
    with h5py.File(path, "w") as f:
        f.attrs.update(_provenance(plan, holdout))
        f["temperature_red"] = T_t
        f["density_red"] = rho_d
        for q in QUANTITIES:
            f[q] = data[q]
            f[f"{q}_stderr"] = err[q]
        f["u_res_inefficiency"] = g_td
        f["particles"] = n_td
        v = f.create_group("virial")
        for k, a in vir_nodes.items():
            v[k] = a
        h = f.create_group("holdout")
        for k, a in holdout["points"].items():
            h[k] = a


def _write_grid(path, points, pairs):
    import h5py
    from mdsim.sampling.coexistence_grid import write_grid
    with h5py.File(path, "a") as f:
        write_grid(f, points, pairs)
