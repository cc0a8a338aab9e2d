"""The microcanonical route for a gas of rigid molecules: fixed-energy MD at rho_f.

The initial state is sampled as for the energy route (canonical Monte
Carlo of the molecules with the pressure iteration,
:func:`mdsim.pipeline.initial_state.run_initial_state`).  Its energy per
molecule, E = <u_full>(T_i, rho_i) + (F/2 - 1) kT_i / N with F = 3N - 3 +
(rotations) kinetic degrees of freedom (3 translations per molecule, 2
rotations per linear rotor and 3 per non-linear molecule, the atoms of a
mixture having none, less the conserved total momentum:
:func:`mdsim.pipeline.rigid_chain.box_kinetic_dof`), is the energy of the final state,
sampled by molecular dynamics at fixed energy (``rigid-md-nve``,
:mod:`mdsim.sampling.rigid_md_stage`; ``rigid-body-md-nve`` of non-linear
molecules, :mod:`mdsim.sampling.body_md_stage`) at rho_f, its pilot started from a
lattice equilibrated with the thermostat at the B2 + B3 guess of T_f and
then set to E.  T_f
is Ray's temperature of that run over the same F, which gives T_i back
exactly for an ideal gas (the sphere route's choice,
:mod:`mdsim.pipeline.routes.microcanonical`).

Why MD rather than microcanonical Monte Carlo: the engine's rigid MD
already conserves energy (symplectic splitting with exact free rotation,
its drift measured), so the route needs only a stage wrapper; a
microcanonical Monte Carlo of rotors would be a new acceptance rule in the
rigid Monte Carlo kernels.

The MD conserves the shifted-energy model's total, while E counts the
plain cut plus tail (the Monte Carlo model).  The run's samples carry both
(``u_full`` and ``kinetic``), so the route measures how far the run's mean
of u_full + kinetic lies from E (the change of the shift's sum since the
energy was set, and the integrator's drift) and moves T_f by -offset / c_v
(:func:`analysis.expansion.microcanonical_route`).

c_v_ig: as for spheres, the route assumes the constant classical heat
capacity of the model's kinetic degrees of freedom, (5/2) R for a linear
molecule (a mixture: the mole-fraction mean with (3/2) R for its atoms); a study whose vibrational part is not zero is refused at planning
(:func:`mdsim.pipeline.plan.check_route_applies`).  Stage files:
``initial-state-*`` and ``final-state-nve-*``.
"""
from analysis.stats import mean_and_stderr
from mdsim.pipeline.chain import mean_se, stage_share
from mdsim.pipeline.initial_state import run_initial_state, sampled_pressure
from mdsim.pipeline.routes.microcanonical import kinetic_series, sample_to_target
from mdsim.pipeline.stage_names import FINAL_STATE_NVE

__all__ = ["run_rigid_microcanonical", "energy_offset", "NVE_PILOT_SAMPLES"]

NVE_PILOT_SAMPLES = 600
"""Samples of the fixed-energy pilot (10 steps apart).  The kinetic energy of N2 at 50 bar
decorrelates over about 250 steps (g = 25 samples, from a run of 8000 samples, block
averages agreeing); a pilot of 200 samples measured g = 4."""


def energy_offset(samples, E_red):
    """The mean of u_full + kinetic of a fixed-energy MD run minus E, with its standard error.

    Parameters
    ----------
    samples : dict of ndarray
        The run's "u_full" and "kinetic" series (epsilon per molecule).
    E_red : float
        The energy the route asked for, epsilon per molecule.

    Returns
    -------
    (float, float)
        epsilon per molecule; the standard error from the series' statistical
        inefficiency (:func:`analysis.stats.mean_and_stderr`, no start cut).

    Examples
    --------
    >>> import numpy as np
    >>> x = 0.001 * np.tile([1.0, -1.0], 100)  # a run 0.003 above E, alternating by 0.001
    >>> m, s = energy_offset({"u_full": -0.997 + x, "kinetic": np.full(200, 21.0)}, 20.0)
    >>> round(m, 6), s < 1e-4
    (0.003, True)
    """
    m = mean_and_stderr(samples["u_full"] + samples["kinetic"] - float(E_red), False)
    return m.mean, m.stderr


def _pilot(nve):
    """Run the fixed-energy pilot and space the production samples by its whole series.

    The pilot starts from a configuration equilibrated with the thermostat
    (:mod:`mdsim.sampling.rigid_md_stage`), so no transient is cut from it
    here: the chain's own choice cuts one where the kinetic energy's slow
    wandering looks like one (510 of 600 samples for N2 at 50 bar), and the
    statistical inefficiency of the short rest is too small (2 samples against
    17 for the whole series), which spaced the production samples too closely.
    """
    nve.run_pilot(NVE_PILOT_SAMPLES)
    m = mean_and_stderr(nve.pilot.samples["kinetic"], False)
    nve.interval = nve.pilot_interval * max(1, int(m.g // 2))
    nve.pilot_se = float(m.stderr)
    return nve


def run_rigid_microcanonical(job):
    """Run the microcanonical route of a task of rigid molecules.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask

    Returns
    -------
    res, series, pressure, extra
        As :func:`mdsim.pipeline.routes.microcanonical.run_microcanonical`.
    """
    from analysis.expansion import microcanonical_route
    from mdsim.pipeline.rigid_chain import box_kinetic_dof
    n = job.n_particles
    F = box_kinetic_dof(job)
    f = F / n
    T_i_red = job.units.temperature_to_reduced(job.T_i)
    share = stage_share(job, 0.5 * job.study.gas.dof_per_particle)
    init = run_initial_state(job, "mc-nvt", T_i_red, share)
    mi, si = mean_se(init, "u_full")
    E_red = float(mi + (0.5 * F - 1.0) / n * T_i_red)
    job.notes.append(
        f"microcanonical route (rigid molecules): E per molecule = <u_full>(T_i, rho_i) + "
        f"(F/2 - 1) kT_i / N with F = {F} kinetic degrees of freedom (3 translations per "
        "molecule, 2 rotations per linear rotor and 3 per non-linear molecule, the total "
        "momentum conserved); the final state by "
        "molecular dynamics at that energy, T_f by Ray's estimator over the same F")
    # one time step for every stage (the rule at T_i, above T_f), and the pilot's start
    start = {"time_step": job.md_time_step(T_i_red),
             "start_temperature": job.units.temperature_to_reduced(job.T_f_guess)}
    nve = job.new_chain(FINAL_STATE_NVE, 1, job.system_maker(job.rho_f, 1), "md-nve",
                        E_red=E_red, key="kinetic", md_settings=start)
    _pilot(nve)
    nve.resume_existing()
    if not nve.results:
        nve.extend(nve.samples_for(share), mandatory=True)

    def solve():
        samples = nve.samples()
        return microcanonical_route(samples["kinetic"], n, f, job.eps_K, job.T_i,
                                    initial_energy_stderr_red=si, rho_f=job.rho_f,
                                    energy_offset_red=energy_offset(samples, E_red))

    res = sample_to_target(job, nve, solve)
    job.final_chain = nve
    p = sampled_pressure(job, nve)
    pressure = None if p is None else {"value": p[0], "stderr": p[1]}
    extra = {"energy_per_particle_red": E_red, "initial_samples": init.n_samples(),
             "nve_samples": nve.n_samples(), "kinetic_dof_total": F,
             "energy_offset_red": res.details["energy_offset_red"]}
    return res, kinetic_series(job, nve, f), pressure, extra
