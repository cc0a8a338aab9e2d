"""The tables of report.md: results per state point and the virial coefficients.

Every value with an uncertainty is written by :func:`mdsim.numbers.value_with_error`
(two significant figures on the error, the value rounded to match); the
virial coefficients in cm^3/mol and cm^6/mol^2 (the JSON keeps SI).
"""
import math

from mdsim.numbers import value_with_error
from mdsim.pipeline.record_values import value_stderr
from mdsim.study.routes import ROUTE_LABELS as ROUTE_NAMES, ROUTES, SIMULATION_ROUTES

__all__ = ["cell", "particle_cell", "results_table", "entropy_table", "virial_table",
           "initial_state_table",
           "VIRIAL_IN_CM"]

VIRIAL_IN_CM = (("B2_m3_mol", 1e6, "cm^3/mol"), ("dB2_dT_m3_molK", 1e6, "cm^3/(mol K)"),
                ("B3_m6_mol2", 1e12, "cm^6/mol^2"), ("dB3_dT_m6_mol2K", 1e12, "cm^6/(mol^2 K)"))
"""(record key in SI, factor to the cm unit, that unit) of each virial coefficient shown."""


def cell(value, stderr=None, digits=5):
    """A value (and its standard error) for a table cell; "-" when absent.

    Examples
    --------
    >>> cell(-5.4631, 0.01423)
    '-5.463 ± 0.014'
    >>> cell(295.15, None, 6)
    '295.15'
    >>> cell(None)
    '-'
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return value_with_error(value, stderr, digits=digits)


def particle_cell(record):
    """The particle count of a state point's simulation tasks, for its table row.

    Parameters
    ----------
    record : dict
        A state-point record (its ``simulation`` maps route -> ``n_particles``).

    Returns
    -------
    str
        One number when every route used the same N, else "route N" per
        route (``"energy 1092, direct 2000"``); "-" without a finished task.

    Examples
    --------
    >>> particle_cell({"simulation": {"energy": {"n_particles": 500},
    ...                               "direct": {"n_particles": 500}}})
    '500'
    >>> particle_cell({"simulation": {"energy": {"n_particles": 1092},
    ...                               "direct": {"n_particles": 2000}}})
    'energy 1092, direct 2000'
    """
    counts = {route: int(sim["n_particles"]) for route, sim in
              (record.get("simulation") or {}).items() if sim.get("n_particles") is not None}
    if not counts:
        return "-"
    if len(set(counts.values())) == 1:
        return str(next(iter(counts.values())))
    order = [r for r in ROUTES if r in counts] + sorted(set(counts) - set(ROUTES))
    return ", ".join(f"{r} {counts[r]}" for r in order)


def results_table(points, records):
    """The Markdown results table: one row per state point, Delta T of every route."""
    head = ["state point", "T_i (K)", "p_i (bar)", "rho_i (mol/m^3)", "V_f/V_i", "particles"]
    head += [f"ΔT {ROUTE_NAMES[r]} (K)" for r in ROUTES]
    head += ["T_f (K)", "T_f from", "Δs, virial B2+B3 (J/(mol K))"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for sp, rec in zip(points, records):
        ini, fin = rec["initial"], rec["final"]
        p = ini.get("pressure_Pa")
        cells = [str(sp.index), cell(ini.get("temperature_K"), None, 6),
                 cell(None if p is None else p / 1e5), cell(ini.get("density_mol_m3")),
                 f"{sp.volume_ratio:g}", particle_cell(rec)]
        for route in ROUTES:
            v, s = value_stderr(rec["delta_T_K"].get(route))
            cells.append(cell(v, s))
        cells += [cell(fin.get("temperature_K"), fin.get("temperature_stderr_K"), 6),
                  str(fin.get("source") or "-"), cell(rec.get("entropy_generated_J_molK"))]
        lines.append("| " + " | ".join(cells) + " |")
    return lines


def entropy_table(points, records):
    """The Markdown table of the entropy generated, Delta s per mole, by every route.

    Each simulation route's Delta s comes from its own end states
    (test-particle insertion); a route where it could not be computed shows
    "n/a" and its reason is listed below the table.

    Returns
    -------
    list of str
        The table's lines, then one line per reason.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> rec = {"delta_s_J_molK": {"virial_b2b3": {"value": 5.7047, "stderr": None},
    ...                           "energy": {"value": 5.41, "stderr": 0.094},
    ...                           "direct": {"value": None, "stderr": None, "unavailable": "dense"}}}
    >>> entropy_table([SimpleNamespace(index=0)], [rec])[2]
    '| 0 | - | 5.7047 | 5.410 ± 0.094 | - | n/a |'
    >>> entropy_table([SimpleNamespace(index=0)], [rec])[-1]
    '- state point 0, direct: dense'
    """
    head = ["state point"] + [f"Δs {ROUTE_NAMES[r]} (J/(mol K))" for r in ROUTES]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    reasons = []
    for sp, rec in zip(points, records):
        cells = [str(sp.index)]
        for route in ROUTES:
            entry = (rec.get("delta_s_J_molK") or {}).get(route)
            if entry and entry.get("value") is None and entry.get("unavailable"):
                cells.append("n/a")
                reasons.append(f"- state point {sp.index}, {ROUTE_NAMES[route]}: "
                               f"{entry['unavailable']}")
                continue
            v, s = value_stderr(entry)
            cells.append(cell(v, s))
        lines.append("| " + " | ".join(cells) + " |")
    if reasons:
        lines += ["", "Not available:", ""] + reasons
    return lines


def virial_table(points, records):
    """B2, B3 and their temperature derivatives at T_i, in cm^3 (not SI m^3: readable sizes)."""
    head = ["state point", "T_i (K)"] + [f"{name} ({unit})" for name, unit in
                                         zip(("B2", "dB2/dT", "B3", "dB3/dT"),
                                             (u for _, _, u in VIRIAL_IN_CM))]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for sp, rec in zip(points, records):
        v = rec.get("virial") or {}
        cells = [str(sp.index), cell(v.get("temperature_K", sp.temperature_K), None, 6)]
        for key, scale, _ in VIRIAL_IN_CM:
            err = v.get(key + "_stderr")  # a Monte Carlo B3 (rigid molecules)
            cells.append(cell(None if v.get(key) is None else v[key] * scale,
                              None if err is None else err * scale))
        lines.append("| " + " | ".join(cells) + " |")
    return lines


def _bar(entry):
    """(value, stderr) in bar of a {value, stderr} in Pa (or None)."""
    v, e = value_stderr(entry)
    return (None if v is None else v / 1e5), (None if e is None else e / 1e5)


def initial_state_table(points, records):
    """The initial state of every route: the pressure asked for and sampled, the density used.

    One row for the virial routes of a state point (the density given, or the
    B2 + B3 density of the pressure given) and one per simulation route (its
    density found by the pressure iteration, or given), with the pressure
    the route sampled there.

    Examples
    --------
    >>> from mdsim.study.statepoints import StatePoint
    >>> sp = StatePoint(index=0, temperature_K=295.15, volume_ratio=2.0, pressure_Pa=6e6,
    ...                 density_mol_m3=None)
    >>> rec = {"initial": {"pressure_Pa": 6e6, "density_mol_m3": 2612.3,
    ...                    "density_from": "virial B2+B3 (virial routes)"},
    ...        "simulation": {"energy": {"initial_density_mol_m3": 2607.9,
    ...                                  "initial_density_from": "pressure iteration, 2 steps",
    ...                                  "initial_pressure_Pa": {"value": 6.003e6,
    ...                                                          "stderr": 9.1e3}}}}
    >>> print("\\n".join(initial_state_table([sp], [rec])[2:]))
    | 0 | virial | 60 | - | 2612.3 | virial B2+B3 (virial routes) |
    | 0 | energy | 60 | 60.030 ± 0.091 | 2607.9 | pressure iteration, 2 steps |
    """
    head = ["state point", "route", "p_i asked (bar)", "p_i sampled (bar)", "rho_i (mol/m^3)",
            "rho_i from"]
    lines = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for sp, rec in zip(points, records):
        ini = rec["initial"]
        asked = cell(None if sp.pressure_Pa is None else sp.pressure_Pa / 1e5)
        lines.append(f"| {sp.index} | virial | {asked} | - | {cell(ini.get('density_mol_m3'))} "
                     f"| {ini.get('density_from') or '-'} |")
        for route in SIMULATION_ROUTES:
            sim = (rec.get("simulation") or {}).get(route)
            if sim is None:
                continue
            lines.append(f"| {sp.index} | {ROUTE_NAMES[route]} | {asked} | "
                         f"{cell(*_bar(sim.get('initial_pressure_Pa')))} | "
                         f"{cell(sim.get('initial_density_mol_m3'))} | "
                         f"{sim.get('initial_density_from') or '-'} |")
    return lines
