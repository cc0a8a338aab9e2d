"""Mechanical stability from sampled pressures: negative pressure, dp/drho < 0.

A stable homogeneous fluid has (dp/drho)_T > 0.  A sampled pressure below
zero by more than its error belongs to a stretched (metastable) liquid or to
a box holding a cavity, both inside the vapour-liquid dome for a fluid whose
attraction can hold it together (the LJ fluid below about T* = 1.3).  A
pressure that falls as the density rises, between two sampled densities at
one temperature, shows the loop of the homogeneous states across the dome.
Units: any consistent set (pressures alike, densities alike).
"""
from dataclasses import dataclass

__all__ = ["PRESSURE_Z", "PressureCheck", "pressure_check"]

PRESSURE_Z = 2.0
"""How many standard errors below zero a pressure or slope must be to count."""


@dataclass(frozen=True)
class PressureCheck:
    """Evidence from sampled pressures.

    Attributes
    ----------
    negative_pressure : bool
        p + PRESSURE_Z stderr < 0.
    falling_with_density : bool or None
        dp/drho + PRESSURE_Z stderr < 0 between two densities; None if not given.
    slope, slope_stderr : float or None
        The secant (p_2 - p_1) / (rho_2 - rho_1) and its standard error.
    evidence : list of str
    """

    negative_pressure: bool
    falling_with_density: object
    slope: float = None
    slope_stderr: float = None
    evidence: tuple = ()


def pressure_check(pressure, pressure_stderr, other=None, unit="Pa"):
    """Negative pressure, and a pressure that falls as the density rises.

    Parameters
    ----------
    pressure, pressure_stderr : float
        The sampled pressure of the state and its standard error.
    other : tuple, optional
        ``(rho, p, p_stderr, rho_other, p_other, p_other_stderr)``: the two
        densities and pressures at one temperature for the secant dp/drho.
    unit : str
        The pressure unit, for the evidence text.

    Returns
    -------
    PressureCheck

    Examples
    --------
    >>> pressure_check(-8.8e6, 0.4e6).evidence[0]
    'negative pressure -8.8e+06 +- 4e+05 Pa'
    >>> pressure_check(1.0e5, 0.2e5).negative_pressure
    False
    """
    evidence = []
    negative = pressure + PRESSURE_Z * pressure_stderr < 0.0
    if negative:
        evidence.append(f"negative pressure {pressure:.3g} +- {pressure_stderr:.2g} {unit}")
    falling, slope, s_slope = None, None, None
    if other is not None:
        rho1, p1, s1, rho2, p2, s2 = (float(v) for v in other)
        slope = (p2 - p1) / (rho2 - rho1)
        s_slope = (s1 ** 2 + s2 ** 2) ** 0.5 / abs(rho2 - rho1)
        falling = slope + PRESSURE_Z * s_slope < 0.0
        if falling:
            evidence.append(f"pressure falls as the density rises (dp/drho = {slope:.3g} +- "
                            f"{s_slope:.2g} between the sampled densities)")
    return PressureCheck(negative, falling, slope, s_slope, tuple(evidence))
