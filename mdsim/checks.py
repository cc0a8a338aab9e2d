"""The one set of checkers for settings: positive numbers, whole-number counts, arrays.

Each checker returns the value converted (float, int or float array) or
raises :class:`mdsim.errors.SettingError` naming the setting, the value,
what is allowed and, through ``hint``, what to do.  Every layer uses these,
from the engine's samplers to the command line (which turns the setting
into the option that gave it), so that one kind of mistake reads the same
everywhere.

Examples
--------
>>> positive("temperature", "1.5")
1.5
>>> count("particles", 500)
500
>>> count("particles", 0)
Traceback (most recent call last):
...
mdsim.errors.SettingError: setting 'particles' = 0: must be a whole number >= 1
"""
import math
import numbers

import numpy as np

from mdsim.errors import SettingError

__all__ = ["positive", "non_negative", "count", "positive_array", "non_negative_array"]


def _tail(hint):
    return f"; {hint}" if hint else ""


def positive(name, value, hint=""):
    """``value`` as a positive finite float.

    Parameters
    ----------
    name : str
        The setting, as the user knows it.
    value : object
        Anything ``float()`` takes.
    hint : str, optional
        What the setting is and how to give it (units, an example).

    Returns
    -------
    float
    """
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise SettingError(name, value, f"must be a number{_tail(hint)}") from None
    if not (math.isfinite(x) and x > 0.0):
        raise SettingError(name, value, f"must be a positive finite number{_tail(hint)}")
    return x


def non_negative(name, value, hint=""):
    """``value`` as a finite float >= 0 (see :func:`positive`)."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise SettingError(name, value, f"must be a number{_tail(hint)}") from None
    if not (math.isfinite(x) and x >= 0.0):
        raise SettingError(name, value, f"must be a finite number >= 0{_tail(hint)}")
    return x


def count(name, value, minimum=1, hint=""):
    """``value`` as an int >= ``minimum``: a whole number, not a float or a bool.

    Parameters
    ----------
    name : str
    value : object
        An integer (Python or NumPy); ``True`` and ``2.0`` are refused.
    minimum : int
        The smallest value allowed (1 for counts of things, 0 for seeds).
    hint : str, optional

    Returns
    -------
    int
    """
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < minimum:
        raise SettingError(name, value, f"must be a whole number >= {minimum}{_tail(hint)}")
    return int(value)


def positive_array(name, value, hint=""):
    """``value`` as a non-empty float array of positive finite numbers."""
    arr = np.asarray(value, dtype=float)
    if arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0.0):
        raise SettingError(name, value, f"must be positive and finite{_tail(hint)}")
    return arr


def non_negative_array(name, value, hint=""):
    """``value`` as a non-empty float array of finite numbers >= 0."""
    arr = np.asarray(value, dtype=float)
    if arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr < 0.0):
        raise SettingError(name, value, f"must be >= 0 and finite{_tail(hint)}")
    return arr
