"""Monte Carlo samplers: canonical Metropolis and microcanonical (Ray 1991).

Both samplers move one particle at a time: a random particle is displaced
uniformly inside a cube of half-width ``max_displacement`` and the move is
accepted or rejected from the change of the configurational energy.  The
energy change comes from the particle's neighbours found with a small
linked-cell structure (cells of edge >= the largest cut-off), so one trial
move costs O(1) at fixed density, from a dilute gas to a dense liquid.

Methods
-------
"mc-nvt"
    Metropolis acceptance min(1, exp(-dU / kT)).
"mc-nve"
    Microcanonical Monte Carlo (J. R. Ray, Phys. Rev. A 44, 4061, 1991):
    at fixed total energy E the configurations carry the weight
    (E - U)^(F/2 - 1) for U < E, F = f N kinetic degrees of freedom; the
    acceptance is min(1, ((E - U_new) / (E - U_old))^(F/2 - 1)) and a move
    to U_new >= E is rejected.  The temperature follows from
    1/kT = (F/2 - 1) <1 / (E - U)>
    (:func:`mdsim.engine.microcanonical_temperature.nve_temperature`).

The energy is the truncated (not shifted) pair potential inside each pair's
cut-off; the analytic long-range tail (constant at fixed volume, so it does
not enter the acceptance) is added to the observables.  The step size is
tuned toward ``target_acceptance`` in :meth:`MCSampler.equilibrate` only
and frozen during :meth:`MCSampler.run`, which keeps detailed balance.

Everything is in the reduced units of :class:`mdsim.engine.system.System`.
The move and energy kernels are in :mod:`mdsim.engine.mc_kernels`, the
linked cells in :mod:`mdsim.engine.mc_cells`.

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate, ``_t`` sample
(time series).
"""
import math

import numpy as np

from mdsim.checks import count
from mdsim.engine import rng as _rng
from mdsim.engine.feynman_hibbs import sampling_reference
from mdsim.engine.mc_cells import build_cells, cell_grid
from mdsim.engine.mc_kernels import MODE_NVE, MODE_NVT, energy_virial, mc_moves
from mdsim.engine.system import System
from mdsim.errors import SimulationError, StudyError

__all__ = ["MCSampler", "METHODS"]

METHODS = {"mc-nvt": MODE_NVT, "mc-nve": MODE_NVE}

# Tuning: acceptance is measured over blocks of at least this many trial moves.
_TUNE_BLOCK_MOVES = 200
# Smallest step the tuner may choose (reduced length); a state that needs
# less than this is jammed, not fluid.
_MIN_DISPLACEMENT = 1e-5


# --- helpers -------------------------------------------------------------------

def _number(name, value, lo, hi, hint, *, lo_open=True):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise StudyError(f"Monte Carlo setting '{name}' = {value!r}: must be a number "
                         f"({hint})") from None
    bad_lo = v <= lo if lo_open else v < lo
    if not math.isfinite(v) or bad_lo or v > hi:
        left = "(" if lo_open else "["
        raise StudyError(f"Monte Carlo setting '{name}' = {value!r}: must lie in "
                         f"{left}{lo:g}, {hi:g}] ({hint})")
    return v


# --- sampler -------------------------------------------------------------------

class MCSampler:
    """Single-particle-move Monte Carlo in the canonical or microcanonical ensemble.

    Parameters
    ----------
    system : System
        Box, species, interactions and the start positions (``r_ni`` set,
        for example by ``place_on_lattice``); the positions are copied.
    temperature : float, optional
        kT in reduced units (method "mc-nvt").
    energy : float, optional
        Total energy per particle E/N in reduced units, kinetic plus full
        configurational (truncated + tail) energy (method "mc-nve").
    seed : int or list of int
        Seed of the random stream (``mdsim.engine.rng.make_state``).
    method : str, optional
        "mc-nvt" or "mc-nve"; by default taken from which of
        ``temperature`` and ``energy`` is given.
    max_displacement : float, optional
        Initial half-width of the displacement cube (default 0.2, or
        larger in a dilute gas); tuned in ``equilibrate``, capped at half
        the shortest box edge.
    target_acceptance : float, optional
        Acceptance ratio the tuner aims at (default 0.45, allowed 0.2 to 0.8).
    dof_per_particle : int, optional
        f, kinetic degrees of freedom per particle for "mc-nve" (default
        ``system.dof_per_particle``: 3 for atoms, 5 for rigid linear molecules).

    Attributes
    ----------
    method : str
    max_displacement : float
    """

    def __init__(self, system, *, temperature=None, energy=None, seed, method=None,
                 max_displacement=None, target_acceptance=0.45, dof_per_particle=None):
        if not isinstance(system, System):
            raise TypeError("system must be an mdsim.engine.system.System")
        if system.r_ni is None:
            raise StudyError("Monte Carlo: the system has no positions; call "
                             "system.place_on_lattice(seed) or place_at_random(seed) first")
        if method is None:
            if (temperature is None) == (energy is None):
                raise StudyError("Monte Carlo: give exactly one of 'temperature' (method "
                                 "'mc-nvt') or 'energy' (method 'mc-nve')")
            method = "mc-nvt" if temperature is not None else "mc-nve"
        if method not in METHODS:
            raise StudyError(f"Monte Carlo setting 'method' = {method!r}: must be one of "
                             f"{sorted(METHODS)}")
        self.method = method
        self.mode = METHODS[method]
        self.system = system
        n = system.n_particles
        self.n_particles = n
        self.u_tail, self.p_tail = system.tail()
        self.box_i = np.ascontiguousarray(system.box_i, dtype=np.float64)
        half_box = 0.5 * float(self.box_i.min())
        self._max_step = half_box

        if self.mode == MODE_NVT:
            if energy is not None:
                raise StudyError("Monte Carlo method 'mc-nvt' takes 'temperature', not 'energy'")
            self.temperature = _number("temperature", temperature, 0.0, 1e6,
                                       "reduced kT/epsilon, typically 0.5 to 10")
            self.energy = float("nan")
            self.dof_per_particle = 0
        else:
            if temperature is not None:
                raise StudyError("Monte Carlo method 'mc-nve' takes 'energy' (total energy per "
                                 "particle), not 'temperature'")
            if energy is None:
                raise StudyError("Monte Carlo method 'mc-nve' needs 'energy' (total energy per "
                                 "particle, reduced)")
            self.energy = _number("energy", energy, -1e6, 1e6,
                                  "total energy per particle, reduced")
            f = system.dof_per_particle if dof_per_particle is None else dof_per_particle
            self.dof_per_particle = count("dof_per_particle", f, 1,
                                           "3 for atoms, 5 for rigid linear molecules")
            if self.dof_per_particle * n <= 2:
                raise StudyError(f"Monte Carlo 'mc-nve': F = dof_per_particle * particles = "
                                 f"{self.dof_per_particle * n}; need F > 2 (use more particles)")
            self.temperature = float("nan")
        self.target_acceptance = _number("target_acceptance", target_acceptance, 0.2, 0.8,
                                         "typically 0.4 to 0.5", lo_open=False)
        if max_displacement is None:
            # a fraction of the mean spacing, at least 0.2 sigma
            spacing = (system.volume / n) ** (1.0 / 3.0)
            max_displacement = min(half_box, max(0.2, 0.3 * (spacing - 1.0)))
        self.max_displacement = _number("max_displacement", max_displacement, 0.0, half_box,
                                        f"half the shortest box edge is {half_box:.4g}")
        if isinstance(seed, (list, tuple)):
            seed = [int(s) for s in seed]
        self.seed = seed
        self.state = _rng.make_state(seed)

        self.pairs = system.pairs
        self.params_ab = np.ascontiguousarray(system.pairs.params_ab)
        self.table = np.ascontiguousarray(system.pairs.table)
        self.form = int(system.pairs.form)
        self.species_n = np.ascontiguousarray(system.species_n, dtype=np.int64)
        self.ncell_i = cell_grid(self.box_i, system.pairs.rc_max, n)
        self.head_c = np.empty(int(np.prod(self.ncell_i[:3])), dtype=np.int64)
        self.next_n = np.empty(n, dtype=np.int64)
        self.cell_n = np.empty(n, dtype=np.int64)
        self.n_moves = 0
        self.n_accepted = 0
        # (params, table, form, u_tail) of the classical u under Feynman-Hibbs, else None
        self.reference = sampling_reference(system, self.method, self.temperature)
        self._load_positions(system.r_ni)
        if self.mode == MODE_NVE and self.u_trunc + n * self.u_tail >= n * self.energy:
            raise StudyError(
                f"Monte Carlo 'mc-nve': 'energy' = {self.energy!r} per particle is not above the "
                f"start configuration's potential energy {self.u_trunc / n + self.u_tail:.6g} per "
                "particle; raise the energy or start from a lower-energy configuration")

    # -- internals --------------------------------------------------------------
    def _load_positions(self, r_ni):
        r = np.ascontiguousarray(np.asarray(r_ni, dtype=np.float64)).copy()
        if r.shape != (self.n_particles, 3) or not np.all(np.isfinite(r)):
            raise StudyError(f"Monte Carlo: positions must be finite with shape "
                             f"({self.n_particles}, 3); got shape {r.shape}")
        self.r_ni = np.mod(r, self.box_i)
        self.r_ni[self.r_ni >= self.box_i] = 0.0
        build_cells(self.r_ni, self.box_i, self.ncell_i, self.head_c, self.next_n, self.cell_n)
        u, _ = self.energy_and_virial()
        if not math.isfinite(u):
            raise StudyError("Monte Carlo: the start configuration has infinite energy (two "
                             "particles inside a hard core); use place_on_lattice or "
                             "place_at_random with a larger minimum distance")
        self.u_trunc = u

    def energy_and_virial(self):
        """Total truncated energy and pair virial of the current positions, recomputed."""
        return energy_virial(self.r_ni, self.species_n, self.params_ab, self.form, self.table,
                             self.box_i, self.ncell_i, self.head_c, self.next_n, self.cell_n)

    def _moves(self, n_moves):
        beta = 1.0 / self.temperature if self.mode == MODE_NVT else 0.0
        n = self.n_particles
        if self.mode == MODE_NVE:
            u_budget = n * (self.energy - self.u_tail)
            exponent = 0.5 * self.dof_per_particle * n - 1.0
        else:
            u_budget = exponent = 0.0
        n_acc, self.u_trunc = mc_moves(
            self.r_ni, self.species_n, self.params_ab, self.form, self.table, self.box_i,
            self.ncell_i, self.head_c, self.next_n, self.cell_n, self.state, int(n_moves),
            float(self.max_displacement), self.mode, beta, u_budget, exponent, self.u_trunc)
        self.n_moves += int(n_moves)
        self.n_accepted += int(n_acc)
        return n_acc

    # -- protocol ---------------------------------------------------------------
    def equilibrate(self, n_steps):
        """Run ``n_steps`` sweeps (N trial moves each), tuning the step size.

        The acceptance is measured over blocks of at least 200 trial moves
        and the step multiplied by exp(acceptance - target) after each
        block, capped at half the shortest box edge (a dilute gas accepts
        nearly every move and ends at the cap).  Nothing is recorded.
        """
        n_steps = count("equilibration_sweeps", n_steps, 0, "sweeps of N trial moves")
        total = n_steps * self.n_particles
        block = max(_TUNE_BLOCK_MOVES, self.n_particles)
        done = 0
        while done < total:
            m = min(block, total - done)
            acc = self._moves(m) / m
            if m >= _TUNE_BLOCK_MOVES:
                step = self.max_displacement * math.exp(acc - self.target_acceptance)
                self.max_displacement = min(self._max_step, max(_MIN_DISPLACEMENT, step))
            done += m
        self._check_budget()

    def _check_budget(self):
        if not math.isfinite(self.u_trunc):
            raise SimulationError("Monte Carlo: the running energy is no longer finite")

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` sweeps.

        Returns
        -------
        dict of ndarray, each shape=(n_samples,), float64
            "u_trunc", "u_full" (per particle), "pressure_conf", "pressure"
            (NaN for mc-nve), "acceptance" (fraction accepted since the
            previous sample), and for mc-nve "kinetic" = (E - U_full) / N.
            Under a Feynman-Hibbs potential u_FH = u + beta c
            (:mod:`mdsim.engine.feynman_hibbs`) "u_full" is the thermodynamic
            estimator sum (u + 2 beta c) / N = 2 u_FH - u per particle and
            "u_effective" the mean of u_FH itself; the pressure is the virial
            of u_FH.

        Notes
        -----
        The energy and virial are recomputed over all pairs at each sample;
        the running energy the acceptance uses is reset to the recomputed
        value, so round-off cannot accumulate.  pressure_conf =
        W / (3 V) + p_tail with W = sum -r u'(r); pressure = rho kT + pressure_conf.
        """
        n_samples = count("samples", n_samples, 1, "number of recorded samples")
        interval = count("sample_interval", interval, 1, "sweeps between samples")
        n = self.n_particles
        vol = self.system.volume
        rho = n / vol
        out = {k: np.empty(n_samples) for k in ("u_trunc", "u_full", "pressure_conf",
                                               "pressure", "acceptance")}
        if self.mode == MODE_NVE:
            out["kinetic"] = np.empty(n_samples)
        if self.reference is not None:
            out["u_effective"] = np.empty(n_samples)
        for t in range(n_samples):
            m = interval * n
            acc = self._moves(m)
            u, w = self.energy_and_virial()
            self.u_trunc = u
            self._check_budget()
            out["u_trunc"][t] = u / n
            out["u_full"][t] = u / n + self.u_tail
            if self.reference is not None:  # Feynman-Hibbs: the thermodynamic estimator
                params, table, form, u_tail_cl = self.reference
                u_cl = energy_virial(self.r_ni, self.species_n, params, form, table,
                                     self.box_i, self.ncell_i, self.head_c, self.next_n,
                                     self.cell_n)[0] / n + u_tail_cl
                out["u_effective"][t] = out["u_full"][t]
                out["u_full"][t] = 2.0 * out["u_effective"][t] - u_cl
            out["pressure_conf"][t] = w / (3.0 * vol) + self.p_tail
            out["acceptance"][t] = acc / m
            if self.mode == MODE_NVT:
                out["pressure"][t] = rho * self.temperature + out["pressure_conf"][t]
            else:
                out["pressure"][t] = np.nan
                out["kinetic"][t] = self.energy - out["u_full"][t]
        return out

    def get_state(self):
        """Everything needed to continue bit for bit (arrays are copies)."""
        return {
            "method_code": int(self.mode),   # METHODS[method]
            "positions": self.r_ni.copy(),
            "rng_state": self.state.copy(),
            "max_displacement": float(self.max_displacement),
            "u_trunc_total": float(self.u_trunc),
            "trial_moves": int(self.n_moves),
            "accepted_moves": int(self.n_accepted),
        }

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        need = ("method_code", "positions", "rng_state", "max_displacement", "u_trunc_total",
                "trial_moves", "accepted_moves")
        missing = [k for k in need if k not in state]
        if missing:
            raise StudyError(f"Monte Carlo state is missing {missing}; it must come from "
                             "MCSampler.get_state")
        code = int(state["method_code"])
        if code != self.mode:
            names = {v: k for k, v in METHODS.items()}
            raise StudyError(f"Monte Carlo state is for method {names.get(code, code)!r}, this "
                             f"sampler runs {self.method!r}; resume with the method that saved it")
        rs = np.asarray(state["rng_state"])
        if rs.shape != (_rng.STATE_WORDS,):
            raise StudyError(f"Monte Carlo state: 'rng_state' has shape {rs.shape}; expected (4,)")
        self._load_positions(state["positions"])
        self.state = rs.astype(np.uint64).copy()
        self.max_displacement = _number("max_displacement", state["max_displacement"], 0.0,
                                        self._max_step, "from the saved state")
        self.u_trunc = float(state["u_trunc_total"])
        self.n_moves = int(state["trial_moves"])
        self.n_accepted = int(state["accepted_moves"])
        n = self.n_particles
        if self.mode == MODE_NVE and self.u_trunc + n * self.u_tail >= n * self.energy:
            raise StudyError(
                f"Monte Carlo 'mc-nve': the saved configuration's potential energy "
                f"{self.u_trunc / n + self.u_tail:.6g} per particle is not below 'energy' = "
                f"{self.energy!r}; resume with the energy the state was saved with")

    def settings(self):
        """Settings as plain numbers and strings (for HDF5 attributes)."""
        return {
            "method": self.method,
            "temperature_red": float(self.temperature),
            "energy_per_particle_red": float(self.energy),
            "dof_per_particle": int(self.dof_per_particle),
            "n_particles": int(self.n_particles),
            "density_red": float(self.system.density),
            "max_displacement_red": float(self.max_displacement),
            "target_acceptance": float(self.target_acceptance),
            "cutoff_max_red": float(self.pairs.rc_max),
            "u_tail_red": float(self.u_tail),
            "p_tail_red": float(self.p_tail),
            "cells_per_edge": "x".join(str(int(c)) for c in self.ncell_i[:3]),
            "cell_reach": int(self.ncell_i[3]),
            "seed": str(self.seed),
        }

    @property
    def acceptance(self):
        """Fraction of all trial moves so far that were accepted."""
        return self.n_accepted / self.n_moves if self.n_moves else float("nan")
