"""The temperature of a microcanonical Monte Carlo run (Ray 1991).

At fixed total energy E the configurations of ``mc-nve``
(:mod:`mdsim.engine.montecarlo`) carry the weight (E - U)^(F/2 - 1); the
temperature is then an average over the sampled kinetic energies E - U.

>>> round(nve_temperature([1.5] * 10, 100, 3), 6)
1.006711
"""
import numpy as np

from mdsim.errors import StudyError

__all__ = ["nve_temperature"]


def nve_temperature(kinetic_t, n_particles, dof_per_particle=3):
    """Temperature estimate of a microcanonical Monte Carlo run.

    Parameters
    ----------
    kinetic_t : array_like, shape=(n_samples,), float64
        Per-particle kinetic energy (E - U) / N of each sample (the
        sampler's "kinetic" series), reduced units.
    n_particles : int
    dof_per_particle : int or float
        f, kinetic degrees of freedom per particle (F = f N in all).

    Returns
    -------
    float
        kT in reduced units.

    Notes
    -----
    1/kT = (F/2 - 1) <1 / (E - U)> (J. R. Ray, Phys. Rev. A 44, 4061,
    1991), with E - U = N * kinetic.  Its uncertainty is left to the
    analysis package (statistical inefficiency of 1/kinetic).
    """
    k_t = np.asarray(kinetic_t, dtype=float)
    if k_t.ndim != 1 or k_t.size == 0 or np.any(~np.isfinite(k_t)) or np.any(k_t <= 0.0):
        raise StudyError("nve_temperature: 'kinetic_t' must be a non-empty 1-D series of "
                         "positive finite per-particle kinetic energies")
    n = int(n_particles)
    f_total = float(dof_per_particle) * n
    if n < 1 or f_total <= 2.0:
        raise StudyError(f"nve_temperature: n_particles = {n_particles!r} with dof_per_particle = "
                         f"{dof_per_particle!r} gives F = {f_total}; need F > 2")
    mean_inv = float(np.mean(1.0 / (n * k_t)))
    return 1.0 / ((0.5 * f_total - 1.0) * mean_inv)
