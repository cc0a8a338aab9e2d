"""The running task: its study, its numbers, its stage files and its CPU ledger.

A :class:`RunningTask` is built from one entry of ``tasks.json``.  It reads
the run directory's study, chooses the particle number from the target
(:meth:`RunningTask.choose_particles`), runs stage files
(:meth:`RunningTask.stage`) and books the CPU time of each in a
:class:`CpuLedger` beside them, so that a task that is killed and run again
knows what it has spent.

Units: the engine works in the reduced units of the study (species 0);
the task's own numbers (temperatures, densities, the target) are SI.
"""
import functools
import json
import time
import warnings
from pathlib import Path

from mdsim.errors import ConvergenceError
from mdsim.files import atomic_write_text
from mdsim.pipeline.chain import sampler_kind
from mdsim.pipeline.plan import N_MAX, N_MIN, choose_particles, virial_start_guess
from mdsim.sampling import store
from mdsim.study.quantum_potential import feynman_hibbs_validity, uses_feynman_hibbs

__all__ = ["RunningTask", "CpuLedger", "N_MIN", "N_MAX"]


def _stage_progress(report, stage, done, total):
    """Pass a sampler's progress (samples done of total) on as the task's progress."""
    report(stage=stage, done=done, total=total)


class CpuLedger:
    """CPU seconds and work done per stage file, kept on disk beside the stages.

    Parameters
    ----------
    path : Path
        The ledger file (:meth:`mdsim.pipeline.rundir.RunDir.cpu_ledger`); read when it exists.

    Notes
    -----
    One row per stage name: ``kind`` ("mc" or "md"), ``cpu_s`` (CPU
    seconds) and ``units`` (particles x sweeps or steps).  The rate of a
    kind, CPU seconds per unit, sizes the stages a budget can still afford.
    """

    def __init__(self, path):
        self.path = Path(path)
        self.rows = (json.loads(self.path.read_text(encoding="utf-8"))
                     if self.path.is_file() else {})

    def __contains__(self, name):
        return name in self.rows

    def spent(self):
        """CPU seconds of every stage booked, s."""
        return float(sum(v["cpu_s"] for v in self.rows.values()))

    def cost_per_unit(self, kind):
        """CPU seconds per (particle x sweep or step) measured so far for a kind, or None."""
        rows = [v for v in self.rows.values() if v["kind"] == kind and v["units"] > 0]
        if not rows:
            return None
        return sum(v["cpu_s"] for v in rows) / sum(v["units"] for v in rows)

    def record(self, name, kind, cpu_s, units):
        """Book one stage and write the ledger (atomically)."""
        self.rows[name] = {"kind": kind, "cpu_s": float(cpu_s), "units": float(units)}
        atomic_write_text(self.path, json.dumps(self.rows))


class RunningTask:
    """A running task: its study, numbers, stage files and CPU ledger.

    Parameters
    ----------
    run_dir : mdsim.pipeline.rundir.RunDir
    task : dict
        The task's entry of ``tasks.json`` (:func:`mdsim.pipeline.plan.plan_tasks`).
    progress : callable, optional
        Called as ``progress(stage=name, done=k, total=n)`` while sampling.

    Attributes
    ----------
    T_i, r, rho_i, rho_f : float
        Initial temperature (K), volume ratio, initial and final molar density
        (mol/m^3): the planned ones until the initial state is sampled, then the
        density found (:mod:`mdsim.pipeline.initial_state`) and its r-th part.
    planned_rho_i : float
        The initial density of the plan (``tasks.json``), mol/m^3.
    initial_density_from : str
        How ``rho_i`` was found: "given", "pressure iteration, N steps" (N
        densities sampled), or the plan's "virial B2+B3" before sampling.
    pressure_tries : list of dict
        The densities the pressure iteration tried (``density_mol_m3``,
        ``pressure_Pa``, ``pressure_stderr_Pa``).
    initial_density_stderr : float or None
        How far ``rho_i`` may lie from the model's own density at the pressure
        asked for, mol/m^3 (None for a state given by density).
    target_K, budget_s : float
        The target standard error of Delta T (K) and the CPU budget (s).
    T_f_guess, dT_guess : float, float or None
        The virial B2 + B3 final temperature and Delta T (K), the first guesses.
    n_particles : int
    stopped_by : str
        "target" or "cpu budget": what ended the sampling (final after
        :meth:`stop_reason`; while sampling, "cpu budget" says the budget
        forbids more).
    warnings, notes : list of str
    initial_chain : mdsim.pipeline.chain.Chain or None
        The route's chain at the initial state, once run (its pressure is reported).
    final_chain : mdsim.pipeline.chain.Chain or None
        The route's chain at the final state, once run, and ``final_first_stage``
        the first of its stages that samples it (:mod:`mdsim.pipeline.phase_check`).
        For the energy route it is the chain at the final density nearest T_f, whose last
        configuration also starts the final state's entropy run.
    """

    def __init__(self, run_dir, task, progress=None):
        from mdsim.study.statepoints import ideal_heat_capacity
        from analysis.virial import QuantumCorrectionWarning
        from analysis.virial_eos import VirialGas
        from mdsim.study.reader import read_study
        self.rd = run_dir
        self.task = task
        self.index = int(task["index"])
        self.study = read_study(run_dir.study_file)
        self.units = self.study.units
        self.eps_K = float(self.units.epsilon_K)
        # the study's c_v_ig; for rigid molecules with the model's kinetic part added
        self.cv_ig = ideal_heat_capacity(self.study)
        sp = task["state_point"]
        self.state_point_index = int(sp["index"])
        self.T_i = float(sp["temperature_K"])
        self.r = float(sp["volume_ratio"])
        self.rho_i = self.planned_rho_i = float(task["initial_density_mol_m3"])
        self.rho_f = self.rho_i / self.r
        self.initial_density_from = task.get("initial_density_from")
        self.pressure_tries = []
        self.initial_density_stderr = None
        self.target_K = float(task["target_stderr_K"])
        self.budget_s = float(task["max_cpu_time_s"])
        self.seed = [int(s) for s in task["seed"]]
        run_dir.stages_dir(self.index).mkdir(parents=True, exist_ok=True)
        self.ledger = CpuLedger(run_dir.cpu_ledger(self.index))
        self.progress = progress
        self.stopped_by = "target"
        self.warnings, self.notes = [], []
        self.n_stages = 0
        self.initial_chain = None
        self.final_chain, self.final_first_stage = None, 0
        g = self.study.gas
        self.feynman_hibbs = uses_feynman_hibbs(self.study)
        # the start guess follows the simulated model: classical, or B2 to order hbar^2
        # (what the Feynman-Hibbs potential reproduces, docs/physics.md 3.5); the de Boer
        # check's warning is about the virial routes, not this guess
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", QuantumCorrectionWarning)
            self.virial_gas = VirialGas(g.pairs_K_angstrom, g.fractions, g.molar_masses_kg_mol,
                                        quantum="first-order" if self.feynman_hibbs
                                        else "classical")
        if g.molecules is not None:  # the model's kinetic c_v and its own virial series
            from mdsim.pipeline.rigid_chain import set_up_molecular_task
            set_up_molecular_task(self)
        if self.feynman_hibbs:
            self.notes.append("simulations use the quadratic Feynman-Hibbs effective pair "
                              "potential at each sampled temperature, with its thermodynamic "
                              "energy estimator (docs/physics.md)")
        elif g.quantum_correction:
            self.warnings.append(f"the study asks for quantum = \"{g.quantum}\": it applies to "
                                 "the virial routes only; simulations are classical")
        self.T_f_guess, self.dT_guess = self._virial_guess()
        if self.feynman_hibbs:  # the lowest temperature sampled decides
            note, warning = feynman_hibbs_validity(self.study, min(self.T_i, self.T_f_guess))
            self.notes.append(note)
            if warning is not None:
                self.warnings.append(warning)
        self.n_particles = self.choose_particles(task.get("particles"))

    # -- numbers chosen from the target -------------------------------------------------
    def _virial_guess(self):
        T_f, dT, note = virial_start_guess(self.virial_gas, self.cv_ig, self.T_i, self.r,
                                           self.rho_i)
        if note is not None:
            self.notes.append(note)
        return T_f, dT

    def set_initial_density(self, rho_mol_m3):
        """Start from the density found at the initial state (mol/m^3): sets rho_i, rho_f and
        the virial first guesses of the final state."""
        if float(rho_mol_m3) == self.rho_i:
            return
        self.rho_i = float(rho_mol_m3)
        self.rho_f = self.rho_i / self.r
        self.T_f_guess, self.dT_guess = self._virial_guess()

    def choose_particles(self, given):
        """The particle number (:func:`mdsim.pipeline.plan.choose_particles`).

        A task that chooses its own number and already has stage files (run
        again, as with a tighter target) keeps the number they were sampled
        with, so that its chains can be extended; a note says when the
        target now asks for more.
        """
        n, warning = choose_particles(self.study, given, self.rho_i, self.state_point_index,
                                      self.dT_guess, self.target_K)
        on_disk = self.particles_on_disk() if given is None else None
        if on_disk is not None and on_disk != n:
            if on_disk < n:
                self.notes.append(f"{on_disk} particles, as in the stage files of the earlier "
                                  f"run that this run extends (the target now asks for {n})")
            return on_disk
        if warning is not None:
            self.warnings.append(warning)
        return n

    def particles_on_disk(self):
        """The particle number of the task's finished stage files, or None when there are none."""
        for path in sorted(self.rd.stages_dir(self.index).glob("*.h5")):
            try:
                return int(store.read_attrs(path)["n_particles"])
            except (OSError, KeyError, ValueError):
                continue
        return None

    def system_maker(self, rho_mol_m3, tag, temperature_K=None):
        """A function making a fresh system of the task at a density (seeded start).

        ``temperature_K``: the temperature it will be sampled at, needed by a
        temperature-dependent (Feynman-Hibbs) potential.
        """
        if self.study.gas.molecules is not None:
            from mdsim.pipeline.rigid_chain import rigid_system_maker
            return rigid_system_maker(self, rho_mol_m3, tag, temperature_K)

        def make():
            return self.study.system(self.n_particles, rho_mol_m3, seed=self.start_seed(tag),
                                     temperature_K=temperature_K)
        return make

    def new_chain(self, label, chain_id, make_system, method, **kwargs):
        """A :class:`mdsim.pipeline.chain.Chain` of the task's stages (arguments as for it);
        for rigid molecules a :class:`mdsim.pipeline.rigid_chain.RigidChain`."""
        from mdsim.pipeline.chain import Chain
        if self.study.gas.molecules is None:
            return Chain(self, label, chain_id, make_system, method, **kwargs)
        from mdsim.pipeline.rigid_chain import RigidChain, rigid_method
        return RigidChain(self, label, chain_id, make_system, rigid_method(method), **kwargs)

    def md_time_step(self, T_red):
        """The MD time step at a reduced temperature for the study's masses (reduced); for
        rigid molecules also short enough for the rotation of the one with the smallest moment
        of inertia (:func:`mdsim.engine.rigid_md_steps.rigid_time_step`)."""
        from mdsim.engine.integrator import default_time_step
        masses = self.study.gas.molar_masses_kg_mol / self.study.gas.molar_masses_kg_mol[0]
        if self.study.gas.molecules is not None:
            from mdsim.pipeline.rigid_chain import reduced_rigid_inertia
            from mdsim.engine.rigid_md_steps import rigid_time_step
            return float(rigid_time_step(T_red, masses, reduced_rigid_inertia(self)))
        return float(default_time_step(T_red, masses))

    # -- CPU budget -----------------------------------------------------------------------
    def cpu_spent(self):
        """CPU seconds of the task's stages so far, over every run of the task, s."""
        return self.ledger.spent()

    def budget_left(self):
        return self.budget_s - self.cpu_spent()

    def stop_reason(self, stderr_K):
        """What ended the sampling, given the standard error of Delta T reached (K).

        "target" whenever ``stderr_K`` is at or below the target, even when
        the CPU budget ran out as well (the last stage cut short by the budget
        may still have brought the error below the target); "cpu budget" only
        when the budget ended sampling short of the target.  A route that
        ended for another reason (the energy route's temperature guesses used
        up with the balance unsolved) keeps that reason, whatever the error.  Sets
        :attr:`stopped_by`, which the routes use while sampling to know that
        the budget forbids more, and returns it.
        """
        if stderr_K <= self.target_K and self.stopped_by in (None, "target", "cpu budget"):
            self.stopped_by = "target"
        return self.stopped_by

    def cost_per_unit(self, kind):
        """CPU seconds per (particle x sweep or step) measured so far for a sampler kind."""
        return self.ledger.cost_per_unit(kind)

    # -- stage files --------------------------------------------------------------------
    def stage_path(self, name):
        """The stage file ``name`` (see :func:`mdsim.pipeline.stage_names.stage_name`)."""
        return self.rd.stage_file(self.index, name)

    def stage(self, name, system, method, T_red=None, E_red=None, *, n_eq, n_samples,
              interval, seed, **settings):
        """Run (or read back, or resume) one stage file ``NAME.h5``.

        Returns
        -------
        mdsim.sampling.state_point.SampleResult
        """
        from mdsim.sampling.state_point import sample_state_point
        path = self.stage_path(name)
        attrs = {"task_index": self.index, "stage": name, "study_name": self.study.name,
                 **{f"units_{k}": v for k, v in self.units.as_dict().items()}}
        done = path.is_file()
        c0 = time.process_time()
        progress = None
        if self.progress is not None:
            progress = functools.partial(_stage_progress, self.progress, name)
        try:
            result = sample_state_point(system, method, T_red, E_red, n_equilibration=n_eq,
                                        n_samples=n_samples, interval=interval, seed=seed,
                                        path=path, attrs=attrs, progress=progress, **settings)
        except ConvergenceError:
            # a short stage of a relaxing run (the direct route's filling stages) has no
            # settled mean of its own; the file is complete and its samples are all we need
            if not path.is_file():
                raise
            from mdsim.sampling.state_point import SampleResult
            result = SampleResult(store.read_samples(path), {}, {}, path, done)
        if not done or name not in self.ledger:
            units = system.n_particles * (n_eq + n_samples * interval)
            self.ledger.record(name, sampler_kind(method), time.process_time() - c0, units)
        self.n_stages += 1
        return result

    def stage_seed(self, *parts):
        """The seed of a stage: the task's seed followed by ``parts``."""
        return self.seed + [int(p) for p in parts]

    def start_seed(self, *parts):
        """The seed of a starting configuration (apart from every stage seed)."""
        return self.seed + [9999] + [int(p) for p in parts]
