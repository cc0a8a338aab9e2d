"""The virial route of a free expansion: the energy balance with the virial equation of state.

u_ig(T_f) + u_res(T_f, rho_i / r) = u_ig(T_i) + u_res(T_i, rho_i), with
u_res from a :class:`analysis.virial_eos.VirialGas` truncated after B2 or
after B3, solved by :func:`analysis.roots.find_root_bracketed`.  Both
truncations are solved, so the result says how far the series can be
trusted.  SI units: K, Pa, mol/m^3, J/mol, J/(mol K).
"""
import math
from dataclasses import dataclass, field

from analysis import inputs
from analysis.results import Result
from analysis.roots import find_root_bracketed
from mdsim.checks import positive
from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import R_GAS

__all__ = ["VIRIAL_SPREAD_WARN", "VirialExpansionResult", "virial_expansion"]


VIRIAL_SPREAD_WARN = 0.10
"""Warn when the B2 and B2 + B3 temperature changes differ by more than this
fraction of the reported one: the series is running out."""


@dataclass(frozen=True)
class VirialExpansionResult(Result):
    """A free expansion solved with the virial equation of state.

    Attributes
    ----------
    route : str
        "virial".
    virial_order : int
        2 (B2 only) or 3 (B2 + B3): the truncation used for every quantity.
    initial_temperature_K, initial_pressure_Pa, initial_density_mol_m3 : float
    volume_ratio : float
        V_f / V_i.
    final_temperature_K, final_pressure_Pa, final_density_mol_m3 : float
    delta_T_K : float
        T_f - T_i (negative: the gas cools).
    delta_T_B2_K, delta_T_B2B3_K : float
        The same with the series truncated after B2 and after B3 (each from
        its own initial density when the initial pressure was given).
    entropy_generated_J_molK : float
        s(T_f, rho_f) - s(T_i, rho_i): int c_v_ig / T dT + R ln r + Delta s_res.
    warnings, notes : list of str
    """

    route: str
    virial_order: int
    initial_temperature_K: float
    initial_pressure_Pa: float
    initial_density_mol_m3: float
    volume_ratio: float
    final_temperature_K: float
    final_pressure_Pa: float
    final_density_mol_m3: float
    delta_T_K: float
    delta_T_B2_K: float
    delta_T_B2B3_K: float
    entropy_generated_J_molK: float
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)


def _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, order):
    """(rho_i, p_i, T_f, rho_f, p_f, ds) for one truncation."""
    if rho_i is None:
        rho_i = float(gas.density_from_pressure(T_i, p_i, order))
    gas.check_converged(T_i, rho_i)  # VirialSeriesError: simulate instead
    if p_i is None:
        p_i = float(gas.pressure_Pa(T_i, rho_i, order))
    rho_f = rho_i / r
    u_target = cv_ig.u(T_i) + float(gas.u_res_J_mol(T_i, rho_i, order))
    lo, hi = cv_ig.valid_range
    lo = max(lo, 1e-3 * T_i)
    hi = min(hi, 1e3 * T_i)

    def balance(T):
        return cv_ig.u(T) + float(gas.u_res_J_mol(T, rho_f, order)) - u_target

    T_f = find_root_bracketed(balance, T_i, lo, hi,
                              f"the final temperature (virial order {order})")
    gas.check_converged(T_f, rho_f)
    p_f = float(gas.pressure_Pa(T_f, rho_f, order))
    ds = (cv_ig.delta_s(T_i, T_f) + R_GAS * math.log(r)
          + float(gas.s_res_J_molK(T_f, rho_f, order))
          - float(gas.s_res_J_molK(T_i, rho_i, order)))
    return rho_i, p_i, T_f, rho_f, p_f, ds


def _both_truncations(gas, cv_ig, T_i, r, p_i, rho_i, order, delta_T):
    """Delta T of both truncations, {2: ..., 3: ...} in K, and the warnings their
    comparison raises; ``delta_T`` is that of ``order``, the other is solved here."""
    other = 5 - order
    warnings = []
    dT = {order: delta_T}
    try:
        dT[other] = _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, other)[2] - T_i
    except (StudyError, ConvergenceError) as exc:
        # only the comparison is lost; the requested truncation stands, and says so
        dT[other] = math.nan
        warnings.append(f"the order-{other} virial solution, solved for comparison, failed "
                        f"({exc}); the spread between truncations is unknown.")
    spread = abs(dT[3] - dT[2])
    if spread > VIRIAL_SPREAD_WARN * abs(dT[order]) and spread > 1e-6 * T_i:
        warnings.append(
            f"virial series weak: Delta T is {dT[2]:.4g} K with B2 and {dT[3]:.4g} K with "
            f"B2 + B3 (difference {spread:.3g} K, more than {VIRIAL_SPREAD_WARN:.0%}); "
            "check this state with a simulation route.")
    return dT, warnings


def virial_expansion(gas, cv_ig, T_i, volume_ratio, p_i=None, rho_i=None, order=2):
    """Free expansion with the virial equation of state.

    Parameters
    ----------
    gas : VirialGas
        Offers ``pressure_Pa(T, rho, order)``, ``u_res_J_mol(T, rho, order)``,
        ``s_res_J_molK(T, rho, order)``, ``density_from_pressure(T, p, order)``
        and ``check_converged(T, rho)`` (SI units).
    cv_ig : IdealGasHeatCapacity
        Ideal-gas heat capacity model (``u``, ``delta_s``, ``valid_range``).
    T_i : float
        Initial temperature, K.
    volume_ratio : float
        r = V_f / V_i > 1.
    p_i : float, optional
        Initial pressure, Pa (solved for rho_i with the same truncation).
    rho_i : float, optional
        Initial density, mol/m^3.  Give exactly one of p_i and rho_i.
    order : {2, 3}
        Truncation of the virial series.

    Returns
    -------
    VirialExpansionResult

    Notes
    -----
    Solves u_ig(T_f) + u_res(T_f, rho_i / r) = u_ig(T_i) + u_res(T_i, rho_i)
    with u_res / (R T) = -T B' rho - (T/2) C' rho^2.  Both truncations are
    solved; their difference, when larger than ``VIRIAL_SPREAD_WARN`` of
    |Delta T|, is reported as a warning that the series is running out.

    Examples
    --------
    Argon (Lennard-Jones 119.8 K, 3.405 angstrom) at 295 K and 20 bar,
    expanded into an equal evacuated volume, cools by about 5 K:

    >>> from analysis.heatcapacity import ConstantHeatCapacity
    >>> from analysis.virial_eos import VirialGas
    >>> from mdsim.engine.potentials import LennardJones
    >>> argon = VirialGas(LennardJones(119.8, 3.405), [1.0], 0.039948)
    >>> cv = ConstantHeatCapacity.in_units_of_R(1.5)
    >>> res = virial_expansion(argon, cv, 295.0, 2.0, p_i=20e5, order=3)
    >>> round(res.delta_T_K, 2), round(res.final_pressure_Pa / 1e5, 2)
    (-4.96, 9.89)
    >>> round(res.delta_T_B2_K, 2)
    -4.99
    """
    T_i = positive("T_i", T_i, "the initial temperature in K, e.g. 295")
    r = inputs.volume_ratio(volume_ratio)
    order = inputs.order(order)
    inputs.one_initial_state(p_i, rho_i, "p_i", "rho_i")
    if p_i is not None:
        p_i = positive("p_i", p_i, "the initial pressure in Pa, e.g. 22e5")
    if rho_i is not None:
        rho_i = positive("rho_i", rho_i, "the initial density in mol/m^3")
    cv_ig.check_temperature(T_i, "initial temperature T_i")

    rho_0, p_0, T_f, rho_f, p_f, ds = _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, order)
    dT, warnings = _both_truncations(gas, cv_ig, T_i, r, p_i, rho_i, order, T_f - T_i)
    notes = [f"virial equation of state truncated after B{order}; "
             "entropy from s_ig + R ln r + s_res (state functions)"]
    return VirialExpansionResult(
        route="virial", virial_order=order,
        initial_temperature_K=T_i, initial_pressure_Pa=p_0, initial_density_mol_m3=rho_0,
        volume_ratio=r, final_temperature_K=T_f, final_pressure_Pa=p_f,
        final_density_mol_m3=rho_f, delta_T_K=T_f - T_i,
        delta_T_B2_K=dT[2], delta_T_B2B3_K=dT[3], entropy_generated_J_molK=ds,
        warnings=warnings, notes=notes)
