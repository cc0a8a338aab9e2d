"""The numbers of a state-point record: finite floats or None, ``{value, stderr}`` pairs.

JSON has no NaN or infinity, so every number that goes into a record
passes :func:`finite_or_none`; entries with an error are ``{value,
stderr}`` dicts (:func:`value_stderr_dict`), read back by
:func:`value_stderr`.

>>> finite_or_none(float("nan")) is None, value_stderr({"value": 2.0, "stderr": 0.1})
(True, (2.0, 0.1))
"""
import math

__all__ = ["finite_or_none", "value_stderr", "value_stderr_dict", "one_line"]


def finite_or_none(x):
    """A finite float, or None."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def one_line(exc):
    """An exception's message on one line (its whitespace runs made single spaces)."""
    return " ".join(str(exc).split())


def value_stderr(entry):
    """(value, stderr) from a {value, stderr} dict, a number or None; non-finite to None."""
    if entry is None:
        return None, None
    if isinstance(entry, dict):
        return finite_or_none(entry.get("value")), finite_or_none(entry.get("stderr"))
    return finite_or_none(entry), None


def value_stderr_dict(entry):
    """{value, stderr} (finite numbers or None) of a task result's entry, or None."""
    value, stderr = value_stderr(entry)
    return None if value is None else {"value": value, "stderr": stderr}
