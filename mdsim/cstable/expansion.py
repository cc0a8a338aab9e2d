"""A free expansion at constant internal energy through a corresponding-states table.

Given epsilon, sigma and the ideal-gas heat capacity, the reduced table
gives the residual energy of the initial and every candidate final state;
:func:`table_delta_T_full` finds the final temperature with
U_ig(T_f) + R eps u_res*(T_f / eps, rho_f*) = U_ig(T_i) + R eps u_res*(T_i / eps, rho_i*)
and its standard error from the table's.
"""
import math

from mdsim.checks import positive
from mdsim.errors import SettingError, StudyError
from mdsim.units import K_B, N_A, R_GAS

__all__ = ["table_delta_T_full", "table_delta_T", "heat_capacity"]

PLANCK_J_S = 6.62607015e-34  # exact since the 2019 SI


def heat_capacity(cv_ig):
    """An ideal-gas heat capacity model from a model or a constant c_v in J/(mol K)."""
    from analysis.heatcapacity import ConstantHeatCapacity, IdealGasHeatCapacity
    if isinstance(cv_ig, IdealGasHeatCapacity):
        return cv_ig
    if isinstance(cv_ig, (int, float)) and not isinstance(cv_ig, bool) and cv_ig > 0:
        return ConstantHeatCapacity(float(cv_ig))
    raise SettingError("cv_ig", cv_ig, "give an ideal-gas heat capacity model "
                       "(analysis.heatcapacity) or a positive number in J/(mol K)")


def _checked_inputs(epsilon_K, sigma_angstrom, molar_mass_kg_mol, T_i_K, volume_ratio,
                    p_i_Pa, rho_i_mol_m3):
    """(eps in K, sigma in m, M in kg/mol, T_i in K, r), checked; warns of quantum effects."""
    eps = positive("epsilon_K", epsilon_K, "in K (for example 119.8)")
    sig_m = positive("sigma_angstrom", sigma_angstrom, "in angstrom (for example 3.405)") * 1e-10
    M = positive("molar_mass_kg_mol", molar_mass_kg_mol, "in kg/mol (for example 0.039948)")
    T_i = positive("T_i_K", T_i_K, "in K (for example 295.15)")
    r = positive("volume_ratio", volume_ratio, "V_final / V_initial (for example 2.0)")
    if r <= 1.0:
        raise SettingError("volume_ratio", volume_ratio, "must be above 1 (V_final / V_initial; "
                           "2.0 for an equal evacuated volume)")
    if (p_i_Pa is None) == (rho_i_mol_m3 is None):
        raise StudyError("give exactly one of p_i_Pa or rho_i_mol_m3 for the initial state")
    lam = PLANCK_J_S / (sig_m * math.sqrt(M / N_A * K_B * eps))
    if lam > 1.0:
        import warnings
        warnings.warn(f"de Boer parameter {lam:.2f} > 1: quantum effects are large and the "
                      "classical table does not include them", stacklevel=3)
    return eps, sig_m, M, T_i, r


def _final_temperature(table, cv, eps, T_i, rho_i_red, r):
    """(T_f in K, rho_f*) with U(T_f, rho_i* / r) = U(T_i, rho_i*), by a bracketed root search."""
    from scipy.optimize import brentq
    scale = R_GAS * eps  # J/mol per reduced energy
    rho_f = rho_i_red / r
    u_i = table.u_res(T_i / eps, rho_i_red)[0]
    target = cv.u(T_i) + scale * u_i
    lo = max(table.T_range[0] * eps, cv.valid_range[0])
    hi = min(table.T_range[1] * eps, cv.valid_range[1])

    def balance(T):
        return cv.u(T) + scale * table.u_res(T / eps, rho_f)[0] - target
    f_lo, f_hi = balance(lo), balance(hi)
    if f_lo * f_hi > 0.0:
        raise StudyError(
            f"the final state (rho* = {rho_f:.4g}) has no temperature inside the table "
            f"(T* {table.T_range[0]:g} to {table.T_range[1]:g}) with U_f = U_i; build a "
            "table over a wider temperature range or use a simulation route")
    T_f = brentq(balance, lo, hi, xtol=1e-10 * T_i, rtol=1e-13)
    return T_f, rho_f


def table_delta_T_full(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                       volume_ratio, p_i_Pa=None, rho_i_mol_m3=None):
    """Free expansion at constant U through a corresponding-states table.

    Parameters
    ----------
    table : CorrespondingStatesTable
    epsilon_K : float
        epsilon / k, K.
    sigma_angstrom : float
    molar_mass_kg_mol : float
        Checked for the de Boer parameter (the table is classical).
    cv_ig : IdealGasHeatCapacity or float
        Ideal-gas c_v(T), J/(mol K).
    T_i_K : float
    volume_ratio : float
        V_f / V_i > 1.
    p_i_Pa, rho_i_mol_m3 : float
        Exactly one: the initial pressure (rho_i from the tabulated Z) or
        the initial molar density.

    Returns
    -------
    dict
        ``delta_T_K``, ``delta_T_stderr_K``, ``T_f_K``, ``rho_i_mol_m3``,
        ``rho_f_mol_m3``, ``p_i_Pa``, and the reduced states.

    Notes
    -----
    Solves U_ig(T_f) + R eps u_res*(T_f/eps, rho_f*) = U_ig(T_i) + R eps
    u_res*(T_i/eps, rho_i*) by a bracketed root search.  The standard error
    is that of the table difference u_res*(f) - u_res*(i) (shared grid nodes
    correlated), times R eps / C_v(T_f, rho_f), with the error of rho_i
    from the tabulated Z added in quadrature through d(Delta T)/d(rho_i).
    """
    eps, sig_m, _, T_i, r = _checked_inputs(epsilon_K, sigma_angstrom, molar_mass_kg_mol,
                                            T_i_K, volume_ratio, p_i_Pa, rho_i_mol_m3)
    cv = heat_capacity(cv_ig)
    to_rho_red = N_A * sig_m ** 3
    T_ir = T_i / eps
    if rho_i_mol_m3 is None:
        p = positive("p_i_Pa", p_i_Pa, "in Pa (for example 22e5)")
        rho_ir, s_rho = table.density_from_pressure(T_ir, p * sig_m ** 3 / (K_B * eps))
    else:
        rho_ir = positive("rho_i_mol_m3", rho_i_mol_m3, "in mol/m^3 (for example 900)") \
            * to_rho_red
        s_rho = 0.0
        table.require_inside(T_ir, rho_ir)
        p = None
    T_f, rho_fr = _final_temperature(table, cv, eps, T_i, rho_ir, r)
    _, s_du = table.u_res_difference(T_ir, rho_ir, T_f / eps, rho_fr)
    c_f = float(cv.cv(T_f)) + R_GAS * table.u_res(T_f / eps, rho_fr, derivative=1)[0]
    se = R_GAS * eps * s_du / c_f
    if s_rho > 0.0:
        h = 1e-4 * rho_ir
        T_f2, _ = _final_temperature(table, cv, eps, T_i, rho_ir + h, r)
        se = math.hypot(se, (T_f2 - T_f) / h * s_rho)
    if p is None:
        Z, _ = table.compressibility(T_ir, rho_ir)
        p = rho_ir * T_ir * Z * K_B * eps / sig_m ** 3
    return {"delta_T_K": T_f - T_i, "delta_T_stderr_K": se, "T_f_K": T_f,
            "rho_i_mol_m3": rho_ir / to_rho_red, "rho_f_mol_m3": rho_fr / to_rho_red,
            "p_i_Pa": float(p), "T_i_red": T_ir, "rho_i_red": rho_ir,
            "T_f_red": T_f / eps, "rho_f_red": rho_fr}


def table_delta_T(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                  volume_ratio, p_i_Pa=None, rho_i_mol_m3=None):
    """(delta_T_K, stderr_K) of a free expansion through the table.

    See :func:`table_delta_T_full` for the parameters and the method.
    """
    out = table_delta_T_full(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                             volume_ratio, p_i_Pa, rho_i_mol_m3)
    return out["delta_T_K"], out["delta_T_stderr_K"]
