"""The free expansion whose final state is vapour and liquid in coexistence.

Inside the vapour-liquid dome the final state at equilibrium is two phases
at the saturation temperature T, with the particles split by the lever rule
over the coexisting densities rho_l(T) and rho_v(T).  Internal energy is
conserved, so T_f solves

    u_ig(T) + x(T) u_res,v(T) + (1 - x(T)) u_res,l(T) = u_ig(T_i) + u_res(T_i, rho_i),
    x(T) = (1/rho_f - 1/rho_l) / (1/rho_v - 1/rho_l),

x the vapour mole fraction (:func:`vapour_fraction`).  The coexistence
properties come from a callable ``coexistence(T_K)`` returning a
:class:`CoexistencePoint` (Gibbs-ensemble results, or any equation of
state); :class:`CoexistenceTable` makes one from values at a few
temperatures.  The interface between the phases is not counted: its energy
per particle vanishes for a macroscopic system.  SI units: K, mol/m^3,
J/mol.
"""
import math
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import CubicSpline

from analysis.expansion.sampled import SampledExpansionResult
from analysis.roots import find_root_bracketed
from mdsim.errors import ConvergenceError, SettingError, StudyError

__all__ = ["CoexistencePoint", "CoexistenceTable", "CoexistenceExpansionResult",
           "SinglePhaseFinalState", "vapour_fraction", "coexistence_expansion"]


class SinglePhaseFinalState(StudyError):
    """The energy balance is met where the final density is outside the coexistence region."""


@dataclass(frozen=True)
class CoexistencePoint:
    """Coexisting vapour and liquid at one temperature (standard errors 0 when exact).

    Attributes
    ----------
    temperature_K : float
    liquid_density_mol_m3, vapour_density_mol_m3 : float
    liquid_u_res_J_mol, vapour_u_res_J_mol : float
        Residual internal energy per mole of each phase.
    liquid_density_stderr_mol_m3, vapour_density_stderr_mol_m3 : float
    liquid_u_res_stderr_J_mol, vapour_u_res_stderr_J_mol : float
    vapour_pressure_Pa, vapour_pressure_stderr_Pa : float or None
    """

    temperature_K: float
    liquid_density_mol_m3: float
    vapour_density_mol_m3: float
    liquid_u_res_J_mol: float
    vapour_u_res_J_mol: float
    liquid_density_stderr_mol_m3: float = 0.0
    vapour_density_stderr_mol_m3: float = 0.0
    liquid_u_res_stderr_J_mol: float = 0.0
    vapour_u_res_stderr_J_mol: float = 0.0
    vapour_pressure_Pa: float = None
    vapour_pressure_stderr_Pa: float = None


_COLUMNS = {"liquid_density_mol_m3": "liquid_density_stderr_mol_m3",
            "vapour_density_mol_m3": "vapour_density_stderr_mol_m3",
            "liquid_u_res_J_mol": "liquid_u_res_stderr_J_mol",
            "vapour_u_res_J_mol": "vapour_u_res_stderr_J_mol"}
"""Each tabulated value of a :class:`CoexistencePoint` and the name of its standard error."""


class CoexistenceTable:
    """Coexistence properties tabulated at a few temperatures, interpolated between them.

    Parameters
    ----------
    points : sequence of CoexistencePoint
        At least two, at distinct temperatures (any order).
    source : str
        Where the values come from (printed in the notes of a result).

    Notes
    -----
    Values: a natural cubic spline in T through the points (linear for two
    points); standard errors: linear interpolation.  A spline through noisy
    simulation results follows their noise; the point errors carry it.

    Examples
    --------
    >>> pts = [CoexistencePoint(80.0, 34000.0, 80.0, -5500.0, -60.0),  # invented numbers
    ...        CoexistencePoint(100.0, 29000.0, 400.0, -4600.0, -250.0)]
    >>> table = CoexistenceTable(pts, "invented")
    >>> round(table(90.0).liquid_density_mol_m3, 6), table.contains(90.0, 10000.0)
    (31500.0, True)
    """

    def __init__(self, points, source):
        pts = sorted(points, key=lambda p: p.temperature_K)
        T = np.array([p.temperature_K for p in pts], dtype=float)
        if T.size < 2 or np.any(np.diff(T) <= 0.0) or not np.all(np.isfinite(T)):
            raise SettingError("coexistence points", T.tolist(),
                               "need at least two distinct finite temperatures")
        self.temperature_K = T
        self.source = str(source)
        self._value = {}
        self._error = {}
        for name in _COLUMNS:
            y = np.array([getattr(p, name) for p in pts], dtype=float)
            if not np.all(np.isfinite(y)):
                raise SettingError(f"coexistence {name}", y.tolist(), "must be finite")
            self._value[name] = (CubicSpline(T, y, bc_type="natural") if T.size > 2
                                 else _Linear(T, y))
            err = np.array([getattr(p, _COLUMNS[name]) for p in pts], dtype=float)
            self._error[name] = _Linear(T, err)
        self._pressure = None
        if all(p.vapour_pressure_Pa is not None for p in pts):
            self._pressure = (_Linear(T, [p.vapour_pressure_Pa for p in pts]),
                              _Linear(T, [p.vapour_pressure_stderr_Pa or 0.0 for p in pts]))

    @property
    def temperature_range_K(self):
        """(lowest, highest) tabulated temperature, K."""
        return float(self.temperature_K[0]), float(self.temperature_K[-1])

    def __call__(self, T_K):
        lo, hi = self.temperature_range_K
        if not lo <= T_K <= hi:
            raise SettingError("temperature", T_K, f"is outside the coexistence table "
                               f"({lo:g} K to {hi:g} K, {self.source})")
        kw = {name: float(self._value[name](T_K)) for name in _COLUMNS}
        kw.update({_COLUMNS[name]: float(self._error[name](T_K)) for name in _COLUMNS})
        if self._pressure is not None:
            kw["vapour_pressure_Pa"] = float(self._pressure[0](T_K))
            kw["vapour_pressure_stderr_Pa"] = float(self._pressure[1](T_K))
        return CoexistencePoint(float(T_K), **kw)

    def contains(self, T_K, density_mol_m3):
        """True when (T, rho) lies strictly between the coexisting densities (inside the dome).

        Temperatures outside the table give False: the table says nothing there.
        """
        lo, hi = self.temperature_range_K
        if not lo <= T_K <= hi:
            return False
        c = self(T_K)
        return c.vapour_density_mol_m3 < density_mol_m3 < c.liquid_density_mol_m3


class _Linear:
    """Linear interpolation in T (numpy's interp as a callable)."""

    def __init__(self, T, y):
        self.T, self.y = np.asarray(T, dtype=float), np.asarray(y, dtype=float)

    def __call__(self, T):
        return np.interp(T, self.T, self.y)


def vapour_fraction(density_mol_m3, liquid_density_mol_m3, vapour_density_mol_m3):
    """The lever rule: the mole fraction of vapour at an overall density.

    Parameters
    ----------
    density_mol_m3, liquid_density_mol_m3, vapour_density_mol_m3 : float
        Overall density and the coexisting liquid and vapour densities, mol/m^3.

    Returns
    -------
    float
        x = (1/rho - 1/rho_l) / (1/rho_v - 1/rho_l); between 0 and 1 inside the dome.

    Notes
    -----
    The volume is shared, V/n = x / rho_v + (1 - x) / rho_l (the lever rule,
    any thermodynamics text, e.g. Callen, Thermodynamics, 2nd ed., 1985, section 9.1).

    Examples
    --------
    >>> vapour_fraction(2.0, 4.0, 1.0)  # 1/2 = x + (1 - x)/4
    0.3333333333333333
    """
    a, liq, vap = 1.0 / density_mol_m3, 1.0 / liquid_density_mol_m3, 1.0 / vapour_density_mol_m3
    return (a - liq) / (vap - liq)


@dataclass(frozen=True)
class CoexistenceExpansionResult(SampledExpansionResult):
    """A free expansion that ends in vapour-liquid coexistence.

    The fields of :class:`analysis.expansion.sampled.SampledExpansionResult`
    (``route`` "coexistence", ``method`` "lever rule"), and:

    Attributes
    ----------
    vapour_fraction, vapour_fraction_stderr : float
        Mole fraction of the final state that is vapour.
    liquid_density_mol_m3, vapour_density_mol_m3 : float
        The coexisting densities at T_f.
    vapour_pressure_Pa : float or None
        The final pressure (the vapour pressure at T_f) when the coexistence data give it.
    """

    vapour_fraction: float = None
    vapour_fraction_stderr: float = None
    liquid_density_mol_m3: float = None
    vapour_density_mol_m3: float = None
    vapour_pressure_Pa: float = None


def _fraction_gradient(rho, c):
    """(x, dx/drho_l, dx/drho_v) of the lever rule at a coexistence point."""
    a, liq = 1.0 / rho, 1.0 / c.liquid_density_mol_m3
    vap = 1.0 / c.vapour_density_mol_m3
    d = vap - liq
    x = (a - liq) / d
    dx_dliq = (a - vap) / d ** 2
    dx_dvap = -(a - liq) / d ** 2
    return (x, dx_dliq * -liq ** 2, dx_dvap * -vap ** 2)


def coexistence_expansion(initial_u_res_J_mol, initial_temperature_K, final_density_mol_m3,
                          coexistence, cv_ig, temperature_range_K=None,
                          initial_u_res_stderr_J_mol=0.0):
    """T_f of a free expansion whose final state is two phases (the lever rule).

    Parameters
    ----------
    initial_u_res_J_mol : float
        Residual internal energy of the initial state per mole (from whichever route sampled it).
    initial_temperature_K : float
    final_density_mol_m3 : float
        rho_f = rho_i / r.
    coexistence : callable
        ``coexistence(T_K) -> CoexistencePoint`` (a :class:`CoexistenceTable` works).
    cv_ig : analysis.heatcapacity.IdealGasHeatCapacity
    temperature_range_K : (float, float), optional
        Where T_f is sought; ``coexistence.temperature_range_K`` by default.
    initial_u_res_stderr_J_mol : float

    Returns
    -------
    CoexistenceExpansionResult

    Raises
    ------
    SinglePhaseFinalState
        The balance is met at a temperature where rho_f lies outside the
        coexisting densities (a homogeneous final state: use the other routes),
        or nowhere in the range.

    Notes
    -----
    Energy balance at fixed U and V with the lever rule (module docstring).
    Errors: first-order propagation, sigma_T = sigma_g / |dg/dT| with
    sigma_g^2 = sigma_ui^2 + (x sigma_uv)^2 + ((1 - x) sigma_ul)^2
    + (Delta u dx/drho_l sigma_rl)^2 + (Delta u dx/drho_v sigma_rv)^2, the
    coexistence errors taken as independent of each other.

    Examples
    --------
    >>> from analysis.heatcapacity import ConstantHeatCapacity
    >>> pts = [CoexistencePoint(80.0, 34000.0, 80.0, -5500.0, -60.0),  # invented numbers
    ...        CoexistencePoint(100.0, 29000.0, 400.0, -4600.0, -250.0)]
    >>> res = coexistence_expansion(-4800.0, 95.0, 15000.0, CoexistenceTable(pts, "invented"),
    ...                             ConstantHeatCapacity.in_units_of_R(1.5))
    >>> round(res.final_temperature_K, 2), round(res.vapour_fraction, 3)
    (94.57, 0.011)
    """
    T_i, rho_f = float(initial_temperature_K), float(final_density_mol_m3)
    lo, hi = (temperature_range_K if temperature_range_K is not None
              else coexistence.temperature_range_K)
    U_i = float(cv_ig.u(T_i)) + float(initial_u_res_J_mol)

    def balance(T):
        c = coexistence(T)
        x = vapour_fraction(rho_f, c.liquid_density_mol_m3, c.vapour_density_mol_m3)
        return (float(cv_ig.u(T)) + x * c.vapour_u_res_J_mol
                + (1.0 - x) * c.liquid_u_res_J_mol - U_i)

    T_f = _two_phase_temperature(balance, T_i, lo, hi, U_i, rho_f)
    c = coexistence(T_f)
    x = _check_two_phase(rho_f, T_f, c)
    slope, s_T, s_x = _two_phase_errors(balance, coexistence, c, rho_f, T_f, lo, hi,
                                        float(initial_u_res_stderr_J_mol))
    notes = [f"coexistence route: the final state is vapour and liquid at T_f with the lever "
             f"rule over the coexisting densities ({getattr(coexistence, 'source', 'given')}); "
             "the interface between the phases is not counted (macroscopic limit)"]
    return CoexistenceExpansionResult(
        route="coexistence", method="lever rule", initial_temperature_K=T_i,
        final_temperature_K=T_f, final_temperature_stderr_K=s_T, delta_T_K=T_f - T_i,
        delta_T_stderr_K=s_T, final_density_mol_m3=rho_f, vapour_fraction=x,
        vapour_fraction_stderr=s_x, liquid_density_mol_m3=c.liquid_density_mol_m3,
        vapour_density_mol_m3=c.vapour_density_mol_m3, vapour_pressure_Pa=c.vapour_pressure_Pa,
        details={"initial_u_J_mol": U_i, "balance_slope_J_molK": slope,
                 "liquid_u_res_J_mol": c.liquid_u_res_J_mol,
                 "vapour_u_res_J_mol": c.vapour_u_res_J_mol},
        notes=notes)


def _two_phase_temperature(balance, T_i, lo, hi, U_i, rho_f):
    """The root of the energy balance in [lo, hi] K, started at T_i (clipped into the range)."""
    T0 = min(max(T_i, lo + 1e-6 * (hi - lo)), hi - 1e-6 * (hi - lo))
    try:
        return find_root_bracketed(balance, T0, lo, hi, "the two-phase final temperature",
                                   xtol=1e-9 * T0)
    except ConvergenceError:
        raise SinglePhaseFinalState(
            f"the energy of the initial state ({U_i:.6g} J/mol) is not met by a two-phase state "
            f"at {rho_f:.6g} mol/m^3 between {lo:g} K and {hi:g} K: the final state is "
            "homogeneous or outside the coexistence data; use the single-phase routes") from None


def _check_two_phase(rho_f, T_f, c):
    """The vapour fraction at T_f; SinglePhaseFinalState when rho_f is outside the dome."""
    x = _fraction_gradient(rho_f, c)[0]
    if not 0.0 < x < 1.0:
        phase = "liquid" if x <= 0.0 else "vapour"
        raise SinglePhaseFinalState(
            f"the energy balance is met at T = {T_f:.6g} K where {rho_f:.6g} mol/m^3 is outside "
            f"the coexisting densities ({c.vapour_density_mol_m3:.6g} to "
            f"{c.liquid_density_mol_m3:.6g} mol/m^3): the final state is a homogeneous {phase}; "
            "use the single-phase routes")
    return x


def _two_phase_errors(balance, coexistence, c, rho_f, T_f, lo, hi, u_res_stderr):
    """(d balance/dT in J/(mol K), sigma_T_f in K, sigma_x) by first-order propagation.

    See the Notes of :func:`coexistence_expansion`; the derivatives are
    central differences with a step of 1e-4 T_f kept inside [lo, hi].
    """
    x, dx_dl, dx_dv = _fraction_gradient(rho_f, c)
    h = 1e-4 * max(T_f, 1.0)
    h = min(h, 0.5 * (T_f - lo), 0.5 * (hi - T_f)) or 1e-9 * T_f
    slope = (balance(T_f + h) - balance(T_f - h)) / (2.0 * h)
    du = c.vapour_u_res_J_mol - c.liquid_u_res_J_mol
    var_g = (u_res_stderr ** 2 + (x * c.vapour_u_res_stderr_J_mol) ** 2
             + ((1.0 - x) * c.liquid_u_res_stderr_J_mol) ** 2
             + (du * dx_dl * c.liquid_density_stderr_mol_m3) ** 2
             + (du * dx_dv * c.vapour_density_stderr_mol_m3) ** 2)
    s_T = math.sqrt(var_g) / abs(slope)
    x_hi = vapour_fraction(rho_f, *_densities(coexistence(T_f + h)))
    x_lo = vapour_fraction(rho_f, *_densities(coexistence(T_f - h)))
    s_x = math.sqrt(((x_hi - x_lo) / (2.0 * h) * s_T) ** 2
                    + (dx_dl * c.liquid_density_stderr_mol_m3) ** 2
                    + (dx_dv * c.vapour_density_stderr_mol_m3) ** 2)
    return slope, s_T, s_x


def _densities(c):
    return c.liquid_density_mol_m3, c.vapour_density_mol_m3
