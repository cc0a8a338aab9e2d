"""How numbers with an uncertainty are written for people: the one rule.

A standard error is written to two significant figures and its value is
rounded to the same decimal place (common practice for reporting measured
values, no source).  Every human-facing output (text tables, report.md,
status lines, plot labels) writes value and error through
:func:`value_with_error`; JSON and CSV files keep full precision.

Examples
--------
>>> value_with_error(60.2834, 0.0912, "bar")
'60.283 ± 0.091 bar'
>>> value_with_error(-5.4631, 0.01423, "K")
'-5.463 ± 0.014 K'
>>> value_with_error(12345.0, 234.0)
'12350 ± 230'
>>> value_with_error(-37.0, None, "K")
'-37 K'
"""
import math
from decimal import ROUND_HALF_UP, Decimal

__all__ = ["value_with_error", "round_to_error", "plain"]


def _decimals(stderr):
    """Decimal places that leave ``stderr`` with two significant figures (may be negative)."""
    return 1 - int(math.floor(math.log10(abs(stderr))))


def round_to_error(value, stderr):
    """(value, stderr) rounded: the error to two significant figures, the value to match.

    Parameters
    ----------
    value, stderr : float
        ``stderr`` > 0 and finite.

    Returns
    -------
    (str, str)
        The two numbers as text, with the same number of decimals.
    """
    d = _decimals(stderr)
    e = _round(stderr, d)
    if e != 0 and _decimals(e) != d:  # 0.0996 rounds to 0.10: one figure fewer
        d = _decimals(e)
        e = _round(stderr, d)
    v = _round(value, d)
    return _text(v, d), _text(e, d)


def _round(x, d):
    """x rounded half away from zero to d decimals (d < 0: to tens, hundreds...)."""
    return Decimal(repr(float(x))).quantize(Decimal(1).scaleb(-d), rounding=ROUND_HALF_UP)


def _text(x, d):
    return f"{x:.{d}f}" if d > 0 else f"{int(x)}"


def plain(value, digits=5):
    """A number without an error: ``digits`` significant figures, or 'n/a'."""
    if value is None or not math.isfinite(float(value)):
        return "n/a"
    return f"{float(value):.{digits}g}"


def value_with_error(value, stderr, unit="", digits=5):
    """'value ± error unit' by the two-figure rule; the value alone when there is no error.

    Parameters
    ----------
    value : float or None
    stderr : float or None
        None, zero or non-finite: no error is written (a virial route, a
        set value), the value gets ``digits`` significant figures.
    unit : str, optional
    digits : int
        Significant figures of a value written without an error.

    Returns
    -------
    str
    """
    tail = f" {unit}" if unit else ""
    if value is None or not math.isfinite(float(value)):
        return "n/a"
    if stderr is None or not math.isfinite(float(stderr)) or float(stderr) <= 0.0:
        return f"{plain(value, digits)}{tail}"
    v, e = round_to_error(value, stderr)
    if v in ("-0", "-0.0") or (v.startswith("-") and float(v) == 0.0):
        v = v[1:]
    return f"{v} ± {e}{tail}"
