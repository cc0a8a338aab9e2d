"""Quantities with units at the edges, reduced Lennard-Jones units inside.

Study files and the command line give physical quantities as strings with
units ("295.15 K", "22 bar", "3.405 angstrom", "39.948 g/mol", "1.5 R").
:func:`parse_quantity` reads one such string with pint (its own expression
parser; nothing is evaluated as Python), checks its dimension and returns the
magnitude in the SI unit of that kind.  The pint registry is created on first
use, so importing this module has no side effects.

:class:`ReducedUnits` converts between SI and the reduced units of the engine,
which are set by a reference species: energy epsilon (given as epsilon/k in
kelvin), length sigma, mass m = M / N_A.  Physical constants are CODATA values
from ``scipy.constants`` (k, N_A, R and h are exact since the 2019 SI).
"""
import math
import tokenize
import numbers

from scipy import constants as _const

from mdsim.checks import positive
from mdsim.errors import StudyError

__all__ = ["K_B", "N_A", "R_GAS", "KINDS", "registry", "parse_quantity", "parse_epsilon_K",
           "ReducedUnits"]

K_B = _const.Boltzmann          # J/K
N_A = _const.Avogadro           # 1/mol
R_GAS = _const.gas_constant     # J/(mol K)
PLANCK = _const.Planck          # J s

_REGISTRY = None


def registry():
    """The module's one pint ``UnitRegistry``, created on first call.

    Offset units (degC, degF) are converted to kelvin automatically, so
    "25 degC" reads as 298.15 K.
    """
    global _REGISTRY
    if _REGISTRY is None:
        import pint
        _REGISTRY = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return _REGISTRY


# kind -> (pint dimensionality string, SI unit the magnitude is returned in, example)
KINDS = {
    "temperature": ("[temperature]", "K", "295.15 K"),
    "pressure": ("[mass] / [length] / [time] ** 2", "Pa", "22 bar"),
    "length": ("[length]", "m", "3.405 angstrom"),
    "molar_mass": ("[mass] / [substance]", "kg/mol", "39.948 g/mol"),
    "molar_energy": ("[mass] * [length] ** 2 / [time] ** 2 / [substance]", "J/mol", "996 J/mol"),
    "energy": ("[mass] * [length] ** 2 / [time] ** 2", "J", "1.654e-21 J"),
    "molar_heat_capacity": ("[mass] * [length] ** 2 / [time] ** 2 / [substance] / [temperature]",
                            "J/(mol K)", "20.8 J/(mol K)"),
    "molar_density": ("[substance] / [length] ** 3", "mol/m^3", "500 mol/m^3"),
    "time": ("[time]", "s", "10 ps"),
    "dipole_moment": ("[current] * [time] * [length]", "C*m", "1.85 D"),
    "quadrupole_moment": ("[current] * [time] * [length] ** 2", "C*m^2", "1.44 D angstrom"),
    "c9": ("[mass] * [length] ** 11 / [time] ** 2", "J*m^9", "518 hartree bohr^9"),
    "c9_over_k": ("[temperature] * [length] ** 9", "K*angstrom^9", "5.32e5 K angstrom^9"),
}


def _where_text(where):
    if not where:
        return ""
    if isinstance(where, str):
        return where + ": "
    return ", ".join(str(w) for w in where if w) + ": "


def parse_quantity(text, expected, where=""):
    """Read a quantity string and return its magnitude in SI units.

    Parameters
    ----------
    text : str
        A number followed by a unit, for example ``"22 bar"``.
    expected : str
        The kind of quantity, a key of :data:`KINDS` (``"temperature"``,
        ``"pressure"``, ``"length"``, ``"molar_mass"``, ``"molar_energy"``,
        ``"energy"``, ``"molar_heat_capacity"``, ``"molar_density"``,
        ``"time"``).
    where : str or tuple of str
        Where the value came from (file, table, key), for error messages.

    Returns
    -------
    float
        The magnitude in the SI unit of that kind (``KINDS[expected][1]``:
        K, Pa, m, kg/mol, J/mol, J, J/(mol K), mol/m^3, s).

    Raises
    ------
    StudyError
        If the text is not a string, does not parse, has the wrong dimension
        or is not finite.  The message names ``where``, the value, the
        expected dimension and an example.

    Examples
    --------
    >>> parse_quantity("22 bar", "pressure")
    2200000.0
    >>> round(parse_quantity("1.5 R", "molar_heat_capacity"), 4)
    12.4717
    """
    if expected not in KINDS:
        raise ValueError(f"unknown quantity kind {expected!r}; one of {sorted(KINDS)}")
    dim, unit, example = KINDS[expected]
    loc = _where_text(where)
    if isinstance(text, bool) or not isinstance(text, str):
        if isinstance(text, bool):
            kind = "a bool (true/false)"
        elif isinstance(text, numbers.Number):
            kind = "a number without a unit"
        else:
            kind = f"of type {type(text).__name__}"
        raise StudyError(f"{loc}value {text!r} is {kind}; a {expected.replace('_', ' ')} needs a "
                         f"unit, written as a string such as \"{example}\"")
    import pint
    ureg = registry()
    try:
        q = ureg.Quantity(text.strip())
    except (pint.errors.PintError, ValueError, TypeError, SyntaxError, AttributeError,
            KeyError, IndexError, ZeroDivisionError, AssertionError, tokenize.TokenError) as exc:
        # pint's parser raises AssertionError and TokenError on some garbage (":", ")")
        raise StudyError(f"{loc}cannot read {text!r} as a quantity ({exc}); expected a "
                         f"{expected.replace('_', ' ')} such as \"{example}\"") from None
    if not isinstance(q, ureg.Quantity) or q.dimensionless:
        raise StudyError(f"{loc}{text!r} has no unit; expected a {expected.replace('_', ' ')} "
                         f"such as \"{example}\"")
    if q.dimensionality != ureg.get_dimensionality(dim):
        got = str(q.dimensionality) if str(q.dimensionality) else "dimensionless"
        raise StudyError(f"{loc}{text!r} has dimension {got}; expected a "
                         f"{expected.replace('_', ' ')} ({dim}) such as \"{example}\"")
    try:
        value = float(q.to(unit).magnitude)
    except (TypeError, ValueError) as exc:
        raise StudyError(f"{loc}cannot convert {text!r} to {unit} ({exc}); give a single number "
                         f"with a unit such as \"{example}\"") from None
    if not math.isfinite(value):
        raise StudyError(f"{loc}{text!r} is not finite; give a number such as \"{example}\"")
    return value


def parse_epsilon_K(text, where=""):
    """Read a well depth as epsilon/k in kelvin.

    Accepts a temperature (``"119.8 K"``, read as epsilon/k), an energy per
    mole (``"996 J/mol"``, divided by R) or an energy per molecule
    (``"1.654e-21 J"``, divided by k).

    Returns
    -------
    float
        epsilon / k in K.
    """
    loc = _where_text(where)
    errors = []
    for kind, factor in (("temperature", 1.0), ("molar_energy", 1.0 / R_GAS),
                         ("energy", 1.0 / K_B)):
        try:
            return parse_quantity(text, kind, where) * factor
        except StudyError as exc:
            errors.append(exc)
    if isinstance(text, str) and "cannot read" in str(errors[0]):
        raise errors[0]
    raise StudyError(f"{loc}{text!r} is not a well depth; give epsilon/k as a temperature "
                     "(\"119.8 K\"), an energy per mole (\"996 J/mol\") or per molecule "
                     "(\"1.654e-21 J\")")


class ReducedUnits:
    """Conversions between SI and reduced Lennard-Jones units.

    Parameters
    ----------
    epsilon_K : float
        Well depth of the reference species as epsilon/k, K.
    sigma_m : float
        Length unit sigma, m.
    molar_mass_kg_mol : float
        Molar mass of the reference species, kg/mol.

    Raises
    ------
    mdsim.errors.SettingError
        When a scale is not a positive finite number.

    Notes
    -----
    T* = T / (eps/k);  rho* = rho_mol N_A sigma^3;  p* = p sigma^3 / eps;
    u* = u_mol / (R eps/k) (energy per particle);  c* = c_mol / R (heat
    capacity per particle in units of k);  t* = t / tau with
    tau = sigma sqrt(m / eps), m = M / N_A, eps = k (eps/k).
    """

    def __init__(self, epsilon_K, sigma_m, molar_mass_kg_mol):
        self.epsilon_K = positive("epsilon_K", epsilon_K, "the well depth epsilon/k in K")
        self.sigma_m = positive("sigma_m", sigma_m, "the length unit sigma in m")
        self.molar_mass_kg_mol = positive("molar_mass_kg_mol", molar_mass_kg_mol,
                                          "the molar mass in kg/mol")

    # -- derived scales ------------------------------------------------------------
    @property
    def epsilon_J(self):
        """Well depth per molecule, J."""
        return K_B * self.epsilon_K

    @property
    def mass_kg(self):
        """Mass of one molecule, kg."""
        return self.molar_mass_kg_mol / N_A

    @property
    def time_s(self):
        """The reduced time unit tau = sigma sqrt(m/eps), s."""
        return self.sigma_m * math.sqrt(self.mass_kg / self.epsilon_J)

    @property
    def pressure_Pa(self):
        """The reduced pressure unit eps / sigma^3, Pa."""
        return self.epsilon_J / self.sigma_m ** 3

    @property
    def density_mol_m3(self):
        """The reduced number-density unit 1/sigma^3 expressed in mol/m^3."""
        return 1.0 / (N_A * self.sigma_m ** 3)

    # -- conversions -----------------------------------------------------------------
    def temperature_to_reduced(self, T_K):
        return T_K / self.epsilon_K

    def temperature_to_K(self, T_red):
        return T_red * self.epsilon_K

    def density_to_reduced(self, rho_mol_m3):
        return rho_mol_m3 / self.density_mol_m3

    def density_to_mol_m3(self, rho_red):
        return rho_red * self.density_mol_m3

    def pressure_to_reduced(self, p_Pa):
        return p_Pa / self.pressure_Pa

    def pressure_to_Pa(self, p_red):
        return p_red * self.pressure_Pa

    def energy_to_reduced(self, u_J_mol):
        """Energy per mole (J/mol) to energy per particle in epsilon."""
        return u_J_mol / (R_GAS * self.epsilon_K)

    def energy_to_J_mol(self, u_red):
        """Energy per particle in epsilon to energy per mole (J/mol)."""
        return u_red * R_GAS * self.epsilon_K

    def heat_capacity_to_reduced(self, c_J_molK):
        """Molar heat capacity (J/(mol K)) to heat capacity per particle in k."""
        return c_J_molK / R_GAS

    def heat_capacity_to_J_molK(self, c_red):
        """Heat capacity per particle in k to J/(mol K)."""
        return c_red * R_GAS

    def time_to_reduced(self, t_s):
        return t_s / self.time_s

    def time_to_s(self, t_red):
        return t_red * self.time_s

    def as_dict(self):
        """The three defining numbers (for file attributes)."""
        return {"epsilon_K": self.epsilon_K, "sigma_m": self.sigma_m,
                "molar_mass_kg_mol": self.molar_mass_kg_mol}

    def __repr__(self):
        return (f"ReducedUnits(epsilon_K={self.epsilon_K!r}, sigma_m={self.sigma_m!r}, "
                f"molar_mass_kg_mol={self.molar_mass_kg_mol!r})")
