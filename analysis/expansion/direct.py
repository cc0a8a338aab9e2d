"""The direct route of a free expansion: NVE molecular dynamics after the box is enlarged.

The gas is equilibrated by NVT MD at the initial state, the box is enlarged
to r times its volume and the run continues at constant energy; the final
temperature is the mean of the relaxed tail of the instantaneous
temperature, corrected from the model (truncated and shifted) potential
that MD conserves to the full one.  Inputs are the engine's reduced
per-particle series (energies in epsilon, temperatures kT/epsilon); the
result is in kelvin through the reference well depth ``epsilon_K``.

T_f is the mean of the relaxed tail of the temperature series (the
transient cut by equilibration detection), then two corrections, both
divided by c_v:

- energy anchor: the trajectory's conserved energy per particle,
  E = <K_t + u_model,t> with K_t = kinetic_dof T_t / (2 N), is moved to the
  canonical mean of the initial state, kinetic_dof T_i / (2 N) +
  <u_model,i>; one canonical snapshot's energy scatters by about
  T_i sqrt(c_v / N), which would otherwise dominate the error;
- model to full potential: MD conserves the model energy, the gas the full
  one, so T_f += -[<u_full - u_model>_f - <u_full - u_model>_i] / c_v
  (docs/physics.md section 3.3).
"""
import math

import numpy as np

from analysis import stats
from analysis.expansion.sampled import SampledExpansionResult
from mdsim.checks import count, positive
from mdsim.errors import StudyError

__all__ = ["direct_route"]


def _checked_series(temperature_t_red, u_model_t_red, u_full_t_red, u_model_initial_t_red,
                    u_full_initial_t_red):
    """The five series as float arrays, once their lengths match pairwise."""
    T_t = stats.check_series(temperature_t_red, "temperature_t_red")
    um_t = stats.check_series(u_model_t_red, "u_model_t_red")
    uf_t = stats.check_series(u_full_t_red, "u_full_t_red")
    um_i = stats.check_series(u_model_initial_t_red, "u_model_initial_t_red")
    uf_i = stats.check_series(u_full_initial_t_red, "u_full_initial_t_red")
    if not (T_t.size == um_t.size == uf_t.size):
        raise StudyError("direct route: 'temperature_t_red', 'u_model_t_red' and "
                         f"'u_full_t_red' must have one value per sample; got {T_t.size}, "
                         f"{um_t.size}, {uf_t.size}.")
    if um_i.size != uf_i.size:
        raise StudyError("direct route: the initial-state series 'u_model_initial_t_red' and "
                         f"'u_full_initial_t_red' differ in length ({um_i.size}, {uf_i.size}).")
    return T_t, um_t, uf_t, um_i, uf_i


def _relaxed_tail(T_t, um_t, uf_t, um_i, uf_i, T_i_red, kin, cv):
    """The corrected final temperature in reduced units (see :func:`direct_route`).

    Returns
    -------
    dict
        ``T_f``, ``stderr``, ``tail`` (the SeriesMean of the relaxed tail),
        ``anchor``, ``correction`` (kT/epsilon), ``e_traj``, ``e_drift``
        (mean and scatter of the model energy per particle, epsilon).
    """
    tail = stats.mean_and_stderr(T_t)
    e_traj = float(np.mean(kin * T_t + um_t))
    e_drift = float(np.std(kin * T_t + um_t))
    um_i_mean = stats.mean_and_stderr(um_i)
    e_canonical = kin * T_i_red + um_i_mean.mean
    anchor = -(e_traj - e_canonical) / cv
    d_i = stats.mean_and_stderr(uf_i - um_i)
    t0 = tail.t0
    d_f = stats.mean_and_stderr(uf_t[t0:] - um_t[t0:], discard_equilibration=False)
    correction = -(d_f.mean - d_i.mean) / cv
    err = math.sqrt(tail.stderr ** 2 + (um_i_mean.stderr / cv) ** 2
                    + (d_i.stderr ** 2 + d_f.stderr ** 2) / cv ** 2)
    return {"T_f": tail.mean + anchor + correction, "stderr": err, "tail": tail,
            "anchor": anchor, "correction": correction, "e_traj": e_traj, "e_drift": e_drift}


def _messages(fit, epsilon_K, cv, cv_given):
    """(warnings, notes) of the result; c_v is the kinetic part unless ``cv_given``."""
    warnings = []
    if fit["e_drift"] > 1e-3 * abs(fit["e_traj"]) + 1e-6:
        warnings.append(f"direct route: the model energy per particle scatters by "
                        f"{fit['e_drift']:.3g} epsilon during the NVE run (mean "
                        f"{fit['e_traj']:.6g}); reduce the time step.")
    notes = ["T_f is the mean of the relaxed tail of the NVE temperature (equilibration detection)",
             f"T_f corrected from the model (truncated and shifted) to the full potential by "
             f"{fit['correction'] * epsilon_K:+.4g} K = -Delta<U_full - U_model>/c_v between the "
             "end states",
             "T_f anchored to the canonical mean energy of the initial state: "
             f"{fit['anchor'] * epsilon_K:+.4g} K",
             f"c_v = {cv:.4g} k per particle "
             + ("(given)" if cv_given else "(kinetic part only)")]
    return warnings, notes


def direct_route(temperature_t_red, u_model_t_red, u_full_t_red, u_model_initial_t_red,
                 u_full_initial_t_red, T_i_red, n_particles, epsilon_K, cv_red=None,
                 kinetic_dof=None, rho_f=None):
    """Final temperature from NVE MD after the box was enlarged (direct route).

    Parameters
    ----------
    temperature_t_red : array_like, shape=(n_samples,)
        Instantaneous temperature during the NVE run, kT/epsilon, from the
        kinetic energy over ``kinetic_dof`` degrees of freedom.
    u_model_t_red, u_full_t_red : array_like, shape=(n_samples,)
        Potential energy per particle (epsilon) of the model (truncated and
        shifted, what MD conserves) and of the full potential (untruncated,
        with tail correction), at the same samples.
    u_model_initial_t_red, u_full_initial_t_red : array_like
        The same two at the initial state (the NVT equilibration series).
    T_i_red : float
        Initial (thermostat) temperature, kT/epsilon.
    n_particles : int
        N.
    epsilon_K : float
        epsilon / k in K.
    cv_red : float, optional
        Heat capacity per particle at the final state, in k; the kinetic
        part kinetic_dof / (2 N) by default (a dilute gas).
    kinetic_dof : int, optional
        Kinetic degrees of freedom, 3 N - 3 (total momentum removed) by
        default.
    rho_f : float, optional
        Final density, mol/m^3, recorded in the result.

    Returns
    -------
    SampledExpansionResult

    Notes
    -----
    The mean of the relaxed tail plus the energy anchor and the
    model-to-full correction of the module docstring; the standard error
    adds the four statistical errors in quadrature.

    Examples
    --------
    An ideal gas (no potential energy) keeps its temperature, T* = 1.3 or
    130 K for epsilon/k = 100 K:

    >>> import numpy as np
    >>> zeros = np.zeros(100)
    >>> res = direct_route(np.full(100, 1.3), zeros, zeros, zeros, zeros, 1.3, 64, 100.0)
    >>> round(res.final_temperature_K, 9), round(res.delta_T_K, 9)
    (130.0, 0.0)
    """
    T_t, um_t, uf_t, um_i, uf_i = _checked_series(
        temperature_t_red, u_model_t_red, u_full_t_red, u_model_initial_t_red,
        u_full_initial_t_red)
    N = count("n_particles", n_particles, hint="the number of particles")
    eps = positive("epsilon_K", epsilon_K, "epsilon/k of the reduced units, in K")
    T_i_red = positive("T_i_red", T_i_red, "the initial temperature kT/epsilon of the equilibration")
    dof = 3 * N - 3 if kinetic_dof is None else count(
        "kinetic_dof", kinetic_dof, hint="3 N - 3 for MD with zero momentum")
    kin = dof / (2.0 * N)
    cv = kin if cv_red is None else positive("cv_red", cv_red, "heat capacity per particle in k")
    fit = _relaxed_tail(T_t, um_t, uf_t, um_i, uf_i, T_i_red, kin, cv)
    warnings, notes = _messages(fit, eps, cv, cv_red is not None)
    T_i = T_i_red * eps
    T_f = fit["T_f"] * eps
    tail = fit["tail"]
    return SampledExpansionResult(
        route="direct", method="relaxed tail", initial_temperature_K=T_i,
        final_temperature_K=T_f, final_temperature_stderr_K=fit["stderr"] * eps,
        delta_T_K=T_f - T_i, delta_T_stderr_K=fit["stderr"] * eps,
        final_density_mol_m3=None if rho_f is None else float(rho_f),
        details={"relaxed_from_sample": tail.t0, "tail_temperature_K": tail.mean * eps,
                 "potential_correction_K": fit["correction"] * eps,
                 "energy_anchor_K": fit["anchor"] * eps, "statistical_inefficiency": tail.g},
        warnings=warnings, notes=notes)
