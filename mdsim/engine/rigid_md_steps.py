"""Rigid-molecule MD: the default time step, the sampler's temperature, the drift of the conserved
energy and the kinetic temperatures of each molecule type."""
import math

import numpy as np

from mdsim.checks import positive
from mdsim.engine.integrator import default_time_step, energy_drift
from mdsim.errors import SettingError

__all__ = ["ROTATION_STEP", "rigid_time_step", "sampler_temperature", "drift_K_per_ns",
           "temperatures_by_type"]

#: Default largest rotation per step at the rms angular speed sqrt(2 kT / I), rad.
ROTATION_STEP = 0.05



def rigid_time_step(temperature, mass, inertia):
    """The default time step of rigid linear molecules at kT/epsilon = ``temperature`` (reduced).

    The smaller of the atomic rule (:func:`mdsim.engine.integrator.default_time_step`
    for the lightest ``mass``) and the step that turns a molecule of the
    smallest positive ``inertia`` (atoms of a mixture, 0, do not rotate) at the
    rms angular speed sqrt(2 kT / I) by ``ROTATION_STEP`` radian.

    >>> round(rigid_time_step(8.6, 1.0, 0.0248), 6)  # N2 at 300 K: the translation decides
    0.001705
    """
    inertia = np.atleast_1d(np.asarray(inertia, dtype=float))
    if not np.any(inertia > 0.0):
        return default_time_step(temperature, np.atleast_1d(mass))
    rotation = ROTATION_STEP / math.sqrt(2.0 * float(temperature) / float(np.min(
        inertia[inertia > 0.0])))
    return min(default_time_step(temperature, np.atleast_1d(mass)), rotation)


def sampler_temperature(temperature, method, momenta):
    """The kT/epsilon of a rigid-molecule MD sampler: positive, or None for "md-nve" started
    from given ``momenta`` (then the sampler has no thermostat at all).

    >>> sampler_temperature(8.6, "md-nvt", None), sampler_temperature(None, "md-nve", ([], []))
    (8.6, None)
    """
    if temperature is not None:
        return positive("temperature", temperature, "kT/epsilon")
    if method == "md-nvt" or momenta is None:
        raise SettingError("temperature", None, "md-nvt and a start without given momenta "
                           "need kT/epsilon")
    return None


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


def temperatures_by_type(v_ni, l_ni, mass_n, inertia_n, type_n, n_types):
    """Kinetic temperatures of the translations and the rotations of each molecule type.

    Parameters
    ----------
    v_ni, l_ni : ndarray, shape=(n, 3), reduced
        Velocities and angular momenta.
    mass_n, inertia_n : ndarray, shape=(n,), reduced
        Masses and moments of inertia (0 for an atom).
    type_n : ndarray, shape=(n,), int
    n_types : int

    Returns
    -------
    t_trans_t, t_rot_t : ndarray, shape=(n_types,), kT/epsilon
        2 K_t / F_t of each type; NaN for a type without molecules (and the
        rotations of atoms).

    Notes
    -----
    With the total momentum held at zero the canonical momenta are normal
    with that constraint, and a molecule of mass m_n carries on average
    (3/2) kT (1 - m_n / M) of translational kinetic energy (M the total
    mass): F_trans,t = 3 (N_t - M_t / M), which sums to 3N - 3 over the
    types (common practice, no source).  Rotations: F_rot,t = 2 N_t for a
    linear rotor.

    Examples
    --------
    Two molecules of mass 1 and 3 moving apart with zero total momentum: the
    kinetic energy 6 over 3N - 3 = 3 degrees of freedom, kT = 4, held by
    each in proportion to its share 1 - m/M:

    >>> v = np.array([[3.0, 0, 0], [-1.0, 0, 0]])
    >>> t, r = temperatures_by_type(v, np.zeros((2, 3)), np.array([1.0, 3.0]),
    ...                            np.zeros(2), np.array([0, 1]), 2)
    >>> t.tolist(), bool(np.isnan(r).all())
    ([4.0, 4.0], True)
    """
    type_n = np.asarray(type_n)
    k_trans_n = 0.5 * mass_n * np.sum(v_ni * v_ni, axis=1)
    rotor = inertia_n > 0.0
    k_rot_n = np.zeros_like(k_trans_n)
    k_rot_n[rotor] = 0.5 * np.sum(l_ni[rotor] ** 2, axis=1) / inertia_n[rotor]
    m_total = float(np.sum(mass_n))
    t_trans, t_rot = np.full(n_types, np.nan), np.full(n_types, np.nan)
    for t in range(n_types):
        mine = type_n == t
        dof = 3.0 * (np.count_nonzero(mine) - np.sum(mass_n[mine]) / m_total)
        if dof > 0.0:
            t_trans[t] = 2.0 * np.sum(k_trans_n[mine]) / dof
        n_rot = np.count_nonzero(mine & rotor)
        if n_rot:
            t_rot[t] = np.sum(k_rot_n[mine]) / n_rot  # 2 K / (2 N_rot)
    return t_trans, t_rot
