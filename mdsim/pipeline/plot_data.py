"""The data of the report's figures, as plain numbers and arrays.

Each function turns records and task series into the dict one function of
:mod:`mdsim.pipeline.plots` draws: the Delta T panels with the virial curves,
the energy route's constant-U construction, the direct route's temperature
and density profile over time, the convergence series of other routes, and
the Joule inversion curve with the run's expansions.  The per-task builders
return ``(data, None)`` or ``(None, why not)``.
"""
import math

import numpy as np

from mdsim.errors import ConvergenceError, StudyError
from mdsim.pipeline.summary import best_simulation
from mdsim.study.routes import ROUTES, VIRIAL_ROUTES

__all__ = ["virial_model", "virial_delta_T", "delta_T_panels", "energy_plot_data",
           "direct_plot_data", "series_plot_data", "inversion_data", "CURVE_POINTS"]

CURVE_POINTS = 36
"""Points on each virial curve of the Delta T plot."""


def virial_model(study):
    """(VirialGas, c_v_ig model) of a study, for the virial curves (built once per study)."""
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    return virial_gas(study), ideal_heat_capacity(study)


def virial_delta_T(vg, cv, T_i, r, order, p_i=None, rho_i=None):
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


def _route_points(xs, members):
    """{route: (x, Delta T, stderr)} of the routes with a value at some state point."""
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
    return pts


def _virial_curves(vg, cv, T_i, r, xs, by_pressure):
    """{route: (x grid, Delta T)} of both virial truncations, from 0 to 1.15 x the largest x."""
    x_g = np.linspace(0.0, 1.15 * float(xs.max()), CURVE_POINTS + 1)[1:]
    curves = {}
    for route, order in (("virial_b2", 2), ("virial_b2b3", 3)):
        y_g = []
        for x in x_g:
            kw = {"p_i": x * 1e5} if by_pressure else {"rho_i": x}
            y_g.append(virial_delta_T(vg, cv, T_i, r, order, **kw))
        curves[route] = (x_g, np.array(y_g))
    return curves


def _residuals(xs, members):
    """{virial route: (x, virial minus best simulation, simulation stderr)}."""
    residuals = {}
    for route in VIRIAL_ROUTES:
        rows = []
        for x, (_, rec) in zip(xs, members):
            sim = best_simulation(rec)
            vir = rec["delta_T_K"].get(route) or {}
            if sim is not None and vir.get("value") is not None:
                rows.append((x, vir["value"] - sim["value"],
                             math.nan if sim.get("stderr") is None else sim["stderr"]))
        if rows:
            residuals[route] = tuple(np.array(c, float) for c in zip(*rows))
    return residuals


def delta_T_panels(study, points, records, vg, cv):
    """Panels of the Delta T plot, one per (T_i, volume ratio).

    Returns
    -------
    list of dict
        ``title``, ``x_label`` (initial pressure in bar, or initial density
        in mol/m^3), ``points`` ({route: (x, Delta T K, stderr K)}),
        ``curves`` ({virial route: (x grid, Delta T K)}), ``residuals``.
    """
    groups = {}
    for sp, rec in zip(points, records):
        groups.setdefault((sp.temperature_K, sp.volume_ratio), []).append((sp, rec))
    panels = []
    for (T_i, r), members in groups.items():
        by_pressure = members[0][0].pressure_Pa is not None
        xs = np.array([(sp.pressure_Pa / 1e5) if by_pressure else sp.density_mol_m3
                       for sp, _ in members])
        panels.append({
            "residuals": _residuals(xs, members),
            "title": f"{study.name}: T_i = {T_i:g} K, V_f/V_i = {r:g}",
            "x_label": "initial pressure (bar)" if by_pressure else "initial density (mol/m^3)",
            "points": _route_points(xs, members),
            "curves": _virial_curves(vg, cv, T_i, r, xs, by_pressure)})
    return panels


def _arr(series, key):
    return np.atleast_1d(np.asarray(series[key], dtype=float))


def _absent(series, need):
    absent = [k for k in need if k not in series]
    return f"series {', '.join(absent)} absent" if absent else None


def energy_plot_data(study, sp, result, series, vg, cv):
    """The energy route's u_res against T at both densities, with the constant-U line."""
    why = _absent(series, ("newton_T_K", "newton_u_res_J_mol", "newton_u_res_stderr_J_mol",
                           "initial_T_K", "initial_u_res_J_mol", "initial_u_res_stderr_J_mol"))
    if why:
        return None, why
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
        **{k: _arr(series, k) for k in ("initial_T_K", "initial_u_res_J_mol",
                                        "initial_u_res_stderr_J_mol")},
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


def direct_plot_data(sp, result, series):
    """The direct route's temperature and density profile over time."""
    why = _absent(series, ("time_s", "temperature_K_t", "profile_z_fraction",
                           "density_profile_tz"))
    if why:
        return None, why
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


def series_plot_data(sp, route, result, series):
    """A route's 1-D series against sample (the ``sample`` series is the abscissa)."""
    one_d = {name: np.asarray(v, float) for name, v in series.items()
             if np.ndim(v) == 1 and np.size(v) > 1}
    x = one_d.pop("sample", None)  # an index series is the abscissa, not a panel
    if not one_d:
        return None, "no time series stored"
    final = result.get("final_temperature_K") or {}
    return {"series": one_d, "title": f"{route} route, state point {sp.index}: convergence",
            "x": x, "final_T_K": final.get("value"), "final_T_stderr_K": final.get("stderr")}, None


def inversion_data(vg, records):
    """The virial Joule inversion (dict of JouleInversion) and the run's expansions.

    Returns
    -------
    inversion : dict
    states : list of tuple
        (rho_i mol/m^3, T_i K, rho_f mol/m^3, T_f K) per state point, NaN where unknown.
    """
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
