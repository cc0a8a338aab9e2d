"""THE JSON record of a state point, and the summary of a run.

The virial routes in it come from :mod:`mdsim.pipeline.virial_summary`.

One record shape serves ``mdsim run --json``, ``results.json`` and
``mdsim virial --json`` (:func:`state_point_record`)::

    {
      "index": 0,
      "state_point": {StatePoint as a dict},
      "volume_ratio": 2.0,
      "initial": {"temperature_K", "pressure_Pa", "density_mol_m3", "density_from",
                  "sampled_pressure_Pa": {"value", "stderr"} or null},
      "final": {"temperature_K", "temperature_stderr_K", "pressure_Pa",
                "density_mol_m3", "source"},
      "delta_T_K": {"virial_b2": {"value", "stderr": null}, "virial_b2b3": {...},
                    "energy": {"value", "stderr"}, "microcanonical": ..., "direct": ...},
      "entropy_generated_J_molK": float or null,   (the virial route's, B2+B3 else B2)
      "delta_s_J_molK": {"virial_b2": {"value", "stderr": null}, "virial_b2b3": {...},
                         "energy": {"value", "stderr"}, ...},
      "virial": {"B2_m3_mol", "dB2_dT_m3_molK", "B3_m6_mol2", "dB3_dT_m6_mol2K",
                 "temperature_K", "quantum_correction"},
      "simulation": {route: {"stopped_by", "cpu_seconds", "n_particles", "method",
                             "initial_density_mol_m3", "initial_density_from",
                             "initial_pressure_Pa": {"value", "stderr"},
                             "two_phase", "two_phase_evidence",
                             "coexistence": null or {"available", "delta_T_K",
                                 "final_temperature_K", "vapour_fraction", "source",
                                 "temperatures_K", ... or "reason"}}},
      "two_phase": bool (a simulation route found its final state inside the
                   vapour-liquid dome or metastable; its warning says why),
      "warnings": [str, ...]
    }

Routes not run (or not available, such as a virial route where the series
does not converge) are absent from ``delta_T_K``, and a warning says why.
``delta_s_J_molK`` is the entropy generated per mole by each route from its
own end states (docs/physics.md section 6); a simulation route where it
could not be computed has ``value`` null and ``unavailable`` (why).
``final`` comes from the best route available, in the order
:data:`FINAL_PREFERENCE`; ``final.source`` names it.

The initial state: ``initial`` is the virial routes' (the density given,
or the B2 + B3 density of the pressure given, then said so:
"virial B2+B3 (virial routes)"), with the pressure the first simulation
route sampled there (``sampled_pressure_Pa``); each simulation route's own
initial density (found from a given pressure by the pressure iteration,
:mod:`mdsim.pipeline.initial_state`), how it was found and its sampled
pressure are in ``simulation``.

All numbers are SI: K, Pa, mol/m^3, J/(mol K), m^3/mol, m^6/mol^2.
Non-finite numbers become null.
"""
from mdsim.errors import StudyError
from mdsim.numbers import value_with_error
from mdsim.pipeline.record_values import (finite_or_none, one_line, value_stderr,
                                          value_stderr_dict)
from mdsim.pipeline.virial_summary import (initial_temperature_warnings, virial_coefficients,
                                           virial_summary)
from mdsim.study.routes import FINAL_PREFERENCE, SIMULATION_ROUTES, VIRIAL_ROUTES
from mdsim.study.statepoints import ideal_heat_capacity, virial_warnings

__all__ = ["state_point_record", "run_summary", "best_simulation"]

# A virial B2+B3 result further than this many combined standard errors from
# the best simulation route gets a warning (and more than the target itself).
DISAGREEMENT_Z = 3.0


def best_simulation(record):
    """The {value, stderr, route} of the first simulation route with a Delta T, or None."""
    for route in SIMULATION_ROUTES:
        entry = record["delta_T_K"].get(route)
        if entry and entry.get("value") is not None:
            return dict(entry, route=route)
    return None


def _entropy_entry(res):
    """A task result's entropy generated as {value, stderr[, unavailable]} (J/(mol K))."""
    entry = res.get("entropy_generated_J_molK")
    if not isinstance(entry, dict):
        return {"value": None, "stderr": None,
                "unavailable": "not computed by the version of the tool that ran the task"}
    value, stderr = value_stderr(entry)
    out = {"value": value, "stderr": stderr}
    if entry.get("unavailable"):
        out["unavailable"] = entry["unavailable"]
    return out


def _simulation_entries(route_results, delta, finals, warnings, entropy):
    """Fold the simulation routes' task results into ``delta``, ``finals`` and ``entropy``.

    Returns
    -------
    simulation : dict
        {route: {stopped_by, cpu_seconds, n_particles, method, two_phase,
        two_phase_evidence, coexistence}}.
    initial_pressure : float or None
        The first initial pressure a simulation sampled, Pa.
    """
    simulation = {}
    initial_pressure = None
    for route in SIMULATION_ROUTES:
        res = route_results.get(route)
        if res is None:
            continue
        value, stderr = value_stderr(res.get("delta_T_K"))
        delta[route] = {"value": value, "stderr": stderr}
        entropy[route] = _entropy_entry(res)
        T_f, T_f_err = value_stderr(res.get("final_temperature_K"))
        p_f, _ = value_stderr(res.get("final_pressure_Pa"))
        rho_f = finite_or_none(res.get("final_density_mol_m3"))
        if T_f is not None:
            finals[route] = {"temperature_K": T_f, "temperature_stderr_K": T_f_err,
                             "pressure_Pa": p_f, "density_mol_m3": rho_f}
        if initial_pressure is None:
            initial_pressure, _ = value_stderr(res.get("initial_pressure_Pa"))
        simulation[route] = {k: res.get(k) for k in ("stopped_by", "cpu_seconds", "n_particles",
                                                      "method", "initial_density_from",
                                                      "two_phase", "coexistence")}
        simulation[route]["initial_density_mol_m3"] = finite_or_none(
            res.get("initial_density_mol_m3"))
        simulation[route]["initial_pressure_Pa"] = value_stderr_dict(
            res.get("initial_pressure_Pa"))
        simulation[route]["two_phase_evidence"] = (res.get("phase_check") or {}).get("evidence",
                                                                                      [])
        for w in res.get("warnings") or []:
            warnings.append(f"{route}: {w}")
    return simulation, initial_pressure


def _sampled_initial_pressure(route_results):
    """{value, stderr} of the first simulation route's sampled initial pressure (Pa), or None."""
    for route in SIMULATION_ROUTES:
        res = route_results.get(route)
        entry = value_stderr_dict(res.get("initial_pressure_Pa")) if res else None
        if entry is not None:
            return entry
    return None


def _initial_state(vs, sp, route_results, initial_pressure):
    """The record's ``initial``: from the virial summary, else from the state point and tasks."""
    initial = _virial_initial_state(vs, sp, route_results, initial_pressure)
    initial["sampled_pressure_Pa"] = _sampled_initial_pressure(route_results)
    return initial


def _virial_initial_state(vs, sp, route_results, initial_pressure):
    """The initial state of the virial routes (or, without them, of the first task)."""
    if vs is not None:
        initial = dict(vs["initial"])
        if initial["pressure_Pa"] is None:
            initial["pressure_Pa"] = initial_pressure
        if sp.pressure_Pa is not None and any(route_results.values()):
            # the simulation routes found their own density: say whose this one is
            initial["density_from"] = f"{initial['density_from']} (virial routes)"
        return initial
    initial = {"temperature_K": sp.temperature_K, "pressure_Pa": sp.pressure_Pa
               if sp.pressure_Pa is not None else initial_pressure,
               "density_mol_m3": None, "density_from": None}
    for res in route_results.values():
        if res is not None and finite_or_none(res.get("initial_density_mol_m3")) is not None:
            initial["density_mol_m3"] = finite_or_none(res["initial_density_mol_m3"])
            initial["density_from"] = "simulation task"
            break
    return initial


def _final_state(finals, initial, sp, warnings):
    """The record's ``final``: from the first route of FINAL_PREFERENCE with a final state."""
    source = next((route for route in FINAL_PREFERENCE if route in finals), None)
    if source is None:
        rho_f = (initial["density_mol_m3"] / sp.volume_ratio
                 if initial["density_mol_m3"] is not None else None)
        warnings.append("no route gave a final state")
        return {"temperature_K": None, "temperature_stderr_K": None, "pressure_Pa": None,
                "density_mol_m3": rho_f, "source": None}
    final = dict(finals[source], source=source)
    if final["density_mol_m3"] is None and initial["density_mol_m3"] is not None:
        final["density_mol_m3"] = initial["density_mol_m3"] / sp.volume_ratio
    return final


def _disagreement(delta):
    """A warning when virial B2+B3 departs from the best simulation route, else None."""
    sim = next((route for route in SIMULATION_ROUTES if route in delta
                and delta[route]["value"] is not None), None)
    if sim is None or "virial_b2b3" not in delta or delta["virial_b2b3"]["value"] is None:
        return None
    d = delta["virial_b2b3"]["value"] - delta[sim]["value"]
    s = delta[sim]["stderr"]
    if s is not None and s > 0 and abs(d) > DISAGREEMENT_Z * s:
        return (f"virial B2+B3 gives Delta T {delta['virial_b2b3']['value']:.4g} K, "
                f"the {sim} route {value_with_error(delta[sim]['value'], s, 'K')} "
                f"({abs(d) / s:.1f} standard errors apart): the virial estimate "
                "is not good enough at this state")
    return None


def state_point_record(study, sp, route_results, virial=None):
    """THE JSON record of one state point (see the module docstring).

    Parameters
    ----------
    study : Study
    sp : StatePoint
    route_results : dict of str to dict
        Simulation route name ("energy", "microcanonical", "direct") to
        its task result (``result_json`` of the task file: ``delta_T_K``,
        ``final_temperature_K``, ``final_density_mol_m3``,
        ``final_pressure_Pa``, ``stopped_by``, ``cpu_seconds``,
        ``n_particles``, ``warnings``; optional ``initial_pressure_Pa``).
        Routes not run are left out (or None).
    virial : dict, optional
        The :func:`virial_summary` of this state point, if already computed.

    Returns
    -------
    dict
        JSON-ready.
    """
    unknown = set(route_results) - set(SIMULATION_ROUTES)
    if unknown:
        raise StudyError(f"route_results: unknown route(s) {sorted(unknown)}; allowed "
                         f"{', '.join(SIMULATION_ROUTES)}")
    warnings = []
    try:
        vs = virial if virial is not None else virial_summary(study, sp)
    except StudyError as exc:
        # a dense state given by pressure: simulation results (if any) still stand
        vs = None
        warnings.append(f"virial routes: {one_line(exc)}")
        warnings.extend(initial_temperature_warnings(study, sp))
    if vs is not None:
        warnings.extend(vs["warnings"])
    delta = dict(vs["delta_T_K"]) if vs else {}
    finals = {}
    if vs and vs["final"]:
        finals["virial_b2b3"] = dict(vs["final"], temperature_stderr_K=None)
    entropy = dict(vs["delta_s_J_molK"]) if vs else {}
    simulation, initial_pressure = _simulation_entries(route_results, delta, finals, warnings,
                                                       entropy)
    initial = _initial_state(vs, sp, route_results, initial_pressure)
    final = _final_state(finals, initial, sp, warnings)
    disagreement = _disagreement(delta)
    if disagreement:
        warnings.append(disagreement)
    return {
        "index": sp.index,
        "state_point": sp.as_dict(),
        "volume_ratio": sp.volume_ratio,
        "initial": initial,
        "final": final,
        "delta_T_K": {route: delta[route] for route in VIRIAL_ROUTES + SIMULATION_ROUTES
                      if route in delta},
        "entropy_generated_J_molK": vs["entropy_generated_J_molK"] if vs else None,
        "delta_s_J_molK": {route: entropy[route] for route in VIRIAL_ROUTES + SIMULATION_ROUTES
                           if route in entropy},
        "virial": vs["virial"] if vs else virial_coefficients(study, sp.temperature_K),
        "simulation": simulation,
        "two_phase": any(bool(entry.get("two_phase")) for entry in simulation.values()),
        "warnings": warnings,
    }


def run_summary(study, records):
    """The summary of a study's run: its state-point records and what was assumed.

    Parameters
    ----------
    study : Study
    records : list of dict
        :func:`state_point_record` outputs.

    Returns
    -------
    dict
        ``study`` (name), ``description``, ``study_file``, ``gas`` (name,
        species, mole fractions, molar masses in kg/mol, potential form,
        ideal heat capacity as given, what it counts for rigid molecules
        (``ideal_heat_capacity_counts``: "vibrations", "all motions" or None
        for spheres, and whether the study gave it), the model the tool
        used (``ideal_heat_capacity_used``), quantum correction), ``routes``
        (the simulation routes of the study), ``state_points`` (the
        records, by index), ``warnings`` (study-wide: the quantum checks).
    """
    g = study.gas
    return {
        "study": study.name,
        "description": study.description,
        "study_file": str(study.path),
        "gas": {"name": g.name, "species": list(g.species_names),
                "mole_fractions": [float(x) for x in g.fractions],
                "molar_masses_kg_mol": [float(m) for m in g.molar_masses_kg_mol],
                "potential_form": g.pairs_K_angstrom.pots[0][0].name,
                "ideal_heat_capacity": g.ideal_heat_capacity,
                "ideal_heat_capacity_counts": g.ideal_heat_capacity_counts,
                "ideal_heat_capacity_counts_given": bool(g.ideal_heat_capacity_counts_given),
                "ideal_heat_capacity_used": ideal_heat_capacity(study).describe(),
                "quantum_correction": bool(g.quantum_correction),
                "quantum": g.quantum},
        "routes": list(study.simulation.get("routes", [])),
        "state_points": sorted(records, key=lambda rec: rec["index"]),
        "warnings": virial_warnings(study),
    }
