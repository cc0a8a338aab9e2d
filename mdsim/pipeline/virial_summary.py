"""The virial routes of one state point, and the virial coefficients at its temperature.

:func:`virial_summary` solves the B2 and B2 + B3 truncations of the
constant-U condition from one initial state (:mod:`analysis.expansion`);
:func:`virial_coefficients` gives B2, B3 and their temperature derivatives
(SI).  The state-point record that folds them in with the simulation routes
is :func:`mdsim.pipeline.summary.state_point_record`.
"""
from mdsim.errors import ConvergenceError
from mdsim.pipeline.record_values import finite_or_none, one_line
from mdsim.study.statepoints import (ideal_heat_capacity, resolve_initial_density, virial_gas,
                                     virial_warnings)

__all__ = ["virial_coefficients", "virial_summary", "initial_temperature_warnings"]


def virial_coefficients(study, temperature_K):
    """B2, dB2/dT, B3, dB3/dT of the study's gas at one temperature (SI).

    B2 carries the quantum treatment the study asks for (``[gas] quantum``),
    B3 its first-order term with the second-order and exact levels; both
    are named in ``quantum``.

    For rigid molecules B3 is a Monte Carlo integral: its standard errors
    come as ``B3_m6_mol2_stderr`` and ``dB3_dT_m6_mol2K_stderr``, and
    ``B3_method`` says how it was found.

    Returns
    -------
    dict
        ``temperature_K``, ``B2_m3_mol``, ``dB2_dT_m3_molK``, ``B3_m6_mol2``,
        ``dB3_dT_m6_mol2K``, ``quantum_correction`` (bool), ``quantum`` (one line: the
        treatment of B2 and B3), ``B3_method`` (and the standard errors above for rigid
        molecules).
    """
    gas = virial_gas(study)
    T = float(temperature_K)
    num = finite_or_none
    out = {"temperature_K": T,
           "B2_m3_mol": num(gas.B(T)), "dB2_dT_m3_molK": num(gas.dB_dT(T)),
           "B3_m6_mol2": num(gas.C(T)), "dB3_dT_m6_mol2K": num(gas.dC_dT(T)),
           "quantum_correction": bool(study.gas.quantum_correction),
           "quantum": f"{study.gas.describe_quantum()}; {gas.c_note}",
           "B3_method": "quadrature"}
    if study.gas.three_body_c9_K_A9:
        out["B3_method"] = "quadrature, with the Axilrod-Teller three-body part"
    if hasattr(gas, "C_stderr"):
        err, d_err, _ = gas.C_stderr(T)
        out.update({"B3_m6_mol2_stderr": num(err), "dB3_dT_m6_mol2K_stderr": num(d_err),
                    "B3_method": f"Monte Carlo integration ({gas.triplet_draws().n_draws} draws, "
                    "fixed seed)"})
    return out


def virial_summary(study, sp):
    """The virial routes of one state point.

    Parameters
    ----------
    study : Study
    sp : StatePoint

    Returns
    -------
    dict
        ``index``; ``initial`` (``temperature_K``, ``pressure_Pa``,
        ``density_mol_m3``, ``density_from``: "given" or "virial B2+B3");
        ``final`` (the B2+B3 final state, or None); ``final_b2`` (the B2-only
        final state, or None); ``delta_T_K`` with ``virial_b2`` and
        ``virial_b2b3`` entries ``{value, stderr}`` (absent when the
        series does not hold; stderr None, except for rigid molecules'
        B2 + B3, where it carries the Monte Carlo error of B3); ``entropy_generated_J_molK`` (B2+B3, else
        B2, else None); ``delta_s_J_molK`` (each virial route's entropy
        generated, ``{value, stderr: None}``); ``virial`` (coefficients at T_i, see
        :func:`virial_coefficients`); ``warnings``.

    Raises
    ------
    StudyError
        When the initial pressure cannot be turned into a density (see
        :func:`mdsim.study.statepoints.resolve_initial_density`).

    Notes
    -----
    Both truncations start from the same initial density (the one given,
    or the B2+B3 solution of the given pressure) so that every route of a
    state point describes one initial state; they differ only in u_res.
    The solver is :func:`analysis.expansion.virial_expansion`.
    """
    gas = virial_gas(study)
    cv_ig = ideal_heat_capacity(study)
    rho_i, how = resolve_initial_density(study, sp)
    T_i = sp.temperature_K
    warnings = list(virial_warnings(study)) + initial_temperature_warnings(study, sp)
    results = _virial_routes(gas, cv_ig, T_i, sp.volume_ratio, rho_i, warnings)
    p_i = sp.pressure_Pa
    if p_i is None and "virial_b2b3" in results:
        p_i = results["virial_b2b3"].initial_pressure_Pa
    best = results.get("virial_b2b3") or results.get("virial_b2")
    stderr = {route: None for route in results}
    if "virial_b2b3" in results and hasattr(gas, "delta_T_stderr_K"):
        res = results["virial_b2b3"]  # B3 by Monte Carlo integration (rigid molecules)
        stderr["virial_b2b3"] = gas.delta_T_stderr_K(T_i, rho_i, res.final_temperature_K,
                                                     res.final_density_mol_m3, cv_ig)
    return {
        "index": sp.index,
        "initial": {"temperature_K": T_i, "pressure_Pa": finite_or_none(p_i),
                    "density_mol_m3": rho_i, "density_from": how},
        "final": _final_state(results.get("virial_b2b3")),
        "final_b2": _final_state(results.get("virial_b2")),
        "delta_T_K": {route: {"value": finite_or_none(res.delta_T_K),
                              "stderr": finite_or_none(stderr[route])}
                      for route, res in sorted(results.items())},
        "entropy_generated_J_molK": (finite_or_none(best.entropy_generated_J_molK) if best
                                     else None),
        "delta_s_J_molK": {route: {"value": finite_or_none(res.entropy_generated_J_molK),
                                   "stderr": None}
                           for route, res in sorted(results.items())},
        "virial": virial_coefficients(study, T_i),
        "warnings": warnings,
    }


def _virial_routes(gas, cv_ig, T_i, volume_ratio, rho_i, warnings):
    """{route: VirialExpansionResult} of the B2+B3 and B2 truncations that hold.

    A truncation the series does not describe is left out and ``warnings``
    gets a line saying why; the solvers' own warnings are added once each.
    """
    from analysis.expansion import virial_expansion
    from analysis.virial_eos import VirialSeriesError

    results = {}
    for order, route in ((3, "virial_b2b3"), (2, "virial_b2")):
        try:
            res = virial_expansion(gas, cv_ig, T_i, volume_ratio, rho_i=rho_i, order=order)
        except (VirialSeriesError, ConvergenceError) as exc:
            warnings.append(f"{route}: not available at this state ({one_line(exc)})")
            continue
        results[route] = res
        for w in res.warnings:
            if w not in warnings:
                warnings.append(w)
    return results


def _final_state(res):
    """The final state (T, p, rho; SI) of a virial route's result, or None."""
    if res is None:
        return None
    return {"temperature_K": finite_or_none(res.final_temperature_K),
            "pressure_Pa": finite_or_none(res.final_pressure_Pa),
            "density_mol_m3": finite_or_none(res.final_density_mol_m3)}


def initial_temperature_warnings(study, sp):
    """[the warning] when the state point's T_i lies far outside the potential's fitted range."""
    from mdsim.study.fitted_range import fitted_range_warning
    w = fitted_range_warning(study.gas.fitted_range_K, [sp.temperature_K],
                             "the initial temperature")
    return [] if w is None else [w]
