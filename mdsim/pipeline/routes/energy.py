"""The energy route: U(T_f, rho_f) = U(T_i, rho_i) by sampled residual energies.

NVT sampling (Monte Carlo by default, ``sampler = "md"`` for MD) of u_res
at (T_i, rho_i) (rho_i found from a given pressure by
:mod:`mdsim.pipeline.initial_state`); then at rho_f, from the B2 + B3 virial estimate of T_f,
sample, Newton-step, and sample again at the new temperature until the step
is below a quarter of its standard error or MBAR reweighting over two or
more temperatures brackets the balance (:func:`analysis.expansion.energy_route`).
Any c_v_ig(T).  With the Feynman-Hibbs potential each temperature is
sampled with the potential of that temperature, u_full is its thermodynamic
energy estimator and c_v_res its fluctuation formula
(:mod:`mdsim.sampling.estimates`), and MBAR is not used (it reweights between
temperatures under one potential): Newton steps only.  Stage files: ``initial-state-*`` and
``final-density-guessK-*`` (the K-th temperature guess at the final density).
"""
import math

import numpy as np

from mdsim.pipeline.chain import Chain, mean_se, run_to, solve_or_extend, stage_share
from mdsim.pipeline.initial_state import run_initial_state
from mdsim.pipeline.stage_names import final_density_guess
from mdsim.units import R_GAS

__all__ = ["run_energy", "SAMPLERS", "next_temperature", "UNSOLVED"]

SAMPLERS = {"mc": "mc-nvt", "md": "md-nvt"}
"""The NVT sampler of ``[simulation] sampler``, as an engine method."""
MAX_NEWTON_TEMPERATURES = 4


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
    method = SAMPLERS[job.task.get("sampler", "mc")]
    T_i_red = job.units.temperature_to_reduced(job.T_i)
    share = stage_share(job, job.cv_ig.cv(job.T_i) / R_GAS)
    md = {"time_step": job.md_time_step(T_i_red)} if method.startswith("md") else None
    init = run_initial_state(job, method, T_i_red, share, md_settings=md)
    finals = []
    res, samples = _newton(job, init, finals, method, share, md is not None)
    res, samples = _refine(job, init, finals, res, samples)
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
             "final_samples": int(sum(ch.n_samples() for ch in finals))}
    return res, series, _final_pressure(job, finals, res), extra


def _solve(job, init, finals):
    """The energy route's solver on the chains so far: (result, StateSamples of the finals)."""
    from analysis.expansion import StateSample, energy_route
    u = job.units
    mi, si = mean_se(init, "u_full")
    samples, series = [], []
    for ch in finals:
        s = ch.summary()
        samples.append(StateSample(u.temperature_to_K(ch.T_red),
                                   u.energy_to_J_mol(s["u_full"].value),
                                   u.energy_to_J_mol(s["u_full"].stderr),
                                   u.heat_capacity_to_J_molK(s["c_v_res"].value),
                                   u.heat_capacity_to_J_molK(s["c_v_res"].stderr)))
        series.append(u.energy_to_J_mol(ch.samples()["u_full"]))
    # MBAR reweights between temperatures with one potential: not with a Feynman-Hibbs one
    mbar = len(finals) > 1 and not job.feynman_hibbs
    res = energy_route((u.energy_to_J_mol(mi), u.energy_to_J_mol(si)), job.T_i, job.rho_f,
                       samples, job.cv_ig, series_final=series if mbar else None,
                       n_particles=job.n_particles)
    return res, samples


def _newton(job, init, finals, method, share, is_md):
    """Sample at rho_f from the virial guess and Newton-step until converged or bracketed."""
    T_k = job.T_f_guess
    for it in range(MAX_NEWTON_TEMPERATURES):
        md_f = {"time_step": job.md_time_step(T_k / job.eps_K)} if is_md else None
        ch = Chain(job, final_density_guess(it), 1 + it, job.system_maker(job.rho_f, 1, T_k),
                   method, T_red=T_k / job.eps_K, md_settings=md_f).run_pilot()
        run_to(ch, share)
        # the budget may end it while a series still drifts (the energy or the pressure of
        # a sample separating into two phases): sample on until the summary has its means
        solve_or_extend(ch, ch.summary)
        finals.append(ch)
        res, samples = _solve(job, init, finals)
        if res.method == "mbar" or res.details["newton_converged"]:
            break
        if job.stopped_by == "cpu budget":
            break
        T_k = next_temperature(res.details["newton_start_temperature_K"]
                               + res.details["newton_step_K"],
                               [s.temperature_K for s in samples],
                               [_balance(job, s, res) for s in samples])
    else:
        if res.method == "newton" and not res.details["newton_converged"]:
            job.stopped_by = UNSOLVED  # the error may meet the target; T_f is not solved
    return res, samples


UNSOLVED = "temperature guesses used up"
"""The stop reason when every temperature guess is spent and the balance is not solved."""


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
    """Precision: extend the end state that contributes more until the target or the budget."""
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        _, si = mean_se(init, "u_full")
        nearest = _nearest(job, finals, res)
        _, sf = mean_se(nearest, "u_full")
        ch = init if si >= sf else nearest
        n = ch.n_samples()
        ratio = (res.delta_T_stderr_K / job.target_K) ** 2
        if not ch.extend(int(math.ceil(n * max(0.2, (ratio - 1.0) * 1.2)))):
            break
        res, samples = _solve(job, init, finals)
    return res, samples


def _final_pressure(job, finals, res):
    """The final pressure {value, stderr} in Pa, from the nearest final-density chain, or None."""
    u = job.units
    nearest = _nearest(job, finals, res)
    p = nearest.summary().get("pressure")
    if p is None or not p.available:
        return None
    T_near = u.temperature_to_K(nearest.T_red)
    # ideal-gas slope for the small step from the nearest sampled temperature
    job.notes.append("final pressure: sampled at the nearest final-state temperature, moved "
                     "to T_f with the ideal-gas slope rho_f R")
    return {"value": u.pressure_to_Pa(p.value)
            + job.rho_f * R_GAS * (res.final_temperature_K - T_near),
            "stderr": u.pressure_to_Pa(p.stderr)}
