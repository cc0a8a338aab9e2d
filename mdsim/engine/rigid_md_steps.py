"""Rigid-molecule MD: the default time step and the drift of the conserved energy."""
import math

import numpy as np

from mdsim.engine.integrator import default_time_step, energy_drift

__all__ = ["ROTATION_STEP", "rigid_time_step", "drift_K_per_ns"]

#: Default largest rotation per step at the rms angular speed sqrt(2 kT / I), rad.
ROTATION_STEP = 0.05



def rigid_time_step(temperature, mass, inertia):
    """The default time step of rigid linear molecules at kT/epsilon = ``temperature`` (reduced).

    The smaller of the atomic rule (:func:`mdsim.engine.integrator.default_time_step`
    for the lightest ``mass``) and the step that turns a molecule of the
    smallest ``inertia`` at the rms angular speed sqrt(2 kT / I) by
    ``ROTATION_STEP`` radian.

    >>> round(rigid_time_step(8.6, 1.0, 0.0248), 6)  # N2 at 300 K: the translation decides
    0.001705
    """
    rotation = ROTATION_STEP / math.sqrt(2.0 * float(temperature) / float(np.min(inertia)))
    return min(default_time_step(temperature, np.atleast_1d(mass)), rotation)


def drift_K_per_ns(e_conserved_t, interval, time_step, units):
    """Drift of the conserved energy per molecule, K per ns (least-squares slope).

    Parameters
    ----------
    e_conserved_t : ndarray, shape=(n_samples,)
        ``RigidMDSampler.run(...)["e_conserved"]`` (epsilon per molecule).
    interval : int
        Steps between samples.
    time_step : float
        Reduced time step.
    units : mdsim.units.ReducedUnits
        epsilon/k and the time unit.

    Returns
    -------
    float
        d(E/N k)/dt in K/ns.

    Examples
    --------
    >>> from mdsim.units import ReducedUnits
    >>> u = ReducedUnits(34.897, 3.3211e-10, 0.0280134)  # tau = 3.26 ps
    >>> e = 1e-4 * np.arange(11)  # 1e-4 epsilon per sample of 10 steps of 0.002
    >>> round(drift_K_per_ns(e, 10, 0.002, u), 1)
    53.5
    """
    slope = energy_drift(e_conserved_t, interval, time_step)  # epsilon per tau per molecule
    return slope * units.epsilon_K * 1e-9 / units.time_s
