"""A periodic system: box, species, pair interactions and positions.

Everything here is in reduced units of the system's reference species
(energy epsilon_ref, length sigma_ref, mass m_ref; time sigma sqrt(m/eps)).

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate (3),
``_a`` species.
"""
import math

import numpy as np

from mdsim.checks import positive
from mdsim.engine import rng as _rng
from mdsim.errors import StudyError
from mdsim.engine.potentials import PairMatrix

# Densest packing of spheres of diameter sigma_core (fcc): rho = sqrt(2) / d^3.
CLOSE_PACKING = math.sqrt(2.0)




class System:
    """Particles of one or more species in an orthorhombic periodic box.

    Parameters
    ----------
    pairs : PairMatrix
        Interactions in reduced units.
    counts_a : sequence of int, shape=(n_species,)
        Number of particles of each species.
    box_i : sequence of float, shape=(3,)
        Box edge lengths.
    masses_a : sequence of float, optional
        Masses in units of the reference mass (default all 1).
    dof_per_particle : int, optional
        Kinetic degrees of freedom per particle used by the microcanonical
        route (3 for atoms, 5 for rigid linear molecules).

    Attributes
    ----------
    species_n : ndarray, shape=(n,), int64
    mass_n : ndarray, shape=(n,), float64
    r_ni : ndarray, shape=(n, 3), float64 (set by a start-configuration method)
    """

    def __init__(self, pairs, counts_a, box_i, masses_a=None, dof_per_particle=3):
        if not isinstance(pairs, PairMatrix):
            raise TypeError("pairs must be a PairMatrix")
        counts = [int(c) for c in counts_a]
        if len(counts) != pairs.n_species:
            raise StudyError(f"{len(counts)} particle counts for {pairs.n_species} species")
        if any(c < 0 for c in counts) or sum(counts) < 2:
            raise StudyError(f"setting 'particles' = {sum(counts)}: need at least 2 particles "
                             "(typically 200 to 4000)")
        box = np.array([positive("box", b) for b in np.ravel(box_i)], dtype=float)
        if box.size != 3:
            raise StudyError("the box needs three edge lengths")
        half = 0.5 * box.min()
        if pairs.rc_max > half:
            raise StudyError(
                f"cut-off {pairs.rc_max:.4g} sigma is larger than half the box ({half:.4g} sigma): "
                "use more particles, a higher density or a smaller 'cutoff'")
        self.pairs = pairs
        self.box_i = box
        self.counts_a = np.array(counts, dtype=np.int64)
        self.species_n = np.repeat(np.arange(len(counts)), counts).astype(np.int64)
        masses = np.ones(len(counts)) if masses_a is None else np.asarray(masses_a, dtype=float)
        if masses.shape != (len(counts),) or np.any(~np.isfinite(masses)) or np.any(masses <= 0):
            raise StudyError("species masses must be positive, one per species")
        self.masses_a = masses
        self.mass_n = masses[self.species_n]
        self.dof_per_particle = int(dof_per_particle)
        self.r_ni = None

    # -- derived quantities ----------------------------------------------------
    @property
    def n_particles(self):
        return int(self.species_n.size)

    @property
    def volume(self):
        return float(np.prod(self.box_i))

    @property
    def density(self):
        return self.n_particles / self.volume

    @property
    def fractions_a(self):
        return self.counts_a / self.counts_a.sum()

    def tail(self):
        """(energy per particle, pressure) of the long-range tail at this density."""
        return self.pairs.tail_corrections(self.density, self.fractions_a)

    @classmethod
    def cubic(cls, pairs, counts_a, density, **kw):
        """A cubic box sized for a number density."""
        n = int(sum(int(c) for c in counts_a))
        rho = positive("density", density, "reduced, typically 0.0005 to 0.9")
        if n > 0 and rho > CLOSE_PACKING:
            raise StudyError(f"setting 'density' = {rho!r} (reduced) is beyond close packing "
                             f"({CLOSE_PACKING:.4f}); a fluid is below about 1.0")
        length = (max(n, 1) / rho) ** (1.0 / 3.0)
        return cls(pairs, counts_a, [length] * 3, **kw)

    # -- start configurations ----------------------------------------------------
    def place_on_lattice(self, seed=0):
        """Put the particles on a simple-cubic-like lattice filling the box.

        The smallest n_x x n_y x n_z lattice with at least N sites, scaled to
        the box, is filled in a seeded random order (so species are mixed).
        """
        n = self.n_particles
        per = (n / self.volume) ** (1.0 / 3.0)
        cells = np.maximum(1, np.ceil(self.box_i * per - 1e-9).astype(int))
        while np.prod(cells) < n:
            cells[np.argmin(cells / self.box_i)] += 1
        g = [(np.arange(c) + 0.5) * (self.box_i[i] / c) for i, c in enumerate(cells)]
        sites = np.stack(np.meshgrid(*g, indexing="ij"), axis=-1).reshape(-1, 3)
        order = np.random.default_rng(seed).permutation(len(sites))[:n]
        self.r_ni = np.ascontiguousarray(sites[np.sort(order)])
        spacing = float(np.min(self.box_i / cells))
        if spacing < self._min_distance():
            raise StudyError(f"lattice start: site spacing {spacing:.3g} sigma is below the "
                             f"allowed minimum distance {self._min_distance():.3g}; the density "
                             "is too high for a fluid")
        return self

    def place_at_random(self, seed=0, min_distance=None, max_tries=1000):
        """Put the particles at random, none closer than ``min_distance``.

        The default minimum distance is 0.9 sigma of the smallest species
        pair (or the hard core, if larger), which is reachable up to
        moderate densities; for dense states use ``place_on_lattice``.
        """
        n = self.n_particles
        sig_min = min(self.pairs.pots[a][b].sigma for a in range(self.pairs.n_species)
                      for b in range(self.pairs.n_species))
        d = 0.9 * sig_min if min_distance is None else float(min_distance)
        d = max(d, 1.02 * self._core_radius())
        if n * (d ** 3) > 0.55 * self.volume:
            raise StudyError(f"random start: {n} particles no closer than {d:.3g} do not fit in "
                             f"volume {self.volume:.4g}; use the lattice start for dense states")
        gen = np.random.default_rng(seed)
        ncell = np.maximum(1, np.floor(self.box_i / d).astype(int))
        cell_size = self.box_i / ncell
        grid = {}
        r = np.empty((n, 3))
        for k in range(n):
            for _ in range(max_tries):
                x = gen.random(3) * self.box_i
                c = np.floor(x / cell_size).astype(int) % ncell
                ok = True
                for dx in (-1, 0, 1):
                    for dy in (-1, 0, 1):
                        for dz in (-1, 0, 1):
                            key = tuple((c + (dx, dy, dz)) % ncell)
                            for j in grid.get(key, ()):
                                dr = x - r[j]
                                dr -= self.box_i * np.round(dr / self.box_i)
                                if dr @ dr < d * d:
                                    ok = False
                                    break
                            if not ok:
                                break
                        if not ok:
                            break
                    if not ok:
                        break
                if ok:
                    r[k] = x
                    grid.setdefault(tuple(c), []).append(k)
                    break
            else:
                raise StudyError(f"random start: could not place particle {k + 1} of {n} after "
                                 f"{max_tries} tries; use the lattice start")
        self.r_ni = r
        return self

    def set_positions(self, r_ni):
        """Use given positions (checked for shape, finiteness and overlaps)."""
        r = np.ascontiguousarray(np.asarray(r_ni, dtype=float))
        if r.shape != (self.n_particles, 3):
            raise StudyError(f"positions have shape {r.shape}; expected ({self.n_particles}, 3)")
        if not np.all(np.isfinite(r)):
            raise StudyError("positions contain NaN or inf")
        self.r_ni = np.mod(r, self.box_i)
        self.check_overlaps()
        return self

    def _core_radius(self):
        ns = self.pairs.n_species
        return max(self.pairs.pots[a][b].core_radius for a in range(ns) for b in range(ns))

    def _min_distance(self, fraction=0.5):
        ns = self.pairs.n_species
        sig_min = min(self.pairs.pots[a][b].sigma for a in range(ns) for b in range(ns))
        return max(fraction * sig_min, self._core_radius())

    def check_overlaps(self, fraction=0.5):
        """Raise if two particles are closer than ``fraction`` sigma (or inside a core).

        Uses a cell grid, so it is O(N) (in Python: meant for user-given
        positions, not for million-particle lattices).
        """
        r = self.r_ni
        n = self.n_particles
        d = self._min_distance(fraction)
        ncell = np.maximum(1, np.floor(self.box_i / max(d, 1e-12)).astype(int))
        ncell = np.minimum(ncell, 200)
        idx = np.floor(r / (self.box_i / ncell)).astype(int) % ncell
        key = (idx[:, 0] * ncell[1] + idx[:, 1]) * ncell[2] + idx[:, 2]
        order = np.argsort(key, kind="stable")
        buckets = {}
        for k in order:
            buckets.setdefault(int(key[k]), []).append(int(k))
        for k in range(n):
            c = idx[k]
            for dx in (-1, 0, 1):
                for dy in (-1, 0, 1):
                    for dz in (-1, 0, 1):
                        cc = (c + (dx, dy, dz)) % ncell
                        for j in buckets.get(int((cc[0] * ncell[1] + cc[1]) * ncell[2] + cc[2]), ()):
                            if j <= k:
                                continue
                            dr = r[k] - r[j]
                            dr -= self.box_i * np.round(dr / self.box_i)
                            if dr @ dr < d * d:
                                raise StudyError(
                                    f"start configuration: particles {k} and {j} overlap "
                                    f"(distance {math.sqrt(dr @ dr):.3g} < {d:.3g} sigma)")

    def random_state(self, seed):
        """A fresh explicit random stream (see ``mdsim.engine.rng``)."""
        return _rng.make_state(seed)
