"""Entropy generated in a free expansion, and the work lost with it.

A free expansion into vacuum is irreversible, but its end states are
equilibrium states joined by a path of equilibrium states at the same
internal energy U.  Entropy is a state function, so the entropy generated is
the integral along that path of

    dS = (1/T) dU + (p/T) dV = (p/T) dV        (dU = 0),

from V_i to V_f = r V_i, with T(V) found at each V by solving
U(T, V) = U_i (DESIGN.md 2.5).  For an ideal gas p/T = n R / V and
Delta S = n R ln r.  The work lost to the irreversibility, measured against
surroundings at a reference temperature T_0, is T_0 Delta S (the
Gouy-Stodola relation).

The path integral here uses the virial equation of state (any object with
the SI methods of :class:`analysis.virial_eos.VirialGas`) and a given
ideal-gas heat capacity model (``analysis.heatcapacity``).

Array suffix: ``_d`` a grid of densities.
"""
import math
from dataclasses import dataclass, field

from scipy import constants as _const
from scipy.integrate import quad
from scipy.optimize import brentq

from mdsim.errors import ConvergenceError, StudyError

from .results import Result

R_GAS = _const.gas_constant  # J/(mol K)

ORDERS = (2, 3)


def _positive(name, value, hint):
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise StudyError(f"setting '{name}' = {value!r}: must be a number; {hint}") from None
    if not math.isfinite(value) or value <= 0.0:
        raise StudyError(f"setting '{name}' = {value!r}: must be a positive finite number; {hint}")
    return value


def _order(order):
    if order not in ORDERS:
        raise StudyError(f"setting 'order' = {order!r}: the virial series is truncated after "
                         "B2 (order 2) or after B3 (order 3); use 2 or 3")
    return int(order)


def _check_cv_model(cv_ig):
    if not (callable(getattr(cv_ig, "cv", None)) and callable(getattr(cv_ig, "u", None))):
        raise StudyError(
            f"ideal-gas heat capacity {cv_ig!r}: expected a heat-capacity model with methods "
            "cv(T) and u(T) (see analysis.heatcapacity, for example ConstantHeatCapacity)")


def internal_energy_J_mol(gas, cv_ig, temperature_K, density_mol_m3, order=2):
    """Molar internal energy u_ig(T) + u_res(T, rho) in J/mol (u_ig from the model's
    reference temperature)."""
    return float(cv_ig.u(temperature_K)) + float(gas.u_res_J_mol(temperature_K, density_mol_m3,
                                                                 order))


def constant_energy_temperature_K(gas, cv_ig, energy_J_mol, density_mol_m3, order=2,
                                  temperature_guess_K=300.0):
    """Temperature at which the molar internal energy equals a given value.

    Parameters
    ----------
    gas : VirialGas
    cv_ig : heat-capacity model
        ``cv(T)``, ``u(T)`` in J/(mol K), J/mol.
    energy_J_mol : float
        Target u_ig(T) + u_res(T, rho) (same reference as ``cv_ig.u``).
    density_mol_m3 : float
        Molar density, > 0.
    order : {2, 3}
    temperature_guess_K : float
        Where the bracket search starts (the initial temperature of an
        expansion is a good guess).

    Returns
    -------
    float
        T in K.

    Raises
    ------
    ConvergenceError
        No bracket found inside the heat-capacity model's valid range (the
        truncated virial series has no state with this energy there).

    Notes
    -----
    The bracket grows geometrically (factor 1.25) from the guess; brentq
    then solves to xtol = 1e-12 K.  A unique root needs C_V > 0, true
    wherever the truncated series is usable.
    """
    order = _order(order)
    rho = _positive("density_mol_m3", density_mol_m3, "a molar density in mol/m^3")
    target = float(energy_J_mol)
    t_guess = _positive("temperature_guess_K", temperature_guess_K, "a temperature in K")
    lo_limit, hi_limit = cv_ig.valid_range if hasattr(cv_ig, "valid_range") else (0.0, math.inf)
    lo_limit = max(lo_limit, 1e-6 * t_guess)
    hi_limit = min(hi_limit, 1e6 * t_guess)

    def f(t):
        return internal_energy_J_mol(gas, cv_ig, t, rho, order) - target

    lo = hi = min(max(t_guess, lo_limit), hi_limit)
    f_lo = f_hi = f(lo)
    if f_lo == 0.0:
        return lo
    for _ in range(200):
        if f_lo < 0.0 < f_hi or f_lo > 0.0 > f_hi:
            break
        if f_lo > 0.0 and lo > lo_limit:
            lo = max(lo / 1.25, lo_limit)
            f_lo = f(lo)
        elif f_hi < 0.0 and hi < hi_limit:
            hi = min(hi * 1.25, hi_limit)
            f_hi = f(hi)
        else:
            break
    if not (f_lo < 0.0 < f_hi or f_lo > 0.0 > f_hi):
        raise ConvergenceError(
            f"constant-energy temperature at {rho:.6g} mol/m^3: no temperature between "
            f"{lo:.6g} K and {hi:.6g} K gives u = {target:.6g} J/mol (order {order} virial "
            "series); the truncated series cannot describe this state: simulation is needed",
            partial={"temperature_K": (lo, hi), "residual_J_mol": (f_lo, f_hi)})
    return float(brentq(f, lo, hi, xtol=1e-12, rtol=1e-15))


@dataclass(frozen=True)
class ExpansionEntropy(Result):
    """Entropy generated by a free expansion, integrated along constant U.

    Attributes
    ----------
    initial_temperature_K, initial_density_mol_m3 : float
    volume_ratio : float
        r = V_f / V_i.
    final_temperature_K, final_density_mol_m3, final_pressure_Pa : float
    virial_order : int
    amount_mol : float
        n.
    entropy_generated_J_molK : float
        Delta S per mole, int (p/T) dV along constant U.
    entropy_generated_J_K : float
        n Delta S.
    ideal_gas_entropy_J_molK : float
        R ln r, the ideal-gas value.
    entropy_quadrature_error_J_molK : float
        The quadrature's own error estimate.
    reference_temperature_K : float or None
        T_0 for the lost work (None: lost work not computed).
    lost_work_J_mol, lost_work_J : float or None
        T_0 Delta S per mole and for n moles.
    notes : list of str
    """

    initial_temperature_K: float
    initial_density_mol_m3: float
    volume_ratio: float
    final_temperature_K: float
    final_density_mol_m3: float
    final_pressure_Pa: float
    virial_order: int
    amount_mol: float
    entropy_generated_J_molK: float
    entropy_generated_J_K: float
    ideal_gas_entropy_J_molK: float
    entropy_quadrature_error_J_molK: float
    reference_temperature_K: float = None
    lost_work_J_mol: float = None
    lost_work_J: float = None
    notes: list = field(default_factory=list)


def lost_work_J(entropy_generated_J_K, reference_temperature_K):
    """Work lost to an irreversibility, T_0 Delta S (Gouy-Stodola), in J.

    Parameters
    ----------
    entropy_generated_J_K : float
        Entropy generated, >= 0.
    reference_temperature_K : float
        Temperature of the surroundings against which the work is counted.
    """
    t0 = _positive("reference_temperature_K", reference_temperature_K,
                   "the temperature of the surroundings, for example 298.15 K")
    s = float(entropy_generated_J_K)
    if not math.isfinite(s) or s < 0.0:
        raise StudyError(f"entropy generated = {entropy_generated_J_K!r} J/K: must be a finite "
                         "number >= 0 (an isolated process cannot destroy entropy)")
    return t0 * s


def free_expansion_entropy(gas, cv_ig, temperature_K, volume_ratio, density_mol_m3=None,
                           pressure_Pa=None, order=2, amount_mol=1.0,
                           reference_temperature_K=None, rtol=1e-10):
    """Entropy generated in a free expansion by the constant-U path integral.

    Parameters
    ----------
    gas : VirialGas
        SI equation of state (``compressibility``, ``pressure_Pa``,
        ``u_res_J_mol``, ``density_from_pressure``).
    cv_ig : heat-capacity model
        Ideal-gas molar heat capacity with ``cv(T)``, ``u(T)``.
    temperature_K : float
        Initial temperature T_i.
    volume_ratio : float
        r = V_f / V_i, > 1.
    density_mol_m3, pressure_Pa : float
        Initial state: give exactly one (a pressure is turned into a density
        with the same truncated series).
    order : {2, 3}
        Virial truncation.
    amount_mol : float
        Amount of gas n for the extensive results.
    reference_temperature_K : float, optional
        T_0 for the lost work T_0 Delta S; without it the lost work is not
        computed (reported as None).
    rtol : float
        Relative tolerance of the quadrature (and absolute tolerance of the
        residual integral in units of ln r, i.e. relative to the ideal part).

    Returns
    -------
    ExpansionEntropy

    Notes
    -----
    With p/T = R rho Z and dV = -d rho / rho^2 per mole,

        Delta S = int_{V_i}^{V_f} (p/T) dV
                = R ln r + R int_{rho_f}^{rho_i} (Z(T(rho), rho) - 1) / rho d rho ,

    the ideal part in closed form (so the ideal limit R ln r is exact) and
    the residual part, R (B + C rho) for the virial series, by adaptive
    Gauss-Kronrod quadrature; T(rho) solves U(T, rho) = U_i at each node.
    """
    order = _order(order)
    _check_cv_model(cv_ig)
    t_i = _positive("temperature_K", temperature_K, "the initial temperature in K")
    r = _positive("volume_ratio", volume_ratio, "V_final / V_initial, greater than 1")
    if r <= 1.0:
        raise StudyError(f"setting 'volume_ratio' = {volume_ratio!r}: a free expansion needs "
                         "V_final / V_initial > 1; give a ratio greater than 1")
    n_mol = _positive("amount_mol", amount_mol, "the amount of gas in mol")
    if (density_mol_m3 is None) == (pressure_Pa is None):
        raise StudyError("initial state: give exactly one of 'density_mol_m3' and 'pressure_Pa' "
                         f"(got density_mol_m3={density_mol_m3!r}, pressure_Pa={pressure_Pa!r})")
    if density_mol_m3 is not None:
        rho_i = _positive("density_mol_m3", density_mol_m3, "the initial molar density in mol/m^3")
    else:
        p_i = _positive("pressure_Pa", pressure_Pa, "the initial pressure in Pa")
        rho_i = float(gas.density_from_pressure(t_i, p_i, order))
    rho_f = rho_i / r
    u_i = internal_energy_J_mol(gas, cv_ig, t_i, rho_i, order)

    def temperature(rho):
        return constant_energy_temperature_K(gas, cv_ig, u_i, rho, order, temperature_guess_K=t_i)

    def residual(rho):
        t = t_i if rho == rho_i else temperature(rho)
        return (float(gas.compressibility(t, rho, order)) - 1.0) / rho

    # absolute tolerance against the ideal part ln r, so a near-ideal gas (a residual
    # at round-off level) does not drive the quadrature into endless subdivision
    integral, err = quad(residual, rho_f, rho_i, epsabs=rtol * math.log(r), epsrel=rtol,
                         limit=200)
    ds_ideal = R_GAS * math.log(r)
    ds = ds_ideal + R_GAS * integral
    t_f = temperature(rho_f)
    notes = ["entropy from int (p/T) dV along the constant-energy path of equilibrium states "
             "(valid for the irreversible expansion: entropy is a state function)"]
    if ds < 0.0:
        # p > 0 along the path makes every dS positive: a negative sum means
        # the truncated series gave negative pressures somewhere
        raise ConvergenceError(
            f"entropy generated came out negative ({ds:.6g} J/(mol K)): the order {order} "
            "virial series gives negative pressures on the path; simulation is needed",
            partial=ds)
    lw_mol = lw = t_ref = None
    if reference_temperature_K is not None:
        t_ref = _positive("reference_temperature_K", reference_temperature_K,
                          "the temperature of the surroundings, for example 298.15 K")
        lw_mol = lost_work_J(ds, t_ref)
        lw = n_mol * lw_mol
        notes.append(f"lost work = T_0 * Delta S with T_0 = {t_ref:g} K")
    return ExpansionEntropy(
        initial_temperature_K=t_i, initial_density_mol_m3=rho_i, volume_ratio=r,
        final_temperature_K=t_f, final_density_mol_m3=rho_f,
        final_pressure_Pa=float(gas.pressure_Pa(t_f, rho_f, order)),
        virial_order=order, amount_mol=n_mol,
        entropy_generated_J_molK=ds, entropy_generated_J_K=n_mol * ds,
        ideal_gas_entropy_J_molK=ds_ideal,
        entropy_quadrature_error_J_molK=R_GAS * err,
        reference_temperature_K=t_ref, lost_work_J_mol=lw_mol, lost_work_J=lw, notes=notes)
