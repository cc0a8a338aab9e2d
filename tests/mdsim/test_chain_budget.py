"""A chain whose series never settles stops at the CPU budget (mdsim.pipeline.chain.solve_or_extend).

A sample separating into two phases drifts for as long as it is sampled; extending
its chain "until it settles" ran far past max_cpu_time.  Here the stages are
invented: every stage continues a steady ramp (a series that never settles), and
each costs CPU time in proportion to its samples.  The budget must bound the CPU
spent, and the stop reason must say that the budget ended an unsettled series.
A series that settles is still extended until it does.
"""
from types import SimpleNamespace

import numpy as np
import pytest

from mdsim.errors import ConvergenceError
from mdsim.pipeline.chain import (MIN_STAGE_SAMPLES, UNSETTLED_BUDGET, Chain, settle)

RATE_S = 1e-4
"""Invented CPU seconds per particle and sample."""
PARTICLES = 100


class _Job:
    """The parts of a running task a chain uses; stages are invented series, not runs."""

    def __init__(self, tmp_path, budget_s, settles_after):
        self.budget_s, self.spent, self.stopped_by = budget_s, 0.0, None
        self.ledger, self.tmp = {}, tmp_path
        self.settles_after = settles_after   # samples after which the series is flat
        self.done = 0

    def stage_path(self, name):
        return self.tmp / f"{name}.h5"

    def cost_per_unit(self, kind):
        return RATE_S

    def budget_left(self):
        return self.budget_s - self.spent

    def stage_seed(self, *parts):
        return list(parts)

    def stage(self, name, system, method, T_red, E_red, n_eq, n_samples, interval, seed, **kw):
        self.spent += RATE_S * PARTICLES * n_samples * interval
        t = self.done + np.arange(n_samples)
        self.done += n_samples
        # a ramp (drifting) until settles_after, then white noise about a constant
        rng = np.random.default_rng(len(self.ledger))
        x = np.where(t < self.settles_after, 1e-3 * t, 1e-3 * self.settles_after) \
            + 1e-4 * rng.normal(size=n_samples)
        self.ledger[name] = True
        return SimpleNamespace(samples={"u_full": x}, path=None)


def _chain(job):
    chain = Chain(job, "final-density-guess0", 1, lambda: SimpleNamespace(n_particles=PARTICLES),
                  "mc-nvt")
    chain.interval = 1
    chain.continue_system = lambda prev: None
    chain._settings = lambda prev: {}   # no stage file to read the tuned step from
    chain.extend(MIN_STAGE_SAMPLES, mandatory=True)
    return chain


def test_a_series_that_never_settles_stops_at_the_budget(tmp_path):
    # 2 s of budget at 0.01 s per sample: 200 samples, the first stage alone.  Before the
    # fix the chain doubled to MAX_STAGES_PER_CHAIN stages: 200 x 2^11 samples, 4096 s.
    job = _Job(tmp_path, budget_s=2.0, settles_after=np.inf)
    chain = _chain(job)
    with pytest.raises(ConvergenceError, match=r"stopped by the CPU budget \(2 s\)"):
        settle(chain, ("u_full",))
    assert job.stopped_by == UNSETTLED_BUDGET
    assert job.spent <= job.budget_s + 1e-9


def test_a_series_that_settles_within_the_budget_is_extended_until_it_does(tmp_path):
    # drifts for 300 samples, then flat: one doubling (400 samples) is not enough for the
    # equilibration detection to leave a settled tail, two (800) are; the budget (100 s) allows it
    job = _Job(tmp_path, budget_s=100.0, settles_after=300)
    chain = _chain(job)
    settle(chain, ("u_full",))
    assert job.stopped_by is None
    assert chain.n_samples() > 300
