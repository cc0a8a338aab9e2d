"""Free-expansion (Joule) solvers at constant internal energy.

A gas at (T_i, rho_i) expands into vacuum to r = V_f / V_i > 1 times its
volume, with no heat and no work, so its molar internal energy is conserved:

    u_ig(T_f) + u_res(T_f, rho_f) = u_ig(T_i) + u_res(T_i, rho_i),  rho_f = rho_i / r,

with u_ig(T) = int c_v_ig dT from :mod:`analysis.heatcapacity`.  Four
routes solve it:

- :func:`virial_expansion`: u_res and p from the virial series of a
  ``VirialGas`` (B2, or B2 + B3), solved with a bracketing root finder.
- :func:`energy_route`: u_res sampled by NVT simulation at the initial
  state and at a few temperatures at rho_f; Newton steps
  (:func:`newton_step`) and, from two sampled temperatures on, MBAR
  reweighting of the sampled energies as the interpolant of u_res(T).
- :func:`microcanonical_route`: the temperature estimator of a
  microcanonical Monte Carlo run at the final volume (J. R. Ray, Phys. Rev.
  A 44, 4061, 1991).
- :func:`direct_route`: the relaxed tail of an NVE MD run after the box
  was enlarged, corrected from the model (truncated and shifted) potential
  to the full one.

Units.  The virial and energy routes work in SI: temperatures in K,
densities in mol/m^3, pressures in Pa, molar energies in J/mol, heat
capacities in J/(mol K).  The microcanonical and direct routes take the
engine's reduced per-particle series (energies in epsilon, temperatures
kT/epsilon) with the reference well depth ``epsilon_K`` (epsilon/k in K) and
report kelvin; :func:`reduced_to_J_mol` converts a reduced per-particle
energy: u [J/mol] = u_red * epsilon_K * R.

Array suffixes: ``_t`` time series, ``_n`` pooled samples, ``_kn`` state k
by sample n (pymbar's convention).
"""
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq
from scipy.special import logsumexp

from analysis import inputs, stats
from analysis.results import Result
from mdsim.checks import count, positive
from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import R_GAS  # noqa: F401  (re-exported: mdsim.pipeline.tasks imports it here)


VIRIAL_SPREAD_WARN = 0.10
"""Warn when the B2 and B2 + B3 temperature changes differ by more than this
fraction of the reported one: the series is running out."""

NEWTON_TOLERANCE = 0.25
"""Newton iterations stop when |step| < NEWTON_TOLERANCE * stderr(T_f)."""


# --- small helpers ------------------------------------------------------------

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
    """
    scale = float(epsilon_K) * R_GAS
    if np.ndim(u_red):
        return np.asarray(u_red, dtype=np.float64) * scale
    return float(u_red) * scale


def _mean_stderr(value, name):
    """(mean, stderr) from a SeriesMean, a (mean, stderr) pair or a number."""
    if isinstance(value, stats.SeriesMean):
        return float(value.mean), float(value.stderr)
    if np.ndim(value) == 0:
        return float(value), 0.0
    try:
        mean, err = (float(v) for v in value)
    except (TypeError, ValueError):
        raise StudyError(f"'{name}' = {value!r} must be a SeriesMean, a (mean, stderr) pair or "
                         "a number (J/mol).") from None
    if not (math.isfinite(mean) and math.isfinite(err) and err >= 0.0):
        raise StudyError(f"'{name}' = ({mean}, {err}) needs a finite mean and a stderr >= 0.")
    return mean, err


def find_root_bracketed(fun, x0, lower, upper, what, first_step=0.02, xtol=None, rtol=1e-13):
    """Root of a scalar function near x0, bracketed by a growing search.

    Parameters
    ----------
    fun : callable
        f(x) -> float.
    x0 : float
        Where the search starts (a root is expected near it).
    lower, upper : float
        Hard limits of the search (x0 inside).
    what : str
        What the root is, for the error message.
    first_step : float
        First trial offset, relative to x0; it grows by 1.6 each try,
        downwards and upwards alternately.
    xtol, rtol : float, optional
        Tolerances of the final brentq solve; ``xtol`` is 1e-12 * x0 by
        default.

    Returns
    -------
    float

    Raises
    ------
    ConvergenceError
        No sign change in [lower, upper]; ``partial`` holds the last
        (below, above) points and their function values.
    """
    if xtol is None:
        xtol = 1e-12 * x0
    f0 = fun(x0)
    if f0 == 0.0:
        return float(x0)
    step = first_step * x0
    below, above = x0, x0
    f_below, f_above = f0, f0
    while below > lower or above < upper:
        if below > lower:
            nxt = max(lower, below - step)
            f_nxt = fun(nxt)
            if np.sign(f_nxt) != np.sign(f_below):
                return float(brentq(fun, nxt, below, xtol=xtol, rtol=rtol))
            below, f_below = nxt, f_nxt
        if above < upper:
            nxt = min(upper, above + step)
            f_nxt = fun(nxt)
            if np.sign(f_nxt) != np.sign(f_above):
                return float(brentq(fun, above, nxt, xtol=xtol, rtol=rtol))
            above, f_above = nxt, f_nxt
        step *= 1.6
    raise ConvergenceError(
        f"no root of the energy balance for {what} between {lower:g} and {upper:g} K: the "
        "internal energy does not cross its initial value there. The state may lie outside "
        "the model's reach (check the heat-capacity range, the density and the potential), "
        "or the final state is two-phase; use a simulation route.",
        partial={"x": (below, above), "f": (f_below, f_above)})


# --- virial route -------------------------------------------------------------

@dataclass(frozen=True)
class VirialExpansionResult(Result):
    """A free expansion solved with the virial equation of state.

    Attributes
    ----------
    route : str
        "virial".
    virial_order : int
        2 (B2 only) or 3 (B2 + B3): the truncation used for every quantity.
    initial_temperature_K, initial_pressure_Pa, initial_density_mol_m3 : float
    volume_ratio : float
        V_f / V_i.
    final_temperature_K, final_pressure_Pa, final_density_mol_m3 : float
    delta_T_K : float
        T_f - T_i (negative: the gas cools).
    delta_T_B2_K, delta_T_B2B3_K : float
        The same with the series truncated after B2 and after B3 (each from
        its own initial density when the initial pressure was given).
    entropy_generated_J_molK : float
        s(T_f, rho_f) - s(T_i, rho_i): int c_v_ig / T dT + R ln r + Delta s_res.
    warnings, notes : list of str
    """

    route: str
    virial_order: int
    initial_temperature_K: float
    initial_pressure_Pa: float
    initial_density_mol_m3: float
    volume_ratio: float
    final_temperature_K: float
    final_pressure_Pa: float
    final_density_mol_m3: float
    delta_T_K: float
    delta_T_B2_K: float
    delta_T_B2B3_K: float
    entropy_generated_J_molK: float
    warnings: list = field(default_factory=list)
    notes: list = field(default_factory=list)


def _check_virial_state(gas, T, rho, label):
    """The gas raises its ``VirialSeriesError`` (saying a simulation is
    needed) where the truncated series does not hold; ``label`` is kept for
    the traceback reader."""
    gas.check_converged(T, rho)


def _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, order):
    """(rho_i, p_i, T_f, rho_f, p_f, ds) for one truncation."""
    if rho_i is None:
        rho_i = float(gas.density_from_pressure(T_i, p_i, order))
    _check_virial_state(gas, T_i, rho_i, "initial")
    if p_i is None:
        p_i = float(gas.pressure_Pa(T_i, rho_i, order))
    rho_f = rho_i / r
    u_target = cv_ig.u(T_i) + float(gas.u_res_J_mol(T_i, rho_i, order))
    lo, hi = cv_ig.valid_range
    lo = max(lo, 1e-3 * T_i)
    hi = min(hi, 1e3 * T_i)

    def balance(T):
        return cv_ig.u(T) + float(gas.u_res_J_mol(T, rho_f, order)) - u_target

    T_f = find_root_bracketed(balance, T_i, lo, hi,
                              f"the final temperature (virial order {order})")
    _check_virial_state(gas, T_f, rho_f, "final")
    p_f = float(gas.pressure_Pa(T_f, rho_f, order))
    ds = (cv_ig.delta_s(T_i, T_f) + R_GAS * math.log(r)
          + float(gas.s_res_J_molK(T_f, rho_f, order))
          - float(gas.s_res_J_molK(T_i, rho_i, order)))
    return rho_i, p_i, T_f, rho_f, p_f, ds


def virial_expansion(gas, cv_ig, T_i, volume_ratio, p_i=None, rho_i=None, order=2):
    """Free expansion with the virial equation of state.

    Parameters
    ----------
    gas : VirialGas
        Offers ``pressure_Pa(T, rho, order)``, ``u_res_J_mol(T, rho, order)``,
        ``s_res_J_molK(T, rho, order)``, ``density_from_pressure(T, p, order)``
        and ``check_converged(T, rho)`` (SI units).
    cv_ig : IdealGasHeatCapacity
        Ideal-gas heat capacity model (``u``, ``delta_s``, ``valid_range``).
    T_i : float
        Initial temperature, K.
    volume_ratio : float
        r = V_f / V_i > 1.
    p_i : float, optional
        Initial pressure, Pa (solved for rho_i with the same truncation).
    rho_i : float, optional
        Initial density, mol/m^3.  Give exactly one of p_i and rho_i.
    order : {2, 3}
        Truncation of the virial series.

    Returns
    -------
    VirialExpansionResult

    Notes
    -----
    Solves u_ig(T_f) + u_res(T_f, rho_i / r) = u_ig(T_i) + u_res(T_i, rho_i)
    with u_res / (R T) = -T B' rho - (T/2) C' rho^2.  Both truncations are
    solved; their difference, when larger than ``VIRIAL_SPREAD_WARN`` of
    |Delta T|, is reported as a warning that the series is running out.
    """
    T_i = positive("T_i", T_i, "the initial temperature in K, e.g. 295")
    r = inputs.volume_ratio(volume_ratio)
    order = inputs.order(order)
    inputs.one_initial_state(p_i, rho_i, "p_i", "rho_i")
    if p_i is not None:
        p_i = positive("p_i", p_i, "the initial pressure in Pa, e.g. 22e5")
    if rho_i is not None:
        rho_i = positive("rho_i", rho_i, "the initial density in mol/m^3")
    cv_ig.check_temperature(T_i, "initial temperature T_i")

    rho_0, p_0, T_f, rho_f, p_f, ds = _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, order)
    other = 5 - order
    warnings = []
    dT = {order: T_f - T_i}
    try:
        dT[other] = _solve_virial(gas, cv_ig, T_i, r, p_i, rho_i, other)[2] - T_i
    except (StudyError, ConvergenceError) as exc:
        # only the comparison is lost; the requested truncation stands, and says so
        dT[other] = math.nan
        warnings.append(f"the order-{other} virial solution, solved for comparison, failed "
                        f"({exc}); the spread between truncations is unknown.")
    spread = abs(dT[3] - dT[2])
    if spread > VIRIAL_SPREAD_WARN * abs(dT[order]) and spread > 1e-6 * T_i:
        warnings.append(
            f"virial series weak: Delta T is {dT[2]:.4g} K with B2 and {dT[3]:.4g} K with "
            f"B2 + B3 (difference {spread:.3g} K, more than {VIRIAL_SPREAD_WARN:.0%}); "
            "check this state with a simulation route.")
    notes = [f"virial equation of state truncated after B{order}; "
             "entropy from s_ig + R ln r + s_res (state functions)"]
    return VirialExpansionResult(
        route="virial", virial_order=order,
        initial_temperature_K=T_i, initial_pressure_Pa=p_0, initial_density_mol_m3=rho_0,
        volume_ratio=r, final_temperature_K=T_f, final_pressure_Pa=p_f,
        final_density_mol_m3=rho_f, delta_T_K=T_f - T_i,
        delta_T_B2_K=dT[2], delta_T_B2B3_K=dT[3], entropy_generated_J_molK=ds,
        warnings=warnings, notes=notes)


# --- energy route ---------------------------------------------------------------

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
        sqrt(s_i^2 + s_k^2) / c_v: the standard error a temperature found
        from these two energies carries.
    converged : bool
        |step| < tolerance * temperature_stderr_K: sampling again would not
        move the estimate by more than its own noise.
    """

    temperature_K: float
    next_temperature_K: float
    step_K: float
    temperature_stderr_K: float
    converged: bool


def newton_step(sample, u_initial, T_i, cv_ig, tolerance=NEWTON_TOLERANCE):
    """Newton update of T_f from one sampled temperature (DESIGN 2.3, item 1).

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
    / (c_v_ig(T_k) + c_v_res(T_k, rho_f)).
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
    step = -residual / cv
    err = math.hypot(s_i, sample.u_res_stderr_J_mol) / cv
    return NewtonStep(T_k, T_k + step, step, err, bool(abs(step) < tolerance * err))


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


class MBARInterpolant:
    """u_res(T) and c_v,res(T) at fixed density by MBAR reweighting.

    Parameters
    ----------
    temperatures_K : sequence of float, length K >= 2
        Temperatures sampled (canonical ensemble, same density and N).
    u_series_J_mol : sequence of array_like
        For each temperature, the residual energy per mole of each sample
        (U_total / N times N_A), a time series.
    n_particles : int
        N of the simulations.

    Notes
    -----
    Each series is cut to its equilibrated part and subsampled to
    uncorrelated samples (pymbar ``timeseries``).  Reduced potentials
    u_kn = U_total(x_n) / (k T_k) = N u_n / (R T_k); pymbar's MBAR gives the
    free energies f_k; the expectation at any T is
    <A>(T) = sum_n A_n w_n(T), w_n ∝ exp(-N u_n / (R T)) / sum_k N_k exp(f_k - u_kn)
    (Shirts and Chodera, J. Chem. Phys. 129, 124105, 2008).  A tail
    correction is a constant at fixed density and cancels in the weights.
    """

    def __init__(self, temperatures_K, u_series_J_mol, n_particles):
        T_k = np.asarray(temperatures_K, dtype=np.float64)
        if T_k.ndim != 1 or T_k.size < 2 or len(u_series_J_mol) != T_k.size:
            raise StudyError("MBAR needs at least two sampled temperatures, each with one "
                             f"energy series; got {T_k.size} temperatures and "
                             f"{len(u_series_J_mol)} series.")
        self.n_particles = count("n_particles", n_particles,
                                 hint="the number of particles simulated")
        pymbar = stats.import_pymbar()
        kept, counts = [], []
        for k, series in enumerate(u_series_J_mol):
            x_t = stats.check_series(series, f"u_series_J_mol[{k}]")
            t0, g, _ = stats.detect_equilibration(x_t)
            x_t = x_t[t0:]
            if np.ptp(x_t) > 0.0:
                idx = pymbar.timeseries.subsample_correlated_data(x_t, g=stats.statistical_inefficiency(x_t))
                x_t = x_t[np.asarray(idx, dtype=int)]
            kept.append(x_t)
            counts.append(x_t.size)
        self.temperatures_K = T_k
        self.u_n = np.concatenate(kept)
        self.N_k = np.asarray(counts, dtype=np.int64)
        self._beta_scale = self.n_particles / R_GAS  # N / R; u_kn = beta_scale * u_n / T
        u_kn = self._beta_scale * self.u_n[None, :] / T_k[:, None]
        shift = u_kn.min()
        self._mbar = pymbar.MBAR(u_kn - shift, self.N_k)
        f_k = np.asarray(self._mbar.f_k, dtype=np.float64)
        self._log_denom_n = logsumexp(np.log(self.N_k)[:, None] + f_k[:, None] - (u_kn - shift),
                                      axis=0)
        self._shift = shift

    def _weights(self, T):
        log_w = -(self._beta_scale * self.u_n / T - self._shift) - self._log_denom_n
        return np.exp(log_w - logsumexp(log_w))

    def u_res(self, T):
        """Reweighted <u_res> at T, J/mol."""
        return float(self._weights(T) @ self.u_n)

    def cv_res(self, T):
        """Reweighted residual heat capacity N Var(u) / (R T^2), J/(mol K)."""
        w = self._weights(T)
        mean = w @ self.u_n
        return float(self.n_particles * (w @ (self.u_n - mean) ** 2) / (R_GAS * T * T))

    def u_res_stderr(self, T):
        """MBAR standard error of <u_res> at T, J/mol."""
        u_ln = self._beta_scale * self.u_n[None, :] / T - self._shift
        out = self._mbar.compute_expectations(self.u_n, u_kn=u_ln, state_dependent=False)
        return float(np.atleast_1d(out["sigma"])[0])

    def effective_samples(self, T):
        """Kish effective sample size of the weights at T."""
        w = self._weights(T)
        return float(1.0 / np.sum(w * w))


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
    standard errors of u_res at the two end states (DESIGN 2.3, item 1).
    """
    u_i, s_i = _mean_stderr(u_initial, "u_initial")
    T_i = positive("T_i", T_i, "the initial temperature in K")
    cv_ig.check_temperature(T_i, "initial temperature T_i")
    samples = list(samples_final)
    if not samples:
        raise StudyError("energy route: 'samples_final' is empty; sample at least one "
                         "temperature at the final density (start from the virial estimate).")
    steps = [newton_step(s, (u_i, s_i), T_i, cv_ig, tolerance) for s in samples]
    best = min(range(len(steps)), key=lambda k: abs(steps[k].step_K))
    nstep = steps[best]
    warnings, notes = [], []
    details = {"samples_used": len(samples),
               "newton_start_temperature_K": nstep.temperature_K,
               "newton_step_K": nstep.step_K,
               "newton_converged": nstep.converged,
               "initial_u_res_J_mol": u_i, "initial_u_res_stderr_J_mol": s_i}
    T_f, err, method = nstep.next_temperature_K, nstep.temperature_stderr_K, "newton"
    if series_final is not None and len(samples) >= 2:
        if n_particles is None:
            raise StudyError("energy route: 'series_final' was given without 'n_particles'; "
                             "MBAR needs the number of particles of the simulations.")
        if len(series_final) != len(samples):
            raise StudyError(f"energy route: {len(series_final)} series for {len(samples)} "
                             "samples; give one energy series per sampled temperature.")
        mbar = MBARInterpolant([s.temperature_K for s in samples], series_final, n_particles)
        T_lo, T_hi = mbar.temperatures_K.min(), mbar.temperatures_K.max()
        pad = 0.25 * (T_hi - T_lo)
        lo, hi = max(T_lo - pad, cv_ig.valid_range[0], 1e-300), min(T_hi + pad, cv_ig.valid_range[1])
        target = cv_ig.u(T_i) + u_i

        def balance(T):
            return cv_ig.u(T) + mbar.u_res(T) - target

        f_lo, f_hi = balance(lo), balance(hi)
        if np.sign(f_lo) != np.sign(f_hi):
            T_f = float(brentq(balance, lo, hi, xtol=1e-10 * T_i, rtol=1e-12))
            cv = cv_ig.cv(T_f) + mbar.cv_res(T_f)
            s_f = mbar.u_res_stderr(T_f)
            err = math.hypot(s_i, s_f) / cv
            method = "mbar"
            details.update({"mbar_u_res_J_mol": mbar.u_res(T_f), "mbar_u_res_stderr_J_mol": s_f,
                            "mbar_cv_res_J_molK": mbar.cv_res(T_f),
                            "mbar_effective_samples": mbar.effective_samples(T_f),
                            "newton_temperature_K": nstep.next_temperature_K})
            notes.append("u_res(T) at the final density interpolated by MBAR reweighting of "
                         "the sampled energies (pymbar)")
        else:
            warnings.append(
                f"energy route: MBAR finds no root between {lo:.6g} and {hi:.6g} K (the "
                "sampled range widened by a quarter each side); the Newton estimate is "
                f"reported. Sample closer to {nstep.next_temperature_K:.6g} K.")
    if method == "newton" and not nstep.converged:
        warnings.append(f"energy route: the last Newton step ({nstep.step_K:.3g} K) is not "
                        f"below {tolerance:g} x the temperature stderr ({err:.3g} K); sample "
                        f"at {nstep.next_temperature_K:.6g} K and solve again.")
    notes.append("stderr(T_f) = sqrt(s_i^2 + s_f^2) / c_v(T_f, rho_f) from both end states")
    cv_ig.check_temperature(T_f, "final temperature T_f")
    return SampledExpansionResult(
        route="energy", method=method, initial_temperature_K=T_i, final_temperature_K=T_f,
        final_temperature_stderr_K=err, delta_T_K=T_f - T_i, delta_T_stderr_K=err,
        final_density_mol_m3=None if rho_f is None else float(rho_f), details=details,
        warnings=warnings, notes=notes)


# --- microcanonical route -----------------------------------------------------

def microcanonical_route(kinetic_t_red, n_particles, dof_per_particle, epsilon_K, T_i,
                         initial_energy_stderr_red=0.0, cv_red=None, rho_f=None):
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

    Returns
    -------
    SampledExpansionResult

    Notes
    -----
    1 / (k T) = (F/2 - 1) <1 / (E - U)>, E - U = N K_t (J. R. Ray, Phys.
    Rev. A 44, 4061, 1991).  stderr from the statistical inefficiency of
    1 / (N K_t): s_T = T^2 (F/2 - 1) s_<1/(E-U)>.
    """
    K_t = stats.check_series(kinetic_t_red, "kinetic_t_red")
    if np.any(K_t <= 0.0):
        raise StudyError("microcanonical route: every kinetic energy in 'kinetic_t_red' must be "
                         f"> 0 (E > U); found {K_t[K_t <= 0][0]:g}. The run's energy E is below "
                         "a sampled potential energy: check how E was set.")
    N = count("n_particles", n_particles, hint="the number of particles")
    f = positive("dof_per_particle", dof_per_particle, "3 for atoms, 5 for rigid linear molecules")
    eps = positive("epsilon_K", epsilon_K, "epsilon/k of the reduced units, in K")
    T_i = positive("T_i", T_i, "the initial temperature in K")
    F = f * N
    if F <= 2.0:
        raise StudyError(f"microcanonical route: F = f N = {F:g} kinetic degrees of freedom; the "
                         "estimator needs F > 2.")
    inv = stats.mean_and_stderr(1.0 / (N * K_t))
    beta = (F / 2.0 - 1.0) * inv.mean
    T_f_red = 1.0 / beta
    s_stat = T_f_red ** 2 * (F / 2.0 - 1.0) * inv.stderr
    cv = f / 2.0 if cv_red is None else positive("cv_red", cv_red, "heat capacity per particle in k")
    s_e = float(initial_energy_stderr_red) / cv
    T_f = T_f_red * eps
    err_f = s_stat * eps
    err_d = math.hypot(s_stat, s_e) * eps
    notes = ["1/(kT) = (F/2 - 1) <1/(E - U)> (Ray 1991); classical constant c_v_ig = f/2 k",
             "delta_T_stderr_K includes the initial-energy stderr divided by "
             + ("f/2 (kinetic heat capacity)" if cv_red is None else "the given cv_red")]
    return SampledExpansionResult(
        route="microcanonical", method="ray estimator", initial_temperature_K=T_i,
        final_temperature_K=T_f, final_temperature_stderr_K=err_f, delta_T_K=T_f - T_i,
        delta_T_stderr_K=err_d, final_density_mol_m3=None if rho_f is None else float(rho_f),
        details={"final_temperature_red": T_f_red, "statistical_inefficiency": inv.g,
                 "samples_discarded": inv.t0, "samples_used": inv.n_used,
                 "kinetic_dof_total": F},
        notes=notes)


# --- direct route -----------------------------------------------------------

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
    T_f is the mean of the relaxed tail of ``temperature_t_red`` (the
    transient cut by equilibration detection), then two corrections, both
    divided by c_v:

    - energy anchor: the trajectory's conserved energy per particle,
      E = <K_t + u_model,t> with K_t = kinetic_dof T_t / (2 N), is moved to
      the canonical mean of the initial state, kinetic_dof T_i / (2 N) +
      <u_model,i>; one canonical snapshot's energy scatters by about
      T_i sqrt(c_v / N), which would otherwise dominate the error;
    - model to full potential: MD conserves the model energy, the gas the
      full one, so T_f += -[<u_full - u_model>_f - <u_full - u_model>_i] / c_v
      (DESIGN 2.3, item 3).
    """
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
    N = count("n_particles", n_particles, hint="the number of particles")
    eps = positive("epsilon_K", epsilon_K, "epsilon/k of the reduced units, in K")
    T_i_red = positive("T_i_red", T_i_red, "the initial temperature kT/epsilon of the equilibration")
    dof = 3 * N - 3 if kinetic_dof is None else count(
        "kinetic_dof", kinetic_dof, hint="3 N - 3 for MD with zero momentum")
    kin = dof / (2.0 * N)
    cv = kin if cv_red is None else positive("cv_red", cv_red, "heat capacity per particle in k")

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
    T_f_red = tail.mean + anchor + correction
    err_red = math.sqrt(tail.stderr ** 2 + (um_i_mean.stderr / cv) ** 2
                        + (d_i.stderr ** 2 + d_f.stderr ** 2) / cv ** 2)
    warnings = []
    if e_drift > 1e-3 * abs(e_traj) + 1e-6:
        warnings.append(f"direct route: the model energy per particle scatters by "
                        f"{e_drift:.3g} epsilon during the NVE run (mean {e_traj:.6g}); "
                        "reduce the time step.")
    notes = ["T_f is the mean of the relaxed tail of the NVE temperature (equilibration detection)",
             f"T_f corrected from the model (truncated and shifted) to the full potential by "
             f"{correction * eps:+.4g} K = -Delta<U_full - U_model>/c_v between the end states",
             f"T_f anchored to the canonical mean energy of the initial state: {anchor * eps:+.4g} K",
             "c_v = " + (f"{kin:.4g} k per particle (kinetic part only)" if cv_red is None
                         else f"{cv:.4g} k per particle (given)")]
    T_i = T_i_red * eps
    T_f = T_f_red * eps
    return SampledExpansionResult(
        route="direct", method="relaxed tail", initial_temperature_K=T_i,
        final_temperature_K=T_f, final_temperature_stderr_K=err_red * eps,
        delta_T_K=T_f - T_i, delta_T_stderr_K=err_red * eps,
        final_density_mol_m3=None if rho_f is None else float(rho_f),
        details={"relaxed_from_sample": t0, "tail_temperature_K": tail.mean * eps,
                 "potential_correction_K": correction * eps, "energy_anchor_K": anchor * eps,
                 "statistical_inefficiency": tail.g},
        warnings=warnings, notes=notes)
