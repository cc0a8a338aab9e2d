"""Input checks shared by the analysis modules (private).

Each checker converts a user-supplied setting, or raises
:class:`mdsim.errors.StudyError` naming the setting, the value, the allowed
range and the fix.
"""
import math

from mdsim.errors import StudyError

ORDERS = (2, 3)
"""Truncations of the virial series: after B2 (2) or after B3 (3)."""


def positive(name, value, hint):
    """``value`` as a positive finite float.

    Parameters
    ----------
    name : str
        The setting, as the user knows it.
    value : object
    hint : str
        What the setting is and how to give it, appended to the message.
    """
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise StudyError(f"setting '{name}' = {value!r}: must be a number; {hint}") from None
    if not (math.isfinite(value) and value > 0.0):
        raise StudyError(f"setting '{name}' = {value!r}: must be a positive finite number; {hint}")
    return value


def order(order):
    """The virial truncation as an int, 2 or 3."""
    if order not in ORDERS:
        raise StudyError(f"setting 'order' = {order!r}: the virial series is truncated after "
                         "B2 (order 2) or after B3 (order 3); use 2 or 3")
    return int(order)


def volume_ratio(volume_ratio):
    """r = V_final / V_initial of a free expansion, a finite float > 1."""
    try:
        r = float(volume_ratio)
    except (TypeError, ValueError):
        raise StudyError(f"setting 'volume_ratio' = {volume_ratio!r} must be a number > 1 "
                         "(V_final / V_initial), e.g. 2 for expansion into an equal "
                         "evacuated volume.") from None
    if not (math.isfinite(r) and r > 1.0):
        raise StudyError(f"setting 'volume_ratio' = {volume_ratio!r} must be > 1 (V_final / "
                         "V_initial; a free expansion only enlarges the volume), e.g. 2 for "
                         "expansion into an equal evacuated volume.")
    return r


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
