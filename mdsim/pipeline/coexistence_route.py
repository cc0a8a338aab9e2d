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
from analysis.expansion import CoexistencePoint, CoexistenceTable, coexistence_expansion

__all__ = ["coexistence_table", "expansion_through_coexistence", "final_state_in_dome",
           "GIBBS_SOURCE"]

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
