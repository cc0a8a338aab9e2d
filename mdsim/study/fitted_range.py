"""The temperature range a pair potential was fitted over, and warnings far outside it.

``[potential] fitted_range = ["80 K", "400 K"]`` (optional) states the
temperatures of the data the potential's parameters were fitted to.  A
potential fitted there says little about temperatures far away (an
effective pair potential absorbs many-body and quantum effects of its
fitting range), so the tool warns when a study temperature or an inversion
temperature lies more than a factor :data:`FAR_FACTOR` beyond either end:
below T_low / FAR_FACTOR or above FAR_FACTOR x T_high.
"""
__all__ = ["FAR_FACTOR", "MARK", "check_fitted_range", "far_outside", "fitted_range_warning",
           "inversion_warnings"]

FAR_FACTOR = 1.5
"""'Far outside' the fitted range: beyond T_high x 1.5 or below T_low / 1.5."""
MARK = "[potential] fitted_range"
"""Every fitted-range warning names the setting with these words (the command line picks
them out of a state point's warnings)."""


def check_fitted_range(ctx, table, value):
    """The checked range (T_low, T_high) in K from a list of two temperatures already in K.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    table : str
        Where the key is, for messages.
    value : list of float
        The two temperatures, K (converted by the schema).

    Raises
    ------
    StudyError
        Not two temperatures, or not in increasing order.
    """
    if len(value) != 2:
        ctx.fail(table, "fitted_range", value, f"has {len(value)} temperatures",
                 "two: the lowest and the highest temperature of the fit",
                 'for example fitted_range = ["80 K", "400 K"]')
    lo, hi = float(value[0]), float(value[1])
    if not lo < hi:
        ctx.fail(table, "fitted_range", value, "the first temperature is not below the second",
                 "[lowest, highest]", "write the lower end first")
    return (lo, hi)


def far_outside(fitted_range_K, temperature_K):
    """True when a temperature lies far outside the range (see :data:`FAR_FACTOR`).

    >>> far_outside((80.0, 400.0), 590.0), far_outside((80.0, 400.0), 610.0)
    (False, True)
    >>> far_outside((80.0, 400.0), 50.0), far_outside(None, 5000.0)
    (True, False)
    """
    if fitted_range_K is None or temperature_K is None:
        return False
    lo, hi = fitted_range_K
    return temperature_K > FAR_FACTOR * hi or temperature_K < lo / FAR_FACTOR


def fitted_range_warning(fitted_range_K, temperatures_K, what):
    """One warning naming the temperatures far outside the fitted range, or None.

    Parameters
    ----------
    fitted_range_K : (float, float) or None
        ``Gas.fitted_range_K``; None: nothing is said.
    temperatures_K : sequence of float
        The temperatures to check (None entries are skipped).
    what : str
        What they are, for the message ("the zero-density Joule inversion temperature").

    Examples
    --------
    >>> fitted_range_warning((80.0, 400.0), [3018.0], "the Joule inversion temperature")
    "the Joule inversion temperature 3018 K lies far outside the potential's fitted range \
80 K to 400 K (beyond a factor 1.5 of either end, [potential] fitted_range): the potential \
is used far from the data it was fitted to, an extrapolation"
    >>> fitted_range_warning((80.0, 400.0), [295.0], "the initial temperature") is None
    True
    """
    far = sorted({float(t) for t in temperatures_K if far_outside(fitted_range_K, t)})
    if not far:
        return None
    lo, hi = fitted_range_K
    shown = ", ".join(f"{t:.4g}" for t in far[:5]) + (", ..." if len(far) > 5 else "")
    verb = "lies" if len(far) == 1 else "lie"
    return (f"{what} {shown} K {verb} far outside the potential's fitted range {lo:g} K to "
            f"{hi:g} K (beyond a factor {FAR_FACTOR:g} of either end, {MARK}): the "
            "potential is used far from the data it was fitted to, an extrapolation")


def inversion_warnings(fitted_range_K, inversion):
    """Warnings for the inversion temperatures of an inversion result far outside the range.

    Parameters
    ----------
    fitted_range_K : (float, float) or None
    inversion : dict
        ``joule_inversion_zero_density_K``, ``joule_thomson_inversion_zero_pressure_K`` and
        ``joule_inversion_curve`` (a list of dicts with ``temperature_K``).

    Returns
    -------
    list of str

    Examples
    --------
    >>> inv = {"joule_inversion_zero_density_K": 3018.0,
    ...        "joule_thomson_inversion_zero_pressure_K": 771.0,
    ...        "joule_inversion_curve": [{"temperature_K": 2990.0}]}
    >>> [w.split(" K ")[0] for w in inversion_warnings((80.0, 400.0), inv)]
    ['the zero-density Joule (free-expansion) inversion temperature 3018', \
'the zero-pressure Joule-Thomson inversion temperature 771', \
'Joule inversion curve temperatures 2990']
    """
    checks = (([inversion.get("joule_inversion_zero_density_K")],
               "the zero-density Joule (free-expansion) inversion temperature"),
              ([inversion.get("joule_thomson_inversion_zero_pressure_K")],
               "the zero-pressure Joule-Thomson inversion temperature"),
              ([p.get("temperature_K") for p in inversion.get("joule_inversion_curve") or []],
               "Joule inversion curve temperatures"))
    out = [fitted_range_warning(fitted_range_K, temps, what) for temps, what in checks]
    return [w for w in out if w is not None]
