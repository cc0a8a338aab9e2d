"""Sample one state point: build the sampler, equilibrate, produce, store, summarise.

:func:`sample_state_point` drives any sampler that follows the project's
sampler protocol (``MCSampler`` for "mc-nvt"/"mc-nve", ``MDSampler`` for
"md-nvt"/"md-nve"), streams the samples into one HDF5 run file
(:mod:`mdsim.sampling.store`) with a checkpoint after every block, and resumes an
interrupted run from its ``NAME.h5.part`` file.  Because the samplers are
deterministic given their state, a resumed run gives exactly the numbers of
an uninterrupted one.

All numbers here are reduced units of the system (energies per particle in
epsilon, pressure in epsilon/sigma^3, kT/epsilon, heat capacity per particle
in k).  Array suffix ``_t``: a time series of samples.
"""
import dataclasses
import importlib
import math
import numbers
from pathlib import Path

import numpy as np

from mdsim.errors import ConvergenceError, StudyError
from mdsim.sampling import store as _store

# method -> (module, class); one dictionary maps the study's words to the code.
METHODS = {
    "mc-nvt": ("mdsim.engine.montecarlo", "MCSampler"),
    "mc-nve": ("mdsim.engine.montecarlo", "MCSampler"),
    "md-nvt": ("mdsim.engine.md", "MDSampler"),
    "md-nve": ("mdsim.engine.md", "MDSampler"),
}
CANONICAL = ("mc-nvt", "md-nvt")
DEFAULT_CHECKPOINT_EVERY = 100


@dataclasses.dataclass(frozen=True)
class Estimate:
    """A summary number with its standard error, or the reason it is missing.

    Attributes
    ----------
    value, stderr : float
        NaN when unavailable.
    g : float
        Statistical inefficiency of the series behind it (NaN if none).
    reason : str
        Empty when available; otherwise why the number cannot be given.
    """

    value: float
    stderr: float
    g: float = math.nan
    reason: str = ""

    @property
    def available(self):
        return not self.reason

    @classmethod
    def missing(cls, reason):
        return cls(math.nan, math.nan, math.nan, reason)

    def as_dict(self):
        out = {"value": self.value, "stderr": self.stderr}
        if self.reason:
            out["unavailable"] = self.reason
        return out


@dataclasses.dataclass
class SampleResult:
    """What :func:`sample_state_point` returns.

    Attributes
    ----------
    samples : dict of ndarray, each shape=(n_samples,), float64
        The observables of the production run (protocol names).
    summary : dict of Estimate
        "u_full" (mean configurational energy per particle, full potential),
        "pressure" (total), "c_v_res" (residual heat capacity per particle,
        in k), "temperature" (kT; the set value for the canonical methods,
        the estimate for the microcanonical ones).
    settings : dict
        The settings stored as file attributes.
    path : Path or None
        The completed run file.
    resumed : bool
        True if the run continued from an interrupted file (or was read
        back from a completed one).
    """

    samples: dict
    summary: dict
    settings: dict
    path: Path = None
    resumed: bool = False


def _sampler_class(method):
    if method not in METHODS:
        raise StudyError(f"setting 'method' = {method!r}: unknown; allowed "
                         f"{', '.join(METHODS)}")
    module, name = METHODS[method]
    return getattr(importlib.import_module(module), name)


def _count(name, value, low, hint):
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or int(value) < low:
        raise StudyError(f"setting '{name}' = {value!r}: must be a whole number >= {low} ({hint})")
    return int(value)


def _seed_attr(seed):
    if isinstance(seed, (list, tuple, np.ndarray)):
        return np.asarray([int(s) for s in seed], dtype=np.int64)
    return int(seed)


def _settings_match(stored, wanted):
    """Names of settings whose stored values differ from the wanted ones."""
    bad = []
    for key, value in wanted.items():
        have = stored.get(key)
        if isinstance(value, np.ndarray) or isinstance(have, np.ndarray):
            same = np.array_equal(np.asarray(have), np.asarray(value))
        elif isinstance(value, float) and isinstance(have, float) and math.isnan(value):
            same = math.isnan(have)
        else:
            same = have == value
        if not same:
            bad.append(f"{key} (file {have!r}, now {value!r})")
    return bad


def _final_configuration(sampler, system):
    """(positions, box, velocities or None) in the system's particle order."""
    state = sampler.get_state()
    get_r = getattr(sampler, "positions", None)
    r_ni = get_r() if callable(get_r) else state["positions"]
    get_v = getattr(sampler, "velocities", None)
    v_ni = get_v() if callable(get_v) else state.get("velocities")
    box_i = state.get("box_i", system.box_i)
    return r_ni, box_i, v_ni


def summarise(samples, method, n_particles, volume, temperature=None, dof_per_particle=3):
    """Means and standard errors of a run's observables.

    Parameters
    ----------
    samples : dict of ndarray
        Protocol observables ("u_full", "pressure", "pressure_conf", and
        "kinetic" for mc-nve, "temperature_inst" for MD).
    method : str
    n_particles : int
    volume : float
        Box volume, sigma^3.
    temperature : float, optional
        The set kT for canonical methods.
    dof_per_particle : int
        f for the microcanonical estimator (mc-nve).

    Returns
    -------
    dict of Estimate
        "u_full", "pressure", "c_v_res", "temperature".

    Notes
    -----
    c_v_res = N Var(u_full) / T^2 per particle in k (canonical fluctuation
    formula, Var of the per-particle energy).  For mc-nve the temperature
    is 1/kT = (F/2 - 1) <1/(E - U)> (Ray, Phys. Rev. A 44, 4061, 1991), its
    error by the delta method; the pressure is rho kT + <p_conf> with the two
    errors added in quadrature (their covariance neglected).  The canonical
    fluctuation formula does not hold at fixed energy, so c_v_res is
    reported unavailable for the NVE methods.
    """
    from analysis.stats import mean_and_stderr, variance_and_stderr
    n = int(n_particles)
    rho = n / float(volume)
    out = {}
    try:
        u = mean_and_stderr(samples["u_full"])
    except ConvergenceError as exc:
        raise ConvergenceError(f"energy: {exc}", partial=exc.partial) from None
    out["u_full"] = Estimate(u.mean, u.stderr, u.g)
    if method in CANONICAL:
        T = float(temperature)
        out["temperature"] = Estimate(T, 0.0, math.nan)
        if method == "md-nvt" or np.all(np.isfinite(samples["pressure"])):
            p = mean_and_stderr(samples["pressure"])
            out["pressure"] = Estimate(p.mean, p.stderr, p.g)
        var = variance_and_stderr(samples["u_full"])
        out["c_v_res"] = Estimate(n * var.value / T ** 2, n * var.stderr / T ** 2, var.g)
    elif method == "md-nve":
        t = mean_and_stderr(samples["temperature_inst"])
        out["temperature"] = Estimate(t.mean, t.stderr, t.g)
        p = mean_and_stderr(samples["pressure"])
        out["pressure"] = Estimate(p.mean, p.stderr, p.g)
        out["c_v_res"] = Estimate.missing(
            "the canonical fluctuation formula does not apply at constant energy; sample this "
            "state point with md-nvt or mc-nvt for the heat capacity")
    else:  # mc-nve
        f_total = float(dof_per_particle) * n
        inv = mean_and_stderr(1.0 / (n * np.asarray(samples["kinetic"], dtype=float)))
        T = 1.0 / ((0.5 * f_total - 1.0) * inv.mean)
        sT = T * inv.stderr / inv.mean
        out["temperature"] = Estimate(T, sT, inv.g)
        pc = mean_and_stderr(samples["pressure_conf"])
        out["pressure"] = Estimate(rho * T + pc.mean, math.hypot(rho * sT, pc.stderr), pc.g)
        out["c_v_res"] = Estimate.missing(
            "the canonical fluctuation formula does not apply at constant energy; sample this "
            "state point with mc-nvt or md-nvt for the heat capacity")
    return out


def sample_state_point(system, method, temperature=None, energy=None, *, n_equilibration,
                       n_samples, interval=1, seed=0, path=None,
                       checkpoint_every=DEFAULT_CHECKPOINT_EVERY, progress=None,
                       attrs=None, **method_settings):
    """Equilibrate and sample one state point, streaming to a run file.

    Parameters
    ----------
    system : System
        Box, species, interactions and a start configuration (reduced units).
    method : {"mc-nvt", "mc-nve", "md-nvt", "md-nve"}
    temperature : float, optional
        kT, reduced (canonical methods).
    energy : float, optional
        Total energy per particle, reduced (mc-nve).
    n_equilibration : int
        Equilibration steps (MD steps or MC sweeps), not recorded.
    n_samples : int
        Production samples (>= 20 for the standard errors).
    interval : int
        Steps or sweeps between samples.
    seed : int or list of int
        Seed of the sampler's random stream.
    path : str or Path, optional
        Run file ``NAME.h5``.  If it exists and is complete, it is read back
        instead of run again; if ``NAME.h5.part`` exists, the run resumes
        from its checkpoint.  Without a path nothing is written.
    checkpoint_every : int
        Production samples per block; the block is written and the sampler
        state checkpointed after each.
    progress : callable, optional
        Called as ``progress(samples_done, n_samples)`` after each block.
    attrs : dict, optional
        Extra attributes for the run file (units, study name, ...).
    **method_settings
        Passed to the sampler (for example ``max_displacement``,
        ``time_step``, ``dof_per_particle``).

    Returns
    -------
    SampleResult

    Raises
    ------
    StudyError
        Bad settings, or a run file made with different settings.
    """
    cls = _sampler_class(method)
    n_equilibration = _count("equilibration", n_equilibration, 0, "steps or sweeps")
    n_samples = _count("samples", n_samples, 20, "at least 20 for a standard error; "
                       "typically 1000 to 100000")
    interval = _count("interval", interval, 1, "steps or sweeps between samples")
    checkpoint_every = _count("checkpoint_every", checkpoint_every, 1, "samples per block")
    sampler = cls(system, temperature=temperature, energy=energy, seed=seed, method=method,
                  **method_settings)
    if getattr(sampler, "method", method) != method:
        raise StudyError(f"setting 'method' = {method!r}: the sampler chose {sampler.method!r}; "
                         "give 'temperature' for NVT methods and 'energy' for mc-nve")
    run_settings = {
        "method": method,
        "n_particles": int(system.n_particles),
        "volume_red": float(system.volume),
        "temperature_red": math.nan if temperature is None else float(temperature),
        "energy_red": math.nan if energy is None else float(energy),
        "n_equilibration": n_equilibration,
        "n_samples": n_samples,
        "interval": interval,
        "seed": _seed_attr(seed),
    }
    for key, value in method_settings.items():
        run_settings[f"setting_{key}"] = value if isinstance(value, (str, int, float, bool)) \
            else str(value)
    dof = int(getattr(sampler, "dof_per_particle", 0) or system.dof_per_particle)

    def finish(samples, path_done, resumed):
        summary = summarise(samples, method, system.n_particles, system.volume, temperature, dof)
        return SampleResult(samples, summary, run_settings, path_done, resumed)

    if path is None:
        sampler.equilibrate(n_equilibration)
        blocks = []
        done = 0
        while done < n_samples:
            m = min(checkpoint_every, n_samples - done)
            blocks.append(sampler.run(m, interval))
            done += m
            if progress is not None:
                progress(done, n_samples)
        samples = {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]}
        return finish(samples, None, False)

    path = Path(path)
    if path.is_dir():
        raise StudyError(f"output file '{path}' is a directory; choose another output name")
    if _store.check_finished(path):  # a damaged file is moved aside and the run done again
        stored = _store.read_attrs(path)
        bad = _settings_match(stored, run_settings)
        if bad:
            raise StudyError(f"output file '{path}' holds a run with other settings: "
                             f"{'; '.join(bad)}; choose another output name or delete it")
        return finish(_store.read_samples(path), path, True)

    writer = None
    resumed = False
    done = 0
    reopened = _store.open_resumable(path)  # a damaged .part is moved aside: start again
    if reopened is not None:
        writer, saved = reopened
        bad = _settings_match(writer.attrs, run_settings)
        if bad:
            writer.close()
            raise StudyError(f"interrupted run file '{_store.part_path(path)}' was made with other "
                             f"settings: {'; '.join(bad)}; delete it or choose another output name")
        if saved is None:  # stopped during equilibration: nothing to continue from
            writer.close()
            writer = None
        else:
            state, info = saved
            sampler.set_state(state)
            done = int(info["n_samples_done"])
            writer.truncate(done)
            resumed = True
    try:
        if writer is None:
            init_state = sampler.get_state()
            file_attrs = dict(run_settings)
            file_attrs.update({f"sampler_{k}": v for k, v in sampler.settings().items()
                               if k not in ("method",)})
            if "rng_state" in init_state:
                file_attrs["rng_state_initial"] = np.asarray(init_state["rng_state"])
            file_attrs.update(attrs or {})
            writer = _store.RunWriter.create(path, file_attrs)
            sampler.equilibrate(n_equilibration)
            writer.write_checkpoint(sampler.get_state(), 0, phase="production")
        while done < n_samples:
            m = min(checkpoint_every, n_samples - done)
            block = sampler.run(m, interval)
            writer.append(block)
            done += m
            writer.write_checkpoint(sampler.get_state(), done, phase="production")
            if progress is not None:
                progress(done, n_samples)
        writer.write_final(*_final_configuration(sampler, system))
        writer.set_attrs({f"sampler_final_{k}": v for k, v in sampler.settings().items()
                          if k not in ("method",)})
        samples = {k: np.array(v[()]) for k, v in writer.file["samples"].items()}
        writer.complete()
    finally:
        if writer is not None:
            writer.close()
    return finish(samples, path, resumed)
