"""Gibbs-ensemble Monte Carlo: two boxes in equilibrium with each other, no interface.

Panagiotopoulos's method (Mol. Phys. 61, 813, 1987; with Quirke,
Stapleton and Tildesley, Mol. Phys. 63, 527, 1988): N particles share two
periodic boxes of total volume V at temperature T.  Three kinds of trial
move bring the boxes into thermal, mechanical and chemical equilibrium:

- displacements inside each box (Metropolis, as in
  :mod:`mdsim.engine.montecarlo`);
- a volume exchange: ln(V_1 / V_2) takes a uniform step of half-width
  ``volume_step``, the positions scale with their box, and the move is
  accepted with min(1, exp(-beta dU + (n_1 + 1) ln(V_1'/V_1)
  + (n_2 + 1) ln(V_2'/V_2))) (Frenkel and Smit, Understanding Molecular
  Simulation, 2nd ed., section 8.3, the ln V random walk);
- particle transfers (:func:`mdsim.engine.gibbs_kernels.gibbs_transfers`).

One cycle is N displacement attempts (each box gets its share),
``volume_moves_per_cycle`` volume exchanges (1) and ``transfers_per_cycle``
transfer attempts.  Below the
critical temperature the boxes settle at the coexisting vapour and liquid.

The energy is the truncated (not shifted) pair potential inside the
cut-off rc = cutoff x sigma plus the analytic long-range tail of each box
at its own density (``docs/physics.md`` section 4): the same model as the
canonical and microcanonical samplers.  The tail changes with each box's
density, so it enters the volume and transfer acceptances.  A box may not
shrink below twice the cut-off (the minimum image would fail): such a
volume move is refused and counted (``volume_moves_refused``); it is rare
when the liquid box holds enough particles (see :class:`GibbsSampler`).

Move sizes (the displacement half-width of each box, the volume step) and
the move mix (transfer attempts per cycle) are tuned in
:meth:`GibbsSampler.equilibrate` only and frozen in :meth:`GibbsSampler.run`.

Everything is in reduced units.  Array suffixes: ``_b`` box (2), ``_n``
particle slot, ``_i`` coordinate, ``_t`` sample.
"""
import math

import numpy as np

from mdsim.checks import count, positive
from mdsim.engine import rng as _rng
from mdsim.engine.gibbs_kernels import gibbs_transfers, tail_energy_total
from mdsim.engine.mc_cells import build_cells, cell_grid
from mdsim.engine.mc_kernels import MODE_NVT, energy_virial, mc_moves
from mdsim.engine.potentials import PairMatrix
from mdsim.engine.system import System
from mdsim.errors import SimulationError, StudyError

__all__ = ["GibbsSampler", "SERIES"]

SERIES = ("particles", "volume", "u_full", "pressure")
"""The per-box series :meth:`GibbsSampler.run` records (each shape (n_samples, 2))."""

# Tuning targets (equilibration only).
_TARGET_DISPLACEMENT = 0.45
_TARGET_VOLUME = 0.4
# Accepted transfers per cycle aimed at, as a fraction of N, and the bounds
# on the transfer attempts per cycle, as fractions of N.
_TRANSFERS_ACCEPTED = 0.01
_TRANSFERS_LO, _TRANSFERS_HI = 0.05, 3.0
_TUNE_CYCLES = 10
_MIN_DISPLACEMENT = 1e-4


class GibbsSampler:
    """Gibbs-ensemble Monte Carlo of one species in two boxes at fixed N, V, T.

    Parameters
    ----------
    pairs : PairMatrix
        The interaction in reduced units, one species.
    temperature : float
        kT in reduced units.
    particles_b : sequence of two int
        Particles in each box at the start.
    densities_b : sequence of two float
        Number density of each box at the start, reduced (sets the volumes).
    seed : int or list of int
        Seed of the random stream and of the lattice starts.

    Attributes
    ----------
    n_b : ndarray, shape=(2,), int64
    box_b : ndarray, shape=(2,), float64
        Edge length of each (cubic) box.
    max_displacement_b : ndarray, shape=(2,), float64
    volume_step : float
        Half-width of the step in ln(V_1 / V_2).
    transfers_per_cycle : int
        Transfer attempts per cycle (0: none; tuned by ``equilibrate`` when not 0).
    volume_moves_per_cycle : int
        Volume exchanges per cycle (default 1; 0: none).
    volume_moves_refused : int
        Volume moves refused because a box would have become smaller than
        twice the cut-off.

    Examples
    --------
    A short run of 60 Lennard-Jones particles (rc = 2 sigma) at T* = 1.0,
    the denser box starting as a liquid:

    >>> from mdsim.engine.potentials import LennardJones, PairMatrix
    >>> g = GibbsSampler(PairMatrix([LennardJones(1.0, 1.0)], 2.0), 1.0, [50, 10], [0.6, 0.05],
    ...                  seed=3)
    >>> g.equilibrate(20)
    >>> out = g.run(5, 2)
    >>> out["particles"].sum(axis=1).tolist()      # N is conserved
    [60.0, 60.0, 60.0, 60.0, 60.0]
    """

    def __init__(self, pairs, temperature, particles_b, densities_b, *, seed):
        if not isinstance(pairs, PairMatrix):
            raise TypeError("pairs must be an mdsim.engine.potentials.PairMatrix")
        if pairs.n_species != 1:
            raise StudyError(f"Gibbs ensemble: the gas has {pairs.n_species} species; "
                             "vapour-liquid coexistence is computed for one species only")
        self.pairs = pairs
        self.temperature = positive("temperature", temperature, "reduced kT/epsilon")
        counts = [count("particles", c, 1, "particles in each box") for c in particles_b]
        rhos = [positive("density", r, "reduced") for r in densities_b]
        if len(counts) != 2 or len(rhos) != 2:
            raise StudyError("Gibbs ensemble: give two particle counts and two densities, one "
                             "per box")
        n = sum(counts)
        self.n_particles = n
        self.seed = [int(s) for s in seed] if isinstance(seed, (list, tuple)) else int(seed)
        self.state = _rng.make_state(self.seed)
        self.rc = float(pairs.rc_max)
        self.tail_a, _ = pairs.tail_corrections(1.0, [1.0])
        self.params_ab = np.ascontiguousarray(pairs.params_ab)
        self.table = np.ascontiguousarray(pairs.table)
        self.form = int(pairs.form)
        self.species_n = np.zeros(n, dtype=np.int64)
        self.r_bni = np.zeros((2, n, 3))
        self.n_b = np.array(counts, dtype=np.int64)
        self.box_b = np.empty(2)
        for b in range(2):
            # System checks the cut-off against the box and gives the lattice
            system = System.cubic(pairs, [counts[b]], rhos[b]).place_on_lattice(
                seed=[*np.atleast_1d(self.seed).tolist(), b])
            self.r_bni[b, :counts[b]] = system.r_ni
            self.box_b[b] = system.box_i[0]
        self.box_bi = np.repeat(self.box_b[:, None], 3, axis=1)
        self.ncell_bi = np.zeros((2, 4), dtype=np.int64)
        self.head_bc = np.empty((2, max(27, 4 * n)), dtype=np.int64)
        self.next_bn = np.empty((2, n), dtype=np.int64)
        self.cell_bn = np.empty((2, n), dtype=np.int64)
        self.u_b = np.zeros(2)
        for b in range(2):
            self._rebuild(b)
        if not np.all(np.isfinite(self.u_b)):
            raise StudyError("Gibbs ensemble: a start configuration has infinite energy; lower "
                             "the start density")
        self.max_displacement_b = np.full(2, 0.2)
        self.volume_step = 0.05
        self.transfers_per_cycle = max(1, int(0.3 * n))
        self.volume_moves_per_cycle = 1
        self.volume_moves_refused = 0
        self.counters = {k: 0 for k in ("displacements", "displacements_accepted", "volume_moves",
                                        "volume_moves_accepted", "transfers",
                                        "transfers_accepted")}

    # -- internals ----------------------------------------------------------------
    def _rebuild(self, b):
        """New cell grid for box b's edge, cells refilled, energy recomputed; returns the virial."""
        n = int(self.n_b[b])
        self.box_bi[b] = self.box_b[b]
        self.ncell_bi[b] = cell_grid(self.box_bi[b], self.rc, max(n, 1))
        build_cells(self.r_bni[b, :n], self.box_bi[b], self.ncell_bi[b], self.head_bc[b],
                    self.next_bn[b, :n], self.cell_bn[b, :n])
        u, w = energy_virial(self.r_bni[b, :n], self.species_n[:n], self.params_ab, self.form,
                             self.table, self.box_bi[b], self.ncell_bi[b], self.head_bc[b],
                             self.next_bn[b, :n], self.cell_bn[b, :n])
        self.u_b[b] = u
        return w

    def _displace(self, b, n_moves):
        n = int(self.n_b[b])
        if n == 0 or n_moves == 0:
            return 0
        acc, self.u_b[b] = mc_moves(
            self.r_bni[b, :n], self.species_n[:n], self.params_ab, self.form, self.table,
            self.box_bi[b], self.ncell_bi[b], self.head_bc[b], self.next_bn[b, :n],
            self.cell_bn[b, :n], self.state, int(n_moves), float(self.max_displacement_b[b]),
            MODE_NVT, 1.0 / self.temperature, 0.0, 0.0, self.u_b[b])
        self.counters["displacements"] += int(n_moves)
        self.counters["displacements_accepted"] += int(acc)
        return acc

    def _total_energy(self, b, u_trunc, volume):
        return u_trunc + tail_energy_total(int(self.n_b[b]), volume, self.tail_a)

    def _volume_move(self):
        """One ln(V_1/V_2) random-walk move; returns True when accepted."""
        self.counters["volume_moves"] += 1
        vol = self.box_b ** 3
        v_total = vol.sum()
        ln_ratio = math.log(vol[0] / vol[1]) + (2.0 * _rng.uniform(self.state) - 1.0) \
            * self.volume_step
        v0 = v_total / (1.0 + math.exp(-ln_ratio))
        new_vol = np.array([v0, v_total - v0])
        new_box = np.cbrt(new_vol)
        if new_box.min() < 2.0 * self.rc:
            self.volume_moves_refused += 1
            return False
        u_old = [self._total_energy(b, self.u_b[b], vol[b]) for b in range(2)]
        saved = [a.copy() for a in (self.r_bni, self.box_b, self.box_bi, self.u_b, self.ncell_bi,
                                    self.head_bc, self.next_bn, self.cell_bn)]
        for b in range(2):
            n = int(self.n_b[b])
            self.r_bni[b, :n] *= new_box[b] / self.box_b[b]
            self.box_b[b] = new_box[b]
            self._rebuild(b)
        u_new = [self._total_energy(b, self.u_b[b], new_vol[b]) for b in range(2)]
        arg = -(sum(u_new) - sum(u_old)) / self.temperature + sum(
            (self.n_b[b] + 1) * math.log(new_vol[b] / vol[b]) for b in range(2))
        if math.isfinite(arg) and (arg >= 0.0 or _rng.uniform(self.state) < math.exp(arg)):
            self.counters["volume_moves_accepted"] += 1
            return True
        for now, before in zip((self.r_bni, self.box_b, self.box_bi, self.u_b, self.ncell_bi,
                                self.head_bc, self.next_bn, self.cell_bn), saved):
            now[...] = before
        return False

    def _transfers(self, n_attempts):
        acc = gibbs_transfers(self.r_bni, self.species_n, self.params_ab, self.form, self.table,
                              self.box_bi, self.ncell_bi, self.head_bc, self.next_bn,
                              self.cell_bn, self.n_b, self.u_b, self.state, int(n_attempts),
                              1.0 / self.temperature, float(self.tail_a))
        self.counters["transfers"] += int(n_attempts)
        self.counters["transfers_accepted"] += int(acc)
        return acc

    def _cycle(self):
        """One cycle: (displacement acceptance per box, volume moves and transfers accepted)."""
        acc_b = np.full(2, np.nan)
        for b in range(2):
            m = int(self.n_b[b])
            if m:
                acc_b[b] = self._displace(b, m) / m
        vol_ok = sum(self._volume_move() for _ in range(self.volume_moves_per_cycle))
        n_tr = self._transfers(self.transfers_per_cycle) if self.transfers_per_cycle else 0
        return acc_b, vol_ok, n_tr

    def _check(self):
        if not np.all(np.isfinite(self.u_b)):
            raise SimulationError("Gibbs ensemble: the running energy is no longer finite")

    # -- protocol -------------------------------------------------------------------
    def equilibrate(self, n_cycles):
        """Run ``n_cycles`` cycles, tuning the move sizes and the move mix.

        Every 10 cycles: each box's displacement half-width is multiplied
        by exp(acceptance - 0.45) (capped at half its box edge), the volume
        step by exp(acceptance - 0.4), and the transfer attempts per cycle
        are set so that about 1 % of the particles change box per cycle
        (between 0.05 N and 3 N attempts; left at 0 when set to 0): the
        exchange of particles between the phases is the slowest mode of the
        ensemble, and insertions into a cold liquid are rarely accepted.  Nothing is recorded.
        """
        n_cycles = count("equilibration_cycles", n_cycles, 0, "Gibbs-ensemble cycles")
        n = self.n_particles
        done = 0
        while done < n_cycles:
            m = min(_TUNE_CYCLES, n_cycles - done)
            acc_sum = np.zeros(2)
            acc_cnt = np.zeros(2)
            n_vol = 0
            n_tr = 0
            tries = max(1, m * self.volume_moves_per_cycle)
            for _ in range(m):
                acc_b, vol_ok, tr = self._cycle()
                ok = np.isfinite(acc_b)
                acc_sum[ok] += acc_b[ok]
                acc_cnt[ok] += 1
                n_vol += int(vol_ok)
                n_tr += tr
            for b in range(2):
                if acc_cnt[b]:
                    step = self.max_displacement_b[b] * math.exp(
                        acc_sum[b] / acc_cnt[b] - _TARGET_DISPLACEMENT)
                    self.max_displacement_b[b] = min(0.5 * self.box_b[b],
                                                     max(_MIN_DISPLACEMENT, step))
            self.volume_step = min(2.0, max(1e-4, self.volume_step * math.exp(
                n_vol / tries - _TARGET_VOLUME)))
            if self.transfers_per_cycle:
                rate = n_tr / (m * self.transfers_per_cycle)
                want = _TRANSFERS_ACCEPTED * n / max(rate, 1e-6)
                self.transfers_per_cycle = int(min(_TRANSFERS_HI * n,
                                                   max(_TRANSFERS_LO * n, want, 1)))
            done += m
        self._check()

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` cycles.

        Returns
        -------
        dict of ndarray
            Per-box series, each shape=(n_samples, 2), float64, box 0 and box
            1 in columns (the boxes may swap roles near the critical point;
            the caller sorts them by density): "particles", "volume",
            "u_full" (per particle, truncated + tail; NaN for an empty box),
            "pressure" (rho kT + W / (3V) + p_tail).

        Notes
        -----
        Each sample recomputes both boxes' energies and virials; the
        running energies are reset to them, so round-off cannot accumulate.
        """
        n_samples = count("samples", n_samples, 1, "recorded samples")
        interval = count("sample_interval", interval, 1, "cycles between samples")
        out = {k: np.empty((n_samples, 2)) for k in SERIES}
        for t in range(n_samples):
            for _ in range(interval):
                self._cycle()
            for b in range(2):
                w = self._rebuild(b)
                n = int(self.n_b[b])
                vol = float(self.box_b[b] ** 3)
                rho = n / vol
                u_tail, p_tail = self.pairs.tail_corrections(rho, [1.0])
                out["particles"][t, b] = n
                out["volume"][t, b] = vol
                out["u_full"][t, b] = self.u_b[b] / n + u_tail if n else np.nan
                out["pressure"][t, b] = rho * self.temperature + w / (3.0 * vol) + p_tail
            self._check()
        return out

    def settings(self):
        """Move sizes, the move mix and the acceptance so far (plain numbers, for files)."""
        c = self.counters

        def ratio(a, b):
            return c[a] / c[b] if c[b] else float("nan")
        return {
            "temperature_red": float(self.temperature),
            "n_particles": int(self.n_particles),
            "cutoff_red": float(self.rc),
            "max_displacement_red": [float(x) for x in self.max_displacement_b],
            "volume_step_ln": float(self.volume_step),
            "transfers_per_cycle": int(self.transfers_per_cycle),
            "displacement_acceptance": ratio("displacements_accepted", "displacements"),
            "volume_acceptance": ratio("volume_moves_accepted", "volume_moves"),
            "transfer_acceptance": ratio("transfers_accepted", "transfers"),
            "volume_moves_refused": int(self.volume_moves_refused),
            "seed": str(self.seed),
        }
