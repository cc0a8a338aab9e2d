"""Is a task's final (and initial) state one homogeneous fluid?  The evidence, from its stages.

After a simulation route has run, :func:`check_phases` looks at the end
configurations of the stage files sampled at each end state, and of a few
short stages continuing the final state (``phase-snapshot-NN``: one end
configuration per stage file is all a stage keeps) (the local
density on a cell grid and the crystal-like bond order,
:mod:`analysis.phases`), at the final pressure, and at what the route's
solver did.  Any piece of evidence makes the state two-phase (or metastable):
the task's result says ``two_phase: true`` with the evidence and carries a
warning, so no number inside the vapour-liquid dome goes out silently.  A
crystal-like end state stops the task: the tool does not treat solid-vapour
coexistence.
"""
import numpy as np

from mdsim.errors import ConvergenceError, SimulationError, StudyError
from mdsim.pipeline.stage_names import PHASE_SNAPSHOTS, stage_name
from mdsim.sampling import store

__all__ = ["check_phases", "state_evidence", "solver_evidence", "pressure_at_initial_temperature",
           "SOLVER_JUMP_Z", "N_SNAPSHOTS", "SNAPSHOT_SAMPLES"]

SOLVER_JUMP_Z = 2.0
"""An unconverged Newton step larger than this many standard errors of T_f is evidence."""
N_SNAPSHOTS = 4
"""Short stages continuing the final state, each giving one more end configuration."""
SNAPSHOT_SAMPLES = 20
"""Samples per snapshot stage at the chain's interval (the fewest a stage file takes)."""


def _clear_stale_snapshots(job, last_stage_path):
    """Remove snapshot stages older than the chain's last stage (the task was extended since:
    they continue a state the route no longer ends in)."""
    if last_stage_path is None or not last_stage_path.is_file():
        return
    newest = last_stage_path.stat().st_mtime
    paths = [job.stage_path(stage_name(PHASE_SNAPSHOTS, k)) for k in range(N_SNAPSHOTS)]
    paths += [store.part_path(p) for p in paths]
    if any(p.is_file() and p.stat().st_mtime < newest for p in paths):
        for p in paths:
            if p.is_file():
                p.unlink()


def _snapshots(chain):
    """The end configurations of :data:`N_SNAPSHOTS` short stages continuing a chain."""
    prev = chain.results[-1] if chain.results else chain.pilot
    _clear_stale_snapshots(chain.job, prev.path)
    configs = []
    for k in range(N_SNAPSHOTS):
        prev = chain.continue_stage(prev, stage_name(PHASE_SNAPSHOTS, k), SNAPSHOT_SAMPLES,
                                    300 + k)
        configs.append(np.asarray(store.read_final(prev.path)["positions"], dtype=float))
    return configs


def _configurations(chain, first=0):
    """End configurations and the box of the stage files of a chain (pilot included)."""
    results = ([chain.pilot] if getattr(chain, "pilot", None) is not None else []) \
        + list(chain.results[first:])
    configs, box = [], None
    for r in results:
        if r is None or r.path is None:
            continue
        final = store.read_final(r.path)
        configs.append(np.asarray(final["positions"], dtype=float))
        box = np.asarray(final["box"], dtype=float)
    return configs, box


def state_evidence(configs, box, pressure=None, pressure_unit="Pa"):
    """Evidence against one homogeneous fluid at a sampled state.

    Parameters
    ----------
    configs : list of ndarray, each shape=(n_particles, 3), reduced
    box : ndarray, shape=(3,), reduced
    pressure : dict, optional
        {value, stderr} of the sampled pressure.
    pressure_unit : str

    Returns
    -------
    dict
        ``evidence`` (list of str), ``crystal_like_fraction``, ``local_density``
        (the :class:`analysis.phases.LocalDensityCheck` as a dict) and ``solid`` (bool).
    """
    from analysis.phases import (CRYSTAL_FRACTION_SOLID, crystal_like_fraction,
                                 local_density_check, pressure_check)
    evidence = []
    local = local_density_check(configs, box) if configs else None
    if local is not None and local.describe():
        evidence.append(local.describe())
    crystal = crystal_like_fraction(configs, box) if configs else 0.0
    solid = crystal > CRYSTAL_FRACTION_SOLID
    if solid:
        evidence.append(f"{100 * crystal:.0f} % of the particles crystal-like (bond order q6)")
    if pressure is not None:
        evidence.extend(pressure_check(pressure["value"], pressure["stderr"],
                                       unit=pressure_unit).evidence)
    return {"evidence": evidence, "crystal_like_fraction": crystal, "solid": bool(solid),
            "local_density": None if local is None else vars(local).copy()}


def solver_evidence(res):
    """Evidence from the energy route's solver: Newton stopped with a step beyond its error.

    Parameters
    ----------
    res : analysis.expansion.SampledExpansionResult

    Returns
    -------
    list of str

    Examples
    --------
    >>> from analysis.expansion import SampledExpansionResult
    >>> res = SampledExpansionResult("energy", "newton", 80.0, 43.0, 0.3, -37.0, 0.34,
    ...                              details={"newton_converged": False, "newton_step_K": -9.0})
    >>> solver_evidence(res)
    ['the Newton solver stopped with a step of -9 K against an error of 0.3 K']
    """
    d = res.details
    if res.method != "newton" or d.get("newton_converged", True):
        return []
    step = float(d.get("newton_step_K", 0.0))
    if abs(step) <= SOLVER_JUMP_Z * res.final_temperature_stderr_K:
        return []
    return [f"the Newton solver stopped with a step of {step:.3g} K against an error of "
            f"{res.final_temperature_stderr_K:.2g} K"]


def pressure_at_initial_temperature(job, chain):
    """p(T_i, rho_f) from an NVT Monte Carlo chain at (T_k, rho_f), {value, stderr} in Pa, or None.

    The sampled pressure moved to T_i with (dp/dT)_rho from the fluctuations
    of the same samples (:func:`analysis.inversion.fluctuation_estimate`;
    docs/physics.md section 5.3), to first order in T_i - T_k; its standard
    error is that of the sampled pressure plus the slope's times |T_i - T_k|.
    None for other samplers (they do not record the truncated energy and the
    configurational pressure that estimate needs) or when the estimate fails.
    """
    from analysis.inversion import fluctuation_estimate
    p = chain.summary().get("pressure")
    if chain.method != "mc-nvt" or p is None or not p.available:
        return None
    s = chain.samples()
    u = job.units
    n = job.n_particles
    rho_red = u.density_to_reduced(job.rho_f)
    try:
        est = fluctuation_estimate(s["u_trunc"], s["pressure_conf"], n, chain.T_red, rho_red,
                                   discard_equilibration=False)
    except (ConvergenceError, StudyError, KeyError):
        return None
    dT = u.temperature_to_reduced(job.T_i) - chain.T_red
    value = p.value + est.dp_dT_red * dT
    stderr = float(np.hypot(p.stderr, est.dp_dT_stderr_red * abs(dT)))
    return {"value": u.pressure_to_Pa(value), "stderr": u.pressure_to_Pa(stderr)}


def _falling_with_density(job, initial_pressure):
    """Evidence that p falls as rho rises between rho_f and rho_i at T_i (energy route), or []."""
    from analysis.phases import pressure_check
    if initial_pressure is None or job.final_chain is None:
        return []
    p_f = pressure_at_initial_temperature(job, job.final_chain)
    if p_f is None:
        return []
    check = pressure_check(p_f["value"], p_f["stderr"], (
        job.rho_f, p_f["value"], p_f["stderr"],
        job.rho_i, initial_pressure["value"], initial_pressure["stderr"]))
    return [e for e in check.evidence if not e.startswith("negative")]


def check_phases(job, res, initial_pressure, final_pressure):
    """Check the task's end states; returns the ``phase_check`` record of the task result.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
        With ``initial_chain`` and ``final_chain`` set by the route
        (``final_first_stage``: the first of the final chain's stages to look at).
    res : analysis.expansion.SampledExpansionResult
    initial_pressure, final_pressure : dict or None
        {value, stderr} in Pa.

    Returns
    -------
    dict
        ``two_phase`` (bool), ``evidence`` (list of str), ``initial_two_phase``,
        ``initial_evidence``, and the numbers behind them.  Warnings go to ``job.warnings``.

    Raises
    ------
    SimulationError
        An end state is crystal-like.
    """
    out = {"two_phase": False, "evidence": [], "initial_two_phase": False,
           "initial_evidence": []}
    if job.final_chain is not None:
        configs, box = _configurations(job.final_chain, job.final_first_stage)
        configs += _snapshots(job.final_chain)
        final = state_evidence(configs, box, final_pressure)
        _refuse_solid(job, final, "final", res.final_temperature_K, job.rho_f)
        final["evidence"] += solver_evidence(res) + _falling_with_density(job, initial_pressure)
        out.update(two_phase=bool(final["evidence"]), evidence=final["evidence"],
                   crystal_like_fraction=final["crystal_like_fraction"],
                   local_density=final["local_density"])
    if job.initial_chain is not None:
        configs, box = _configurations(job.initial_chain)
        initial = state_evidence(configs, box, initial_pressure)
        _refuse_solid(job, initial, "initial", job.T_i, job.rho_i)
        out.update(initial_two_phase=bool(initial["evidence"]),
                   initial_evidence=initial["evidence"],
                   initial_crystal_like_fraction=initial["crystal_like_fraction"])
    route = job.task["route"]
    if out["two_phase"]:
        job.warnings.append(
            f"{route} route: TWO-PHASE final state (T = {res.final_temperature_K:.4g} K, "
            f"{job.rho_f:.6g} mol/m^3): {'; '.join(out['evidence'])}. The sample is a "
            "metastable fluid or a small box holding an interface, not the equilibrium of a "
            "large system: Delta T is that of this sample, not of vapour and liquid in "
            "equilibrium (the coexistence construction gives that)")
    if out["initial_two_phase"]:
        job.warnings.append(
            f"{route} route: the initial state (T = {job.T_i:.4g} K, {job.rho_i:.6g} mol/m^3) "
            f"is not one stable fluid: {'; '.join(out['initial_evidence'])}; the expansion "
            "starts from a metastable or separated sample")
    return out


def _refuse_solid(job, found, which, T_K, rho):
    if found["solid"]:
        raise SimulationError(
            f"task {job.index:04d} ({job.task['route']} route): the {which} state (T = "
            f"{T_K:.4g} K, {rho:.6g} mol/m^3) is solid: "
            f"{100 * found['crystal_like_fraction']:.0f} % of the particles are crystal-like "
            "(bond order q6). This tool does not treat solids or solid-vapour coexistence "
            "(below the triple point); it prints no number for this state. Choose a warmer "
            "or less dense state")
