"""Tasks: one state point and one simulation route each, run to a target precision.

:func:`plan_tasks` turns a study into a JSON-ready list of tasks; every task
carries everything it needs (state point, route, seed, settings), so tasks
are independent.  :func:`run_task` runs one task of a run directory: all the
sampling its route needs, as *stage files* under ``tasks/NNNN.stages/`` (each
a :func:`mdsim.sampling.state_point.sample_state_point` run file, which resumes from its
checkpoint), then the route's solver from :mod:`analysis.expansion`, and
finally writes ``tasks/NNNN.h5`` (as ``NNNN.h5.part``, renamed when
complete) with the attributes ``task_json`` and ``result_json`` and a group
``series/`` of plain arrays for plots.  :func:`read_task_result` reads it back.

Routes (DESIGN.md 2.3):

``energy``
    NVT sampling (Monte Carlo by default, ``sampler = "md"`` for MD) of
    u_res at (T_i, rho_i); then at rho_f, from the B2 + B3 virial estimate
    of T_f, sample, Newton-step, and sample again at the new temperature
    until the step is below a quarter of its standard error or MBAR
    reweighting over two or more temperatures brackets the balance
    (:func:`analysis.expansion.energy_route`).  Any c_v_ig(T).
``microcanonical``
    E per particle = <u_full> + (f/2) kT_i from the initial NVT state, then
    microcanonical Monte Carlo at rho_f (Ray 1991) gives T_f
    (:func:`analysis.expansion.microcanonical_route`).  Assumes a constant
    classical c_v_ig = (f/2) R; the plan refuses other heat capacities.
``partition``
    MD NVT at (T_i, rho_i); the box enlarged r-fold along z with the
    particles left in place; MD NVE while the gas fills the box, in short
    stages whose end configurations give the density profile along z over
    time (:func:`analysis.expansion.partition_route`; model-to-full
    potential correction).  Atoms only.

How a task chooses its numbers.  The user sets ``target_stderr`` (the
standard error of Delta T) and ``max_cpu_time``, not the run length:

- N: the cut-off must stay below half the box edge at the initial
  density, and the O(1/N) finite-size bias of a canonical u_res (the
  (N - 1)/N of the pair sum) must stay below a quarter of the target:
  N >= 4 |Delta T_virial| / target; clipped to [N_MIN, N_MAX].  The study's
  ``particles`` overrides (still checked against the cut-off).
- Sample spacing: a pilot run at each state measures the statistical
  inefficiency g of the averaged series; samples are taken every g / 2
  sweeps (MC) or steps (MD), at least one.
- Run length: from the pilot's standard error, scaled as 1 / sqrt(n) to
  ``SAFETY`` times the share of the target each state gets; then extra
  stages (new seeds, the same Markov chain continued from the last
  configuration) while the standard error of Delta T is above the target
  and CPU budget is left.  ``stopped_by`` says which ended it.

Determinism: every decision is made from completed stage files and the
seeds alone, so a task that is killed and run again gives the same numbers,
except where the CPU budget ends it (CPU time differs between runs).

Units: the engine works in the reduced units of the study (species 0);
results are in SI.  Array suffix ``_t``: a time series; ``_tz``: time by
bin along z.
"""
import dataclasses
import errno
import json
import logging
import math
import os
import time
import traceback
from pathlib import Path

import numpy as np

from mdsim.errors import ConvergenceError, SimulationError, StudyError
from mdsim.files import atomic_write_text, fsync_path
from mdsim.pipeline.rundir import RunDir
from mdsim.sampling import store as _store

log = logging.getLogger(__name__)

ROUTES = ("energy", "microcanonical", "partition")
SAMPLERS = {"mc": "mc-nvt", "md": "md-nvt"}
DEFAULTS = {"routes": ["energy"], "particles": None, "target_stderr_K": 0.05,
            "max_cpu_time_s": 600.0, "seed": 1, "sampler": "mc"}

N_MIN = 128
N_MAX = 4000
PILOT_SAMPLES = 200
MIN_STAGE_SAMPLES = 200
MAX_STAGE_SAMPLES = 200_000
MAX_STAGES_PER_CHAIN = 12
MAX_NEWTON_TEMPERATURES = 4
MAX_INTERVAL_MC = 20
SAFETY = 0.8
"""Stages are sized for SAFETY x the target so that one pass usually reaches it."""
EQUILIBRATION_MC_SWEEPS = 200
EQUILIBRATION_MD_STEPS = 2000
MD_PILOT_INTERVAL = 10
PROFILE_BINS = 20
PARTITION_SNAPSHOTS = 16
PARTITION_CROSSINGS = 4.0
"""Length of the filling stage, in crossing times L_z,f / sqrt(kT/m)."""
FORMAT = "mdsim-task-1"
DISK_ERRNOS = (errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EACCES, errno.EPERM, errno.EFBIG)
"""OS errors of a full, read-only or forbidden disk: reported as one clear line."""


# -- settings and planning ------------------------------------------------------------

def _quantity(value, kind, where, example):
    from mdsim.units import parse_quantity
    if isinstance(value, bool):
        raise StudyError(f"{where} = {value!r}: must be a quantity such as {example}")
    if isinstance(value, (int, float)):
        return float(value)
    if isinstance(value, str):
        return float(parse_quantity(value, kind, where))
    raise StudyError(f"{where} = {value!r}: must be a quantity such as {example}")


def simulation_settings(study):
    """The ``[simulation]`` settings the tasks use, defaults filled in, SI units.

    Returns
    -------
    dict
        "routes" (list of str), "particles" (int or None), "target_stderr_K",
        "max_cpu_time_s", "seed" (int), "sampler" ("mc" or "md").
    """
    raw = dict(study.simulation or {})
    where = f"study file '{study.path}', [simulation]"
    out = dict(DEFAULTS)
    routes = raw.get("routes", DEFAULTS["routes"])
    if isinstance(routes, str):
        routes = [routes]
    if not isinstance(routes, (list, tuple)) or not all(isinstance(r, str) for r in routes):
        raise StudyError(f"{where} key 'routes' = {routes!r}: must be a list of route names; "
                         f"allowed {', '.join(ROUTES)}; for example routes = [\"energy\"]")
    routes = [r for r in routes if r not in ("virial", "virial_b2", "virial_b3")]
    for r in routes:
        if r not in ROUTES:
            raise StudyError(f"{where} key 'routes': unknown route {r!r}; allowed "
                             f"{', '.join(ROUTES)} (the virial routes always run)")
    out["routes"] = list(dict.fromkeys(routes))
    n = raw.get("particles")
    if n is not None:
        if isinstance(n, bool) or not isinstance(n, int) or n < 2:
            raise StudyError(f"{where} key 'particles' = {n!r}: must be a whole number >= 2; "
                             "leave it out to let the tool choose from the target precision")
        out["particles"] = int(n)
    if "target_stderr" in raw:
        out["target_stderr_K"] = _quantity(raw["target_stderr"], "temperature",
                                           f"{where} key 'target_stderr'", '"0.05 K"')
    if not out["target_stderr_K"] > 0:
        raise StudyError(f"{where} key 'target_stderr' = {raw.get('target_stderr')!r}: must be "
                         'above 0 K, for example "0.05 K"')
    if "max_cpu_time" in raw:
        out["max_cpu_time_s"] = _quantity(raw["max_cpu_time"], "time",
                                          f"{where} key 'max_cpu_time'", '"10 min"')
    if not out["max_cpu_time_s"] > 0:
        raise StudyError(f"{where} key 'max_cpu_time' = {raw.get('max_cpu_time')!r}: must be "
                         'above 0 s, for example "10 min"')
    seed = raw.get("seed", DEFAULTS["seed"])
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise StudyError(f"{where} key 'seed' = {seed!r}: must be a whole number >= 0")
    out["seed"] = int(seed)
    sampler = raw.get("sampler", DEFAULTS["sampler"])
    if sampler not in SAMPLERS:
        raise StudyError(f"{where} key 'sampler' = {sampler!r}: allowed "
                         f"{', '.join(repr(s) for s in SAMPLERS)} (NVT sampler of the energy and "
                         "microcanonical routes)")
    out["sampler"] = sampler
    return out


def _check_route_applies(study, route, cv_ig, T_i):
    """Refuse a route whose assumptions the study breaks (before any work)."""
    f = study.gas.dof_per_particle
    if route == "partition" and f != 3:
        raise StudyError(f"study file '{study.path}', [simulation] key 'routes': the partition "
                         f"route simulates atoms (3 degrees of freedom), but [gas] "
                         f"dof_per_particle = {f}; use the energy route for molecules")
    if route == "microcanonical":
        from analysis.expansion import R_GAS
        want = 0.5 * f * R_GAS
        lo, hi = cv_ig.valid_range
        probes = [T for T in (0.5 * T_i, T_i, 1.5 * T_i) if lo <= T <= hi] or [T_i]
        got = [float(cv_ig.cv(T)) for T in probes]
        if any(abs(c - want) > 1e-6 * want for c in got):
            raise StudyError(
                f"study file '{study.path}', [simulation] key 'routes': the microcanonical route "
                f"assumes a constant classical c_v_ig = f/2 R = {want:.5g} J/(mol K) (f = "
                f"dof_per_particle = {f}), but [gas] ideal_heat_capacity gives {got[0]:.5g} "
                "J/(mol K); remove 'microcanonical' from routes and use the energy route, "
                "which takes any c_v_ig(T)")


def plan_tasks(study):
    """The tasks of a study: one per state point and simulation route.

    Parameters
    ----------
    study : mdsim.study.reader.Study

    Returns
    -------
    list of dict
        JSON-ready, in the order of ``study.state_points()`` then of the
        study's routes.  Keys: ``index``, ``state_point`` (the StatePoint
        as a dict), ``route``, ``seed`` ([study seed, index]),
        ``initial_density_mol_m3`` and ``initial_density_how`` (from
        :func:`mdsim.study.statepoints.resolve_initial_density`), ``particles``
        (int or None: chosen at run time), ``target_stderr_K``,
        ``max_cpu_time_s``, ``sampler``.

    Raises
    ------
    StudyError
        Bad settings, or a route whose assumptions the study breaks.
    """
    from analysis.heatcapacity import heat_capacity_from_spec
    from mdsim.study.statepoints import resolve_initial_density
    settings = simulation_settings(study)
    cv_ig = heat_capacity_from_spec(study.gas.ideal_heat_capacity, "[gas] ideal_heat_capacity")
    tasks = []
    for sp in study.state_points():
        if not settings["routes"]:
            break
        rho_i, how = resolve_initial_density(study, sp)
        n = settings["particles"]
        if n is not None:  # the same rule as _Task._n_for_cutoff, checked before any work
            rc = float(study.reduced_pairs().rc_max)
            n_cut = int(math.floor(study.units.density_to_reduced(rho_i) * (2.0 * rc) ** 3
                                   * 1.05)) + 1
            if n < n_cut:
                raise StudyError(f"study file '{study.path}', [simulation] key 'particles' = {n}: "
                                 f"too few at {rho_i:.6g} mol/m^3 (state point {sp.index}): the "
                                 f"cut-off {rc:g} sigma must stay below half the box edge; use at "
                                 "least {n_cut} particles, or a smaller [potential] cutoff"
                                 .replace("{n_cut}", str(n_cut)))
        for route in settings["routes"]:
            _check_route_applies(study, route, cv_ig, sp.temperature_K)
            k = len(tasks)
            tasks.append({
                "index": k, "state_point": dataclasses.asdict(sp), "route": route,
                "seed": [settings["seed"], k],
                "initial_density_mol_m3": float(rho_i), "initial_density_how": str(how),
                "particles": settings["particles"],
                "target_stderr_K": settings["target_stderr_K"],
                "max_cpu_time_s": settings["max_cpu_time_s"],
                "sampler": settings["sampler"],
            })
    return tasks


# -- the running task ---------------------------------------------------------------

class _Task:
    """A running task: its study, numbers, stage files and CPU ledger."""

    def __init__(self, run_dir, task, progress=None):
        from analysis.heatcapacity import heat_capacity_from_spec
        from analysis.virial_eos import VirialGas
        from mdsim.study.reader import read_study
        self.rd = run_dir
        self.task = task
        self.index = int(task["index"])
        self.study = read_study(run_dir.path / "study.toml")
        self.units = self.study.units
        self.eps_K = float(self.units.epsilon_K)
        self.cv_ig = heat_capacity_from_spec(self.study.gas.ideal_heat_capacity,
                                             "[gas] ideal_heat_capacity")
        sp = task["state_point"]
        self.T_i = float(sp["temperature_K"])
        self.r = float(sp["volume_ratio"])
        self.rho_i = float(task["initial_density_mol_m3"])
        self.rho_f = self.rho_i / self.r
        self.target_K = float(task["target_stderr_K"])
        self.budget_s = float(task["max_cpu_time_s"])
        self.seed = [int(s) for s in task["seed"]]
        self.stages_dir = run_dir.tasks_dir / f"{self.index:04d}.stages"
        self.stages_dir.mkdir(parents=True, exist_ok=True)
        self.ledger_path = self.stages_dir / "cpu.json"
        self.ledger = (json.loads(self.ledger_path.read_text(encoding="utf-8"))
                       if self.ledger_path.is_file() else {})
        self.progress = progress
        self.stopped_by = "target"
        self.warnings, self.notes = [], []
        self.n_stages = 0
        self.initial_chain = None
        g = self.study.gas
        self.virial_gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol,
                                    quantum_correction=False)
        if g.quantum_correction:
            self.warnings.append("the study asks for the quantum correction: it applies to the "
                                 "virial routes only; simulations are classical")
        self.T_f_guess, self.dT_guess = self._virial_guess()
        self.n_particles = self._choose_particles(task.get("particles"))

    # -- numbers chosen from the target -------------------------------------------------
    def _virial_guess(self):
        from analysis.expansion import virial_expansion
        try:
            v = virial_expansion(self.virial_gas, self.cv_ig, self.T_i, self.r, rho_i=self.rho_i,
                                 order=3)
        except (StudyError, ConvergenceError) as exc:
            self.notes.append(f"no virial start guess ({' '.join(str(exc).split())}); the "
                              "first final-state temperature is T_i")
            return self.T_i, None
        return float(v.final_temperature_K), float(v.delta_T_K)

    def _n_for_cutoff(self):
        rc = float(self.study.reduced_pairs().rc_max)
        rho_red = self.units.density_to_reduced(self.rho_i)
        return int(math.floor(rho_red * (2.0 * rc) ** 3 * 1.05)) + 1, rc

    def _choose_particles(self, given):
        n_cut, rc = self._n_for_cutoff()
        if given is not None:
            if int(given) < n_cut:
                raise StudyError(f"[simulation] particles = {given}: too few at "
                                 f"{self.rho_i:.6g} mol/m^3: the cut-off {rc:g} sigma must stay "
                                 f"below half the box edge; use at least {n_cut} particles, or "
                                 "a smaller [potential] cutoff")
            return int(given)
        n_bias = 0 if self.dT_guess is None else int(math.ceil(4.0 * abs(self.dT_guess)
                                                               / self.target_K))
        n = max(N_MIN, n_cut, n_bias)
        if n > N_MAX:
            if n_cut > N_MAX:
                raise StudyError(f"the state at {self.rho_i:.6g} mol/m^3 needs {n_cut} particles "
                                 f"for the cut-off to stay below half the box (more than "
                                 f"{N_MAX}); give [simulation] particles, or a smaller cutoff")
            self.warnings.append(f"{n} particles would keep the finite-size bias below a quarter "
                                 f"of the target; using {N_MAX}")
            n = N_MAX
        return n

    # -- CPU ledger ---------------------------------------------------------------------
    def cpu_spent(self):
        return float(sum(v["cpu_s"] for v in self.ledger.values()))

    def budget_left(self):
        return self.budget_s - self.cpu_spent()

    def cost_per_unit(self, kind):
        """CPU seconds per (particle x sweep or step) measured so far for a sampler kind."""
        rows = [v for v in self.ledger.values() if v["kind"] == kind and v["units"] > 0]
        if not rows:
            return None
        return sum(v["cpu_s"] for v in rows) / sum(v["units"] for v in rows)

    def _record(self, name, kind, cpu_s, units):
        self.ledger[name] = {"kind": kind, "cpu_s": float(cpu_s), "units": float(units)}
        atomic_write_text(self.ledger_path, json.dumps(self.ledger))

    # -- one stage ------------------------------------------------------------------------
    def stage(self, name, system, method, T_red=None, E_red=None, *, n_eq, n_samples,
              interval, seed, **settings):
        """Run (or read back, or resume) one stage file ``NAME.h5``."""
        from mdsim.sampling.state_point import sample_state_point
        path = self.stages_dir / f"{name}.h5"
        attrs = {"task_index": self.index, "stage": name, "study_name": self.study.name,
                 **{f"units_{k}": v for k, v in self.units.as_dict().items()}}
        done = path.is_file()
        c0 = time.process_time()
        progress = None
        if self.progress is not None:
            def progress(k, n):
                self.progress(stage=name, done=k, total=n)
        try:
            result = sample_state_point(system, method, T_red, E_red, n_equilibration=n_eq,
                                        n_samples=n_samples, interval=interval, seed=seed,
                                        path=path, attrs=attrs, progress=progress, **settings)
        except ConvergenceError:
            # a short stage of a relaxing run (the partition route's filling stages) has no
            # settled mean of its own; the file is complete and its samples are all we need
            if not path.is_file():
                raise
            from mdsim.sampling.state_point import SampleResult
            result = SampleResult(_store.read_samples(path), {}, {}, path, done)
        if not done or name not in self.ledger:
            units = system.n_particles * (n_eq + n_samples * interval)
            self._record(name, method[:2], time.process_time() - c0, units)
        self.n_stages += 1
        return result

    def stage_seed(self, *parts):
        return self.seed + [int(p) for p in parts]

    def start_seed(self, *parts):
        return self.seed + [9999] + [int(p) for p in parts]


class _Chain:
    """Stage files at one state: a pilot, then production stages continuing one chain.

    The pilot (equilibration plus ``PILOT_SAMPLES`` closely spaced samples)
    measures the statistical inefficiency of ``key``; production stages use
    the spacing it gives and continue from the previous stage's last
    configuration (and, for MC, its tuned step), so the concatenated
    production samples are one Markov chain.
    """

    def __init__(self, job, label, chain_id, make_system, method, T_red=None, E_red=None,
                 key="u_full", md_settings=None):
        self.job = job
        self.label = label
        self.id = int(chain_id)
        self.make_system = make_system
        self.method = method
        self.T_red = T_red
        self.E_red = E_red
        self.key = key
        self.md_settings = dict(md_settings or {})
        self.is_md = method.startswith("md")
        self.results = []
        self.pilot = None
        self.interval = None

    # -- helpers --------------------------------------------------------------------------
    def _continue_system(self, prev):
        final = _store.read_final(prev.path)
        system = self.make_system()
        # a configuration from a finished stage of the same chain: no overlap check needed
        system.r_ni = np.ascontiguousarray(np.mod(np.asarray(final["positions"], dtype=float),
                                                  system.box_i))
        if "velocities" in final:
            system.v_ni = np.asarray(final["velocities"], dtype=float)
        return system

    def _settings(self, prev):
        if self.is_md:
            return dict(self.md_settings)
        if prev is None:
            return {}
        attrs = _store.read_attrs(prev.path)
        return {"max_displacement": float(attrs["sampler_final_max_displacement_red"])}

    def samples(self):
        return {k: np.concatenate([r.samples[k] for r in self.results])
                for k in self.results[0].samples}

    def n_samples(self):
        return int(sum(r.samples[self.key].size for r in self.results))

    def summary(self):
        from mdsim.sampling.estimates import summarise
        system = self.make_system()
        return summarise(self.samples(), self.method, system.n_particles, system.volume,
                         self.T_red, system.dof_per_particle)

    # -- running --------------------------------------------------------------------------
    def run_pilot(self):
        from analysis.stats import mean_and_stderr
        job = self.job
        system = self.make_system()
        n_eq = EQUILIBRATION_MD_STEPS if self.is_md else EQUILIBRATION_MC_SWEEPS
        interval = MD_PILOT_INTERVAL if self.is_md else 1
        self.pilot = job.stage(f"{self.label}-pilot", system, self.method, self.T_red, self.E_red,
                               n_eq=n_eq, n_samples=PILOT_SAMPLES, interval=interval,
                               seed=job.stage_seed(self.id, 0), **self._settings(None))
        x = self.pilot.samples[self.key]
        try:
            m = mean_and_stderr(x)
            g, se = m.g, m.stderr
        except ConvergenceError as exc:
            g = max(1.0, exc.partial.g)
            se = exc.partial.stderr
        g = max(1.0, float(g))
        if self.is_md:
            self.interval = interval * max(1, int(g // 2))
        else:
            self.interval = max(1, min(MAX_INTERVAL_MC, int(g // 2)))
        # stderr of one unit of run (a sweep or step), scaled from the pilot
        self.pilot_se = float(se)
        self.pilot_units = PILOT_SAMPLES * interval
        return self

    def samples_for(self, target_se):
        """Production samples that should bring the chain's stderr to target_se."""
        if not (self.pilot_se > 0 and math.isfinite(self.pilot_se)):
            return MIN_STAGE_SAMPLES
        units = self.pilot_units * (self.pilot_se / target_se) ** 2
        return int(min(MAX_STAGE_SAMPLES, max(MIN_STAGE_SAMPLES, math.ceil(units / self.interval))))

    def extend(self, n_samples, mandatory=False):
        """One more production stage of about n_samples; False if the budget forbids it."""
        job = self.job
        k = len(self.results)
        if k >= MAX_STAGES_PER_CHAIN:
            return False
        n_samples = int(max(MIN_STAGE_SAMPLES, n_samples))
        name = f"{self.label}-{k:02d}"
        done = (job.stages_dir / f"{name}.h5").is_file()
        if not done and name in job.ledger:
            done = True
        if not done:
            rate = job.cost_per_unit(self.method[:2])
            n_part = self.make_system().n_particles
            if rate is not None:
                affordable = int(job.budget_left() / (rate * n_part * self.interval))
                if affordable < n_samples:
                    if not mandatory and affordable < MIN_STAGE_SAMPLES:
                        job.stopped_by = "cpu budget"
                        return False
                    if not mandatory:
                        n_samples = affordable
                        job.stopped_by = "cpu budget"
                    elif job.budget_left() <= 0:
                        job.stopped_by = "cpu budget"
        prev = self.results[-1] if self.results else self.pilot
        system = self._continue_system(prev)
        res = job.stage(name, system, self.method, self.T_red, self.E_red, n_eq=0,
                        n_samples=n_samples, interval=self.interval,
                        seed=job.stage_seed(self.id, k + 1), **self._settings(prev))
        self.results.append(res)
        return True

    def resume_existing(self):
        """Re-attach production stages already on disk (after a restart)."""
        while True:
            k = len(self.results)
            path = self.job.stages_dir / f"{self.label}-{k:02d}.h5"
            if not path.is_file():
                return self
            n = int(_store.read_attrs(path)["n_samples"])
            if not self.extend(n, mandatory=True):
                return self


# -- routes ------------------------------------------------------------------------------

def _make_system(job, rho_mol_m3, tag):
    def make():
        return job.study.system(job.n_particles, rho_mol_m3, seed=job.start_seed(tag))
    return make


def _mean_se(chain, key):
    """(mean, stderr) of a chain's series, or (nan, inf) while it still drifts."""
    from analysis.stats import mean_and_stderr
    try:
        m = mean_and_stderr(chain.samples()[key])
        return m.mean, m.stderr
    except ConvergenceError:
        return math.nan, math.inf


def _run_to(chain, target_se, key=None):
    """Extend a chain until the stderr of its key series is at most target_se."""
    key = key or chain.key
    chain.resume_existing()
    if not chain.results:
        chain.extend(chain.samples_for(target_se), mandatory=True)
    while True:
        _, se = _mean_se(chain, key)
        if se <= target_se:
            return True
        n = chain.n_samples()
        factor = 1.0 if not math.isfinite(se) else (se / target_se) ** 2 - 1.0
        if not chain.extend(int(math.ceil(1.1 * n * max(factor, 0.2)))):
            return False


def _energy(job):
    from analysis.expansion import StateSample, energy_route
    u = job.units
    method = SAMPLERS[job.task.get("sampler", "mc")]
    T_i_red = u.temperature_to_reduced(job.T_i)
    from analysis.expansion import R_GAS
    cv_red = job.cv_ig.cv(job.T_i) / R_GAS
    share = SAFETY * job.target_K / job.eps_K * cv_red / math.sqrt(2.0)
    md = {"time_step": _md_time_step(job, T_i_red)} if method.startswith("md") else None
    init = _Chain(job, "initial", 0, _make_system(job, job.rho_i, 0), method, T_red=T_i_red,
                  md_settings=md).run_pilot()
    _run_to(init, share)
    job.initial_chain = init
    finals = []
    T_k = job.T_f_guess

    def solve():
        mi, si = _mean_se(init, "u_full")
        samples, series = [], []
        for ch in finals:
            s = ch.summary()
            samples.append(StateSample(u.temperature_to_K(ch.T_red),
                                       u.energy_to_J_mol(s["u_full"].value),
                                       u.energy_to_J_mol(s["u_full"].stderr),
                                       u.heat_capacity_to_J_molK(s["c_v_res"].value),
                                       u.heat_capacity_to_J_molK(s["c_v_res"].stderr)))
            series.append(u.energy_to_J_mol(ch.samples()["u_full"]))
        res = energy_route((u.energy_to_J_mol(mi), u.energy_to_J_mol(si)), job.T_i, job.rho_f,
                           samples, job.cv_ig, series_final=series if len(finals) > 1 else None,
                           n_particles=job.n_particles)
        return res, samples

    for it in range(MAX_NEWTON_TEMPERATURES):
        md_f = {"time_step": _md_time_step(job, T_k / job.eps_K)} if md is not None else None
        ch = _Chain(job, f"final{it}", 1 + it, _make_system(job, job.rho_f, 1), method,
                    T_red=T_k / job.eps_K, md_settings=md_f).run_pilot()
        _run_to(ch, share)
        finals.append(ch)
        res, samples = solve()
        if res.method == "mbar" or res.details["newton_converged"]:
            break
        if job.stopped_by == "cpu budget":
            break
        T_k = res.details["newton_start_temperature_K"] + res.details["newton_step_K"]
    # precision: extend the end state that contributes more
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        _, si = _mean_se(init, "u_full")
        nearest = min(finals, key=lambda c: abs(u.temperature_to_K(c.T_red) - res.final_temperature_K))
        _, sf = _mean_se(nearest, "u_full")
        ch = init if si >= sf else nearest
        n = ch.n_samples()
        ratio = (res.delta_T_stderr_K / job.target_K) ** 2
        if not ch.extend(int(math.ceil(n * max(0.2, (ratio - 1.0) * 1.2)))):
            break
        res, samples = solve()
    series = {
        "newton_T_K": np.array([s.temperature_K for s in samples]),
        "newton_u_res_J_mol": np.array([s.u_res_J_mol for s in samples]),
        "newton_u_res_stderr_J_mol": np.array([s.u_res_stderr_J_mol for s in samples]),
        "initial_T_K": np.array([job.T_i]),
        "initial_u_res_J_mol": np.array([res.details["initial_u_res_J_mol"]]),
        "initial_u_res_stderr_J_mol": np.array([res.details["initial_u_res_stderr_J_mol"]]),
    }
    nearest = min(finals, key=lambda c: abs(u.temperature_to_K(c.T_red) - res.final_temperature_K))
    p = nearest.summary().get("pressure")
    pressure = None
    if p is not None and p.available:
        from analysis.expansion import R_GAS
        T_near = u.temperature_to_K(nearest.T_red)
        # ideal-gas slope for the small step from the nearest sampled temperature
        pressure = {"value": u.pressure_to_Pa(p.value)
                    + job.rho_f * R_GAS * (res.final_temperature_K - T_near),
                    "stderr": u.pressure_to_Pa(p.stderr)}
        job.notes.append("final pressure: sampled at the nearest final-state temperature, moved "
                         "to T_f with the ideal-gas slope rho_f R")
    extra = {"newton_temperatures": len(finals),
             "initial_samples": init.n_samples(), "sample_interval": init.interval}
    return res, series, pressure, extra


def _md_time_step(job, T_red):
    from mdsim.engine.integrator import default_time_step
    masses = job.study.gas.molar_masses_kg_mol / job.study.gas.molar_masses_kg_mol[0]
    return float(default_time_step(T_red, masses))


def _microcanonical(job):
    from analysis.expansion import microcanonical_route
    u = job.units
    f = job.study.gas.dof_per_particle
    T_i_red = u.temperature_to_reduced(job.T_i)
    share = SAFETY * job.target_K / job.eps_K * 0.5 * f / math.sqrt(2.0)
    init = _Chain(job, "initial", 0, _make_system(job, job.rho_i, 0), "mc-nvt",
                  T_red=T_i_red).run_pilot()
    _run_to(init, share)
    job.initial_chain = init
    mi, si = _mean_se(init, "u_full")
    # Kinetic part (F/2 - 1) kT_i / N, not (f/2) kT_i: the Ray temperature of a finite
    # microcanonical system, 1/kT = (F/2 - 1) <1/(E - U)>, then returns T_i for an ideal gas
    # exactly; with f/2 it would be high by T_i / (F/2 - 1), an O(1/N) ensemble bias
    # (0.9 K at 135 K with N = 100) that does not belong to the expansion.
    n = job.n_particles
    E_red = float(mi + (0.5 * f * n - 1.0) / n * T_i_red)
    job.notes.append("microcanonical route: E per particle = <u_full>(T_i, rho_i) + (F/2 - 1) "
                     "kT_i / N, the energy whose Ray temperature is T_i for an ideal gas of F = "
                     "f N kinetic degrees of freedom (removes an O(1/N) ensemble bias)")
    nve = _Chain(job, "nve", 1, _make_system(job, job.rho_f, 1), "mc-nve", E_red=E_red,
                 key="kinetic").run_pilot()
    nve.resume_existing()
    if not nve.results:
        # T ~ 2 K / f: the kinetic series needs the stderr (f/2) x that of T, which is `share`
        nve.extend(nve.samples_for(share), mandatory=True)

    def solve():
        return microcanonical_route(nve.samples()["kinetic"], job.n_particles, f, job.eps_K,
                                    job.T_i, initial_energy_stderr_red=si, rho_f=job.rho_f)

    res = _solve_or_extend(nve, solve)
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
        res = _solve_or_extend(nve, solve)
    K_t = nve.samples()["kinetic"]
    n = job.n_particles
    F = f * n
    inv_t = np.cumsum(1.0 / (n * K_t)) / np.arange(1, K_t.size + 1)
    series = {"kinetic_temperature_K_t": 2.0 * K_t / f * job.eps_K,
              "ray_temperature_running_K_t": job.eps_K / ((0.5 * F - 1.0) * inv_t),
              "sample": np.arange(K_t.size, dtype=float) * nve.interval}
    p = nve.summary().get("pressure")
    pressure = ({"value": u.pressure_to_Pa(p.value), "stderr": u.pressure_to_Pa(p.stderr)}
                if p is not None and p.available else None)
    extra = {"energy_per_particle_red": E_red, "initial_samples": init.n_samples(),
             "nve_samples": nve.n_samples()}
    return res, series, pressure, extra


def _solve_or_extend(chain, solve):
    """Call solve(); while the series still drifts, extend the chain and retry."""
    while True:
        try:
            return solve()
        except ConvergenceError:
            if not chain.extend(chain.n_samples(), mandatory=True):
                raise


def _partition(job):
    from analysis.expansion import partition_route
    from analysis.stats import mean_and_stderr
    from mdsim.engine.system import System
    u = job.units
    T_i_red = u.temperature_to_reduced(job.T_i)
    dt = _md_time_step(job, T_i_red)
    share = SAFETY * job.target_K / job.eps_K * 1.5 / math.sqrt(2.0)
    make_i = _make_system(job, job.rho_i, 0)
    init = _Chain(job, "initial", 0, make_i, "md-nvt", T_red=T_i_red,
                  md_settings={"time_step": dt}, key="u_model").run_pilot()
    init.resume_existing()
    if not init.results:
        init.extend(init.samples_for(share), mandatory=True)
    start = init.results[0]  # the expansion always starts from the end of the first stage
    _run_to(init, share, key="u_model")
    job.initial_chain = init

    base = make_i()
    box_f = np.array(base.box_i, dtype=float)
    box_f[2] *= job.r

    def make_f():
        s = System(base.pairs, base.counts_a, box_f, masses_a=base.masses_a,
                   dof_per_particle=base.dof_per_particle)
        s.r_ni = np.zeros((base.n_particles, 3))
        return s

    m_min = float(np.min(base.masses_a))
    crossing = box_f[2] / math.sqrt(T_i_red / m_min)
    fill_steps = int(math.ceil(PARTITION_CROSSINGS * crossing / dt))
    per = 25
    interval = max(1, fill_steps // (PARTITION_SNAPSHOTS * per))
    nve = _Chain(job, "nve", 1, make_f, "md-nve", md_settings={"time_step": dt},
                 key="temperature_inst")
    nve.interval = interval

    e_canonical = None
    for k in range(PARTITION_SNAPSHOTS):
        name = f"nve-fill{k:02d}"
        prev = nve.results[-1] if nve.results else start
        final = _store.read_final(prev.path)
        system = make_f()
        # the particles are left in place: the new part of the box starts empty
        system.r_ni = np.ascontiguousarray(np.mod(np.asarray(final["positions"], dtype=float),
                                                  np.asarray(final["box"], dtype=float)))
        system.v_ni = np.asarray(final["velocities"], dtype=float)
        if k == 0:
            system.v_ni, e_canonical = _start_at_canonical_energy(system, start, T_i_red, dt)
        res = job.stage(name, system, "md-nve", n_eq=0, n_samples=per, interval=interval,
                        seed=job.stage_seed(1, 100 + k), time_step=dt)
        nve.results.append(res)
    # the relaxed tail: production stages of the same chain
    n_fill = nve.n_samples()
    nve_results_fill = list(nve.results)

    def tail_extend(n):
        # stage names count tail stages only
        k = len(nve.results) - len(nve_results_fill)
        name = f"nve-tail-{k:02d}"
        done = (job.stages_dir / f"{name}.h5").is_file()
        if not done:
            rate = job.cost_per_unit("md")
            if rate is not None and k > 0:
                afford = int(job.budget_left() / (rate * base.n_particles * interval))
                if afford < n:
                    if afford < MIN_STAGE_SAMPLES:
                        job.stopped_by = "cpu budget"
                        return False
                    n = afford
                    job.stopped_by = "cpu budget"
        if k >= MAX_STAGES_PER_CHAIN:
            return False
        prev = nve.results[-1]
        system = nve._continue_system(prev)
        res = job.stage(name, system, "md-nve", n_eq=0, n_samples=int(max(MIN_STAGE_SAMPLES, n)),
                        interval=interval, seed=job.stage_seed(1, 200 + k), time_step=dt)
        nve.results.append(res)
        return True

    nve.extend = lambda n, mandatory=False: tail_extend(n)
    while (job.stages_dir / f"nve-tail-{len(nve.results) - len(nve_results_fill):02d}.h5").is_file():
        path = job.stages_dir / f"nve-tail-{len(nve.results) - len(nve_results_fill):02d}.h5"
        tail_extend(int(_store.read_attrs(path)["n_samples"]))
    if len(nve.results) == len(nve_results_fill):
        tail_extend(max(MIN_STAGE_SAMPLES, 2 * n_fill))

    n = base.n_particles
    kin = (3 * n - 3) / (2.0 * n)
    cv_res_i = init.summary()["c_v_res"]
    cv_red = kin + (max(0.0, cv_res_i.value) / job.r if cv_res_i.available else 0.0)
    job.notes.append(f"partition route: c_v at the final state taken as the kinetic part plus the "
                     f"initial state's sampled residual part divided by r (dilute-gas scaling): "
                     f"{cv_red:.4g} k per particle")
    job.notes.append("partition route: the NVE run starts with the velocities scaled so that its "
                     "energy is the canonical mean energy of the initial state")

    def solve():
        s_i = init.samples()
        s_f = nve.samples()
        return partition_route(s_f["temperature_inst"], s_f["u_model"], s_f["u_full"],
                               s_i["u_model"], s_i["u_full"], T_i_red, base.n_particles,
                               job.eps_K, cv_red=cv_red, rho_f=job.rho_f)

    res = _solve_or_extend(nve, solve)
    while res.delta_T_stderr_K > job.target_K and job.stopped_by != "cpu budget":
        n = nve.n_samples() - n_fill
        ratio = (res.delta_T_stderr_K / job.target_K) ** 2
        if not nve.extend(int(math.ceil(n * max(0.2, (ratio - 1.0) * 1.2)))):
            break
        res = _solve_or_extend(nve, solve)
    # series: temperature over time, density profile over time (end of each NVE stage)
    s_f = nve.samples()
    t_red = np.arange(1, s_f["temperature_inst"].size + 1, dtype=float) * interval * dt
    edges = np.linspace(0.0, 1.0, PROFILE_BINS + 1)
    bin_volume = box_f[0] * box_f[1] * box_f[2] / PROFILE_BINS
    prof, times = [], []
    elapsed = 0
    z0 = np.mod(np.asarray(_store.read_final(start.path)["positions"])[:, 2], base.box_i[2])
    counts, _ = np.histogram(z0 / box_f[2], bins=edges)  # the moment the box is opened
    prof.append(u.density_to_mol_m3(counts / bin_volume))
    times.append(0.0)
    for r in nve.results:
        elapsed += r.samples["temperature_inst"].size
        final = _store.read_final(r.path)
        z = np.mod(np.asarray(final["positions"])[:, 2], box_f[2]) / box_f[2]
        counts, _ = np.histogram(z, bins=edges)
        prof.append(u.density_to_mol_m3(counts / bin_volume))
        times.append(elapsed * interval * dt)
    series = {"time_s": u.time_to_s(t_red),
              "temperature_K_t": s_f["temperature_inst"] * job.eps_K,
              "profile_z_fraction": 0.5 * (edges[:-1] + edges[1:]),
              "profile_time_s": u.time_to_s(np.array(times)),
              "density_profile_tz": np.array(prof)}
    t0 = int(res.details["relaxed_from_sample"])
    try:
        p = mean_and_stderr(s_f["pressure"][t0:], discard_equilibration=False)
        pressure = {"value": u.pressure_to_Pa(p.mean), "stderr": u.pressure_to_Pa(p.stderr)}
    except ConvergenceError:
        pressure = None
    job.notes.append("partition route: MD conserves the truncated-and-shifted model energy; T_f "
                     "is corrected to the full potential (see the notes of the solver)")
    extra = {"time_step_red": dt, "fill_steps": fill_steps, "sample_interval_steps": interval,
             "nve_samples": int(s_f["temperature_inst"].size)}
    return res, series, pressure, extra


def _start_at_canonical_energy(system, start, T_i_red, dt):
    """Velocities scaled so the expanded system's model energy is the canonical mean.

    One NVT snapshot's energy scatters by about T sqrt(c_v / N) around the
    canonical mean, and opening the box removes the pairs across the z
    face; scaling the kinetic energy to E = (3N - 3)/2 kT_i + N <u_model>_i
    (the mean over the first NVT production stage) makes the NVE run carry
    the initial state's mean energy, so the solver's energy anchor stays
    small and no heat capacity is needed to undo a large one.

    Returns
    -------
    v_ni : ndarray, shape=(n_particles, 3)
    e_canonical : float
        The target energy per particle, reduced.
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
        raise SimulationError(f"partition route: the expanded configuration's model energy "
                              f"{(u - shifts) / n:.6g} per particle is above the initial state's "
                              f"mean energy {e_canonical:.6g}; use more particles")
    return np.asarray(system.v_ni, dtype=float) * math.sqrt(k_target / k_now), e_canonical


ROUTE_RUNNERS = {"energy": _energy, "microcanonical": _microcanonical, "partition": _partition}


# -- task files -----------------------------------------------------------------------------

def _plain(value):
    from analysis.results import to_plain
    return to_plain(value)


def run_task(run_dir, index, progress=None):
    """Run one task of a run directory and write ``tasks/NNNN.h5``.

    Parameters
    ----------
    run_dir : str or Path or RunDir
    index : int
        Task index (0-based, as in ``tasks.json``).
    progress : callable, optional
        Called as ``progress(stage=name, done=k, total=n)`` while sampling.

    Returns
    -------
    dict
        The task result (see the module docstring and :func:`read_task_result`).
        A complete task file is read back, not run again.

    Raises
    ------
    StudyError, SimulationError, ConvergenceError
        After writing ``tasks/NNNN.failed.json`` with the error text.
    """
    rd = run_dir if isinstance(run_dir, RunDir) else RunDir(run_dir)
    tasks = rd.read_tasks()
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)) \
            or not 0 <= int(index) < len(tasks):
        raise StudyError(f"task index {index!r}: '{rd.path}' has tasks 0 to {len(tasks) - 1}")
    index = int(index)
    done_path = rd.task_file(index)
    if _store.check_finished(done_path):  # a damaged task file is moved aside and re-run
        return read_task_result(done_path)[1]
    rd.failure_file(index).unlink(missing_ok=True)
    task = tasks[index]
    wall0 = time.time()
    try:
        job = _Task(rd, task, progress=progress)
        res, series, pressure, extra = ROUTE_RUNNERS[task["route"]](job)
        p_i = None
        if job.initial_chain is not None:
            est = job.initial_chain.summary().get("pressure")
            if est is not None and est.available:
                p_i = {"value": job.units.pressure_to_Pa(est.value),
                       "stderr": job.units.pressure_to_Pa(est.stderr)}
        result = {
            "route": task["route"],
            "initial_pressure_Pa": p_i,
            "state_point_index": int(task["state_point"]["index"]),
            "delta_T_K": {"value": float(res.delta_T_K), "stderr": float(res.delta_T_stderr_K)},
            "final_temperature_K": {"value": float(res.final_temperature_K),
                                    "stderr": float(res.final_temperature_stderr_K)},
            "initial_density_mol_m3": job.rho_i,
            "final_density_mol_m3": job.rho_f,
            "final_pressure_Pa": pressure,
            "stopped_by": job.stopped_by,
            "cpu_seconds": job.cpu_spent(),
            "n_particles": int(job.n_particles),
            "warnings": list(job.warnings) + list(res.warnings),
            "notes": list(job.notes) + list(res.notes),
            "method": res.method,
            "details": _plain({**res.details, **extra}),
            "n_stages": job.n_stages,
            "target_stderr_K": job.target_K,
            "wall_seconds_last_run": time.time() - wall0,
        }
        if job.stopped_by == "cpu budget":
            result["warnings"].append(
                f"{task['route']} route: the CPU budget ({job.budget_s:g} s) ended sampling at a "
                f"standard error of {res.delta_T_stderr_K:.3g} K (target {job.target_K:g} K); "
                "raise [simulation] max_cpu_time for more precision")
        _write_task_file(rd, index, task, result, series)
        return result
    except (StudyError, SimulationError, ConvergenceError) as exc:
        _write_failure(rd, index, exc, user=True)
        raise
    except OSError as exc:
        if exc.errno not in DISK_ERRNOS:
            _write_failure(rd, index, exc, user=False)
            raise
        err = SimulationError(
            f"task {index:04d}: cannot write '{exc.filename or rd.tasks_dir}': "
            f"{exc.strerror or os.strerror(exc.errno)}; free space in (or permission on) "
            f"'{rd.path}' and run again: finished stages are kept and the task resumes from its "
            "last checkpoint")
        try:
            _write_failure(rd, index, err, user=True)
        except OSError:
            log.error("%s (the failure file could not be written either)", err)
        raise err from None
    except Exception as exc:
        _write_failure(rd, index, exc, user=False)
        raise


def _write_failure(rd, index, exc, user):
    info = {"index": int(index), "error": " ".join(str(exc).split()),
            "type": type(exc).__name__, "time": time.time()}
    if not user:
        info["traceback"] = traceback.format_exc()
    path = rd.failure_file(index)
    path.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_text(path, json.dumps(info, indent=1))


def _write_task_file(rd, index, task, result, series):
    """Write ``NNNN.h5.part``, mark it complete with its checksum, sync, rename to ``NNNN.h5``.

    If writing fails (disk full), the ``.part`` file is removed: no
    half-written task file is left, and the stage files keep the work.
    """
    import h5py
    final = rd.task_file(index)
    part = rd.partial_file(index)
    try:
        with h5py.File(part, "w") as f:
            f.attrs["format"] = FORMAT
            f.attrs["task_json"] = json.dumps(_plain(task))
            f.attrs["result_json"] = json.dumps(_plain(result))
            for k, v in _store.package_versions().items():
                f.attrs[f"version_{k}"] = v
            g = f.create_group("series")
            for name, arr in series.items():
                g.create_dataset(name, data=np.asarray(arr, dtype=np.float64))
            f.attrs["complete"] = True
            f.attrs[_store.CHECKSUM_ATTR] = _store.checksum(f)
        fsync_path(part)
    except BaseException:
        part.unlink(missing_ok=True)
        raise
    os.replace(part, final)


def read_task_result(path):
    """Read a task file.

    Parameters
    ----------
    path : str or Path
        ``tasks/NNNN.h5``.

    Returns
    -------
    task : dict
    result : dict
    series : dict of ndarray, float64
    """
    import h5py
    path = Path(path)
    if not path.is_file():
        raise StudyError(f"task file '{path}' does not exist; run the task with "
                         "'mdsim task RUN_DIR --index K'")
    reason = _store.verify(path)
    if reason is not None:
        raise StudyError(f"task file '{path}' is damaged ({reason}); run 'mdsim run' or "
                         "'mdsim task' again: it is moved aside and the task re-run")
    try:
        with h5py.File(path, "r") as f:
            if f.attrs.get("format") != FORMAT:
                raise StudyError(f"'{path}' is not a task file of this tool "
                                 f"(format {f.attrs.get('format')!r})")
            task = json.loads(f.attrs["task_json"])
            result = json.loads(f.attrs["result_json"])
            series = {k: np.array(v[()], dtype=np.float64) for k, v in f["series"].items()}
    except OSError as exc:
        raise StudyError(f"task file '{path}' cannot be read ({exc}); delete it and run "
                         "the task again") from None
    return task, result, series
