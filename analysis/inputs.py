"""Checks of the settings only the analysis package has: virial order, volume ratio, models.

The general checkers (positive numbers, counts, arrays) live in
:mod:`mdsim.checks`; these add the few settings of a free expansion.  Each
returns the value converted or raises :class:`mdsim.errors.SettingError`
(a ``StudyError``) naming the setting, the value, what is allowed and what
to do.

Examples
--------
>>> order(3)
3
>>> volume_ratio("2")
2.0
>>> volume_ratio(0.5)
Traceback (most recent call last):
...
mdsim.errors.SettingError: setting 'volume_ratio' = 0.5: must be > 1 (V_final / V_initial; ...
"""
import math

from mdsim.errors import SettingError, StudyError

__all__ = ["ORDERS", "order", "volume_ratio", "heat_capacity_model", "one_initial_state"]

ORDERS = (2, 3)
"""Truncations of the virial series: after B2 (2) or after B3 (3)."""


def order(order):
    """The virial truncation as an int, 2 or 3."""
    if order not in ORDERS:
        raise SettingError("order", order, "the virial series is truncated after B2 (order 2) "
                           "or after B3 (order 3); use 2 or 3")
    return int(order)


def volume_ratio(volume_ratio):
    """r = V_final / V_initial of a free expansion, a finite float > 1."""
    try:
        r = float(volume_ratio)
    except (TypeError, ValueError):
        raise SettingError("volume_ratio", volume_ratio, "must be a number > 1 (V_final / "
                           "V_initial), e.g. 2 for expansion into an equal evacuated "
                           "volume") from None
    if not (math.isfinite(r) and r > 1.0):
        raise SettingError("volume_ratio", volume_ratio, "must be > 1 (V_final / V_initial; a "
                           "free expansion only enlarges the volume), e.g. 2 for expansion "
                           "into an equal evacuated volume")
    return r


def one_initial_state(pressure, density, pressure_name, density_name):
    """Refuse unless exactly one of an initial pressure and an initial density is given.

    Parameters
    ----------
    pressure, density : float or None
        The two settings as the caller received them.
    pressure_name, density_name : str
        Their names (the arguments of the caller), for the message.
    """
    if (pressure is None) == (density is None):
        raise StudyError(f"initial state: give exactly one of the pressure '{pressure_name}' (Pa) "
                         f"and the density '{density_name}' (mol/m^3); got {pressure_name} = "
                         f"{pressure!r}, {density_name} = {density!r}")


def heat_capacity_model(cv_ig, methods=("cv", "u")):
    """``cv_ig`` itself, once it offers every method in ``methods``.

    Parameters
    ----------
    cv_ig : object
        Ideal-gas heat-capacity model (``analysis.heatcapacity``): ``cv(T)``
        in J/(mol K), ``u(T)`` in J/mol.
    methods : tuple of str
        The methods the caller needs.
    """
    if not all(callable(getattr(cv_ig, m, None)) for m in methods):
        listed = " and ".join(f"{m}(T)" for m in methods)
        noun = "methods" if len(methods) > 1 else "a method"
        raise StudyError(
            f"ideal-gas heat capacity {cv_ig!r}: expected a heat-capacity model with {noun} "
            f"{listed} (cv in J/(mol K), u in J/mol; see analysis.heatcapacity, for example "
            "ConstantHeatCapacity)")
    return cv_ig
