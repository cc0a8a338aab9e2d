"""Vapour-liquid coexistence of a pair potential at one temperature, by the Gibbs ensemble.

:func:`coexistence_point` runs :class:`mdsim.engine.gibbs.GibbsSampler`
(equilibration with tuning, then production) and returns a
:class:`CoexistencePoint`: the coexisting densities, the residual energies
per particle and the vapour pressure with their standard errors, all in the
reduced units of the potential.  Given a cache folder (a run directory's
``coexistence/``, :attr:`mdsim.pipeline.rundir.RunDir.coexistence_dir`) a
point is written there once and read back by every later call with the same
potential and settings.

The model is the one every simulation route uses (``docs/physics.md``
sections 3 and 4): the pair potential truncated (not shifted) at
rc = cutoff x sigma, plus the analytic long-range tail of each box at its own
density.  Coexistence depends on this choice: the tail-corrected truncated
potential is close to, not equal to, the full potential (Smit, J. Chem.
Phys. 96, 8639, 1992).

Limits.  At low temperature few insertions into the liquid are accepted
(Lennard-Jones at T* = 0.9: 0.25 % of the attempts), and the particle
number of each box wanders slowly.  Eight runs at T* = 0.9 (rc = 3 sigma,
300 particles, 3000 + 6000 cycles, seeds 1 to 8; ``python -m
mdsim.bench.gibbs --seeds 8 --temperatures 0.9 --cycles 6000
--equilibration 3000``) gave means of rho_vap 0.01450, rho_liq 0.7523,
u_vap -0.1442, u_liq -5.309 (Thol 2016: 0.01446, 0.7528, -0.1460, -5.318);
their scatter is 1.4 times the root mean square of the reported errors for
each of the four (the ratio itself is known to about 27 % from eight runs):
a run of about a dozen slow correlation times cannot show all of its slow
mode.  Before the errors followed the whole production (Notes of
:func:`coexistence_point`) the ratio was 2.8 for rho_vap and 2.6 for u_vap
and the mean vapour density 7 % high.  Where it matters, run longer or
compare seeds.

Array suffix: ``_t`` sample.
"""
import math

import numpy as np

from analysis.covariate_error import mean_with_covariate
from analysis.block_error import production_mean
from analysis.stats import MIN_SAMPLES
from mdsim.checks import count, positive
from mdsim.engine.gibbs import GibbsSampler
from mdsim.engine.potentials import PairMatrix
from mdsim.errors import ConvergenceError, SettingError, StudyError
from mdsim.sampling.coexistence_cache import (TAIL_TREATMENT, CoexistencePoint, cache_file,
                                              cached_points, potential_fingerprint, read_cached,
                                              write_cached)

__all__ = ["CoexistencePoint", "coexistence_point", "start_densities_guess", "cache_file",
           "cached_points", "potential_fingerprint", "TAIL_TREATMENT",
           "PROGRESS_BLOCK_CYCLES", "DRIFT_LIMIT", "MAX_REFUSED_VOLUME_MOVES"]

# Lennard-Jones-shaped start guess of the coexisting densities (only the
# start of the run; the Gibbs ensemble finds the coexisting states): a
# rectilinear diameter and a one-third-power width fitted by eye to the
# Thol 2016 curve, critical point T* = 1.31, rho* = 0.31.
_GUESS_TC, _GUESS_RHOC, _GUESS_DIAMETER, _GUESS_WIDTH = 1.31, 0.31, 0.235, 0.538
_GUESS_MIN_VAPOUR = 0.003
# The vapour box starts this many times denser than the guess (at most halfway to
# the rectilinear diameter): a vapour started at or below its coexisting density
# (a truncated model's vapour is denser than the full potential's) draws particles
# out of the liquid until the liquid box is pressed against 2 rc, where volume
# moves are refused and the liquid is held below its density (measured: 10 to 17 %
# refused, rho_l 0.016 low at T* 0.80, rc 3, docs/physics.md 3.4a); a vapour
# started denser only returns a few particles to the liquid.
_VAPOUR_START_FACTOR = 3.0
MAX_REFUSED_VOLUME_MOVES = 0.01
"""Share of the production's volume moves that may be refused (a box would have shrunk below
2 rc) before the run is refused: above it the liquid box sat at 2 rc and its density is biased."""
# The liquid box must stay larger than twice the cut-off: it starts with
# this margin on its volume.
_LIQUID_BOX_MARGIN = 1.25
# Fewest particles the vapour box starts with.
_MIN_VAPOUR_PARTICLES = 20
# Boxes that swap roles (the denser one becoming the thinner) in more than
# this fraction of the samples are not two distinct phases.
_MAX_SWAPS = 0.02
DRIFT_LIMIT = 5.0
"""Standard errors apart the two halves of a production series may be before the run counts as
still drifting (a stationary series passes this with near certainty, even with its error
underestimated two-fold)."""
PROGRESS_BLOCK_CYCLES = 500
"""Cycles of a Gibbs run between two progress reports (a multiple of the sampler's ten-cycle
tuning groups, so that the blocks give the numbers of one uninterrupted run)."""


def start_densities_guess(T_red):
    """Start densities (vapour, liquid) of a Gibbs-ensemble run, Lennard-Jones-shaped.

    Only the start: the run finds the coexisting states.  The vapour starts
    about three times denser than the coexisting vapour (at most halfway to
    the mean of the two densities), so that the liquid box is not drained
    down to twice the cut-off (module comments).  Close to or above T* = 1.31
    both approach rho* = 0.31 (and the run will say that there is no
    coexistence).

    >>> [round(x, 3) for x in start_densities_guess(0.9)]
    [0.044, 0.752]
    """
    t = max(1.0 - positive("T_red", T_red, "reduced kT/epsilon") / _GUESS_TC, 0.02)
    mid = _GUESS_RHOC + _GUESS_DIAMETER * t
    half = _GUESS_WIDTH * t ** 0.325
    vapour = max(mid - half, _GUESS_MIN_VAPOUR)
    return min(_VAPOUR_START_FACTOR * vapour, 0.5 * (vapour + mid)), mid + half


def _start_split(pairs, n_particles, rho_vap, rho_liq):
    """Particles (vapour box, liquid box) at the start, the liquid box above 2 rc."""
    need = math.ceil(_LIQUID_BOX_MARGIN * rho_liq * (2.0 * pairs.rc_max) ** 3)
    n_liq = max(need, round(0.6 * n_particles))
    if n_particles - n_liq < _MIN_VAPOUR_PARTICLES:
        raise SettingError(
            "n_particles", n_particles,
            f"too few for the cut-off {pairs.rc_max:g} sigma: the liquid box must hold about "
            f"{need} particles to stay larger than twice the cut-off, and the vapour box at least "
            f"{_MIN_VAPOUR_PARTICLES}; use n_particles >= {need + 2 * _MIN_VAPOUR_PARTICLES}")
    return n_particles - n_liq, n_liq


def _phase_series(out):
    """(vapour, liquid) dictionaries of series, the phases told apart by density per sample."""
    rho_tb = out["particles"] / out["volume"]
    liq_t = np.argmax(rho_tb, axis=1)
    t = np.arange(liq_t.size)
    vap = {k: out[k][t, 1 - liq_t] for k in ("u_full", "pressure")}
    liq = {k: out[k][t, liq_t] for k in ("u_full", "pressure")}
    vap["rho"], liq["rho"] = rho_tb[t, 1 - liq_t], rho_tb[t, liq_t]
    vap["particles"] = out["particles"][t, 1 - liq_t]
    return vap, liq, liq_t


def coexistence_point(pairs, T_red, *, n_particles=300, equilibration_cycles=3000,
                      production_cycles=6000, sample_interval=5, seed=0, start_densities=None,
                      cache_dir=None, progress=None):
    """Coexisting vapour and liquid at one temperature by Gibbs-ensemble Monte Carlo.

    Parameters
    ----------
    pairs : PairMatrix
        The potential in reduced units (one species), with the cut-off the
        other routes use.
    T_red : float
        kT / epsilon, below the model's critical temperature.
    n_particles : int
        Particles in both boxes together (enough that the liquid box stays
        larger than twice the cut-off; 300 for rc = 3 sigma).
    equilibration_cycles, production_cycles, sample_interval, seed : int
        Cycles of N displacements, one volume exchange and the tuned
        transfers (moves tuned in equilibration only); cycles between
        samples; the random stream's seed.
    start_densities : (float, float), optional
        Start densities (vapour, liquid); default
        :func:`start_densities_guess`.
    cache_dir : path-like, optional
        Folder of cached points (a run directory's ``coexistence/``); a
        point computed with the same potential and settings is read back.
    progress : callable, optional
        Called as ``progress(cycles_done, cycles_total, (rho_low, rho_high))``
        every :data:`PROGRESS_BLOCK_CYCLES` cycles of a run (not for a
        cached point).

    Returns
    -------
    CoexistencePoint

    Raises
    ------
    ConvergenceError
        The series still drift at the end of the run (run longer).
    StudyError
        The boxes do not stay two distinct phases (the temperature is at or
        above the critical temperature of the model for this N), or the
        vapour box empties.

    Notes
    -----
    Gibbs-ensemble Monte Carlo (Panagiotopoulos, Mol. Phys. 61, 813, 1987).
    The phases are told apart by density in every sample (the boxes may
    swap roles).  The means are over the whole production after the tuned
    equilibration (no start cut: the particle exchange is a slow mode that
    a cut mistakes for a transient); the errors are
    :func:`analysis.block_error.production_mean`'s, an energy's or
    pressure's at least its box density's slow part carried through
    (:func:`analysis.covariate_error.mean_with_covariate`); series whose
    halves differ by more than :data:`DRIFT_LIMIT` errors are still
    drifting (ConvergenceError).  Measured figures: docs/physics.md.

    Examples
    --------
    A deliberately tiny run (rc = 2 sigma, 100 particles, few cycles): the
    liquid is much denser than its vapour.

    >>> from mdsim.engine.potentials import LennardJones, PairMatrix
    >>> pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.0)
    >>> pt = coexistence_point(pairs, 1.0, n_particles=100, equilibration_cycles=300,
    ...                        production_cycles=600, sample_interval=3, seed=1)
    >>> pt.rho_liq > 10 * pt.rho_vap
    True
    """
    if not isinstance(pairs, PairMatrix):
        raise TypeError("pairs must be an mdsim.engine.potentials.PairMatrix")
    T_red = positive("T_red", T_red, "reduced kT/epsilon")
    run = _checked_run(n_particles, equilibration_cycles, production_cycles, sample_interval, seed)
    path = None if cache_dir is None else cache_file(cache_dir, pairs, T_red, *run)
    if path is not None and (cached := read_cached(path)) is not None:
        return cached
    sampler, out, pressed = _run_gibbs(pairs, T_red, run, start_densities, progress)
    point = _summarise(out, sampler, T_red, run[1], run[2], pressed)
    if path is not None:
        write_cached(path, point)
    return point


def _checked_run(n_particles, equilibration_cycles, production_cycles, sample_interval, seed):
    """The run settings of :func:`coexistence_point` checked, as a tuple in the same order."""
    n_particles = count("n_particles", n_particles, 2, "particles in both boxes")
    equilibration_cycles = count("equilibration_cycles", equilibration_cycles, 0, "cycles")
    production_cycles = count("production_cycles", production_cycles, 1, "cycles")
    sample_interval = count("sample_interval", sample_interval, 1, "cycles between samples")
    seed = count("seed", seed, 0, "a whole number")
    n_samples = production_cycles // sample_interval
    if n_samples < 40:
        raise SettingError("production_cycles", production_cycles,
                           f"gives {n_samples} samples at sample_interval = {sample_interval}; "
                           "need at least 40 (more cycles or a shorter interval)")
    return n_particles, equilibration_cycles, production_cycles, sample_interval, seed


def _run_gibbs(pairs, T_red, run, start_densities, progress=None):
    """(sampler, its run output, (volume moves, refused) of the production): equilibrate, then produce, from the start densities.

    The run goes in blocks of about :data:`PROGRESS_BLOCK_CYCLES` cycles (the
    same numbers as one piece: the random stream continues, and the tuning
    groups of ten cycles are not cut); after each, ``progress(done, total,
    densities)`` with the cycles done and planned and the two boxes' current
    densities (lower first).
    """
    n_particles, equilibration_cycles, production_cycles, sample_interval, seed = run
    rho_vap0, rho_liq0 = start_densities_guess(T_red) if start_densities is None \
        else (positive("start_densities", start_densities[0], "vapour, reduced"),
              positive("start_densities", start_densities[1], "liquid, reduced"))
    n_vap0, n_liq0 = _start_split(pairs, n_particles, rho_vap0, rho_liq0)
    sampler = GibbsSampler(pairs, T_red, [n_liq0, n_vap0], [rho_liq0, rho_vap0], seed=seed)
    n_samples = production_cycles // sample_interval
    total = equilibration_cycles + n_samples * sample_interval

    def report(done):
        if progress is not None:
            progress(done, total, tuple(sorted(sampler.n_b / sampler.box_b ** 3)))
    done = 0
    while done < equilibration_cycles:
        m = min(PROGRESS_BLOCK_CYCLES, equilibration_cycles - done)
        sampler.equilibrate(m)
        done += m
        report(done)
    moves_before = (sampler.counters["volume_moves"], sampler.volume_moves_refused)
    per_block = max(1, PROGRESS_BLOCK_CYCLES // sample_interval)
    parts = []
    while sum(len(p["u_full"]) for p in parts) < n_samples:
        m = min(per_block, n_samples - sum(len(p["u_full"]) for p in parts))
        parts.append(sampler.run(m, sample_interval))
        done += m * sample_interval
        report(done)
    pressed = (sampler.counters["volume_moves"] - moves_before[0],
               sampler.volume_moves_refused - moves_before[1])
    return sampler, {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}, pressed


def _check_not_pressed(sampler, pressed, T_red):
    """Raise ConvergenceError when more than MAX_REFUSED_VOLUME_MOVES of the production's volume
    moves (``pressed``: tried, refused) were refused (a box held at twice the cut-off: its
    density is biased)."""
    tried, refused = pressed
    if tried and refused > MAX_REFUSED_VOLUME_MOVES * tried:
        raise ConvergenceError(
            f"Gibbs ensemble at T_red = {T_red:g}: {refused} of {tried} volume moves of the "
            f"production were refused because a box would have shrunk below twice the cut-off "
            f"({2.0 * sampler.rc:g} sigma): the liquid box is held there and its density is "
            "biased; use more particles (n_particles) or a shorter cut-off")


def _check_settled(x_t, name, T_red):
    """Raise ConvergenceError when the two halves of a production series differ by more than
    DRIFT_LIMIT combined standard errors (a run still drifting at its end)."""
    half = x_t.size // 2
    if half < MIN_SAMPLES:
        return
    (m1, s1), (m2, s2) = production_mean(x_t[:half]), production_mean(x_t[half:])
    if abs(m2 - m1) > DRIFT_LIMIT * math.hypot(s1, s2):
        raise ConvergenceError(
            f"Gibbs ensemble at T_red = {T_red:g}: {name} still drifts (the second half of the "
            f"production averages {m2:.4g}, the first {m1:.4g}, {abs(m2 - m1) / math.hypot(s1, s2):.1f} "
            "standard errors apart); run longer (more equilibration_cycles and production_cycles)")


def _summarise(out, sampler, T_red, equilibration_cycles, production_cycles, pressed):
    vap, liq, liq_t = _phase_series(out)
    swaps = np.count_nonzero(np.diff(liq_t)) / max(liq_t.size - 1, 1)
    if swaps > _MAX_SWAPS:
        raise StudyError(
            f"Gibbs ensemble at T_red = {T_red:g}: the two boxes swapped roles in {swaps:.0%} of "
            "the samples, so they are not two distinct phases: the temperature is at or above "
            "the critical temperature of the model for this number of particles; choose a lower "
            "T_red (the two-phase region ends there)")
    if np.any(vap["particles"] == 0):
        raise StudyError(
            f"Gibbs ensemble at T_red = {T_red:g}: the vapour box emptied; use more particles "
            "(n_particles) so that the vapour holds at least a few")
    _check_not_pressed(sampler, pressed, T_red)
    keys = (("rho", "rho"), ("u_full", "u"), ("pressure", "p"))
    phases = (("vap", vap), ("liq", liq))
    # the whole production, after the tuned equilibration (production_mean: no cut)
    est = {}
    for phase, series in phases:
        est[f"rho_{phase}"] = production_mean(series["rho"])
        for key, name in (("u_full", "u"), ("pressure", "p")):
            est[f"{name}_{phase}"] = mean_with_covariate(series[key], series["rho"])
    for phase, series in phases:
        for key, name in keys:
            _check_settled(series[key], f"{name}_{phase}", T_red)
    return CoexistencePoint(
        T_red=float(T_red),
        rho_vap=est["rho_vap"][0], rho_vap_err=est["rho_vap"][1],
        rho_liq=est["rho_liq"][0], rho_liq_err=est["rho_liq"][1],
        u_vap=est["u_vap"][0], u_vap_err=est["u_vap"][1],
        u_liq=est["u_liq"][0], u_liq_err=est["u_liq"][1],
        p_sat=est["p_vap"][0], p_sat_err=est["p_vap"][1],
        p_liq=est["p_liq"][0], p_liq_err=est["p_liq"][1],
        n_particles=int(sampler.n_particles), equilibration_cycles=int(equilibration_cycles),
        production_cycles=int(production_cycles), cutoff_red=float(sampler.rc),
        seed=str(sampler.seed), moves=sampler.settings())
