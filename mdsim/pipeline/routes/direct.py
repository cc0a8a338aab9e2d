"""The direct route: remove the wall and follow the gas filling the larger box.

MD NVT at (T_i, rho_i) (rho_i found from a given pressure by
:mod:`mdsim.pipeline.initial_state`); the box enlarged r-fold along z with the particles
left in place (the wall removed); MD NVE while the gas fills the box, in
short stages whose end configurations give the density profile along z over
time, then a relaxed tail of the same NVE run
(:func:`analysis.expansion.direct_route`; model-to-full potential
correction).  Atoms, or rigid molecules with their MD stages and 5N - 3
kinetic degrees of freedom (:mod:`mdsim.pipeline.routes.rigid_direct`).
Stage files: ``initial-state-*``,
``wall-removed-filling-NN`` and ``wall-removed-relaxed-NN``.
"""
import math

import numpy as np

from mdsim.errors import ConvergenceError, SimulationError
from mdsim.pipeline.chain import (MAX_STAGES_PER_CHAIN, MIN_STAGE_SAMPLES, Chain, settle,
                                  solve_or_extend, stage_share)
from mdsim.pipeline.initial_state import run_initial_state
from mdsim.pipeline.stage_names import WALL_REMOVED_FILLING, WALL_REMOVED_RELAXED, stage_name
from mdsim.sampling import store

__all__ = ["run_direct", "WallRemovedChain", "start_at_canonical_energy", "wall_removed_system"]

PROFILE_BINS = 20
DIRECT_SNAPSHOTS = 16
"""Filling stages, each ending in one snapshot of the density profile."""
DIRECT_CROSSINGS = 4.0
"""Length of the filling stage, in crossing times L_z,f / sqrt(kT/m)."""
SAMPLES_PER_FILLING_STAGE = 25


def run_direct(job):
    """Run the direct route of a task.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask

    Returns
    -------
    res, series, pressure, extra
        As :func:`mdsim.pipeline.routes.energy.run_energy`; ``series`` holds
        the temperature over time (``time_s``, ``temperature_K_t``) and the
        density profile over time (``profile_time_s``, ``profile_z_fraction``,
        ``density_profile_tz``, mol/m^3).
    """
    T_i_red = job.units.temperature_to_reduced(job.T_i)
    dt = job.md_time_step(T_i_red)
    chain_class = WallRemovedChain
    if job.study.gas.molecules is not None:  # rigid molecules: their MD stages and 5N - 3
        from mdsim.pipeline.routes.rigid_direct import RigidWallRemovedChain
        chain_class = RigidWallRemovedChain
    share = stage_share(job, 0.5 * job.study.gas.dof_per_particle)
    init = run_initial_state(job, "md-nvt", T_i_red, share, key="u_model",
                             md_settings={"time_step": dt})
    start = init.results[0]  # the expansion always starts from the end of the first stage

    nve = chain_class(job, init.make_system(), dt, T_i_red)
    nve.fill(start)
    nve.start_tail()
    cv_red = _final_heat_capacity(job, init, nve)
    job.notes.append("direct route: the NVE run starts with the velocities scaled so that its "
                     "energy is the canonical mean energy of the initial state")
    res = _sample_to_target(job, init, nve, T_i_red, cv_red)
    job.final_chain, job.final_first_stage = nve, nve.n_fill_stages  # the relaxed tail
    series = _series(job, start, nve)
    pressure = _relaxed_pressure(job, nve, res)
    job.notes.append("direct route: MD conserves the truncated-and-shifted model energy; T_f "
                     "is corrected to the full potential (see the notes of the solver)")
    extra = {"time_step_red": dt, "fill_steps": nve.fill_steps,
             "sample_interval_steps": nve.interval,
             "nve_samples": int(nve.samples()["temperature_inst"].size)}
    return res, series, pressure, extra


class WallRemovedChain(Chain):
    """The NVE MD run after the wall is removed: filling stages, then the relaxed tail.

    Its results are the :data:`DIRECT_SNAPSHOTS` filling stages
    (``wall-removed-filling-NN``, :data:`SAMPLES_PER_FILLING_STAGE` samples
    each) followed by the tail stages (``wall-removed-relaxed-NN``, numbered
    from 0), one MD trajectory.  The sample interval spreads the filling
    over :data:`DIRECT_CROSSINGS` crossing times of the enlarged box.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    base : mdsim.engine.system.System
        A system of the initial state (its box is enlarged r-fold along z).
    dt : float
        MD time step, reduced.
    T_i_red : float
        Initial temperature, reduced.
    """

    nve_method = "md-nve"
    """The stage method of the NVE run."""

    def __init__(self, job, base, dt, T_i_red):
        self.base = base
        self.box_f = np.array(base.box_i, dtype=float)
        self.box_f[2] *= job.r
        super().__init__(job, WALL_REMOVED_RELAXED, 1, self.make_expanded, self.nve_method,
                         md_settings={"time_step": dt}, key="temperature_inst")
        self.dt = dt
        self.T_i_red = T_i_red
        m_min = self.lightest_mass()
        crossing = self.box_f[2] / math.sqrt(T_i_red / m_min)
        self.fill_steps = int(math.ceil(DIRECT_CROSSINGS * crossing / dt))
        self.interval = max(1, self.fill_steps // (DIRECT_SNAPSHOTS * SAMPLES_PER_FILLING_STAGE))
        self.n_fill_stages = 0
        self.n_fill_samples = 0

    def make_expanded(self):
        """An empty system in the enlarged box (positions all zero until set)."""
        return wall_removed_system(self.base, self.job.r)

    def lightest_mass(self):
        """The lightest particle's mass, reduced (it sets the crossing time)."""
        return float(np.min(self.base.masses_a))

    def kinetic_dof(self):
        """Kinetic degrees of freedom of the NVE run: 3N - 3 (total momentum removed)."""
        return 3 * self.base.n_particles - 3

    def start_at_canonical_energy(self, system, start):
        """The expanded system's first stage with its momenta scaled to the canonical mean
        energy (:func:`start_at_canonical_energy`)."""
        system.v_ni = start_at_canonical_energy(system, start, self.T_i_red, self.dt)
        return system

    def fill(self, start):
        """Run (or read back) the filling stages from the end of the NVT stage ``start``."""
        job = self.job
        for k in range(DIRECT_SNAPSHOTS):
            prev = self.results[-1] if self.results else start
            system = self.continue_system(prev)  # its velocities (and a molecule's axes)
            final = store.read_final(prev.path)
            # the particles are left in place: the new part of the box starts empty
            system.r_ni = np.ascontiguousarray(np.mod(np.asarray(final["positions"], dtype=float),
                                                      np.asarray(final["box"], dtype=float)))
            if k == 0:
                system = self.start_at_canonical_energy(system, start)
            res = job.stage(stage_name(WALL_REMOVED_FILLING, k), system, self.method, n_eq=0,
                            n_samples=SAMPLES_PER_FILLING_STAGE, interval=self.interval,
                            seed=job.stage_seed(1, 100 + k), time_step=self.dt)
            self.results.append(res)
        self.n_fill_stages = len(self.results)
        self.n_fill_samples = self.n_samples()

    def extend(self, n_samples, mandatory=False):
        """One more tail stage of about n_samples; False if the budget or the stage count forbids.

        A tail stage already on disk is read back whatever the budget; a
        ``mandatory`` one (the series still drifts, so there is no mean yet)
        runs past the budget, as :meth:`Chain.extend` does.
        """
        job = self.job
        k = len(self.results) - self.n_fill_stages  # tail stages are numbered from 0
        name = stage_name(WALL_REMOVED_RELAXED, k)
        if not job.stage_path(name).is_file():
            rate = job.cost_per_unit("md")
            if rate is not None and k > 0:
                afford = int(job.budget_left() / (rate * self.base.n_particles * self.interval))
                if mandatory and afford < n_samples:
                    job.stopped_by = "cpu budget"
                elif afford < n_samples:
                    if afford < MIN_STAGE_SAMPLES:
                        job.stopped_by = "cpu budget"
                        return False
                    n_samples = afford
                    job.stopped_by = "cpu budget"
        if k >= MAX_STAGES_PER_CHAIN:
            return False
        system = self.continue_system(self.results[-1])
        res = job.stage(name, system, self.method, n_eq=0,
                        n_samples=int(max(MIN_STAGE_SAMPLES, n_samples)), interval=self.interval,
                        seed=job.stage_seed(1, 200 + k), time_step=self.dt)
        self.results.append(res)
        return True

    def start_tail(self):
        """Re-attach the tail stages on disk, or run the first (twice the filling's samples)."""
        while True:
            path = self.job.stage_path(stage_name(WALL_REMOVED_RELAXED,
                                                  len(self.results) - self.n_fill_stages))
            if not path.is_file() or not self.extend(int(store.read_attrs(path)["n_samples"])):
                break
        if len(self.results) == self.n_fill_stages:
            self.extend(max(MIN_STAGE_SAMPLES, 2 * self.n_fill_samples))
        return self


def wall_removed_system(base, ratio, positions=None):
    """A system of ``base``'s particles in its box enlarged ``ratio``-fold along z.

    Parameters
    ----------
    base : mdsim.engine.system.System
        A system of the initial state (its box and particles).
    ratio : float
        The volume ratio r.
    positions : ndarray, shape=(n_particles, 3), optional
        Positions in ``base``'s box (reduced), left where they are: the new
        part of the box starts empty, as behind a removed wall.  All zero
        (to be set) when not given.

    Returns
    -------
    mdsim.engine.system.System
    """
    from mdsim.engine.system import System
    box = np.array(base.box_i, dtype=float)
    box[2] *= ratio
    s = System(base.pairs, base.counts_a, box, masses_a=base.masses_a,
               dof_per_particle=base.dof_per_particle)
    s.r_ni = (np.zeros((base.n_particles, 3)) if positions is None else
              np.ascontiguousarray(np.mod(np.asarray(positions, dtype=float), base.box_i)))
    return s


def start_at_canonical_energy(system, start, T_i_red, dt):
    """Velocities scaled so the expanded system's model energy is the canonical mean.

    One NVT snapshot's energy scatters by about T sqrt(c_v / N) around the
    canonical mean, and opening the box removes the pairs across the z
    face; scaling the kinetic energy to E = (3N - 3)/2 kT_i + N <u_model>_i
    (the mean over the first NVT production stage) makes the NVE run carry
    the initial state's mean energy, so the solver's energy anchor stays
    small and no heat capacity is needed to undo a large one.

    Parameters
    ----------
    system : mdsim.engine.system.System
        The expanded system, positions and velocities set.
    start : mdsim.sampling.state_point.SampleResult
        The first NVT production stage.
    T_i_red, dt : float
        Initial temperature and MD time step, reduced.

    Returns
    -------
    v_ni : ndarray, shape=(n_particles, 3)
        The scaled velocities, reduced.
    """
    from mdsim.engine.md import MDSampler
    n = system.n_particles
    kin = (3 * n - 3) / (2.0 * n)
    e_canonical = kin * T_i_red + float(np.mean(start.samples["u_model"]))
    probe = MDSampler(system, temperature=None, seed=0, method="md-nve", time_step=dt)
    u, shifts = float(probe.obs[0]), float(probe.obs[1])
    k_now = float(probe.obs[4])
    k_target = n * e_canonical - (u - shifts)
    if not (k_target > 0 and k_now > 0):
        raise SimulationError(f"direct route: the expanded configuration's model energy "
                              f"{(u - shifts) / n:.6g} per particle is above the initial state's "
                              f"mean energy {e_canonical:.6g}; use more particles")
    return np.asarray(system.v_ni, dtype=float) * math.sqrt(k_target / k_now)


def _final_heat_capacity(job, init, nve):
    """c_v at the final state per particle (reduced): kinetic part + scaled residual part."""
    kin = nve.kinetic_dof() / (2.0 * nve.base.n_particles)
    cv_res_i = init.summary()["c_v_res"]
    cv_red = kin + (max(0.0, cv_res_i.value) / job.r if cv_res_i.available else 0.0)
    job.notes.append(f"direct route: c_v at the final state taken as the kinetic part plus the "
                     f"initial state's sampled residual part divided by r (dilute-gas scaling): "
                     f"{cv_red:.4g} k per particle")
    return cv_red


def _sample_to_target(job, init, nve, T_i_red, cv_red):
    """Solve, and extend the relaxed tail while the error is above the target."""
    from analysis.expansion import direct_route

    settle(init, ("u_model", "u_full"))  # a budget-limited initial state may still drift

    def solve():
        s_i = init.samples()
        s_f = nve.samples()
        return direct_route(s_f["temperature_inst"], s_f["u_model"], s_f["u_full"],
                            s_i["u_model"], s_i["u_full"], T_i_red, nve.base.n_particles,
                            job.eps_K, cv_red=cv_red, kinetic_dof=nve.kinetic_dof(),
                            rho_f=job.rho_f)

    res = solve_or_extend(nve, solve)
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        n = nve.n_samples() - nve.n_fill_samples
        ratio = (res.delta_T_stderr_K / job.target_K) ** 2
        if not nve.extend(int(math.ceil(n * max(0.2, (ratio - 1.0) * 1.2)))):
            break
        res = solve_or_extend(nve, solve)
    return res


def _series(job, start, nve):
    """Temperature over time and the density profile along z at the end of each NVE stage."""
    u = job.units
    s_f = nve.samples()
    t_red = np.arange(1, s_f["temperature_inst"].size + 1, dtype=float) * nve.interval * nve.dt
    box_f = nve.box_f
    edges = np.linspace(0.0, 1.0, PROFILE_BINS + 1)
    bin_volume = box_f[0] * box_f[1] * box_f[2] / PROFILE_BINS
    z0 = np.mod(np.asarray(store.read_final(start.path)["positions"])[:, 2], nve.base.box_i[2])
    counts, _ = np.histogram(z0 / box_f[2], bins=edges)  # the moment the box is opened
    prof, times = [u.density_to_mol_m3(counts / bin_volume)], [0.0]
    elapsed = 0
    for r in nve.results:
        elapsed += r.samples["temperature_inst"].size
        final = store.read_final(r.path)
        z = np.mod(np.asarray(final["positions"])[:, 2], box_f[2]) / box_f[2]
        counts, _ = np.histogram(z, bins=edges)
        prof.append(u.density_to_mol_m3(counts / bin_volume))
        times.append(elapsed * nve.interval * nve.dt)
    return {"time_s": u.time_to_s(t_red),
            "temperature_K_t": s_f["temperature_inst"] * job.eps_K,
            "profile_z_fraction": 0.5 * (edges[:-1] + edges[1:]),
            "profile_time_s": u.time_to_s(np.array(times)),
            "density_profile_tz": np.array(prof)}


def _relaxed_pressure(job, nve, res):
    """The mean pressure of the relaxed part of the NVE run {value, stderr} in Pa, or None."""
    from analysis.stats import mean_and_stderr
    t0 = int(res.details["relaxed_from_sample"])
    try:
        p = mean_and_stderr(nve.samples()["pressure"][t0:], discard_equilibration=False)
    except ConvergenceError:
        return None
    return {"value": job.units.pressure_to_Pa(p.mean),
            "stderr": job.units.pressure_to_Pa(p.stderr)}
