"""The energy route: U(T_f, rho_f) = U(T_i, rho_i) by sampled residual energies.

NVT sampling of u_res at (T_i, rho_i) (rho_i found from a given pressure by
:mod:`mdsim.pipeline.initial_state`); then at rho_f, from the B2 + B3
virial estimate of T_f, sample, Newton-step, and sample again at the new
temperature until the step is below its standard error (STEP_TOLERANCE) or
MBAR reweighting over two or more temperatures brackets the balance
(:func:`analysis.expansion.energy_route`).  Any c_v_ig(T).

The sampler of each density is Monte Carlo or MD, whichever the pilots find
cheaper (``sampler = "auto"``, :mod:`mdsim.pipeline.routes.sampler_choice`),
or the one the study names.  The target is split between the two end states
so that reaching it costs least (:func:`mdsim.pipeline.routes.sampler_choice.split_share`,
from the pilots' run costs, :func:`mdsim.pipeline.routes.sampler_choice.run_cost`: samples, not
CPU seconds, so that every run of a task takes the same decisions), with the final state's heat capacity
c_v_ig + c_v_res (its pilot's fluctuation estimate) turning the target in
kelvin into energy.  With the Feynman-Hibbs potential each temperature is
sampled with the potential of that temperature, u_full is its thermodynamic
energy estimator and c_v_res its fluctuation formula
(:mod:`mdsim.sampling.estimates`), and MBAR is not used (it reweights
between temperatures under one potential): Newton steps only.  Stage files:
``initial-state-*`` (``initial-state-choice-{mc,md}-pilot`` the pilots that
chose its sampler) and ``final-density-guessK[-mc|-md]-*`` (the K-th
temperature guess at the final density); ``*-sampler.json`` holds an
automatic choice.
"""
import math

import numpy as np

from mdsim.errors import ConvergenceError
from mdsim.pipeline.chain import mean_se, production_pressure, run_to, solve_or_extend
from mdsim.pipeline.initial_state import run_initial_state
from mdsim.pipeline.routes.sampler_choice import (COMPARE_ABOVE_CPU_S, SAMPLER_METHODS,
                                                  piloted_chain, run_cost, split_share,
                                                  state_md_settings)
from mdsim.pipeline.stage_names import INITIAL_STATE, final_density_guess, stage_name
from mdsim.sampling import store
from mdsim.units import R_GAS

__all__ = ["run_energy", "next_temperature", "UNSOLVED", "BUDGET_UNSOLVED", "STEP_TOLERANCE", "PLAN_FRACTION"]

MAX_NEWTON_TEMPERATURES = 4
SCOUT = 3.0
"""A final-density temperature is first sampled to SCOUT x its share of the error."""
FAR_STEP = 4.0
"""A Newton step of more than FAR_STEP standard errors moves on without refining."""
STEP_TOLERANCE = FAR_STEP
"""The route's Newton steps stop below STEP_TOLERANCE x stderr(T_f).  The estimate T_k + step
from a sample at T_k is exact for a balance linear in T; beyond its statistical error it
carries |step| s(c_v) / c_v, which :func:`analysis.expansion.newton_step` adds to its error,
and the curvature term |dc_v/dT| step^2 / (2 c_v), about step^2 / (2 T) where c_v changes on
the scale of T: for a step of four standard errors below 1e-3 of one at the bench's dense
state (a 3.5-SE step of 0.95 K at 1090 K), so sampling at T_k + step again would not improve it.  (At 1 the
dense bench spent a third of its CPU on a second final temperature for a 3.5-SE step.)"""
PLAN_FRACTION = 0.95
"""The end states are sized for this fraction of the target; a short extension (the
precision loop) closes what the pilots' estimates missed."""
INITIAL_CHOICE = INITIAL_STATE + "-choice"
"""Stage label of the pilots that choose the initial state's sampler."""


def run_energy(job):
    """Run the energy route of a task.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask

    Returns
    -------
    res : analysis.expansion result
    series : dict of ndarray
        ``newton_*`` (the final-density temperatures and their u_res, J/mol)
        and ``initial_*`` (T_i and u_res at the initial state).
    pressure : dict or None
        Final pressure {value, stderr}, Pa.
    extra : dict
        Details for the task file.
    """
    sampler = job.task.get("sampler", "auto")
    if (job.feynman_hibbs or job.study.gas.molecules is not None) and sampler == "auto":
        sampler = "mc"  # the Feynman-Hibbs energy estimator and rigid molecules: Monte Carlo
    T_i_red = job.units.temperature_to_reduced(job.T_i)
    hint = _total_share(job, None) / math.sqrt(2.0)
    first, choice_f = piloted_chain(job, final_density_guess(0), 1,
                                    job.system_maker(job.rho_f, 1, job.T_f_guess),
                                    _guess_temperature(job, 0), sampler, hint)
    choice_i = {"sampler": sampler, "chosen_by": "study"}
    probe = None
    if sampler == "auto":
        probe, choice_i = piloted_chain(job, INITIAL_CHOICE, 0,
                                        job.system_maker(job.rho_i, 0, job.T_i), T_i_red,
                                        sampler, hint)
    cost_i = math.inf if probe is None else run_cost(probe)
    share_i, share_f = split_share(_total_share(job, first), cost_i, run_cost(first))
    kind_i = choice_i["sampler"]
    md = (state_md_settings(job, job.system_maker(job.rho_i, 0, job.T_i), T_i_red)
          if kind_i == "md" else None)
    init = run_initial_state(job, SAMPLER_METHODS[kind_i], T_i_red, share_i, md_settings=md,
                             accept_se=share_i / PLAN_FRACTION, size_from=probe)
    finals = []
    first, it0 = _move_first_guess(job, init, first, share_f, sampler != "auto")
    res, samples = _newton(job, init, first, finals, share_f, sampler != "auto", it0)
    res, samples = _refine(job, init, finals, res, samples)
    if (job.stopped_by == "cpu budget" and res.method == "newton"
            and not res.details["newton_converged"]):
        job.stopped_by = BUDGET_UNSOLVED  # not "target", even when the error is below it
    job.final_chain = _nearest(job, finals, res)
    series = {
        "newton_T_K": np.array([s.temperature_K for s in samples]),
        "newton_u_res_J_mol": np.array([s.u_res_J_mol for s in samples]),
        "newton_u_res_stderr_J_mol": np.array([s.u_res_stderr_J_mol for s in samples]),
        "initial_T_K": np.array([job.T_i]),
        "initial_u_res_J_mol": np.array([res.details["initial_u_res_J_mol"]]),
        "initial_u_res_stderr_J_mol": np.array([res.details["initial_u_res_stderr_J_mol"]]),
    }
    extra = {"newton_temperatures": len(finals),
             "initial_samples": init.n_samples(), "sample_interval": init.interval,
             "final_samples": int(sum(ch.n_samples() for ch in finals)),
             "sampler_initial": kind_i, "sampler_final": choice_f["sampler"],
             "sampler_chosen_by": choice_i["chosen_by"]}
    _note_choices(job, choice_i, choice_f)
    return res, series, _final_pressure(job, finals, res), extra


def _note_choices(job, choice_i, choice_f):
    """Say in the task's notes how each end state's sampler was chosen."""
    for where, choice in (("initial", choice_i), ("final", choice_f)):
        if choice["chosen_by"] == "pilots":
            job.notes.append(f"{where} state sampled by {choice['sampler'].upper()}: the pilots "
                             f"put the CPU time to a given error at MC {choice['cost_mc']:.3g} "
                             f"and MD {choice['cost_md']:.3g} (CPU s per unit of 1/stderr^2)")
        elif choice["chosen_by"] == "mc pilot":
            job.notes.append(f"{where} state sampled by MC: its pilot expects less than "
                             f"{COMPARE_ABOVE_CPU_S:g} CPU s, not worth an MD pilot")


def _total_share(job, first):
    """The combined stderr of the two end states' u_full the target allows (reduced).

    PLAN_FRACTION x the target times the final state's heat capacity per
    particle in k: c_v_ig(T_f guess) / R plus the c_v_res of the final
    state's pilot (left out when there is none, or it is negative).
    """
    cv = job.cv_ig.cv(job.T_f_guess) / R_GAS
    est = None if first is None else first.pilot.summary.get("c_v_res")
    if est is not None and math.isfinite(est.value) and est.value > 0.0:
        cv += float(est.value)
    return PLAN_FRACTION * job.target_K / job.eps_K * cv


def _guess_temperature(job, it, T_newton=None):
    """The reduced temperature of the it-th guess at the final density.

    Read from its pilot stage file when a sound one is on disk (a task run
    again, as with a tighter target, keeps the temperatures it sampled), else
    the virial guess (it = 0) or ``T_newton`` (K).  A damaged pilot is
    passed over here; running its stage moves it aside and samples it again.
    """
    labels = [final_density_guess(it)] + [f"{final_density_guess(it)}-{k}" for k in ("mc", "md")]
    for label in labels:
        path = job.stage_path(stage_name(label))
        if store.is_complete(path):
            return float(store.read_attrs(path)["temperature_red"])
    return (job.T_f_guess if T_newton is None else T_newton) / job.eps_K


def _solve(job, init, finals):
    """The energy route's solver on the chains so far: (result, StateSamples of the finals)."""
    from analysis.expansion import StateSample, energy_route
    u = job.units
    mi, si = mean_se(init, "u_full")
    samples, series = [], []
    for ch in finals:
        s = ch.summary()
        m, se = mean_se(ch, "u_full")  # the chain's own error estimate, as for the initial state
        samples.append(StateSample(u.temperature_to_K(ch.T_red), u.energy_to_J_mol(m),
                                   u.energy_to_J_mol(se),
                                   u.heat_capacity_to_J_molK(s["c_v_res"].value),
                                   u.heat_capacity_to_J_molK(s["c_v_res"].stderr)))
        series.append(u.energy_to_J_mol(ch.samples()["u_full"]))
    # MBAR reweights between temperatures with one potential: not with a Feynman-Hibbs one
    mbar = len(finals) > 1 and not job.feynman_hibbs
    res = energy_route((u.energy_to_J_mol(mi), u.energy_to_J_mol(si)), job.T_i, job.rho_f,
                       samples, job.cv_ig, series_final=series if mbar else None,
                       n_particles=job.n_particles, tolerance=STEP_TOLERANCE)
    return res, samples


def _pilot_step(job, init, chain):
    """The Newton step from a final-density chain's pilot, :class:`analysis.expansion.NewtonStep`,
    or None when its pilot gives no energy or heat capacity (a series that still drifts)."""
    from analysis.expansion import StateSample, newton_step
    u = job.units
    summary = getattr(chain.pilot, "summary", None) or {}
    est, cv = summary.get("u_full"), summary.get("c_v_res")
    mi, si = mean_se(init, "u_full")
    if est is None or cv is None or not (est.available and cv.available and math.isfinite(mi)):
        return None
    sample = StateSample(u.temperature_to_K(chain.T_red), u.energy_to_J_mol(est.value),
                         u.energy_to_J_mol(est.stderr), u.heat_capacity_to_J_molK(cv.value))
    return newton_step(sample, (u.energy_to_J_mol(mi), u.energy_to_J_mol(si)), job.T_i,
                       job.cv_ig, tolerance=STEP_TOLERANCE)


def _move_first_guess(job, init, first, share, study_chose):
    """The first final-density chain to sample, and its guess number.

    When the Newton step from the first guess's pilot (and the sampled
    initial state) is more than FAR_STEP of its standard errors, as where the
    virial series gives no guess and T_i stands in, the first chain sampled
    is a new one at the end of that step (guess 1): the pilot's few hundred
    samples place T_f within a few pilot errors, and no production run is
    spent at a temperature far from it.  Otherwise ``first`` (guess 0).
    """
    step = _pilot_step(job, init, first)
    if step is None or not abs(step.step_K) > FAR_STEP * step.temperature_stderr_K:
        return first, 0
    T_next = _guess_temperature(job, 1, step.next_temperature_K)
    kind = "md" if first.is_md else "mc"
    label = final_density_guess(1) + ("" if study_chose else f"-{kind}")
    job.notes.append(f"final state: the first temperature guess ({first.T_red * job.eps_K:.6g} "
                     f"K) was moved by the Newton step from its pilot to {T_next * job.eps_K:.6g}"
                     " K before sampling")
    chain, _ = piloted_chain(job, label, 2, job.system_maker(job.rho_f, 1, T_next * job.eps_K),
                             T_next, kind, share)
    return chain.size_from(first), 1


def _newton(job, init, first, finals, share, study_chose, it0=0):
    """Sample at rho_f from the first guess and Newton-step until converged or bracketed.

    Each temperature is first sampled to SCOUT x the share: when the Newton
    step from there is more than FAR_STEP standard errors, the next
    temperature is sampled without refining this one (its samples still
    serve the MBAR interpolation); otherwise it is sampled to the share.
    ``it0``: the guess number of ``first``.
    """
    ch = first
    for it in range(it0, MAX_NEWTON_TEMPERATURES):
        run_to(ch, SCOUT * share, accept_se=SCOUT * share / PLAN_FRACTION)
        # the budget may end it while a series still drifts (the energy or the pressure of
        # a sample separating into two phases): sample on until the summary has its means
        solve_or_extend(ch, ch.summary)
        finals.append(ch)
        res, samples = _solve(job, init, finals)
        if not _far(res) and job.stopped_by != "cpu budget":
            run_to(ch, share, accept_se=share / PLAN_FRACTION)
            res, samples = _solve(job, init, finals)
        if res.method == "mbar" or res.details["newton_converged"]:
            break
        if job.stopped_by == "cpu budget":
            break
        if it + 1 == MAX_NEWTON_TEMPERATURES:
            continue  # the guesses are used up: the else clause says so
        T_k = next_temperature(res.details["newton_start_temperature_K"]
                               + res.details["newton_step_K"],
                               [s.temperature_K for s in samples],
                               [_balance(job, s, res) for s in samples])
        kind = "md" if first.is_md else "mc"
        label = final_density_guess(it + 1) + ("" if study_chose else f"-{kind}")
        T_next = _guess_temperature(job, it + 1, T_k)
        prev = ch
        ch, _ = piloted_chain(job, label, 2 + it,
                              job.system_maker(job.rho_f, 1, T_next * job.eps_K),
                              T_next, kind, share)
        ch.size_from(prev)  # the same density and sampler, sampled longer
    else:
        if res.method == "newton" and not res.details["newton_converged"]:
            job.stopped_by = UNSOLVED  # the error may meet the target; T_f is not solved
    return res, samples


def _far(res):
    """A Newton result whose step is more than FAR_STEP of its standard errors (not MBAR)."""
    return (res.method == "newton"
            and abs(res.details["newton_step_K"]) > FAR_STEP * res.final_temperature_stderr_K)


UNSOLVED = "temperature guesses used up"
"""The stop reason when every temperature guess is spent and the balance is not solved."""
BUDGET_UNSOLVED = "cpu budget, balance unsolved"
"""The stop reason when the CPU budget ended the Newton search before the balance was solved
(the standard error may be below the target: T_f is still not solved)."""


def _balance(job, sample, res):
    """U(T_k, rho_f) - U_i at a sampled final-density temperature, J/mol."""
    cv, T = job.cv_ig, sample.temperature_K
    U_i = cv.u(job.T_i) + res.details["initial_u_res_J_mol"]
    return cv.u(T) + sample.u_res_J_mol - U_i


def next_temperature(T_newton, T_k, g_k):
    """The next temperature to sample: Newton's, kept inside the bracket the samples make.

    Parameters
    ----------
    T_newton : float
        The Newton step's temperature from the sample nearest to balance, K.
    T_k : sequence of float
        The final-density temperatures sampled so far, K.
    g_k : sequence of float
        The energy balance U(T_k, rho_f) - U_i at each, J/mol.

    Returns
    -------
    float
        ``T_newton`` unless two samples on either side of the balance bracket
        the root and ``T_newton`` falls outside that bracket (a Newton step
        thrown far by a noisy or wildly varying heat capacity, as where the
        final state is near phase separation); then the secant point of the
        tightest bracket (safeguarded Newton, common practice in root
        finding, no source).

    Examples
    --------
    >>> next_temperature(250.0, [150.0, 60.0], [40.0, -50.0])  # Newton overshoots the bracket
    110.0
    >>> next_temperature(100.0, [150.0, 60.0], [40.0, -50.0])  # inside it: Newton's kept
    100.0
    """
    pairs = sorted(zip(T_k, g_k))
    brackets = [(a, b) for a, b in zip(pairs, pairs[1:]) if a[1] * b[1] < 0.0]
    if not brackets:
        return float(T_newton)
    (T_lo, g_lo), (T_hi, g_hi) = min(brackets, key=lambda ab: ab[1][0] - ab[0][0])
    if T_lo < T_newton < T_hi:
        return float(T_newton)
    return float(T_lo - g_lo * (T_hi - T_lo) / (g_hi - g_lo))


def _nearest(job, finals, res):
    """The final-density chain sampled nearest to the solved T_f."""
    u = job.units
    return min(finals, key=lambda c: abs(u.temperature_to_K(c.T_red) - res.final_temperature_K))


def _refine(job, init, finals, res, samples):
    """Precision: extend an end state until the target or the budget.

    The chain extended is the one whose extension lowers the variance of
    Delta T most per unit of run: the larger s^4 / C (s its standard error, C
    its run cost), the larger s when the costs are unknown.  It is
    extended by what brings the combined variance to PLAN_FRACTION^2 x the
    target's (at most four times its length, at least a fifth).
    """
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        nearest = _nearest(job, finals, res)
        s = {id(ch): mean_se(ch, "u_full")[1] for ch in (init, nearest)}
        cost = {id(c): run_cost(c) for c in (init, nearest)}
        if all(math.isfinite(c) and c > 0 for c in cost.values()):
            ch = max((init, nearest), key=lambda c: s[id(c)] ** 4 / cost[id(c)])
        else:
            ch = init if s[id(init)] >= s[id(nearest)] else nearest
        var = s[id(init)] ** 2 + s[id(nearest)] ** 2
        excess = var * (1.0 - (PLAN_FRACTION * job.target_K / res.delta_T_stderr_K) ** 2)
        own = s[id(ch)] ** 2
        factor = own / max(own - excess, 0.2 * own) - 1.0 if math.isfinite(own) else 1.0
        if not ch.extend(int(math.ceil(ch.n_samples() * min(4.0, max(0.2, 1.05 * factor))))):
            break
        res, samples = _solve(job, init, finals)
    return res, samples


def _final_pressure(job, finals, res):
    """The final pressure {value, stderr} in Pa, from the nearest final-density chain, or None."""
    u = job.units
    nearest = _nearest(job, finals, res)
    try:
        p = production_pressure(nearest)  # the block floor, as for every production mean
    except ConvergenceError:
        return None
    if p is None:
        return None
    T_near = u.temperature_to_K(nearest.T_red)
    # ideal-gas slope for the small step from the nearest sampled temperature
    job.notes.append("final pressure: sampled at the nearest final-state temperature, moved "
                     "to T_f with the ideal-gas slope rho_f R")
    return {"value": u.pressure_to_Pa(p[0])
            + job.rho_f * R_GAS * (res.final_temperature_K - T_near),
            "stderr": u.pressure_to_Pa(p[1])}
