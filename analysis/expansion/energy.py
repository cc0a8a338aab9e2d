"""The energy route of a free expansion: sampled residual energies, Newton steps and MBAR.

The residual energy u_res is sampled by NVT simulation at the initial state
and at a few temperatures on the final isochore rho_f = rho_i / r.  Each
sample gives a Newton step of the energy balance
u_ig(T_f) + u_res(T_f, rho_f) = u_ig(T_i) + u_res(T_i, rho_i)
(:func:`newton_step`); from two sampled temperatures on, MBAR reweighting
of the sampled energies (:class:`analysis.expansion.mbar.MBARInterpolant`)
interpolates u_res(T) and the balance is solved on it.  SI units: K,
mol/m^3, J/mol, J/(mol K).
"""
import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from analysis import stats
from analysis.expansion.mbar import MIN_NEIGHBOUR_OVERLAP, MBARInterpolant
from analysis.expansion.sampled import SampledExpansionResult
from analysis.results import Result
from mdsim.checks import positive
from mdsim.errors import ConvergenceError, SettingError, StudyError

__all__ = ["NEWTON_TOLERANCE", "MAX_DOWN_STEP", "DISTINCT_SIGMAS", "overlapping_neighbours", "StateSample", "NewtonStep", "newton_step", "energy_route"]


NEWTON_TOLERANCE = 0.25
"""Newton iterations stop when |step| < NEWTON_TOLERANCE * stderr(T_f)."""


def _mean_stderr(value, name):
    """(mean, stderr) from a SeriesMean, a (mean, stderr) pair or a number."""
    if isinstance(value, stats.SeriesMean):
        return float(value.mean), float(value.stderr)
    if np.ndim(value) == 0:
        return float(value), 0.0
    try:
        mean, err = (float(v) for v in value)
    except (TypeError, ValueError):
        raise SettingError(name, value, "must be a SeriesMean, a (mean, stderr) pair or a "
                           "number (J/mol)") from None
    if not (math.isfinite(mean) and math.isfinite(err) and err >= 0.0):
        raise SettingError(name, (mean, err), "needs a finite mean and a stderr >= 0 (J/mol)")
    return mean, err


@dataclass(frozen=True)
class StateSample:
    """Sampled NVT averages at one temperature on the final isochore.

    Attributes
    ----------
    temperature_K : float
    u_res_J_mol, u_res_stderr_J_mol : float
        Mean residual (configurational + tail) energy per mole and its stderr.
    cv_res_J_molK, cv_res_stderr_J_molK : float
        Residual heat capacity N Var(u) / (R T^2) per mole and its stderr.
    """

    temperature_K: float
    u_res_J_mol: float
    u_res_stderr_J_mol: float
    cv_res_J_molK: float
    cv_res_stderr_J_molK: float = 0.0


@dataclass(frozen=True)
class NewtonStep(Result):
    """One Newton step of the energy balance at the final density.

    Attributes
    ----------
    temperature_K : float
        Where the step starts (a sampled temperature).
    next_temperature_K : float
        T - [u(T, rho_f) - u_i] / c_v(T, rho_f).
    step_K : float
        next - current.
    temperature_stderr_K : float
        The standard error of ``next_temperature_K``: sqrt(s_i^2 + s_k^2) / c_v
        from the two energies, with |step| s(c_v) / c_v from the sampled heat
        capacity's error added in quadrature.
    converged : bool
        |step| < tolerance * sqrt(s_i^2 + s_k^2) / c_v: sampling again would
        not move the estimate by more than its own noise.
    """

    temperature_K: float
    next_temperature_K: float
    step_K: float
    temperature_stderr_K: float
    converged: bool


MAX_DOWN_STEP = 0.5
"""A Newton step lowers the temperature by at most this fraction of where it starts."""


def newton_step(sample, u_initial, T_i, cv_ig, tolerance=NEWTON_TOLERANCE):
    """Newton update of T_f from one sampled temperature (docs/physics.md section 3.1).

    Parameters
    ----------
    sample : StateSample
        Averages at (T_k, rho_f).
    u_initial : SeriesMean or (float, float)
        Residual energy at the initial state, J/mol, with its stderr.
    T_i : float
        Initial temperature, K.
    cv_ig : IdealGasHeatCapacity
    tolerance : float
        Stop criterion, as a fraction of the temperature stderr.

    Returns
    -------
    NewtonStep

    Notes
    -----
    T_{k+1} = T_k - [u_ig(T_k) + u_res(T_k, rho_f) - u_ig(T_i) - u_res,i]
    / (c_v_ig(T_k) + c_v_res(T_k, rho_f)), a step down cut to
    :data:`MAX_DOWN_STEP` x T_k: the energy rises with T, so the root lies
    below, and the cut keeps T positive where the sampled heat capacity is
    far too small for the step (a sample separating into two phases, whose
    energy falls by much more than c_v predicts); damped Newton, common
    practice, no source.

    Examples
    --------
    >>> from analysis.heatcapacity import ConstantHeatCapacity
    >>> cv = ConstantHeatCapacity.in_units_of_R(1.5)
    >>> newton_step(StateSample(48.0, -3500.0, 5.0, 2.0), (-4500.0, 5.0), 80.0, cv).step_K
    -24.0
    """
    u_i, s_i = _mean_stderr(u_initial, "u_initial")
    T_i = positive("T_i", T_i, "the initial temperature in K")
    T_k = positive("sample.temperature_K", sample.temperature_K, "a sampled temperature in K")
    cv_ig.check_temperature(T_i, "initial temperature T_i")
    cv_ig.check_temperature(T_k, "sampled temperature")
    cv = cv_ig.cv(T_k) + sample.cv_res_J_molK
    if not cv > 0.0:
        raise StudyError(f"heat capacity at {T_k:g} K is {cv:g} J/(mol K) (ideal part plus "
                         "sampled residual part); it must be positive. Check cv_res_J_molK.")
    residual = cv_ig.u(T_k) + sample.u_res_J_mol - cv_ig.u(T_i) - u_i
    step = max(-residual / cv, -MAX_DOWN_STEP * T_k)
    err = math.hypot(s_i, sample.u_res_stderr_J_mol) / cv
    err_cv = abs(step) * float(sample.cv_res_stderr_J_molK) / cv  # T_k + step through c_v's error
    return NewtonStep(T_k, T_k + step, step, math.hypot(err, err_cv),
                      bool(abs(step) < tolerance * err))


def _best_newton_step(samples, u_initial, T_i, cv_ig, tolerance):
    """The Newton step, among those from every sample, that moves T the least."""
    if not samples:
        raise StudyError("energy route: 'samples_final' is empty; sample at least one "
                         "temperature at the final density (start from the virial estimate).")
    steps = [newton_step(s, u_initial, T_i, cv_ig, tolerance) for s in samples]
    return min(steps, key=lambda step: abs(step.step_K))


_MBAR_NOTE = ("u_res(T) at the final density interpolated by MBAR reweighting of the sampled "
              "energies (pymbar)")


DISTINCT_SIGMAS = 3.0
"""Two sampled temperatures whose mean energies lie more than this many (summed) standard
deviations of their energy series apart do not overlap: MBAR is not asked to bridge them."""


def overlapping_neighbours(temperatures_K, series, T_near):
    """Indices of the run of sampled temperatures around T_near whose energy distributions overlap.

    Parameters
    ----------
    temperatures_K : sequence of float
    series : sequence of array_like
        One energy series per temperature (any one unit).
    T_near : float
        The temperature of interest, K (the Newton estimate).

    Returns
    -------
    list of int
        Indices, in temperature order, of the chain of neighbours each of
        whose means lies within :data:`DISTINCT_SIGMAS` x (sum of the two
        standard deviations) of the next, the chain holding the sampled
        temperature nearest T_near.  Reweighting across a gap wider than that
        is an extrapolation, and pymbar's solver spends minutes failing on it
        (common practice, no source).

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(1)
    >>> series = [rng.normal(m, 1.0, 500) for m in (-10.0, -9.0, -2.0)]
    >>> overlapping_neighbours([40.0, 45.0, 80.0], series, 44.0)
    [0, 1]
    """
    order = sorted(range(len(temperatures_K)), key=lambda k: temperatures_K[k])
    stats = [(float(np.mean(series[k])), float(np.std(series[k]))) for k in order]
    runs, current = [], [order[0]]
    for j in range(1, len(order)):
        (m0, s0), (m1, s1) = stats[j - 1], stats[j]
        if abs(m1 - m0) > DISTINCT_SIGMAS * (s0 + s1):
            runs.append(current)
            current = []
        current.append(order[j])
    runs.append(current)
    nearest = min(range(len(temperatures_K)), key=lambda k: abs(temperatures_K[k] - T_near))
    return next(run for run in runs if nearest in run)


def _mbar_solution(samples, series_final, n_particles, T_i, u_initial, cv_ig, newton_T):
    """Solve the energy balance with the MBAR interpolant of u_res(T).

    Parameters
    ----------
    samples : list of StateSample
    series_final : sequence of array_like
        One residual energy series (J/mol) per sample.
    n_particles : int
    T_i : float
        Initial temperature, K.
    u_initial : (float, float)
        Initial residual energy and its stderr, J/mol.
    cv_ig : IdealGasHeatCapacity
    newton_T : float
        The Newton estimate, K (named in the warning when there is no root).

    Returns
    -------
    solution : (float, float, dict) or None
        (T_f, stderr(T_f), details), the stderr of u_res(T_f) at least that of
        the sample nearest T_f; None when the reweighting does not
        converge (pymbar's default and robust solvers both fail), when the
        balance does not change sign in the sampled range widened by a
        quarter of its width each side, or when the sampled temperatures
        around the root overlap less than ``MIN_NEIGHBOUR_OVERLAP``.
    warning : str or None
        Why there is no solution, when that is a failure.
    note : str or None
        Why MBAR was not used, when that is not a failure (poor overlap).
    """
    _check_mbar_inputs(samples, series_final, n_particles)
    u_i, s_i = u_initial
    keep = overlapping_neighbours([s.temperature_K for s in samples], series_final, newton_T)
    if len(keep) < 2:
        return None, None, (f"energy route: MBAR not used: the energy distributions of the "
                            f"temperatures sampled next to {newton_T:.6g} K do not overlap "
                            f"(means more than {DISTINCT_SIGMAS:g} standard deviations apart), "
                            "so reweighting between them would be an extrapolation; the Newton "
                            "estimate is reported")
    samples = [samples[k] for k in keep]
    series_final = [series_final[k] for k in keep]
    try:
        mbar = MBARInterpolant([s.temperature_K for s in samples], series_final, n_particles)
    except ConvergenceError as exc:
        return None, (f"energy route: {exc}; the Newton estimate is reported (sample closer "
                      f"to {newton_T:.6g} K to make the reweighting converge)"), None
    T_lo, T_hi = mbar.temperatures_K.min(), mbar.temperatures_K.max()
    pad = 0.25 * (T_hi - T_lo)
    lo, hi = max(T_lo - pad, cv_ig.valid_range[0], 1e-300), min(T_hi + pad, cv_ig.valid_range[1])
    target = cv_ig.u(T_i) + u_i

    def balance(T):
        return cv_ig.u(T) + mbar.u_res(T) - target

    if np.sign(balance(lo)) == np.sign(balance(hi)):
        return None, (f"energy route: MBAR finds no root between {lo:.6g} and {hi:.6g} K (the "
                      "sampled range widened by a quarter each side); the Newton estimate is "
                      f"reported. Sample closer to {newton_T:.6g} K."), None
    T_f = float(brentq(balance, lo, hi, xtol=1e-10 * T_i, rtol=1e-12))
    overlap = mbar.overlap_between(T_f, T_f)
    if overlap < MIN_NEIGHBOUR_OVERLAP:
        return None, None, (f"energy route: MBAR not used: the energy samples of the temperatures "
                            f"around {T_f:.6g} K barely overlap (overlap {overlap:.2g} < "
                            f"{MIN_NEIGHBOUR_OVERLAP:g}), so reweighting between them is an "
                            "extrapolation; the Newton estimate is reported")
    cv = cv_ig.cv(T_f) + mbar.cv_res(T_f)
    try:
        s_f = _mbar_u_res_stderr(mbar, samples, T_f)
    except ConvergenceError as exc:
        return None, f"energy route: {exc}; the Newton estimate is reported", None
    details = {"mbar_u_res_J_mol": mbar.u_res(T_f), "mbar_u_res_stderr_J_mol": s_f,
               "mbar_cv_res_J_molK": mbar.cv_res(T_f),
               "mbar_effective_samples": mbar.effective_samples(T_f),
               "mbar_neighbour_overlap": overlap}
    return (T_f, math.hypot(s_i, s_f) / cv, details), None, None


def _check_mbar_inputs(samples, series_final, n_particles):
    if n_particles is None:
        raise StudyError("energy route: 'series_final' was given without 'n_particles'; "
                         "MBAR needs the number of particles of the simulations.")
    if len(series_final) != len(samples):
        raise StudyError(f"energy route: {len(series_final)} series for {len(samples)} "
                         "samples; give one energy series per sampled temperature.")


def _mbar_u_res_stderr(mbar, samples, T_f):
    """MBAR's stderr of u_res(T_f), J/mol, not below that of the sample nearest T_f.

    MBAR's error rests on series thinned by their statistical inefficiency,
    which a slow mode can hide from a short series; the sample nearest T_f,
    whose own estimate may see that mode, sets a floor (a conservative
    choice, common practice, no source).
    """
    nearest = min(samples, key=lambda s: abs(s.temperature_K - T_f))
    return max(mbar.u_res_stderr(T_f), nearest.u_res_stderr_J_mol)


def _unconverged_warning(nstep, err, tolerance):
    return (f"energy route: the last Newton step ({nstep.step_K:.3g} K) is not below "
            f"{tolerance:g} x the temperature stderr ({err:.3g} K); sample at "
            f"{nstep.next_temperature_K:.6g} K and solve again.")


def energy_route(u_initial, T_i, rho_f, samples_final, cv_ig, series_final=None,
                 n_particles=None, tolerance=NEWTON_TOLERANCE):
    """Final temperature from sampled residual energies (energy route).

    Parameters
    ----------
    u_initial : SeriesMean or (float, float)
        Residual energy at (T_i, rho_i), J/mol, with its stderr.
    T_i : float
        Initial temperature, K.
    rho_f : float or None
        Final density, mol/m^3 (recorded in the result).
    samples_final : sequence of StateSample
        Averages sampled at rho_f, one per temperature (>= 1).
    cv_ig : IdealGasHeatCapacity
    series_final : sequence of array_like, optional
        The raw per-sample residual energy series (J/mol) behind each entry
        of ``samples_final``, same order; with two or more, MBAR
        reweighting is the interpolant of u_res(T).
    n_particles : int, optional
        N of the simulations (needed with ``series_final``).
    tolerance : float
        Newton stop criterion (fraction of the temperature stderr).

    Returns
    -------
    SampledExpansionResult
        ``method`` "mbar" when reweighting found the root inside the
        sampled range widened by a quarter of its width on each side,
        "newton" otherwise.  ``details`` holds the Newton step from the
        sample nearest to balance (``newton_converged``).

    Notes
    -----
    stderr(T_f) = sqrt(s_i^2 + s_f^2) / c_v(T_f, rho_f), s_i and s_f the
    standard errors of u_res at the two end states (docs/physics.md section 3.1).

    Examples
    --------
    A sample 2 K below T_i whose residual energy is 20 J/mol above the
    initial one; with a constant c_v = 1.5 R the balance is linear and one
    Newton step lands on Delta T = -20 / (1.5 R) = -1.6036 K:

    >>> from analysis.heatcapacity import ConstantHeatCapacity
    >>> cv = ConstantHeatCapacity.in_units_of_R(1.5)
    >>> sample = StateSample(298.0, -80.0, 0.5, 0.0)
    >>> res = energy_route((-100.0, 0.5), 300.0, 40.0, [sample], cv)
    >>> res.method, round(res.delta_T_K, 4), round(res.delta_T_stderr_K, 4)
    ('newton', -1.6036, 0.0567)
    """
    u_i, s_i = _mean_stderr(u_initial, "u_initial")
    T_i = positive("T_i", T_i, "the initial temperature in K")
    cv_ig.check_temperature(T_i, "initial temperature T_i")
    samples = list(samples_final)
    nstep = _best_newton_step(samples, (u_i, s_i), T_i, cv_ig, tolerance)
    warnings, notes = [], []
    details = {"samples_used": len(samples), "newton_start_temperature_K": nstep.temperature_K,
               "newton_step_K": nstep.step_K, "newton_converged": nstep.converged,
               "initial_u_res_J_mol": u_i, "initial_u_res_stderr_J_mol": s_i}
    T_f, err, method = nstep.next_temperature_K, nstep.temperature_stderr_K, "newton"
    if series_final is not None and len(samples) >= 2:
        solution, warning, note = _mbar_solution(samples, series_final, n_particles, T_i,
                                                 (u_i, s_i), cv_ig, nstep.next_temperature_K)
        if solution is None:
            warnings += [warning] if warning else []
            notes += [note] if note else []
        else:
            T_f, err, mbar_details = solution
            method = "mbar"
            details.update(mbar_details, newton_temperature_K=nstep.next_temperature_K)
            notes.append(_MBAR_NOTE)
    if method == "newton" and not nstep.converged:
        warnings.append(_unconverged_warning(nstep, err, tolerance))
    notes.append("stderr(T_f) = sqrt(s_i^2 + s_f^2) / c_v(T_f, rho_f) from both end states")
    cv_ig.check_temperature(T_f, "final temperature T_f")
    return SampledExpansionResult(
        route="energy", method=method, initial_temperature_K=T_i, final_temperature_K=T_f,
        final_temperature_stderr_K=err, delta_T_K=T_f - T_i, delta_T_stderr_K=err,
        final_density_mol_m3=None if rho_f is None else float(rho_f), details=details,
        warnings=warnings, notes=notes)
