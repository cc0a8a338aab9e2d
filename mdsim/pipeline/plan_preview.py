"""What a study would run, before running it: ``mdsim run STUDY --plan``.

:func:`preview_plan` lists the planned tasks (:func:`mdsim.pipeline.plan.plan_tasks`)
with the particle number each would use (the study's, or the one the task
would choose: :func:`mdsim.pipeline.plan.choose_particles`) and an expected
CPU time.  Nothing is written: no run directory, no file.

The CPU time comes from a short pilot run in memory at the task's initial
state, with the sampler and particle number the task would use (for the
energy route's ``sampler = "auto"``, Monte Carlo, and MD too where Monte
Carlo's chain would be dear, the cheaper one taken, as the task chooses).  The
pilot gives the CPU seconds per particle x sweep (or step) on this machine
and the standard error of the energy per particle it reached.  Each chain
is then sized the way :mod:`mdsim.pipeline.chain` sizes it (its pilot,
then production until the standard error, falling as 1 / sqrt(length),
reaches ``SAFETY`` x the target's share of an end state), for the chains
the route samples (:data:`STATES`); the direct route adds its NVE run after
the wall is removed, sized as :mod:`mdsim.pipeline.routes.direct` sizes it.
A task stops at ``[simulation] max_cpu_time``, so the estimate is capped
there.  It is a guide, not a promise: the final state's statistics, extra
Newton temperatures and longer relaxed tails are not known before the run,
and the rate is measured at the initial density (the direct route's run in
the enlarged box is cheaper per step, so its estimate errs high).
"""
import math
import time
import types
import warnings

from mdsim.errors import ConvergenceError
from mdsim.numbers import plain
from mdsim.pipeline.chain import (EQUILIBRATION_MC_SWEEPS, EQUILIBRATION_MD_STEPS,
                                  MD_PILOT_INTERVAL, MIN_STAGE_SAMPLES, PILOT_SAMPLES,
                                  stage_share)
from mdsim.pipeline.plan import choose_particles, plan_tasks, virial_start_guess
from mdsim.units import R_GAS

__all__ = ["preview_plan", "describe_task", "PREVIEW_SAMPLES", "STATES"]

PREVIEW_SAMPLES = 100
"""Samples of the in-memory pilot (after a quarter of a task's equilibration)."""
STATES = {"energy": 3, "microcanonical": 2, "direct": 1}
"""Chains a route samples to the target: the initial state and the final one, where the
energy route's Newton solve usually samples two temperatures; the direct route's final
state is its NVE run after the wall is removed (counted apart)."""
_UNIT = {"mc": "sweep", "md": "step"}


def _route_methods(study, task):
    """The engine methods a task may sample its initial state with: both for the energy
    route's ``sampler = "auto"`` (the task pilots both and takes the cheaper, as the preview
    does), else the one it uses."""
    from mdsim.study.quantum_potential import uses_feynman_hibbs
    if task["route"] == "energy":
        sampler = task.get("sampler", "auto")
        if sampler == "auto" and uses_feynman_hibbs(study):
            sampler = "mc"  # as the task: the Feynman-Hibbs energy estimator is Monte Carlo's
        return {"auto": ("mc-nvt", "md-nvt"), "md": ("md-nvt",)}.get(sampler, ("mc-nvt",))
    return ("mc-nvt",) if task["route"] == "microcanonical" else ("md-nvt",)


def _route_weight(study, task):
    """The change of the route's averaged series per reduced temperature (stage_share's weight)."""
    if task["route"] == "energy":
        return _cv_over_r(study, task["state_point"]["temperature_K"])
    if task["route"] == "microcanonical":
        return study.gas.dof_per_particle / 2.0
    return 1.5  # direct: atoms


def _pilot(study, method, n, rho_i, T_red, seed, energy_route=False):
    """A short pilot in memory: (CPU s per particle x unit, stderr x sqrt(units), g).

    ``energy_route``: MD with the energy route's settings (its short thermostat and skin,
    :func:`mdsim.pipeline.routes.sampler_choice.md_settings`)."""
    from analysis.stats import mean_and_stderr
    from mdsim.pipeline.routes.sampler_choice import md_settings, md_skin
    from mdsim.sampling.state_point import sample_state_point
    is_md = method.startswith("md")
    settings = {"time_step": _time_step(study, T_red)} if is_md else {}
    if is_md and energy_route:
        settings = md_settings(settings["time_step"],
                               md_skin(study.units.density_to_reduced(rho_i),
                                       float(study.reduced_pairs().rc_max)))
    n_eq = (EQUILIBRATION_MD_STEPS if is_md else EQUILIBRATION_MC_SWEEPS) // 4
    interval = MD_PILOT_INTERVAL if is_md else 1

    def run(n_equilibration, n_samples):
        system = study.system(n, rho_i, seed=seed,
                              temperature_K=study.units.temperature_to_K(T_red))
        return sample_state_point(system, method, T_red, n_equilibration=n_equilibration,
                                  n_samples=n_samples, interval=interval, seed=seed,
                                  **settings)

    try:  # the first call loads the compiled kernels: not part of the rate
        run(0, 20)
    except ConvergenceError:
        pass
    c0 = time.process_time()
    try:
        m = mean_and_stderr(run(n_eq, PREVIEW_SAMPLES).samples["u_full"])
    except ConvergenceError as exc:  # still drifting: its partial estimate is what there is
        m = exc.partial
    rate = (time.process_time() - c0) / (n * (n_eq + PREVIEW_SAMPLES * interval))
    se = float(m.stderr) if m is not None else math.nan
    g = float(m.g) if m is not None and math.isfinite(m.g) else 1.0
    return rate, se * math.sqrt(PREVIEW_SAMPLES * interval), max(1.0, g)


def _time_step(study, T_red):
    """The MD time step a task uses at a reduced temperature (the study's masses)."""
    from mdsim.engine.integrator import default_time_step
    masses = study.gas.molar_masses_kg_mol / study.gas.molar_masses_kg_mol[0]
    return float(default_time_step(T_red, masses))


def _direct_nve_units(study, n, rho_i, r, T_red):
    """Steps of the direct route's NVE run: the filling stages and the first relaxed stage.

    As :class:`mdsim.pipeline.routes.direct.WallRemovedChain` sizes them:
    ``DIRECT_CROSSINGS`` crossing times of the enlarged box in
    ``DIRECT_SNAPSHOTS`` stages, then a tail of twice the filling's samples.
    """
    from mdsim.pipeline.routes.direct import (DIRECT_CROSSINGS, DIRECT_SNAPSHOTS,
                                              SAMPLES_PER_FILLING_STAGE)
    base = study.system(n, rho_i)
    crossing = float(base.box_i[2]) * r / math.sqrt(T_red / float(min(base.masses_a)))
    fill_steps = int(math.ceil(DIRECT_CROSSINGS * crossing / _time_step(study, T_red)))
    fill_samples = DIRECT_SNAPSHOTS * SAMPLES_PER_FILLING_STAGE
    interval = max(1, fill_steps // fill_samples)
    return (fill_samples + max(MIN_STAGE_SAMPLES, 2 * fill_samples)) * interval


def _cheapest_pilot(study, task, n, pilots, share):
    """(method, rate, stderr x sqrt(units), g) of the sampler a task would use: for the energy
    route's "auto", Monte Carlo unless its chain would cost more than
    :data:`mdsim.pipeline.routes.sampler_choice.COMPARE_ABOVE_CPU_S` to ``share`` and MD's
    CPU seconds to a standard error of 1 (rate x particles x se_unit^2) are fewer, as the
    task's pilots decide."""
    from mdsim.pipeline.routes.sampler_choice import COMPARE_ABOVE_CPU_S
    sp = task["state_point"]
    T_red = study.units.temperature_to_reduced(sp["temperature_K"])
    best = None
    for method in _route_methods(study, task):
        if best is not None and best[0] / share ** 2 < COMPARE_ABOVE_CPU_S:
            break  # the task pilots MD only where Monte Carlo's chain would cost more
        key = (sp["index"], method, n, task["route"] == "energy")
        if key not in pilots:
            pilots[key] = _pilot(study, method, n, task["initial_density_mol_m3"], T_red,
                                 [int(s) for s in task["seed"]] + [7777],
                                 energy_route=task["route"] == "energy")
        rate, se_unit, g = pilots[key]
        cost = rate * n * se_unit ** 2 if math.isfinite(se_unit) else math.inf
        if best is None or cost < best[0]:
            best = (cost, method, rate, se_unit, g)
    return best[1:]


def _cpu_estimate(study, task, n, pilots):
    """(expected CPU s, how it was estimated) of one task; pilots caches the in-memory pilots."""
    sp = task["state_point"]
    T_red = study.units.temperature_to_reduced(sp["temperature_K"])
    scale = types.SimpleNamespace(target_K=task["target_stderr_K"],
                                  eps_K=float(study.units.epsilon_K))
    share = stage_share(scale, _route_weight(study, task))
    method, rate, se_unit, g = _cheapest_pilot(study, task, n, pilots, share)
    is_md = method.startswith("md")
    interval = (MD_PILOT_INTERVAL if is_md else 1) * max(1, int(g // 2))
    production = max(MIN_STAGE_SAMPLES * interval,
                     (se_unit / share) ** 2 if math.isfinite(se_unit) else 0.0)
    per_state = ((EQUILIBRATION_MD_STEPS if is_md else EQUILIBRATION_MC_SWEEPS)
                 + PILOT_SAMPLES * (MD_PILOT_INTERVAL if is_md else 1) + production)
    unit = _UNIT[method[:2]]
    states = STATES[task["route"]]
    units = states * per_state
    which = (f"{method}, as sampler \"auto\" chooses" if len(_route_methods(study, task)) > 1
             else method)
    how = (f"estimate from an in-memory pilot at the initial state ({PREVIEW_SAMPLES} samples, "
           f"{which}): {_two(rate * 1e6)} us per particle-{unit} x {n} particles x "
           f"{states} state{'s' if states > 1 else ''} x {_two(per_state)} {unit}s")
    if task["route"] == "direct":
        nve = _direct_nve_units(study, n, task["initial_density_mol_m3"], sp["volume_ratio"],
                                T_red)
        units += nve
        how += f" + {_two(nve)} steps after the wall is removed"
    cpu = rate * n * units
    if cpu > task["max_cpu_time_s"]:
        how += f"; capped at [simulation] max_cpu_time: it would need about {_two(cpu)} s"
        cpu = task["max_cpu_time_s"]
    return float(cpu), how


def _two(x):
    """A number to two significant figures, without an exponent below 10^6 (1200, 0.35)."""
    return f"{float(f'{x:.2g}'):g}"


def _cv_over_r(study, T_K):
    """c_v_ig(T) / R of the study's gas (the energy route's weight)."""
    from mdsim.study.statepoints import ideal_heat_capacity
    return float(ideal_heat_capacity(study).cv(T_K)) / R_GAS


def preview_plan(study, *, pilot=True):
    """The tasks a study would run, with particles and expected CPU time; writes nothing.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    pilot : bool
        Estimate each task's CPU time from a short pilot in memory (a second
        or so per state point and sampler); without it, ``cpu_time_s`` is None.

    Returns
    -------
    list of dict
        One per task, in the order of ``tasks.json``: ``index``,
        ``state_point`` (the StatePoint as a dict), ``route``, ``seed``,
        ``initial_density_mol_m3``, ``particles`` (int), ``particles_from``
        ("study" or "chosen"), ``cpu_time_s`` (float, CPU seconds, or None),
        ``cpu_time_from`` (how it was estimated), ``max_cpu_time_s``,
        ``warnings`` (list of str).

    Raises
    ------
    StudyError
        What :func:`mdsim.pipeline.plan.plan_tasks` refuses, or a state that
        needs more particles than a task may choose.
    """
    from analysis.virial import QuantumCorrectionWarning
    from analysis.virial_eos import VirialGas
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    g = study.gas
    if g.molecules is not None:  # the model's own series, as a running task guesses
        gas = virial_gas(study)
    else:  # as a running task guesses: classical (the de Boer check is the virial routes')
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", QuantumCorrectionWarning)
            gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol,
                            quantum="classical")
    cv_ig = ideal_heat_capacity(study)
    pilots, out = {}, []
    for task in plan_tasks(study):
        sp = task["state_point"]
        rho_i = task["initial_density_mol_m3"]
        _, dT, _ = virial_start_guess(gas, cv_ig, sp["temperature_K"], sp["volume_ratio"], rho_i)
        n, warning = choose_particles(study, task["particles"], rho_i, sp["index"], dT,
                                      task["target_stderr_K"])
        if study.gas.molecules is not None:  # the in-memory pilot samples spheres only
            cpu, how = None, "not estimated (no in-memory pilot for rigid molecules yet)"
        else:
            cpu, how = _cpu_estimate(study, task, n, pilots) if pilot else (None, "not estimated")
        out.append({"index": task["index"], "state_point": dict(sp), "route": task["route"],
                    "seed": list(task["seed"]), "initial_density_mol_m3": rho_i,
                    "particles": n,
                    "particles_from": "study" if task["particles"] is not None else "chosen",
                    "cpu_time_s": cpu, "cpu_time_from": how,
                    "max_cpu_time_s": task["max_cpu_time_s"],
                    "warnings": [] if warning is None else [warning]})
    return out


def describe_task(entry):
    """One line of :func:`preview_plan`'s entry for people.

    Examples
    --------
    >>> entry = {"index": 0, "route": "energy", "particles": 64,
    ...          "particles_from": "study", "initial_density_mol_m3": 412.5,
    ...          "state_point": {"index": 0, "temperature_K": 295.15, "volume_ratio": 2.0,
    ...                          "pressure_Pa": 1e6, "density_mol_m3": None},
    ...          "cpu_time_s": None, "cpu_time_from": "not estimated", "warnings": []}
    >>> print(describe_task(entry))  # doctest: +NORMALIZE_WHITESPACE
    task 0: state point 0 (T_i 295.15 K, p_i 10 bar, rho_i 412.5 mol/m^3, V_f/V_i 2),
    energy route, 64 particles (the study's), CPU time not estimated
    """
    sp = entry["state_point"]
    where = [f"T_i {plain(sp['temperature_K'])} K"]
    if sp.get("pressure_Pa") is not None:
        where.append(f"p_i {plain(sp['pressure_Pa'] / 1e5)} bar")
    where.append(f"rho_i {plain(entry['initial_density_mol_m3'])} mol/m^3")
    where.append(f"V_f/V_i {plain(sp['volume_ratio'])}")
    who = "the study's" if entry["particles_from"] == "study" else "chosen from the target"
    cpu = ("CPU time not estimated" if entry["cpu_time_s"] is None
           else f"about {plain(entry['cpu_time_s'], 2)} s CPU ({entry['cpu_time_from']})")
    line = (f"task {entry['index']}: state point {sp['index']} ({', '.join(where)}), "
            f"{entry['route']} route, {entry['particles']} particles ({who}), {cpu}")
    return line + "".join(f"; warning: {w}" for w in entry["warnings"])

