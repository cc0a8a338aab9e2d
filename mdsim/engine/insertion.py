"""Test-particle insertion (Widom): the residual chemical potential from canonical samples.

A test particle of species a placed at a uniformly random point of a
sampled configuration, and not kept, has the energy dU with all particles;
the residual chemical potential is

    mu_res,a = -kT ln < exp(-dU / kT) >

averaged over the canonical configurations and the insertion points
(B. Widom, J. Chem. Phys. 39, 2808, 1963; Frenkel and Smit, Understanding
Molecular Simulation, 2nd ed., section 7.2.1).  The kernel
:func:`insertion_sums` evaluates dU of the truncated pair potential through
the Monte Carlo linked cells (:mod:`mdsim.engine.mc_cells`); the long-range
tail of the inserted particle is a constant at fixed density and is added
by the caller (:func:`insertion_tail`).

:class:`InsertionSampler` is canonical Monte Carlo (:class:`MCSampler`,
method "mc-nvt") that, at every sample, makes a number of insertions per
species and records the mean Boltzmann factor and its square, so that a run
file holds everything the chemical potential and its error need.  It
follows the sampler protocol of :mod:`mdsim.sampling.state_point`.

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate, ``_c`` cell,
``_a`` species.  Reduced units throughout.
"""
import math

import numpy as np
from numba import njit

from mdsim.checks import count
from mdsim.engine import rng as _rng
from mdsim.engine.forms import RC
from mdsim.engine.mc_kernels import species_energy
from mdsim.engine.montecarlo import MCSampler

__all__ = ["insertion_sums", "inserted_particle_energy", "insertion_tail", "InsertionSampler",
           "METHOD", "factor_key", "factor_square_key", "insertion_stream",
           "saved_insertion_stream", "run_with_insertions"]

METHOD = "mc-nvt-insertion"
"""The sampler method name of canonical Monte Carlo with test-particle insertions."""


def factor_key(species):
    """Sample series of the mean Boltzmann factor of the insertions of one species."""
    return f"insertion_factor_{int(species)}"


def factor_square_key(species):
    """Sample series of the mean squared Boltzmann factor (for the effective sample count)."""
    return f"insertion_factor_sq_{int(species)}"


def insertion_stream(seed):
    """The random stream of the insertions of a sampler seeded with ``seed``: the same seed
    followed by 1, apart from the sampler's own stream.

    >>> bool((insertion_stream([3, 1]) == _rng.make_state([3, 1, 1])).all())
    True
    """
    seed_list = list(seed) if isinstance(seed, (list, tuple)) else [int(seed)]
    return _rng.make_state(seed_list + [1])


def saved_insertion_stream(state, sampler):
    """The insertion stream saved in a sampler state (a copy), or a StudyError naming the
    ``sampler`` class whose ``get_state`` makes it."""
    if "insertion_rng_state" not in state:
        from mdsim.errors import StudyError
        raise StudyError(f"test-particle insertion state is missing 'insertion_rng_state'; "
                         f"it must come from {sampler}.get_state")
    return np.asarray(state["insertion_rng_state"]).astype(np.uint64).copy()


def run_with_insertions(run_once, sums, n_species, n_samples, insertions):
    """Samples of a canonical run, each followed by insertions of every species.

    Parameters
    ----------
    run_once : callable
        ``run_once()`` -> dict of the sampler's observables, arrays of one sample.
    sums : callable
        ``sums(a)`` -> (sum exp(-dU/kT), sum exp(-2 dU/kT)) over ``insertions``
        test particles of species a in the current configuration.
    n_species, n_samples, insertions : int

    Returns
    -------
    dict of ndarray, each shape=(n_samples,)
        The observables plus, per species a, :func:`factor_key` (the mean
        Boltzmann factor of a sample's insertions) and
        :func:`factor_square_key` (the mean of its square).
    """
    blocks = []
    extra = {k(a): np.empty(n_samples) for a in range(n_species)
             for k in (factor_key, factor_square_key)}
    for t in range(n_samples):
        blocks.append(run_once())
        for a in range(n_species):
            s1, s2 = sums(a)
            extra[factor_key(a)][t] = s1 / insertions
            extra[factor_square_key(a)][t] = s2 / insertions
    out = {k: np.concatenate([b[k] for b in blocks]) for k in blocks[0]}
    out.update(extra)
    return out


@njit(cache=True)
def inserted_particle_energy(x, y, z, s_test, r_ni, species_n, params_ab, form, table, box_i,
                             ncell_i, head_c, next_n):
    """Truncated pair energy of a test particle of species ``s_test`` at (x, y, z).

    Every particle counts (the test particle is not one of them).  Returns
    +inf as soon as one pair is inside a hard core.
    """
    return species_energy(-1, s_test, x, y, z, r_ni, species_n, params_ab, form, table, box_i,
                          ncell_i, head_c, next_n)


@njit(cache=True)
def insertion_sums(r_ni, species_n, params_ab, form, table, box_i, ncell_i, head_c, next_n,
                   s_test, beta, n_trials, rng_state):
    """Sums of exp(-beta dU) and exp(-2 beta dU) over ``n_trials`` random insertions.

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64, positions in [0, box)
    species_n : ndarray, shape=(n,), int64
    params_ab : ndarray, shape=(n_species, n_species, N_PARAM), float64
    form : int
    table : ndarray, float64
    box_i : ndarray, shape=(3,), float64
    ncell_i, head_c, next_n : ndarray, int64
        The linked cells of the positions (:func:`mdsim.engine.mc_cells.build_cells`).
    s_test : int
        Species of the test particle.
    beta : float
        1 / kT, reduced.
    n_trials : int
    rng_state : ndarray, shape=(4,), uint64
        Advanced in place.

    Returns
    -------
    (float, float)
        sum exp(-beta dU), sum exp(-2 beta dU) (truncated potential; an
        overlap contributes 0).
    """
    s1 = 0.0
    s2 = 0.0
    for _ in range(n_trials):
        x = _rng.uniform(rng_state) * box_i[0]
        y = _rng.uniform(rng_state) * box_i[1]
        z = _rng.uniform(rng_state) * box_i[2]
        du = inserted_particle_energy(x, y, z, s_test, r_ni, species_n, params_ab, form, table,
                                  box_i, ncell_i, head_c, next_n)
        if du < np.inf:
            w = math.exp(-beta * du)
            s1 += w
            s2 += w * w
    return s1, s2


def insertion_tail(system, species=0):
    """Long-range tail energy of one inserted particle of a species, reduced.

    Parameters
    ----------
    system : mdsim.engine.system.System
    species : int

    Returns
    -------
    float
        dU_tail = 4 pi rho sum_b x_b int_rc^inf u_ab(r) r^2 dr, twice the
        tail energy per particle of a one-component fluid.

    Notes
    -----
    Adding one particle of species a to N_b particles of each species b
    changes U_tail = (2 pi / V) sum_ab N_a N_b I_ab by (4 pi / V) sum_b N_b
    I_ab in the thermodynamic limit, with g(r) = 1 beyond the cut-off
    (Frenkel and Smit, 2nd ed., section 7.2.1: mu_tail = 2 u_tail).

    Examples
    --------
    >>> from mdsim.engine import LennardJones, PairMatrix, System
    >>> s = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], cutoff=3.0), [500], 0.5)
    >>> round(insertion_tail(s) / float(s.tail()[0]), 12)
    2.0
    """
    pairs = system.pairs
    x_b = system.fractions_a
    total = 0.0
    for b in range(pairs.n_species):
        i_u, _ = pairs.pots[species][b].tail_integrals(pairs.params_ab[species, b, RC])
        total += x_b[b] * i_u
    return float(4.0 * math.pi * system.density * total)


class InsertionSampler:
    """Canonical Monte Carlo with test-particle insertions at every sample.

    Parameters
    ----------
    system : System
        As :class:`mdsim.engine.montecarlo.MCSampler`.
    temperature : float
        kT, reduced.
    seed : int or list of int
        Seed of the Monte Carlo stream; the insertions draw from a second
        stream seeded with ``seed`` followed by 1 (saved with the state).
    method : str, optional
        :data:`METHOD` (the only one).
    insertions : int, optional
        Test particles per species at each sample (default: the number of
        particles, so an insertion pass costs about one sweep).
    energy : None
        Not allowed (the protocol passes it).
    **mc_settings
        ``max_displacement``, ``target_acceptance`` for the Monte Carlo moves.

    Notes
    -----
    Each sample adds, per species a, ``insertion_factor_a`` = the mean of
    exp(-dU_trunc / kT) over the insertions and ``insertion_factor_sq_a``
    the mean of its square to the Monte Carlo observables.
    """

    def __init__(self, system, *, temperature=None, energy=None, seed, method=METHOD,
                 insertions=None, **mc_settings):
        from mdsim.errors import StudyError
        if method != METHOD or energy is not None:
            raise StudyError(f"test-particle insertion: method {method!r} with energy "
                             f"{energy!r}; it runs {METHOD!r} at a temperature only")
        self.mc = MCSampler(system, temperature=temperature, seed=seed, method="mc-nvt",
                            **mc_settings)
        self.method = METHOD
        self.system = system
        self.insertions = count("insertions", system.n_particles if insertions is None
                                else insertions, 1, "test particles per species and sample")
        self.insertion_state = insertion_stream(seed)

    @property
    def n_particles(self):
        return self.mc.n_particles

    def positions(self):
        return self.mc.r_ni.copy()

    def equilibrate(self, n_steps):
        """Monte Carlo sweeps with step tuning (no insertions)."""
        self.mc.equilibrate(n_steps)

    def run(self, n_samples, interval):
        """The Monte Carlo observables of :meth:`MCSampler.run` plus the insertion factors."""
        n_samples = count("samples", n_samples, 1, "number of recorded samples")
        mc = self.mc
        beta = 1.0 / mc.temperature

        def sums(a):
            return insertion_sums(mc.r_ni, mc.species_n, mc.params_ab, mc.form, mc.table,
                                  mc.box_i, mc.ncell_i, mc.head_c, mc.next_n, a, beta,
                                  self.insertions, self.insertion_state)
        return run_with_insertions(lambda: mc.run(1, interval), sums, mc.params_ab.shape[0],
                                   n_samples, self.insertions)

    def get_state(self):
        state = self.mc.get_state()
        state["insertion_rng_state"] = self.insertion_state.copy()
        return state

    def set_state(self, state):
        stream = saved_insertion_stream(state, "InsertionSampler")
        self.mc.set_state(state)
        self.insertion_state = stream

    def settings(self):
        out = self.mc.settings()
        out.update(method=METHOD, insertions_per_species=int(self.insertions),
                   insertion_tail_red=np.array([insertion_tail(self.system, a) for a in
                                                range(self.mc.params_ab.shape[0])]))
        return out
