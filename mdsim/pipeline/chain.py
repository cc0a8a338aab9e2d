"""Chains of stage files: a pilot, then production stages continuing one Markov chain.

How a task chooses its run length.  The user sets ``target_stderr`` (the
standard error of Delta T) and ``max_cpu_time``, not the run length:

- Sample spacing: a pilot run at each state measures the statistical
  inefficiency g of the averaged series; samples are taken every g / 2
  sweeps (MC) or steps (MD), at least one.
- Run length: from the pilot's standard error, scaled as 1 / sqrt(n) to
  ``SAFETY`` times the share of the target each state gets, at least
  ``MIN_CHAIN_SAMPLES``; then extra stages (new seeds, the same Markov
  chain continued from the last configuration) while the standard error of
  Delta T is above the target and CPU budget is left.  ``stopped_by`` says
  which ended it.
- Standard errors (:func:`production_mean`): no start is cut off the
  production of a chain whose pilot has settled, and off one whose pilot had
  not only a start that differs beyond its noise
  (:func:`analysis.block_error.significant_start`); the error is at least the
  block-averaging one (``ERROR_BLOCKS`` blocks), which sees a slow mode the
  statistical inefficiency of a short series misses (measured in
  docs/physics.md section 3.1).

Determinism: every decision is made from completed stage files and the
seeds alone, so a task that is killed and run again gives the same numbers,
except where the CPU budget ends it (CPU time differs between runs).
"""
import math

import numpy as np

from analysis.block_error import ERROR_BLOCKS, production_mean
from mdsim.errors import ConvergenceError
from mdsim.pipeline.stage_names import stage_name
from mdsim.pipeline.start_cache import StartCache
from mdsim.sampling import store

__all__ = ["Chain", "sampler_kind", "mean_se", "production_mean", "production_pressure", "run_to",
           "settle", "solve_or_extend",
           "stage_share", "SAFETY", "MIN_STAGE_SAMPLES", "MIN_CHAIN_SAMPLES",
           "ERROR_BLOCKS", "MAX_STAGES_PER_CHAIN", "UNSETTLED_BUDGET"]

PILOT_SAMPLES = 200
MIN_STAGE_SAMPLES = 200
MIN_CHAIN_SAMPLES = 1000
"""A chain's first production stage has at least this many samples, so that its error
estimate (statistical inefficiency and blocks, :func:`production_mean`) rests on a series
long against the slow modes a pilot may miss."""
MAX_STAGE_SAMPLES = 200_000
MAX_STAGES_PER_CHAIN = 12
MAX_INTERVAL_MC = 20
SAFETY = 0.8
"""Stages are sized for SAFETY x the target so that one pass usually reaches it."""
EQUILIBRATION_MC_SWEEPS = 200
EQUILIBRATION_MD_STEPS = 2000
MD_PILOT_INTERVAL = 10


def sampler_kind(method):
    """"md" or "mc": the kind of a stage method, the CPU ledger's row kind.

    >>> sampler_kind("md-nve"), sampler_kind("rigid-md-nvt"), sampler_kind("rigid-mc-nvt")
    ('md', 'md', 'mc')
    """
    return "md" if method.startswith("md") or "-md-" in method else "mc"


def stage_share(task, per_kelvin_red):
    """The standard error each of the two end states may carry, reduced.

    ``SAFETY`` x the target, over sqrt(2) (two end states), turned into the
    reduced series a route averages: ``per_kelvin_red`` is that series'
    change per reduced temperature unit (a heat capacity in k, or f/2).
    """
    return SAFETY * task.target_K / task.eps_K * per_kelvin_red / math.sqrt(2.0)


class Chain:
    """Stage files at one state: a pilot, then production stages continuing one chain.

    The pilot (equilibration plus ``PILOT_SAMPLES`` closely spaced samples)
    measures the statistical inefficiency of ``key``; production stages use
    the spacing it gives and continue from the previous stage's last
    configuration (and, for MC, its tuned step), so the concatenated
    production samples are one Markov chain.

    Parameters
    ----------
    task : mdsim.pipeline.task.RunningTask
    label : str
        Stage label (:mod:`mdsim.pipeline.rundir`): files ``LABEL-pilot.h5``, ``LABEL-NN.h5``.
    chain_id : int
        The chain's part of every stage seed.
    make_system : callable
        Returns a fresh :class:`mdsim.engine.system.System` of the state.
    method : str
        "mc-nvt", "md-nvt", "mc-nve" or "md-nve".
    T_red, E_red : float, optional
        Reduced temperature (NVT) or energy per particle (NVE).
    key : str
        The sample series whose inefficiency sets the spacing.
    md_settings : dict, optional
        Settings of every MD stage (``time_step``).
    """

    def __init__(self, task, label, chain_id, make_system, method, T_red=None, E_red=None,
                 key="u_full", md_settings=None):
        self.job = task
        self.label = label
        self.id = int(chain_id)
        self.make_system = StartCache.of(make_system)
        self.method = method
        self.T_red = T_red
        self.E_red = E_red
        self.key = key
        self.md_settings = dict(md_settings or {})
        self.is_md = sampler_kind(method) == "md"
        self.results = []
        self.pilot = None
        self.pilot_name = stage_name(label)
        self.pilot_settled = False
        self.interval = None

    # -- helpers --------------------------------------------------------------------------
    def continue_system(self, prev):
        """A system in the last configuration (and velocities) of a finished stage."""
        final = store.read_final(prev.path)
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
        attrs = store.read_attrs(prev.path)
        return {"max_displacement": float(attrs["sampler_final_max_displacement_red"])}

    def pilot_spacing(self, system, n_samples):
        """(equilibration steps or sweeps, steps or sweeps between samples) of a pilot of
        ``n_samples`` samples of ``system``."""
        if self.is_md:
            return EQUILIBRATION_MD_STEPS, MD_PILOT_INTERVAL
        return EQUILIBRATION_MC_SWEEPS, 1

    def samples(self):
        """The production samples of every stage, concatenated (dict of 1-D arrays)."""
        return {k: np.concatenate([r.samples[k] for r in self.results])
                for k in self.results[0].samples}

    def n_samples(self):
        return int(sum(r.samples[self.key].size for r in self.results))

    def summary(self):
        """:func:`mdsim.sampling.state_point.summarise` of the production samples."""
        from mdsim.sampling.estimates import summarise
        system = self.make_system()
        return summarise(self.samples(), self.method, system.n_particles, system.volume,
                         self.T_red, system.dof_per_particle)

    # -- running --------------------------------------------------------------------------
    def run_pilot(self, n_samples=PILOT_SAMPLES):
        """Run (or read back) the pilot of n_samples and choose the sample interval from it."""
        from analysis.stats import mean_and_stderr
        job = self.job
        system = self.make_system()
        n_eq, interval = self.pilot_spacing(system, n_samples)
        self.pilot = job.stage(self.pilot_name, system, self.method, self.T_red,
                               self.E_red, n_eq=n_eq, n_samples=n_samples, interval=interval,
                               seed=job.stage_seed(self.id, 0), **self._settings(None))
        x = self.pilot.samples[self.key]
        try:
            m = mean_and_stderr(x)
            g, se = m.g, m.stderr
            self.pilot_settled = 2 * m.t0 <= x.size
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
        self.pilot_interval = interval
        self.pilot_units = n_samples * interval
        return self

    def unit_variance(self):
        """(stderr^2 x units of run of the key series, units it rests on): from the production
        samples when there are any (:func:`production_mean`, the block floor included), else
        from the pilot; (nan, 0) when neither gives a finite error."""
        if self.results:
            _, se = mean_se(self, self.key)
            units = self.n_samples() * self.interval
            if math.isfinite(se):
                return se * se * units, units
        if self.pilot is not None and math.isfinite(self.pilot_se):
            return self.pilot_se ** 2 * self.pilot_units, self.pilot_units
        return math.nan, 0

    def size_from(self, other):
        """Size the production from ``other``'s error per unit of run when it rests on more run
        than this chain's pilot (the same state and sampler sampled longer: a choice pilot, or
        the chain of a neighbouring temperature or density).  Returns self.

        A pilot of a few hundred samples misjudges the statistical inefficiency (at 22 bar
        argon, 200 Monte Carlo samples put the error per sweep 25 % low and the first stage
        then fell short twice); the standard errors reported are not touched, only how long
        the first production stage is.
        """
        var, units = other.unit_variance()
        if other.is_md == self.is_md and units > self.pilot_units and math.isfinite(var):
            self.pilot_se = math.sqrt(var / self.pilot_units)
        return self

    def samples_for(self, target_se):
        """Production samples that should bring the chain's stderr to target_se."""
        if not (self.pilot_se > 0 and math.isfinite(self.pilot_se)):
            return MIN_STAGE_SAMPLES
        units = self.pilot_units * (self.pilot_se / target_se) ** 2
        return int(min(MAX_STAGE_SAMPLES, max(MIN_STAGE_SAMPLES, math.ceil(units / self.interval))))

    def _affordable(self, name, n_samples, mandatory):
        """The samples the CPU budget allows for a new stage (marks ``stopped_by``), or None."""
        job = self.job
        if job.stage_path(name).is_file() or name in job.ledger:
            return n_samples
        rate = job.cost_per_unit(sampler_kind(self.method))
        if rate is None:
            return n_samples
        affordable = int(job.budget_left() / (rate * self.make_system().n_particles
                                              * self.interval))
        if affordable < n_samples:
            if not mandatory and affordable < MIN_STAGE_SAMPLES:
                job.stopped_by = "cpu budget"
                return None
            if not mandatory:
                n_samples = affordable
                job.stopped_by = "cpu budget"
            elif job.budget_left() <= 0:
                job.stopped_by = "cpu budget"
        return n_samples

    def extend(self, n_samples, mandatory=False):
        """One more production stage of about n_samples; False if the budget forbids it."""
        k = len(self.results)
        if k >= MAX_STAGES_PER_CHAIN:
            return False
        name = stage_name(self.label, k)
        n_samples = self._affordable(name, int(max(MIN_STAGE_SAMPLES, n_samples)), mandatory)
        if n_samples is None:
            return False
        prev = self.results[-1] if self.results else self.pilot
        self.results.append(self.continue_stage(prev, name, n_samples, k + 1))
        return True

    def continue_stage(self, prev, name, n_samples, seed_part):
        """Run (or read back) one stage ``name`` continuing from the stage ``prev``.

        The chain's own stages go through :meth:`extend`; this serves stages
        that continue the chain without joining its samples (the end-state
        snapshots of :mod:`mdsim.pipeline.phase_check`).
        """
        return self.job.stage(name, self.continue_system(prev), self.method, self.T_red,
                              self.E_red, n_eq=0, n_samples=n_samples, interval=self.interval,
                              seed=self.job.stage_seed(self.id, seed_part),
                              **self._settings(prev))

    def resume_existing(self):
        """Re-attach production stages already on disk (after a restart)."""
        while True:
            path = self.job.stage_path(stage_name(self.label, len(self.results)))
            if not path.is_file():
                return self
            n = int(store.read_attrs(path)["n_samples"])
            if not self.extend(n, mandatory=True):
                return self


def mean_se(chain, key):
    """(mean, stderr) of a chain's series (:func:`production_mean`), or (nan, inf) while it
    still drifts."""
    try:
        return production_mean(chain.samples()[key], chain.pilot_settled)
    except ConvergenceError:
        return math.nan, math.inf


def production_pressure(chain):
    """(mean, stderr) of a canonical chain's pressure, reduced, as :func:`production_mean`
    gives them (no start cut from a settled chain, the block floor), or None when its sampler
    gives no pressure.

    Raises
    ------
    ConvergenceError
        When the energy or the pressure still drifts.
    """
    est = chain.summary().get("pressure")
    if est is None or not est.available:
        return None
    return production_mean(chain.samples()["pressure"], chain.pilot_settled)


def run_to(chain, target_se, key=None, accept_se=None):
    """Extend a chain until the stderr of its key series is at most target_se.

    ``accept_se`` (at least ``target_se``): a chain whose first stage, sized
    for ``target_se``, ends with a standard error at most this is not
    extended (a route that checks the combined error of its end states
    afterwards need not top up a chain that missed its share by a little:
    every extension is at least a fifth of the chain).  Extensions, when
    needed, still aim at ``target_se``.
    """
    key = key or chain.key
    accept = target_se if accept_se is None else max(float(accept_se), target_se)
    chain.resume_existing()
    if not chain.results:
        chain.extend(max(MIN_CHAIN_SAMPLES, chain.samples_for(target_se)), mandatory=True)
    while True:
        _, se = mean_se(chain, key)
        if se <= accept:
            return True
        n = chain.n_samples()
        factor = 1.0 if not math.isfinite(se) else (se / target_se) ** 2 - 1.0
        if not chain.extend(int(math.ceil(1.1 * n * max(factor, 0.2)))):
            return False


def settle(chain, keys):
    """Extend a chain within the CPU budget until every series in keys settles.

    A series that still drifts has no mean to report; the chain is extended
    (:func:`solve_or_extend`) while the budget lasts and at most
    ``MAX_STAGES_PER_CHAIN`` stages, after which the ``ConvergenceError`` of
    the drifting series is raised.
    """
    from analysis.stats import mean_and_stderr

    def solve():
        samples = chain.samples()
        for key in keys:
            mean_and_stderr(samples[key])
    solve_or_extend(chain, solve)


UNSETTLED_BUDGET = "cpu budget, series unsettled"
"""The stop reason when the CPU budget ends a chain whose series still drifts."""


def solve_or_extend(chain, solve):
    """Call solve(); while the series still drifts, extend the chain within the budget and retry.

    Each extension doubles the chain, cut to what the CPU budget has left
    (:meth:`Chain.extend`).  A series that never settles (a sample separating
    into two phases drifts on) would otherwise run far past the budget.

    Raises
    ------
    ConvergenceError
        The series still drifts when the budget is spent (the task's
        ``stopped_by`` becomes :data:`UNSETTLED_BUDGET`) or the chain holds
        ``MAX_STAGES_PER_CHAIN`` stages.
    """
    while True:
        try:
            return solve()
        except ConvergenceError as exc:
            job = chain.job
            if chain.extend(chain.n_samples()):
                continue
            if job.stopped_by != "cpu budget":
                raise
            job.stopped_by = UNSETTLED_BUDGET
            raise ConvergenceError(
                f"stopped by the CPU budget ({job.budget_s:g} s) with the series of "
                f"'{chain.label}' still drifting ({exc}); a sample separating into two phases "
                "drifts like this; raise [simulation] max_cpu_time to sample longer",
                partial=exc.partial) from None
