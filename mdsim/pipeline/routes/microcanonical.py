"""The microcanonical route: the final state sampled at the initial state's energy.

E per particle = <u_full> + (F/2 - 1) kT_i / N from the initial NVT state,
then microcanonical Monte Carlo at rho_f (Ray 1991) gives T_f
(:func:`analysis.expansion.microcanonical_route`).  Assumes a constant
classical c_v_ig = (f/2) R; the plan refuses other heat capacities.  Stage
files: ``initial-state-*`` and ``final-state-nve-*``.

The microcanonical run starts from a lattice (or random) configuration of
the final density, or, where that configuration's potential energy is not
below E (a cold liquid expanded: the homogeneous start holds more
potential energy than the whole system has), from the initial state's
configuration with the box enlarged r-fold along z, as behind a removed
wall (:func:`final_start`).
"""
import math

import numpy as np

from mdsim.errors import SimulationError
from mdsim.pipeline.chain import Chain, mean_se, solve_or_extend, stage_share
from mdsim.pipeline.initial_state import run_initial_state
from mdsim.pipeline.routes.direct import wall_removed_system
from mdsim.pipeline.stage_names import FINAL_STATE_NVE
from mdsim.sampling import store

__all__ = ["run_microcanonical", "final_start", "potential_energy", "sample_to_target",
           "kinetic_series"]


def run_microcanonical(job):
    """Run the microcanonical route of a task.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask

    Returns
    -------
    res, series, pressure, extra
        As :func:`mdsim.pipeline.routes.energy.run_energy`; ``series`` holds
        the kinetic and running Ray temperatures (K) by sample.  A gas of
        rigid molecules runs
        :func:`mdsim.pipeline.routes.rigid_microcanonical.run_rigid_microcanonical`.
    """
    if job.study.gas.molecules is not None:
        from mdsim.pipeline.routes.rigid_microcanonical import run_rigid_microcanonical
        return run_rigid_microcanonical(job)
    from analysis.expansion import microcanonical_route
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
    nve = Chain(job, FINAL_STATE_NVE, 1, final_start(job, init, E_red), "mc-nve", E_red=E_red,
                key="kinetic").run_pilot()
    nve.resume_existing()
    if not nve.results:
        # T ~ 2 K / f: the kinetic series needs the stderr (f/2) x that of T, which is `share`
        nve.extend(nve.samples_for(share), mandatory=True)

    def solve():
        return microcanonical_route(nve.samples()["kinetic"], job.n_particles, f, job.eps_K,
                                    job.T_i, initial_energy_stderr_red=si, rho_f=job.rho_f)

    res = sample_to_target(job, nve, solve)
    job.final_chain = nve
    p = nve.summary().get("pressure")
    pressure = ({"value": job.units.pressure_to_Pa(p.value),
                 "stderr": job.units.pressure_to_Pa(p.stderr)}
                if p is not None and p.available else None)
    extra = {"energy_per_particle_red": E_red, "initial_samples": init.n_samples(),
             "nve_samples": nve.n_samples()}
    return res, kinetic_series(job, nve, f), pressure, extra


def potential_energy(system):
    """The full potential energy per particle of a system's configuration (truncated + tail), reduced."""
    from mdsim.engine.montecarlo import MCSampler
    probe = MCSampler(system, temperature=1.0, seed=0)  # only its energy is read
    return probe.u_trunc / system.n_particles + probe.u_tail


def final_start(job, init, E_red):
    """The maker of the microcanonical run's systems: a start below the energy E.

    The study's start configuration at rho_f (lattice or random) when its
    potential energy per particle is below ``E_red``; otherwise (a cold
    liquid expanded: a homogeneous configuration at half the density holds
    more potential energy than the system has in all) the last configuration
    of the initial state's first production stage, in its box enlarged r-fold
    along z (the wall removed, :func:`mdsim.pipeline.routes.direct.wall_removed_system`),
    which lies below E by about the kinetic energy less the pairs cut at the
    two opened faces.  The choice depends only on stage files and seeds, so
    a resumed task makes it again.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    init : mdsim.pipeline.chain.Chain
        The initial state's chain.
    E_red : float
        The total energy per particle, reduced.

    Returns
    -------
    callable
        Returns a fresh System with the start configuration.

    Raises
    ------
    SimulationError
        Neither start lies below E.
    """
    make = job.system_maker(job.rho_f, 1)
    u_homogeneous = potential_energy(make())
    if u_homogeneous < E_red:
        return make
    first = init.results[0] if init.results else init.pilot
    positions = np.asarray(store.read_final(first.path)["positions"], dtype=float)
    base = init.make_system()

    def make_wall_removed():
        return wall_removed_system(base, job.r, positions)

    u_opened = potential_energy(make_wall_removed())
    if u_opened >= E_red:
        raise SimulationError(
            f"microcanonical route: every start configuration at the final density holds more "
            f"potential energy than the system has (E = {E_red:.5g} epsilon per particle; "
            f"homogeneous start {u_homogeneous:.5g}, the initial state's configuration with the "
            f"wall removed {u_opened:.5g}); use more particles (fewer lie at the opened faces) "
            "or the energy route")
    job.notes.append(
        f"microcanonical route: a homogeneous start at the final density holds "
        f"{u_homogeneous:.4g} epsilon per particle of potential energy, not below E = "
        f"{E_red:.4g}; the run starts from the initial state's configuration in its box "
        f"enlarged {job.r:g}-fold along z (the wall removed; {u_opened:.4g} epsilon per "
        "particle) and samples the final state in that elongated box")
    return make_wall_removed


def sample_to_target(job, nve, solve):
    """Solve, and extend the NVE chain while its share of the error is above the target.

    ``solve()`` gives the route's result from the chain's samples so far
    (:func:`analysis.expansion.microcanonical_route`).
    """
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


def kinetic_series(job, nve, f):
    """Kinetic temperature and running Ray temperature by sample (K), for the plots (``f``:
    kinetic degrees of freedom per particle, F = f N)."""
    K_t = nve.samples()["kinetic"]
    n = job.n_particles
    F = f * n
    inv_t = np.cumsum(1.0 / (n * K_t)) / np.arange(1, K_t.size + 1)
    return {"kinetic_temperature_K_t": 2.0 * K_t / f * job.eps_K,
            "ray_temperature_running_K_t": job.eps_K / ((0.5 * F - 1.0) * inv_t),
            "sample": np.arange(K_t.size, dtype=float) * nve.interval}
