"""Sample one state point: build the sampler, equilibrate, produce, store, summarise.

:func:`sample_state_point` drives any sampler that follows the project's
sampler protocol (``MCSampler`` for "mc-nvt"/"mc-nve", ``MDSampler`` for
"md-nvt"/"md-nve", ``InsertionSampler`` for "mc-nvt-insertion",
:class:`~mdsim.sampling.rigid_stage.RigidMCStageSampler` for rigid molecules,
"rigid-mc-nvt", with test-molecule insertions
:class:`~mdsim.sampling.rigid_insertion_stage.RigidInsertionStageSampler`,
"rigid-mc-nvt-insertion", :class:`~mdsim.sampling.body_stage.BodyMCStageSampler`
and :class:`~mdsim.sampling.body_md_stage.BodyMDStageSampler` for non-linear
molecules, "rigid-body-mc-nvt" and "rigid-body-md-nvt", with test-body insertions
:class:`~mdsim.sampling.body_insertion_stage.BodyInsertionStageSampler`,
"rigid-body-mc-nvt-insertion", and
:class:`~mdsim.sampling.rigid_md_stage.RigidMDStageSampler`,
"rigid-md-nvt"/"rigid-md-nve"), streams the samples into one HDF5 run file
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
from pathlib import Path

import numpy as np

from mdsim.checks import count
from mdsim.errors import StudyError
from mdsim.sampling import store as _store
from mdsim.sampling.estimates import summarise

__all__ = ["sample_state_point", "SampleResult", "METHODS", "DEFAULT_CHECKPOINT_EVERY"]

# method -> (module, class); one dictionary maps the study's words to the code.
METHODS = {
    "mc-nvt": ("mdsim.engine.montecarlo", "MCSampler"),
    "mc-nve": ("mdsim.engine.montecarlo", "MCSampler"),
    "md-nvt": ("mdsim.engine.md", "MDSampler"),
    "md-nve": ("mdsim.engine.md", "MDSampler"),
    "mc-nvt-insertion": ("mdsim.engine.insertion", "InsertionSampler"),
    "rigid-mc-nvt": ("mdsim.sampling.rigid_stage", "RigidMCStageSampler"),
    "rigid-mc-nvt-insertion": ("mdsim.sampling.rigid_insertion_stage",
                               "RigidInsertionStageSampler"),
    "rigid-body-mc-nvt": ("mdsim.sampling.body_stage", "BodyMCStageSampler"),
    "rigid-body-mc-nvt-insertion": ("mdsim.sampling.body_insertion_stage",
                                    "BodyInsertionStageSampler"),
    "rigid-body-md-nvt": ("mdsim.sampling.body_md_stage", "BodyMDStageSampler"),
    "rigid-md-nvt": ("mdsim.sampling.rigid_md_stage", "RigidMDStageSampler"),
    "rigid-md-nve": ("mdsim.sampling.rigid_md_stage", "RigidMDStageSampler"),
}
DEFAULT_CHECKPOINT_EVERY = 100


@dataclasses.dataclass
class SampleResult:
    """What :func:`sample_state_point` returns.

    Attributes
    ----------
    samples : dict of ndarray, each shape=(n_samples,), float64
        The observables of the production run (protocol names).
    summary : dict of mdsim.sampling.estimates.Estimate
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


def sample_state_point(system, method, temperature=None, energy=None, *, n_equilibration,
                       n_samples, interval=1, seed=0, path=None,
                       checkpoint_every=DEFAULT_CHECKPOINT_EVERY, progress=None,
                       attrs=None, **method_settings):
    """Equilibrate and sample one state point, streaming to a run file.

    Parameters
    ----------
    system : System
        Box, species, interactions and a start configuration (reduced units).
    method : {"mc-nvt", "mc-nve", "md-nvt", "md-nve", "mc-nvt-insertion"}
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

    Examples
    --------
    Canonical Monte Carlo of a small Lennard-Jones fluid, in memory (no ``path``):

    >>> from mdsim.engine import LennardJones, PairMatrix, System
    >>> pairs = PairMatrix([LennardJones(1.0, 1.0)], cutoff=2.5)
    >>> system = System.cubic(pairs, [64], 0.5).place_on_lattice(seed=1)
    >>> res = sample_state_point(system, "mc-nvt", temperature=2.0, n_equilibration=200,
    ...                          n_samples=100, interval=2, seed=4)
    >>> res.samples["u_full"].shape
    (100,)
    >>> sorted(res.summary)
    ['c_v_res', 'pressure', 'temperature', 'u_full']
    >>> res.summary["temperature"].value   # the set kT of a canonical method
    2.0
    >>> round(res.summary["u_full"].value, 1)   # energy per particle, tail included
    -3.1
    """
    cls = _sampler_class(method)
    counts = _checked_counts(n_equilibration, n_samples, interval, checkpoint_every)
    sampler = _make_sampler(cls, system, method, temperature, energy, seed, method_settings)
    run_settings = _run_settings(system, method, temperature, energy, seed, counts,
                                 method_settings)
    if path is None:
        samples, resumed = _sample_in_memory(sampler, counts, progress), False
    else:
        path = Path(path)
        samples, resumed = _sample_with_file(sampler, system, path, run_settings, attrs, counts,
                                             progress)
    dof = int(getattr(sampler, "dof_per_particle", 0) or system.dof_per_particle)
    summary = summarise(samples, method, system.n_particles, system.volume, temperature, dof)
    return SampleResult(samples, summary, run_settings, path, resumed)


# -- validation and set-up ------------------------------------------------------------------

def _checked_counts(n_equilibration, n_samples, interval, checkpoint_every):
    """(n_equilibration, n_samples, interval, checkpoint_every) as checked whole numbers."""
    return (count("equilibration", n_equilibration, 0, "steps or sweeps"),
            count("samples", n_samples, 20, "at least 20 for a standard error; "
                   "typically 1000 to 100000"),
            count("interval", interval, 1, "steps or sweeps between samples"),
            count("checkpoint_every", checkpoint_every, 1, "samples per block"))


def _make_sampler(cls, system, method, temperature, energy, seed, method_settings):
    """The sampler of ``method``, refusing one that chose another method from its inputs."""
    sampler = cls(system, temperature=temperature, energy=energy, seed=seed, method=method,
                  **method_settings)
    if getattr(sampler, "method", method) != method:
        raise StudyError(f"setting 'method' = {method!r}: the sampler chose {sampler.method!r}; "
                         "give 'temperature' for NVT methods and 'energy' for mc-nve")
    return sampler


def _run_settings(system, method, temperature, energy, seed, counts, method_settings):
    """The settings a run file records and a resumed or read-back run must match."""
    n_equilibration, n_samples, interval, _ = counts
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
    return run_settings


def _file_attrs(sampler, run_settings, attrs):
    """Attributes of a new run file: run and sampler settings, start of the random stream."""
    init_state = sampler.get_state()
    file_attrs = dict(run_settings)
    file_attrs.update({f"sampler_{k}": v for k, v in sampler.settings().items()
                       if k not in ("method",)})
    if "rng_state" in init_state:
        file_attrs["rng_state_initial"] = np.asarray(init_state["rng_state"])
    file_attrs.update(attrs or {})
    return file_attrs


# -- the sampling loops ------------------------------------------------------------------

def _sample_in_memory(sampler, counts, progress):
    """Equilibrate and sample without a file: {name: ndarray, shape=(n_samples,)}."""
    n_equilibration, n_samples, interval, checkpoint_every = counts
    sampler.equilibrate(n_equilibration)
    blocks = []
    done = 0
    while done < n_samples:
        m = min(checkpoint_every, n_samples - done)
        blocks.append(sampler.run(m, interval))
        done += m
        if progress is not None:
            progress(done, n_samples)
    return {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]}


def _read_finished(path, run_settings):
    """The samples of a sound finished run file with these settings, or None if there is none.

    A damaged file is moved aside (and the run done again); a sound one with
    other settings is refused.
    """
    if not _store.check_finished(path):
        return None
    bad = _settings_match(_store.read_attrs(path), run_settings)
    if bad:
        raise StudyError(f"output file '{path}' holds a run with other settings: "
                         f"{'; '.join(bad)}; choose another output name or delete it")
    return _store.read_samples(path)


def _reopen(path, sampler, run_settings):
    """Continue an interrupted ``NAME.h5.part``: (writer or None, samples done, resumed).

    The sampler is set to the checkpoint's state and samples written after
    it are dropped.  A damaged ``.part`` is moved aside, and one that stopped
    during equilibration is started again (writer None).
    """
    reopened = _store.open_resumable(path)
    if reopened is None:
        return None, 0, False
    writer, saved = reopened
    bad = _settings_match(writer.attrs, run_settings)
    if bad:
        writer.close()
        raise StudyError(f"interrupted run file '{_store.part_path(path)}' was made with other "
                         f"settings: {'; '.join(bad)}; delete it or choose another output name")
    if saved is None:  # stopped during equilibration: nothing to continue from
        writer.close()
        return None, 0, False
    state, info = saved
    sampler.set_state(state)
    done = int(info["n_samples_done"])
    writer.truncate(done)
    return writer, done, True


def _sample_with_file(sampler, system, path, run_settings, attrs, counts, progress):
    """Sample into the run file ``path``, checkpointing each block: (samples, resumed).

    A sound finished file is read back instead (resumed True), an
    interrupted one continued from its checkpoint.
    """
    if path.is_dir():
        raise StudyError(f"output file '{path}' is a directory; choose another output name")
    samples = _read_finished(path, run_settings)
    if samples is not None:
        return samples, True
    n_equilibration, n_samples, interval, checkpoint_every = counts
    writer, done, resumed = _reopen(path, sampler, run_settings)
    try:
        if writer is None:
            writer = _store.RunWriter.create(path, _file_attrs(sampler, run_settings, attrs))
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
    return samples, resumed
