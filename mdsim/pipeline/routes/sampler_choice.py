"""The energy route's NVT sampler at a state: Monte Carlo or MD, whichever costs less.

With ``[simulation] sampler = "auto"`` (the default) each density the
energy route samples gets two pilots, one canonical Monte Carlo and one
thermostatted MD, from the same start (the MD one only where the Monte
Carlo pilot expects its chain to cost more than :data:`COMPARE_ABOVE_CPU_S`;
a cheap chain is not worth the second pilot).  The pilots give each sampler's
cost coefficient: the CPU seconds it needs per unit of run (the CPU ledger)
times the squared standard error of the mean energy per particle that unit
of run gives (the pilot's statistical inefficiency, measured from its own
samples), i.e. the CPU seconds to reach a standard error of 1.  The cheaper
one samples the state.  The choice is written to ``LABEL-sampler.json``
beside the stage files, so that a task run again keeps it (CPU times differ
between runs).  ``"mc"`` or ``"md"`` skip the comparison.

MD for static averages: the energy route uses only configurational
averages of NVT states, so its MD runs the stochastic velocity-rescaling
thermostat with a short relaxation time, :data:`THERMOSTAT_STEPS` time
steps.  The thermostat samples the canonical ensemble for any relaxation
time (G. Bussi, D. Donadio and M. Parrinello, J. Chem. Phys. 126, 014101,
2007); a short one lets the part of the energy fluctuation that follows the
total energy relax in a few steps instead of over the default 0.5 time
units, which cut the statistical inefficiency of u at T* = 10, rho* = 0.9
about fourfold (measured with this engine).

The Verlet skin of these MD chains (:func:`md_skin`) follows the density
only: the time step shrinks as 1/sqrt(T*) above T* = 1
(:func:`mdsim.engine.integrator.default_time_step`), so a particle moves
as far per step at any temperature, and the best skin is the one that
balances list rebuilds against listed pairs at that density.  The engine's
general rule (:func:`mdsim.engine.neighbours.choose_skin`) widens the skin
with the temperature, for a fixed time step; with the shortened step that
costs up to a third more CPU per step at hot dense states.
"""
import json
import math

from mdsim.errors import ConvergenceError
from mdsim.files import atomic_write_text
from mdsim.pipeline.chain import Chain
from mdsim.pipeline.start_cache import StartCache

__all__ = ["THERMOSTAT_STEPS", "CHOICE_PILOT_SAMPLES", "COMPARE_ABOVE_CPU_S", "SAMPLER_METHODS",
           "DENSE_SKIN", "DILUTE_SKIN", "md_skin", "md_settings", "state_md_settings", "piloted_chain", "cost_coefficient", "run_cost",
           "split_share"]

THERMOSTAT_STEPS = 4
"""The energy route's MD thermostat relaxation time, in time steps."""
COMPARE_ABOVE_CPU_S = 10.0
"""MD is piloted only where the Monte Carlo pilot expects its chain to need more CPU seconds."""
CHOICE_PILOT_SAMPLES = 600
"""Samples of each of the two pilots that choose the sampler: three times a chain's usual
pilot, since a pilot of 200 samples underestimated the inefficiency of Monte Carlo at
T* = 10, rho* = 0.9 (about 4 sweeps against about 10 from long runs)."""
SAMPLER_METHODS = {"mc": "mc-nvt", "md": "md-nvt"}
"""The NVT engine method of each ``[simulation] sampler`` (``"auto"`` chooses per state)."""


DENSE_SKIN = 0.15
"""Verlet skin (sigma) of the energy route's MD at rho* >= 0.2."""
DILUTE_SKIN = 1.0
"""Verlet skin (sigma) of the energy route's MD at rho* <= 0.02."""
SKIN_DENSITIES = (0.02, 0.2)
"""Between these reduced densities the skin is interpolated in log skin against log density."""


def md_skin(density_red, rc_max):
    """The Verlet skin of the energy route's MD chains at a reduced number density (sigma).

    Parameters
    ----------
    density_red : float
        Number density, reduced.
    rc_max : float
        Largest cut-off, sigma: the skin stays at most half of it.

    Returns
    -------
    float
        :data:`DENSE_SKIN` at rho* >= 0.2, :data:`DILUTE_SKIN` at rho* <= 0.02,
        a power law in the density between.

    Notes
    -----
    Measured with this engine (Lennard-Jones, rc = 3 sigma, the time step
    0.005 / sqrt(T*), CPU microseconds per particle and step; common practice
    of tuning a Verlet skin, no source): rho* = 0.9, T* = 10, 205 particles:
    1.14 at the engine's skin 0.375, 1.00 at 0.25, 0.93 at 0.15, 0.94 at 0.1;
    rho* = 0.45, T* = 10.9: 0.70 at 0.50, 0.53 at 0.15 to 0.25, 0.57 at 0.1;
    rho* = 0.2, T* = 5, 500 particles: 0.33 at 0.4, 0.26 at 0.25, 0.28 at
    0.15; rho* = 0.9, T* = 1, 500 particles: 1.26 at 0.3, 1.21 at 0.2, 1.25
    at 0.1; rho* = 0.02, T* = 2.5, 1000 particles: 0.078 at 0.3, 0.060 at
    0.6, 0.058 at 1.0.

    Examples
    --------
    >>> md_skin(0.9, 3.0), md_skin(0.005, 3.0), md_skin(0.005, 1.5)
    (0.15, 1.0, 0.75)
    >>> round(md_skin(0.0632456, 3.0), 3)  # halfway between in log density
    0.387
    """
    lo, hi = SKIN_DENSITIES
    rho = min(max(float(density_red), lo), hi)
    x = math.log(rho / lo) / math.log(hi / lo)
    skin = DILUTE_SKIN * (DENSE_SKIN / DILUTE_SKIN) ** x
    return float(min(skin, 0.5 * float(rc_max)))


def md_settings(time_step, skin=None):
    """The MD settings of the energy route's NVT chains at a time step (reduced).

    ``skin``: the Verlet skin (sigma, :func:`md_skin`), or None for the engine's own.

    >>> md_settings(0.002)
    {'time_step': 0.002, 'thermostat_time': 0.008}
    >>> md_settings(0.002, 0.15)
    {'time_step': 0.002, 'thermostat_time': 0.008, 'skin': 0.15}
    """
    dt = float(time_step)
    out = {"time_step": dt, "thermostat_time": THERMOSTAT_STEPS * dt}
    if skin is not None:
        out["skin"] = float(skin)
    return out


def state_md_settings(job, make_system, T_red):
    """The MD settings of the energy route at a state: the time step at T_red and the skin of
    the state's density (:func:`md_skin`)."""
    system = make_system()
    rc = system.model.rc if job.study.gas.molecules is not None else system.pairs.rc_max
    return md_settings(job.md_time_step(T_red), md_skin(system.density, float(rc)))


def cost_coefficient(job, chain):
    """CPU seconds a piloted chain needs to bring the stderr of its key series to 1 (reduced).

    The pilot's CPU rate per particle x unit (its ledger row, equilibration
    included) times its particles times the units of its samples times its
    squared standard error: stderr^2 falls as 1 / (units of run), so this is
    the CPU time per unit of 1 / stderr^2.  Infinite when the pilot gave no
    finite error.
    """
    row = job.ledger.rows.get(chain.pilot_name)
    if row is None or not (row["units"] > 0) or not math.isfinite(chain.pilot_se):
        return math.inf
    rate = row["cpu_s"] / row["units"]
    return rate * chain.make_system().n_particles * chain.pilot_units * chain.pilot_se ** 2


def run_cost(chain):
    """Particles x units of run a piloted chain needs to bring the stderr of its key series to 1.

    The statistical part of :func:`cost_coefficient`, without the CPU rate: a
    number from the pilot's samples alone, so that decisions taken with it
    (how the target is split between the end states, which one is extended)
    are the same in every run of the task (CPU times differ between runs;
    ``docs/architecture.md`` section 5).  Infinite when the pilot gave no
    finite error.
    """
    if not math.isfinite(chain.pilot_se):
        return math.inf
    return chain.make_system().n_particles * chain.pilot_units * chain.pilot_se ** 2


def _piloted(job, chain, T_red):
    """Run (or read back) a chain's choice pilot, its kernels loaded first outside the timing."""
    if not job.stage_path(chain.pilot_name).is_file():
        from mdsim.sampling.state_point import sample_state_point
        try:
            sample_state_point(chain.make_system(), chain.method, T_red, n_equilibration=0,
                               n_samples=20, interval=1, seed=job.stage_seed(0),
                               **(chain.md_settings if chain.is_md else {}))
        except ConvergenceError:  # 20 samples from a start need not settle: not the point
            pass
    chain.run_pilot(CHOICE_PILOT_SAMPLES)
    chain.cost = cost_coefficient(job, chain)
    return chain


def piloted_chain(job, label, chain_id, make_system, T_red, sampler, share_hint):
    """The energy route's NVT chain at a state, piloted, with its sampler chosen.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
    label : str
        The state's stage label; with ``sampler = "auto"`` the chains are
        labelled ``LABEL-mc`` and ``LABEL-md``.
    chain_id : int
    make_system : callable
    T_red : float
        Reduced temperature.
    sampler : {"auto", "mc", "md"}
    share_hint : float
        About the standard error the chain will be run to (reduced): when
        the Monte Carlo pilot expects to reach it in less than
        :data:`COMPARE_ABOVE_CPU_S`, MD is not tried.

    Returns
    -------
    chain : mdsim.pipeline.chain.Chain
        Piloted (:meth:`Chain.run_pilot`), with ``chain.cost`` its
        :func:`cost_coefficient`.
    choice : dict
        ``sampler`` ("mc" or "md"), ``chosen_by`` ("study", "pilots" or
        "mc pilot": MD not worth a pilot) and, when chosen, ``cost_mc`` and
        ``cost_md`` (CPU seconds per unit of 1 / stderr^2, reduced; None when
        not measured).
    """
    make_system = StartCache.of(make_system)  # one start built for the pilots and chains
    md = state_md_settings(job, make_system, T_red) if sampler in ("auto", "md") else None
    if sampler != "auto":
        chain = job.new_chain(label, chain_id, make_system, SAMPLER_METHODS[sampler],
                              T_red=T_red, md_settings=md if sampler == "md" else None).run_pilot()
        chain.cost = cost_coefficient(job, chain)
        return chain, {"sampler": sampler, "chosen_by": "study"}
    path = job.rd.stages_dir(job.index) / f"{label}-sampler.json"
    chains = {kind: Chain(job, f"{label}-{kind}", chain_id, make_system, method, T_red=T_red,
                          md_settings=md if kind == "md" else None)
              for kind, method in SAMPLER_METHODS.items()}
    if path.is_file():
        choice = json.loads(path.read_text(encoding="utf-8"))
        chain = chains[choice["sampler"]].run_pilot(CHOICE_PILOT_SAMPLES)
        chain.cost = choice[f"cost_{choice['sampler']}"]
        return chain, choice
    mc = _piloted(job, chains["mc"], T_red)
    choice = {"sampler": "mc", "cost_mc": mc.cost, "cost_md": None, "chosen_by": "mc pilot"}
    if not mc.cost / share_hint ** 2 < COMPARE_ABOVE_CPU_S:
        md_chain = _piloted(job, chains["md"], T_red)
        choice.update(cost_md=md_chain.cost, chosen_by="pilots",
                      sampler="md" if md_chain.cost < mc.cost else "mc")
    atomic_write_text(path, json.dumps(choice))
    return chains[choice["sampler"]], choice


def split_share(total_se, cost_a, cost_b):
    """Standard errors of two independent means whose combined error is ``total_se``, at least cost.

    Reaching a standard error s costs C / s^2 CPU seconds for a chain of
    cost coefficient C (:func:`cost_coefficient`);
    the least total cost with s_a^2 + s_b^2 = total_se^2 puts
    s_a^2 = total_se^2 sqrt(C_a) / (sqrt(C_a) + sqrt(C_b)) (a Lagrange
    multiplier; common practice in allocating samples, no source).  Without
    two finite positive coefficients the split is even.

    >>> [round(s, 4) for s in split_share(1.0, 4.0, 1.0)]  # the dearer chain gets more error
    [0.8165, 0.5774]
    >>> [round(s, 4) for s in split_share(1.0, float("inf"), 1.0)]
    [0.7071, 0.7071]
    """
    ok = all(math.isfinite(c) and c > 0.0 for c in (cost_a, cost_b))
    w_a = math.sqrt(cost_a) / (math.sqrt(cost_a) + math.sqrt(cost_b)) if ok else 0.5
    return total_se * math.sqrt(w_a), total_se * math.sqrt(1.0 - w_a)
