"""The ideal-gas heat capacity models: constant, polynomial and tabulated c_v_ig(T).

Each model gives ``cv(T)`` in J/(mol K), ``u(T)`` = int_{T_ref}^T c_v dT in
J/mol (exact: closed forms for the constant and the polynomial, the exact
integral of the piecewise cubic for the table), ``s(T)`` =
int_{T_ref}^T c_v / T dT in J/(mol K), and ``valid_range`` in K.
"""
import abc
import math

import numpy as np
from scipy.integrate import quad
from scipy.interpolate import PchipInterpolator

from mdsim.errors import StudyError
from mdsim.units import R_GAS

__all__ = ["IdealGasHeatCapacity", "ConstantHeatCapacity", "PolynomialHeatCapacity",
           "TabulatedHeatCapacity", "KineticPlusInternal", "WholeOfRigidModel"]


class IdealGasHeatCapacity(abc.ABC):
    """An ideal-gas molar heat capacity at constant volume, c_v_ig(T).

    Attributes
    ----------
    valid_range : tuple of float
        (T_low, T_high) in K where the model may be used.
    reference_temperature_K : float
        Lower end of the integrals ``u`` and ``s``.
    """

    valid_range = (0.0, math.inf)
    reference_temperature_K = 298.15

    def check_temperature(self, T, what="temperature"):
        """Raise StudyError unless every T lies in ``valid_range``."""
        T_arr = np.asarray(T, dtype=np.float64)
        lo, hi = self.valid_range
        bad = ~np.isfinite(T_arr) | (T_arr < lo) | (T_arr > hi) | (T_arr <= 0.0)
        if np.any(bad):
            value = T_arr[bad].ravel()[0]
            raise StudyError(
                f"{what} = {value:g} K is outside the range of the ideal-gas heat capacity "
                f"model {self.describe()}, valid for {lo:g} K <= T <= {hi:g} K. Extend the "
                "heat-capacity data (table or polynomial range) to cover it, or choose a "
                "state inside the range.")
        return T_arr

    def cv(self, T):
        """c_v_ig in J/(mol K) at T in K (scalar or array)."""
        T_arr = self.check_temperature(T)
        return self._shape(self._cv(T_arr), T)

    def u(self, T):
        """int_{T_ref}^T c_v_ig dT' in J/mol (an ideal-gas internal energy)."""
        T_arr = self.check_temperature(T)
        return self._shape(self._u(T_arr), T)

    def s(self, T):
        """int_{T_ref}^T c_v_ig / T' dT' in J/(mol K) (ideal-gas entropy at fixed volume)."""
        T_arr = self.check_temperature(T)
        return self._shape(self._s(T_arr), T)

    def delta_u(self, T1, T2):
        """u(T2) - u(T1) in J/mol."""
        return self.u(T2) - self.u(T1)

    def delta_s(self, T1, T2):
        """s(T2) - s(T1) in J/(mol K)."""
        return self.s(T2) - self.s(T1)

    @staticmethod
    def _shape(value, T):
        return float(value) if np.ndim(T) == 0 else np.asarray(value, dtype=np.float64)

    @abc.abstractmethod
    def _cv(self, T):
        """Vectorised c_v on validated temperatures."""

    @abc.abstractmethod
    def _u(self, T):
        """Vectorised u on validated temperatures."""

    @abc.abstractmethod
    def _s(self, T):
        """Vectorised s on validated temperatures."""

    @abc.abstractmethod
    def describe(self):
        """One-line description of the model."""

    def __repr__(self):
        return f"<{self.describe()}>"


class ConstantHeatCapacity(IdealGasHeatCapacity):
    """c_v_ig = constant.

    Parameters
    ----------
    cv_J_molK : float
        The heat capacity in J/(mol K), > 0.
    valid_range : tuple of float, optional
        (T_low, T_high) in K; any positive temperature by default.
    """

    def __init__(self, cv_J_molK, valid_range=(0.0, math.inf)):
        cv_J_molK = float(cv_J_molK)
        if not (math.isfinite(cv_J_molK) and cv_J_molK > 0.0):
            raise StudyError(
                f"ideal-gas heat capacity = {cv_J_molK!r} J/(mol K) must be a positive "
                "number (1.5 R = 12.47 J/(mol K) for a monatomic gas).")
        self.cv_J_molK = cv_J_molK
        self.valid_range = _check_range(valid_range)

    @classmethod
    def in_units_of_R(cls, multiple, valid_range=(0.0, math.inf)):
        """c_v_ig = multiple * R (1.5 for atoms, 2.5 for rigid linear molecules)."""
        return cls(float(multiple) * R_GAS, valid_range)

    def _cv(self, T):
        return np.full_like(T, self.cv_J_molK)

    def _u(self, T):
        return self.cv_J_molK * (T - self.reference_temperature_K)

    def _s(self, T):
        return self.cv_J_molK * np.log(T / self.reference_temperature_K)

    def describe(self):
        return f"constant c_v_ig = {self.cv_J_molK:.6g} J/(mol K) = {self.cv_J_molK / R_GAS:.6g} R"


class PolynomialHeatCapacity(IdealGasHeatCapacity):
    """c_v_ig(T) = sum_k a_k T^k.

    Parameters
    ----------
    coefficients_J_molK : sequence of float
        a_0, a_1, ... with c_v in J/(mol K) and T in K.
    valid_range : tuple of float, optional
        (T_low, T_high) in K where the fit holds; any positive T by default.

    Notes
    -----
    u(T) = sum_k a_k (T^(k+1) - T_ref^(k+1)) / (k+1);
    s(T) = a_0 ln(T / T_ref) + sum_{k>=1} a_k (T^k - T_ref^k) / k.
    """

    def __init__(self, coefficients_J_molK, valid_range=(0.0, math.inf)):
        a = np.asarray(coefficients_J_molK, dtype=np.float64).ravel()
        if a.size == 0 or not np.all(np.isfinite(a)):
            raise StudyError(
                f"ideal-gas heat capacity polynomial = {list(coefficients_J_molK)!r}: give at "
                "least one finite coefficient, a_0 first (c_v in J/(mol K), T in K).")
        self.coefficients = a
        self.valid_range = _check_range(valid_range)
        lo, hi = self.valid_range
        # c_v must be positive where the model is used; check on a grid of the
        # range (or, for an open range, near the reference temperature).
        grid = np.linspace(lo if lo > 0 else 1.0, hi if math.isfinite(hi) else 2000.0, 201)
        if np.any(self._cv(grid) <= 0.0):
            raise StudyError(
                f"ideal-gas heat capacity polynomial {a.tolist()} is not positive everywhere "
                f"on {grid[0]:g}-{grid[-1]:g} K; check the coefficients (a_0 first, "
                "J/(mol K), T in K) or narrow 'valid_range_K'.")

    def _cv(self, T):
        return np.polynomial.polynomial.polyval(T, self.coefficients)

    def _u(self, T):
        k = np.arange(self.coefficients.size)
        T0 = self.reference_temperature_K
        T = np.asarray(T)[..., None]
        return np.sum(self.coefficients * (T ** (k + 1) - T0 ** (k + 1)) / (k + 1), axis=-1)

    def _s(self, T):
        T0 = self.reference_temperature_K
        a = self.coefficients
        out = a[0] * np.log(T / T0)
        for k in range(1, a.size):
            out = out + a[k] * (T ** k - T0 ** k) / k
        return out

    def describe(self):
        return (f"polynomial c_v_ig(T) with coefficients {self.coefficients.tolist()} "
                "J/(mol K), T in K")


class TabulatedHeatCapacity(IdealGasHeatCapacity):
    """c_v_ig(T) from a table, monotone piecewise-cubic (PCHIP) interpolation.

    Parameters
    ----------
    temperature_K : array_like, shape=(n_points,)
        Strictly increasing temperatures, n_points >= 2.
    cv_J_molK : array_like, shape=(n_points,)
        Positive heat capacities.
    source : str
        Where the table came from (file name), for messages.

    Notes
    -----
    The interpolant is scipy's ``PchipInterpolator``; ``u`` integrates its
    cubic pieces exactly (its antiderivative), ``s`` integrates c_v / T by
    adaptive quadrature split at the knots (relative error ~1e-12).
    """

    def __init__(self, temperature_K, cv_J_molK, source=""):
        T = np.asarray(temperature_K, dtype=np.float64).ravel()
        cv = np.asarray(cv_J_molK, dtype=np.float64).ravel()
        label = source or "table"
        if T.size != cv.size or T.size < 2:
            raise StudyError(
                f"ideal-gas heat capacity table {label}: needs at least 2 rows with one "
                f"temperature and one c_v each; got {T.size} temperatures and {cv.size} values.")
        if not (np.all(np.isfinite(T)) and np.all(np.isfinite(cv))):
            raise StudyError(f"ideal-gas heat capacity table {label}: holds non-finite numbers; "
                             "every row needs a finite temperature_K and cv_J_molK.")
        if np.any(np.diff(T) <= 0.0) or T[0] <= 0.0:
            raise StudyError(
                f"ideal-gas heat capacity table {label}: temperature_K must be positive and "
                "strictly increasing; sort the rows and remove duplicates.")
        if np.any(cv <= 0.0):
            raise StudyError(f"ideal-gas heat capacity table {label}: cv_J_molK must be > 0 "
                             f"in every row; found {cv[cv <= 0][0]:g}.")
        self.temperature_K = T
        self.cv_J_molK = cv
        self.source = source
        self.valid_range = (float(T[0]), float(T[-1]))
        self.reference_temperature_K = float(T[0])
        self._pchip = PchipInterpolator(T, cv, extrapolate=False)
        self._pchip_int = self._pchip.antiderivative()

    def _cv(self, T):
        return self._pchip(T)

    def _u(self, T):
        return self._pchip_int(T)

    def _s(self, T):
        T0 = self.reference_temperature_K
        knots = self.temperature_K

        def one(t):
            inner = knots[(knots > T0) & (knots < t)]
            edges = np.concatenate(([T0], inner, [t]))
            return sum(quad(lambda x: float(self._pchip(x)) / x, a, b,
                            epsabs=0.0, epsrel=1e-12, limit=200)[0]
                       for a, b in zip(edges[:-1], edges[1:]))

        return np.vectorize(one, otypes=[np.float64])(T)

    def describe(self):
        src = f" from {self.source}" if self.source else ""
        return (f"tabulated c_v_ig{src} ({self.temperature_K.size} points, "
                f"{self.valid_range[0]:g}-{self.valid_range[1]:g} K, PCHIP)")


def _check_range(valid_range):
    try:
        lo, hi = (float(v) for v in valid_range)
    except (TypeError, ValueError) as exc:
        raise StudyError(f"valid_range_K = {valid_range!r} must be two numbers "
                         "[T_low, T_high] in K.") from exc
    if not (lo >= 0.0 and hi > lo):
        raise StudyError(f"valid_range_K = [{lo:g}, {hi:g}] K must satisfy 0 <= T_low < T_high.")
    return (lo, hi)


def _check_model(name, model):
    if not isinstance(model, IdealGasHeatCapacity):
        raise StudyError(f"'{name}' must be an ideal-gas heat capacity model; got "
                         f"{type(model).__name__}")
    return model


def _check_kinetic_dof(kinetic_dof):
    f = float(kinetic_dof)
    if not (math.isfinite(f) and 3.0 <= f <= 6.0):
        raise StudyError(f"'kinetic_dof' = {kinetic_dof!r}: kinetic degrees of freedom per "
                         "molecule lie between 3 (atoms) and 6 (rigid non-linear molecules)")
    return f


class KineticPlusInternal(IdealGasHeatCapacity):
    """c_v_ig = (f/2) R + c_v_internal(T): a rigid model's kinetic part plus the rest.

    For a rigid molecule the model itself carries f = 3 + 2 (linear) or
    3 + 3 (non-linear) kinetic degrees of freedom; the study's heat capacity
    then holds only what the rigid model lacks (the vibrations).

    Parameters
    ----------
    internal : IdealGasHeatCapacity
        The internal (vibrational) part.
    kinetic_dof : float
        f, the kinetic degrees of freedom per molecule (a mole-fraction
        mean for a mixture), >= 3.

    Examples
    --------
    Rigid linear molecules with a constant vibrational part of 0.1 R:

    >>> cv = KineticPlusInternal(ConstantHeatCapacity.in_units_of_R(0.1), 5)
    >>> round(cv.cv(300.0) / R_GAS, 6)
    2.6
    """

    def __init__(self, internal, kinetic_dof):
        self.internal = _check_model("internal", internal)
        self.kinetic_dof = _check_kinetic_dof(kinetic_dof)
        self.valid_range = internal.valid_range
        self.reference_temperature_K = internal.reference_temperature_K

    def _cv(self, T):
        return 0.5 * self.kinetic_dof * R_GAS + self.internal._cv(T)

    def _u(self, T):
        return 0.5 * self.kinetic_dof * R_GAS * (T - self.reference_temperature_K) + \
            self.internal._u(T)

    def _s(self, T):
        return 0.5 * self.kinetic_dof * R_GAS * np.log(T / self.reference_temperature_K) + \
            self.internal._s(T)

    def describe(self):
        return (f"{self.kinetic_dof:.6g}/2 R (rigid model: translation and rotation) plus "
                f"{self.internal.describe()}")


class WholeOfRigidModel(IdealGasHeatCapacity):
    """The whole c_v_ig of a rigid model's gas, given: (f/2) R kinetic, the rest vibrational.

    The values are the given model's; the rigid model carries f = 3 + 2
    (linear) or 3 + 3 (non-linear) kinetic degrees of freedom of it, and
    the vibrational part is what is left, c_v_ig - (f/2) R (the same sum
    :class:`KineticPlusInternal` builds from the vibrational part).

    Parameters
    ----------
    whole : IdealGasHeatCapacity
        The whole ideal-gas c_v (translation, rotation and vibration).
    kinetic_dof : float
        f, the kinetic degrees of freedom per molecule (a mole-fraction
        mean for a mixture), >= 3.

    Examples
    --------
    Rigid non-linear molecules with a whole c_v_ig of 10 R:

    >>> cv = WholeOfRigidModel(ConstantHeatCapacity.in_units_of_R(10.0), 6)
    >>> round(cv.cv(400.0) / R_GAS, 6), round(cv.vibrational_cv(400.0) / R_GAS, 6)
    (10.0, 7.0)
    """

    def __init__(self, whole, kinetic_dof):
        self.whole = _check_model("whole", whole)
        self.kinetic_dof = _check_kinetic_dof(kinetic_dof)
        self.valid_range = whole.valid_range
        self.reference_temperature_K = whole.reference_temperature_K

    def vibrational_cv(self, T):
        """c_v_ig - (f/2) R in J/(mol K): what the rigid model lacks."""
        return self.cv(T) - 0.5 * self.kinetic_dof * R_GAS

    def _cv(self, T):
        return self.whole._cv(T)

    def _u(self, T):
        return self.whole._u(T)

    def _s(self, T):
        return self.whole._s(T)

    def describe(self):
        return (f"{self.whole.describe()} given whole, of which {self.kinetic_dof:.6g}/2 R is "
                "the rigid model's (translation and rotation) and the rest vibrational")
