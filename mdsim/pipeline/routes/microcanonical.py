"""The microcanonical route: the final state sampled at the initial state's energy.

E per particle = <u_full> + (F/2 - 1) kT_i / N from the initial NVT state,
then microcanonical Monte Carlo at rho_f (Ray 1991) gives T_f
(:func:`analysis.expansion.microcanonical_route`).  Assumes a constant
classical c_v_ig = (f/2) R; the plan refuses other heat capacities.  Stage
files: ``initial-state-*`` and ``final-state-nve-*``.
"""
import math

import numpy as np

from mdsim.pipeline.chain import Chain, mean_se, solve_or_extend, stage_share
from mdsim.pipeline.initial_state import run_initial_state
from mdsim.pipeline.stage_names import FINAL_STATE_NVE

__all__ = ["run_microcanonical"]


def run_microcanonical(job):
    """Run the microcanonical route of a task.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask

    Returns
    -------
    res, series, pressure, extra
        As :func:`mdsim.pipeline.routes.energy.run_energy`; ``series`` holds
        the kinetic and running Ray temperatures (K) by sample.
    """
    f = job.study.gas.dof_per_particle
    T_i_red = job.units.temperature_to_reduced(job.T_i)
    share = stage_share(job, 0.5 * f)
    init = run_initial_state(job, "mc-nvt", T_i_red, share)
    mi, si = mean_se(init, "u_full")
    # Kinetic part (F/2 - 1) kT_i / N, not (f/2) kT_i: the Ray temperature of a finite
    # microcanonical system, 1/kT = (F/2 - 1) <1/(E - U)>, then returns T_i for an ideal gas
    # exactly; with f/2 it would be high by T_i / (F/2 - 1), an O(1/N) ensemble bias
    # (0.9 K at 135 K with N = 100) that does not belong to the expansion.
    n = job.n_particles
    E_red = float(mi + (0.5 * f * n - 1.0) / n * T_i_red)
    job.notes.append("microcanonical route: E per particle = <u_full>(T_i, rho_i) + (F/2 - 1) "
                     "kT_i / N, the energy whose Ray temperature is T_i for an ideal gas of F = "
                     "f N kinetic degrees of freedom (removes an O(1/N) ensemble bias)")
    nve = Chain(job, FINAL_STATE_NVE, 1, job.system_maker(job.rho_f, 1), "mc-nve", E_red=E_red,
                key="kinetic").run_pilot()
    nve.resume_existing()
    if not nve.results:
        # T ~ 2 K / f: the kinetic series needs the stderr (f/2) x that of T, which is `share`
        nve.extend(nve.samples_for(share), mandatory=True)
    res = _sample_to_target(job, nve, si, f)
    job.final_chain = nve
    p = nve.summary().get("pressure")
    pressure = ({"value": job.units.pressure_to_Pa(p.value),
                 "stderr": job.units.pressure_to_Pa(p.stderr)}
                if p is not None and p.available else None)
    extra = {"energy_per_particle_red": E_red, "initial_samples": init.n_samples(),
             "nve_samples": nve.n_samples()}
    return res, _series(job, nve, f), pressure, extra


def _sample_to_target(job, nve, initial_stderr_red, f):
    """Solve, and extend the NVE chain while its share of the error is above the target."""
    from analysis.expansion import microcanonical_route

    def solve():
        return microcanonical_route(nve.samples()["kinetic"], job.n_particles, f, job.eps_K,
                                    job.T_i, initial_energy_stderr_red=initial_stderr_red,
                                    rho_f=job.rho_f)

    res = solve_or_extend(nve, solve)
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        s_nve = res.final_temperature_stderr_K
        s_init = math.sqrt(max(res.delta_T_stderr_K ** 2 - s_nve ** 2, 0.0))
        if s_init >= 0.99 * job.target_K:
            job.warnings.append("microcanonical route: the initial-state energy alone carries "
                                f"{s_init:.3g} K of error (it is fixed once E is set); the "
                                "target is not reached")
            break
        n = nve.n_samples()
        ratio = (s_nve ** 2) / max(job.target_K ** 2 - s_init ** 2, 1e-30 * job.target_K ** 2)
        if not nve.extend(int(math.ceil(n * max(0.2, (ratio - 1.0) * 1.2)))):
            break
        res = solve_or_extend(nve, solve)
    return res


def _series(job, nve, f):
    """Kinetic temperature and running Ray temperature by sample (K), for the plots."""
    K_t = nve.samples()["kinetic"]
    n = job.n_particles
    F = f * n
    inv_t = np.cumsum(1.0 / (n * K_t)) / np.arange(1, K_t.size + 1)
    return {"kinetic_temperature_K_t": 2.0 * K_t / f * job.eps_K,
            "ray_temperature_running_K_t": job.eps_K / ((0.5 * F - 1.0) * inv_t),
            "sample": np.arange(K_t.size, dtype=float) * nve.interval}
