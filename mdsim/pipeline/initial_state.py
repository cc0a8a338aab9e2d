"""The initial state of a task: the model's own density at the pressure the study asks for.

A state point given by pressure is planned at the density of the B2 + B3
virial series (:func:`mdsim.study.statepoints.resolve_initial_density`,
kept in ``tasks.json`` as the plan); the model's own density differs by
what the truncated series leaves out.  Every simulation route therefore
finds it by a pressure iteration (:func:`run_initial_state`):

1. NVT at T_i and the planned density, sampled as long as the route's
   initial state needs (the route's ``share`` of the target), and its
   mean pressure p_k with standard error s_k;
2. accepted when |p_k - p| <= s_k (p the pressure asked for);
3. otherwise a Newton step on the sampled pressures
   (:func:`next_density`) and a fresh chain at the new density, until
   accepted, :data:`MAX_PRESSURE_TRIES` densities are used up, or the
   tries have spent :data:`ITERATION_BUDGET_SHARE` of the task's CPU
   budget (the rest is left to the final state).  A warning then says so
   and the last density tried is used.

The accepted try is the route's initial-state chain (same T, same density,
same sampler): no work is lost when the planned density already holds.  A
state given by density is sampled once at that density and its sampled
pressure reported.  Stage files: ``initial-state-tryK-*``
(:func:`mdsim.pipeline.stage_names.initial_state_try`) for a state given by
pressure, ``initial-state-*`` for one given by density.
"""
import math

import numpy as np

from mdsim.errors import ConvergenceError
from mdsim.numbers import value_with_error
from mdsim.pipeline.chain import production_pressure, run_to, settle, solve_or_extend
from mdsim.pipeline.plan import particles_for_cutoff
from mdsim.pipeline.stage_names import INITIAL_STATE, initial_state_try, stage_name
from mdsim.sampling import store
from mdsim.units import R_GAS

__all__ = ["run_initial_state", "next_density", "density_uncertainty", "density_error_in_delta_T", "sampled_pressure", "MAX_PRESSURE_TRIES", "ITERATION_BUDGET_SHARE",
           "SLOPE_RTOL", "MAX_DENSITY_STEP"]

MAX_PRESSURE_TRIES = 6
"""Most densities the pressure iteration samples."""
ITERATION_BUDGET_SHARE = 0.5
"""No new density is tried once the task has spent this share of its CPU budget."""
SLOPE_RTOL = 0.25
"""The sampled dp/drho replaces the virial one when its standard error is below this share."""
MAX_DENSITY_STEP = 0.2
"""One Newton step changes the density by at most this fraction."""
TRY_CHAIN_ID = 20
"""Chain ids (the seed part) of the tries: TRY_CHAIN_ID + k, apart from every route's chains."""


def next_density(tries, p_target, virial_slope):
    """The next density of the pressure iteration: a Newton step on the sampled pressures.

    Parameters
    ----------
    tries : sequence of (float, float, float)
        The densities tried, mol/m^3, with their sampled pressure and its
        standard error, Pa.
    p_target : float
        The pressure asked for, Pa.
    virial_slope : float
        dp/drho at the last density from the B2 + B3 series, Pa m^3/mol.

    Returns
    -------
    rho : float
        The next density, mol/m^3, within :data:`MAX_DENSITY_STEP` of the last.
    slope : float
        The dp/drho used, Pa m^3/mol.
    slope_from : str
        "sampled" or "virial B2+B3".

    Notes
    -----
    With two or more densities the slope is the weighted least-squares slope
    of p_k against rho_k (weights 1 / s_k^2), used when positive and known to
    :data:`SLOPE_RTOL` (a secant through noisy points close together is
    not); otherwise the virial slope R T (1 + 2 B rho + 3 C rho^2).  Each
    try then estimates the density rho_k + (p - p_k) / slope, and the
    estimates are averaged with the same weights, so the noise of one try
    does not throw the next density (Newton's method, common practice, no
    source).

    Examples
    --------
    >>> next_density([(100.0, 2.5e5, 1e3)], 2.4e5, 2500.0)
    (96.0, 2500.0, 'virial B2+B3')
    >>> rho, slope, how = next_density([(100.0, 2.5e5, 1e3), (96.0, 2.39e5, 1e3)], 2.4e5, 2500.0)
    >>> round(rho, 4), round(slope, 6), how  # the slope of the two tries, and both agree
    (96.3636, 2750.0, 'sampled')
    >>> rho, slope, how = next_density([(100.0, 2.5e5, 1e3), (99.9, 2.49e5, 1e3)], 2.4e5, 2500.0)
    >>> round(rho, 4), slope, how  # two tries too close for a slope: the virial one, averaged
    (96.15, 2500.0, 'virial B2+B3')
    """
    rho = np.array([t[0] for t in tries], dtype=float)
    p = np.array([t[1] for t in tries], dtype=float)
    w = 1.0 / np.array([t[2] for t in tries], dtype=float) ** 2
    slope, slope_from = float(virial_slope), "virial B2+B3"
    if np.unique(rho).size >= 2:
        x = rho - np.sum(w * rho) / np.sum(w)
        sxx = float(np.sum(w * x * x))
        fitted = float(np.sum(w * x * p) / sxx)
        if fitted > 0.0 and 1.0 / math.sqrt(sxx) < SLOPE_RTOL * fitted:
            slope, slope_from = fitted, "sampled"
    estimate = float(np.sum(w * (rho + (p_target - p) / slope)) / np.sum(w))
    last = float(rho[-1])
    rho_next = min(max(estimate, (1.0 - MAX_DENSITY_STEP) * last), (1.0 + MAX_DENSITY_STEP) * last)
    return rho_next, slope, slope_from


def _sampled_chain(job, label, chain_id, rho, method, T_red, share, key, md_settings,
                   accept_se=None, size_from=None):
    """An NVT chain at density rho, run (or read back) to the route's share of the target;
    ``size_from``: a chain whose error per unit of run sizes it (:meth:`Chain.size_from`)."""
    chain = job.new_chain(label, chain_id, job.system_maker(rho, chain_id, job.T_i), method,
                          T_red=T_red, key=key, md_settings=md_settings).run_pilot()
    if size_from is not None:
        chain.size_from(size_from)
    if not run_to(chain, share, key=key, accept_se=accept_se):
        settle(chain, (key,))  # the budget ended it: still a mean to report
    return chain


def sampled_pressure(job, chain):
    """The chain's mean pressure and its standard error (Pa), or None when it has none
    (:func:`mdsim.pipeline.chain.production_pressure`: the block floor, no start cut)."""
    try:
        est = solve_or_extend(chain, lambda: production_pressure(chain))
    except ConvergenceError:
        return None
    if est is None:
        return None
    return job.units.pressure_to_Pa(est[0]), job.units.pressure_to_Pa(est[1])


def density_uncertainty(p_sampled, p_stderr, p_target, slope):
    """How far the density used may lie from the model's own at the pressure asked for, mol/m^3.

    The sampled pressure departs from the one asked for by |p - p_target|
    and is known to its standard error s; both, over dp/drho, bound the
    density's error: sqrt((p - p_target)^2 + s^2) / (dp/drho).

    >>> round(density_uncertainty(60.1e5, 0.08e5, 60e5, 2.0e3), 4)  # Pa, Pa, Pa, Pa m^3/mol
    6.4031
    """
    return math.hypot(p_sampled - p_target, p_stderr) / slope


def density_error_in_delta_T(job, delta_T_K):
    """The part of Delta T's error that comes from the initial density, K, and how it was found.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
        After the initial state: ``rho_i`` and ``initial_density_stderr``.
    delta_T_K : float
        The route's Delta T, K.

    Returns
    -------
    (float, str) or (None, None)
        sigma_rho |d Delta T / d rho_i|, with the derivative from the B2 + B3
        series (a central difference at rho_i +- sigma_rho), or, where the
        series gives no answer, from Delta T proportional to rho_i (its
        low-density form); None for a state given by density.
    """
    from mdsim.pipeline.plan import virial_start_guess
    d_rho = job.initial_density_stderr
    if not d_rho:
        return None, None
    rho = job.rho_i
    rho_lo, rho_hi = max(rho - d_rho, 0.5 * rho), rho + d_rho
    hi = virial_start_guess(job.virial_gas, job.cv_ig, job.T_i, job.r, rho_hi)[1]
    lo = virial_start_guess(job.virial_gas, job.cv_ig, job.T_i, job.r, rho_lo)[1]
    if hi is not None and lo is not None:
        return (abs(hi - lo) / (rho_hi - rho_lo) * d_rho,
                "B2+B3 slope of Delta T in the initial density")
    return abs(delta_T_K) * d_rho / rho, "Delta T taken proportional to the initial density"


def _virial_slope(job, rho):
    """dp/drho of the B2 + B3 series at (T_i, rho), Pa m^3/mol."""
    B, C = float(job.virial_gas.B(job.T_i)), float(job.virial_gas.C(job.T_i))
    return R_GAS * job.T_i * (1.0 + 2.0 * B * rho + 3.0 * C * rho * rho)


def _why_stop(job, k, rho_next):
    """Why no further density can be tried (None when it can)."""
    if k + 1 >= MAX_PRESSURE_TRIES:
        return f"its {MAX_PRESSURE_TRIES} densities are used up"
    pilot = job.stage_path(stage_name(initial_state_try(k + 1)))
    if pilot.is_file() or store.part_path(pilot).is_file():
        return None  # begun by an earlier run of the task: read back or resumed
    if job.cpu_spent() >= ITERATION_BUDGET_SHARE * job.budget_s:
        return (f"the CPU budget it may use ({ITERATION_BUDGET_SHARE:.0%} of [simulation] "
                f"max_cpu_time = {job.budget_s:g} s) is spent")
    n_cut, _ = particles_for_cutoff(job.study, rho_next)
    if n_cut > job.n_particles:
        return (f"the next density, {rho_next:.6g} mol/m^3, needs {n_cut} particles for the "
                f"cut-off (the task has {job.n_particles}); give [simulation] particles")
    return None


def _pressure_iteration(job, p_target, method, T_red, share, key, md_settings, accept_se,
                        size_from):
    """The pressure iteration (module docstring); returns the chain of the density used."""
    rho, k = job.rho_i, 0
    while True:
        chain = _sampled_chain(job, initial_state_try(k), TRY_CHAIN_ID + k, rho, method, T_red,
                               share, key, md_settings, accept_se, size_from)
        size_from = chain  # the next density is sized from this one's production
        p = sampled_pressure(job, chain)
        if p is None:
            job.initial_density_from = "virial B2+B3 (no sampled pressure)"
            job.warnings.append("initial state: the sampler gives no pressure at this state, so "
                                "the density cannot be matched to the pressure asked for; the "
                                "B2 + B3 virial density is used")
            return chain
        job.pressure_tries.append({"density_mol_m3": rho, "pressure_Pa": p[0],
                                   "pressure_stderr_Pa": p[1]})
        steps = f"pressure iteration, {k + 1} step{'s' if k else ''}"
        tries = [(t["density_mol_m3"], t["pressure_Pa"], t["pressure_stderr_Pa"])
                 for t in job.pressure_tries]
        rho_next, slope, _ = next_density(tries, p_target, _virial_slope(job, rho))
        # The density used is the model's own to within its pressure's departure and error.
        job.initial_density_stderr = density_uncertainty(p[0], p[1], p_target, slope)
        if abs(p[0] - p_target) <= p[1]:
            job.initial_density_from = steps
            job.set_initial_density(rho)
            return chain
        why = _why_stop(job, k, rho_next)
        if why is not None:
            job.initial_density_from = f"{steps}, not converged"
            job.set_initial_density(rho)
            job.warnings.append(
                f"initial state: the pressure iteration stopped after {k + 1} densities because "
                f"{why}: the sampled pressure {value_with_error(p[0] / 1e5, p[1] / 1e5, 'bar')} "
                f"is {abs(p[0] - p_target) / p[1]:.1f} standard errors from the {p_target / 1e5:g}"
                f" bar asked for; the last density tried, {rho:.6g} mol/m^3, is used")
            return chain
        rho, k = rho_next, k + 1


def run_initial_state(job, method, T_red, share, key="u_full", md_settings=None,
                      accept_se=None, size_from=None):
    """The route's NVT chain at the initial state, at the model's own density.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    method : str
        "mc-nvt" or "md-nvt".
    T_red : float
        Initial temperature, reduced.
    share : float
        The standard error of ``key`` the route needs at the initial state (reduced).
    key : str
        The series the route averages ("u_full", or "u_model" for the direct route).
    md_settings : dict, optional
        Settings of the MD stages (``time_step``).
    accept_se : float, optional
        A chain is not extended once its standard error is at most this
        (:func:`mdsim.pipeline.chain.run_to`); default ``share``.
    size_from : mdsim.pipeline.chain.Chain, optional
        A longer run of the same sampler at (T_i, the planned density), as the
        pilot that chose the sampler: its error per unit of run sizes the first
        production stage (:meth:`mdsim.pipeline.chain.Chain.size_from`).

    Returns
    -------
    mdsim.pipeline.chain.Chain
        Run to ``share``; also kept as ``job.initial_chain``.  ``job.rho_i``
        and ``job.rho_f`` are the density found (or given) and its r-th part;
        ``job.initial_density_from`` says how it was found, and
        ``job.pressure_tries`` lists the densities tried with their pressures.
    """
    p_target = job.task["state_point"].get("pressure_Pa")
    if p_target is None:
        chain = _sampled_chain(job, INITIAL_STATE, 0, job.rho_i, method, T_red, share, key,
                               md_settings, accept_se, size_from)
        job.initial_density_from = "given"
    else:
        chain = _pressure_iteration(job, float(p_target), method, T_red, share, key,
                                    md_settings, accept_se, size_from)
    job.initial_chain = chain
    return chain
