"""The microcanonical route of a free expansion: Ray's temperature estimator at V_f.

A microcanonical Monte Carlo run at the final volume, with the energy E of
the initial state, samples the kinetic energy K = E - U; the temperature
follows from 1 / (k T) = (F/2 - 1) <1 / (E - U)> (J. R. Ray, Phys. Rev.
A 44, 4061, 1991).  Inputs are the engine's reduced per-particle series;
the result is in kelvin through the reference well depth ``epsilon_K``.
"""
import math

import numpy as np

from analysis import stats
from analysis.expansion.sampled import SampledExpansionResult
from mdsim.checks import count, positive
from mdsim.errors import StudyError

__all__ = ["microcanonical_route"]


def _kinetic_series(kinetic_t_red):
    """The checked per-sample kinetic energies (all > 0)."""
    K_t = stats.check_series(kinetic_t_red, "kinetic_t_red")
    if np.any(K_t <= 0.0):
        raise StudyError("microcanonical route: every kinetic energy in 'kinetic_t_red' must be "
                         f"> 0 (E > U); found {K_t[K_t <= 0][0]:g}. The run's energy E is below "
                         "a sampled potential energy: check how E was set.")
    return K_t


def _ray_temperature(K_t, N, F):
    """Ray's estimator: kT_f / epsilon, its statistical error and the mean of 1/(N K)."""
    if F <= 2.0:
        raise StudyError(f"microcanonical route: F = f N = {F:g} kinetic degrees of freedom; the "
                         "estimator needs F > 2.")
    inv = stats.mean_and_stderr(1.0 / (N * K_t))
    T_f_red = 1.0 / ((F / 2.0 - 1.0) * inv.mean)
    return T_f_red, T_f_red ** 2 * (F / 2.0 - 1.0) * inv.stderr, inv


def _notes(cv_red, offset, s_offset):
    """The notes of a microcanonical result."""
    notes = ["1/(kT) = (F/2 - 1) <1/(E - U)> (Ray 1991); classical constant c_v_ig = f/2 k",
             "delta_T_stderr_K includes the initial-energy stderr divided by "
             + ("f/2 (kinetic heat capacity)" if cv_red is None else "the given cv_red")]
    if offset or s_offset:
        notes.append(f"the run's mean energy lies {offset:.3g} epsilon per particle from E: "
                     "T_f moved by -offset/c_v (same c_v)")
    return notes


def microcanonical_route(kinetic_t_red, n_particles, dof_per_particle, epsilon_K, T_i,
                         initial_energy_stderr_red=0.0, cv_red=None, rho_f=None,
                         energy_offset_red=(0.0, 0.0)):
    """Final temperature from a microcanonical Monte Carlo run at V_f.

    Parameters
    ----------
    kinetic_t_red : array_like, shape=(n_samples,)
        Per-sample kinetic energy per particle, K_t = (E - U_t) / N, in
        epsilon (all > 0).
    n_particles : int
        N.
    dof_per_particle : float
        f, kinetic degrees of freedom per particle (3 for atoms, 5 for a
        rigid linear molecule); F = f N in all.
    epsilon_K : float
        epsilon / k in K (the reduced temperature unit).
    T_i : float
        Initial temperature, K.
    initial_energy_stderr_red : float
        Standard error of the initial-state energy per particle (epsilon)
        that set E; propagated as s_E / c_v.
    cv_red : float, optional
        Heat capacity per particle at the final state in k, used for that
        propagation; f / 2 (the kinetic part) by default.
    rho_f : float, optional
        Final density, mol/m^3, recorded in the result.
    energy_offset_red : (float, float)
        The mean energy per particle of the sampled run minus E, with its
        standard error (epsilon): nonzero when the run conserves another
        energy than E's (MD with a shifted potential) or drifts; T_f is
        moved by -offset / c_v and the offset's error added.

    Returns
    -------
    SampledExpansionResult

    Notes
    -----
    1 / (k T) = (F/2 - 1) <1 / (E - U)>, E - U = N K_t (J. R. Ray, Phys.
    Rev. A 44, 4061, 1991).  stderr from the statistical inefficiency of
    1 / (N K_t): s_T = T^2 (F/2 - 1) s_<1/(E-U)>.  A run at the energy
    E + delta gives T(E) = T(E + delta) - delta / c_v to first order in
    delta (c_v = dE/dT per particle at fixed volume).

    Examples
    --------
    100 atoms whose kinetic energy stays at 1.5 epsilon per particle: the
    estimator gives N K / (F/2 - 1) = 150 / 149 in kT/epsilon (the
    microcanonical finite-size factor), 100.6711 K for epsilon/k = 100 K:

    >>> import numpy as np
    >>> res = microcanonical_route(np.full(50, 1.5), 100, 3, 100.0, 100.0)
    >>> round(res.final_temperature_K, 4), round(res.final_temperature_stderr_K, 9)
    (100.6711, 0.0)
    """
    K_t = _kinetic_series(kinetic_t_red)
    N = count("n_particles", n_particles, hint="the number of particles")
    f = positive("dof_per_particle", dof_per_particle, "3 for atoms, 5 for rigid linear molecules")
    eps = positive("epsilon_K", epsilon_K, "epsilon/k of the reduced units, in K")
    T_i = positive("T_i", T_i, "the initial temperature in K")
    F = f * N
    T_f_red, s_stat, inv = _ray_temperature(K_t, N, F)
    cv = f / 2.0 if cv_red is None else positive("cv_red", cv_red, "heat capacity per particle in k")
    s_e = float(initial_energy_stderr_red) / cv
    offset, s_offset = (float(x) for x in energy_offset_red)
    T_f_red -= offset / cv
    s_stat = math.hypot(s_stat, s_offset / cv)
    T_f = T_f_red * eps
    err_f = s_stat * eps
    err_d = math.hypot(s_stat, s_e) * eps
    return SampledExpansionResult(
        route="microcanonical", method="ray estimator", initial_temperature_K=T_i,
        final_temperature_K=T_f, final_temperature_stderr_K=err_f, delta_T_K=T_f - T_i,
        delta_T_stderr_K=err_d, final_density_mol_m3=None if rho_f is None else float(rho_f),
        details={"final_temperature_red": T_f_red, "statistical_inefficiency": inv.g,
                 "samples_discarded": inv.t0, "samples_used": inv.n_used,
                 "kinetic_dof_total": F, "energy_offset_red": offset,
                 "energy_offset_stderr_red": s_offset},
        notes=_notes(cv_red, offset, s_offset))
