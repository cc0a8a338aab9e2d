"""The result of the simulation routes, and the reduced-to-SI energy conversion they share.

The energy, microcanonical and direct routes each report a
:class:`SampledExpansionResult`: the final temperature with its standard
error from the statistics of both end states.
"""
from dataclasses import dataclass, field

import numpy as np

from analysis.results import Result
from mdsim.units import R_GAS

__all__ = ["SampledExpansionResult", "reduced_to_J_mol"]


@dataclass(frozen=True)
class SampledExpansionResult(Result):
    """A free expansion solved from simulation samples.

    Attributes
    ----------
    route : str
        "energy", "microcanonical" or "direct".
    method : str
        How T_f was obtained ("newton", "mbar", "ray estimator",
        "relaxed tail").
    initial_temperature_K : float
    final_temperature_K, final_temperature_stderr_K : float
    delta_T_K, delta_T_stderr_K : float
        T_f - T_i and its standard error (both end states' statistics).
    final_density_mol_m3 : float or None
    details : dict
        Route-specific numbers (keys with units).
    warnings, notes : list of str
    """

    route: str
    method: str
    initial_temperature_K: float
    final_temperature_K: float
    final_temperature_stderr_K: float
    delta_T_K: float
    delta_T_stderr_K: float
    final_density_mol_m3: float = None
    details: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)


def reduced_to_J_mol(u_red, epsilon_K):
    """Reduced per-particle energy (units of epsilon) to J/mol.

    Parameters
    ----------
    u_red : float or ndarray
        Energy per particle in units of epsilon.
    epsilon_K : float
        epsilon / k in K.

    Returns
    -------
    float or ndarray
        u_red * epsilon_K * R, in J/mol.

    Examples
    --------
    >>> round(reduced_to_J_mol(-0.5, 119.8), 3)
    -498.036
    """
    scale = float(epsilon_K) * R_GAS
    if np.ndim(u_red):
        return np.asarray(u_red, dtype=np.float64) * scale
    return float(u_red) * scale
