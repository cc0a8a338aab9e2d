"""Molecular dynamics: the sampler that runs velocity Verlet, with or without a thermostat.

``MDSampler`` follows the sampler protocol of the project (see the class
docstring).  The dynamics use the truncated-and-shifted pair potential
(what velocity Verlet conserves); the recorded energies also give the
truncated energy and the full-potential energy with the analytic tail.
The integrator and the thermostat (stochastic velocity rescaling, with
nf = 3N - 3 degrees of freedom) are the kernels of
:mod:`mdsim.engine.integrator`.

Internally the particles are kept in the neighbour list's cell-sorted
order; ``id_n`` maps it to the original order of the ``System``.

Array suffixes: ``_n`` particle, ``_i`` coordinate, ``_c`` chunk.
"""
import math

import numba
import numpy as np

from mdsim.checks import count, positive
from mdsim.engine import rng as _rng
from mdsim.engine.feynman_hibbs import sampling_reference
from mdsim.engine.forces import check_finite, forces_half, forces_half_parallel
from mdsim.engine.integrator import (default_time_step, kick_drift, kick_thermostat,
                                     kinetic_energy, maxwell_boltzmann, run_in_blocks,
                                     verlet_block)
from mdsim.engine.neighbours import NeighbourList, choose_skin, wrap_positions
from mdsim.errors import StudyError

__all__ = ["MDSampler", "METHODS"]

METHODS = ("md-nvt", "md-nve")






class MDSampler:
    """Molecular dynamics sampler (velocity Verlet; NVT by stochastic velocity rescaling).

    Parameters
    ----------
    system : mdsim.engine.system.System
        With positions set; its pair matrix gives the potentials and cut-offs.
    temperature : float, optional
        kT/epsilon.  Required for "md-nvt".  For "md-nve" it is optional:
        when given it sets the Maxwell-Boltzmann start (unless
        ``velocities`` are given) and the thermostat :meth:`equilibrate`
        uses; without it the start velocities are ``velocities`` or the
        system's ``v_ni`` (written by :meth:`sync_system`).
    energy : None
        Not used by MD (the protocol's microcanonical Monte Carlo input);
        giving it is an error.
    seed : int or list of int
        Seeds the random stream (start velocities, thermostat).
    method : {"md-nvt", "md-nve"}
    time_step : float, optional
        Reduced time step; default :func:`default_time_step`.
    thermostat_time : float
        Relaxation time tau of the thermostat, reduced (default 0.5 = 100
        steps of 0.005).
    skin : float, optional
        Verlet skin in sigma; default :func:`mdsim.engine.neighbours.choose_skin`.
    n_threads : int
        1: serial force kernel.  More: the parallel kernel with this many
        chunks (results depend on n_threads, and are reproducible for it).
    velocities : ndarray, shape=(n, 3), optional
        Start velocities (original particle order); they take precedence
        over a Maxwell-Boltzmann draw at ``temperature``.

    Notes
    -----
    The sampler keeps its own copies of the particle arrays and writes
    positions, velocities (``v_ni``) and box back into ``system`` at the end
    of :meth:`equilibrate`, :meth:`run` and :meth:`expand_box`.

    ``run`` returns per-particle "u_trunc", "u_full", "u_model", "kinetic",
    "e_conserved", and "temperature_inst", "pressure", "pressure_conf":
    u_full = u_trunc + u_tail, u_model = u_trunc - shifts,
    T_inst = 2 K / (3N - 3), P_conf = W / (3V) + P_tail,
    P = rho T_inst + P_conf, e_conserved = (K + U_model + E_thermostat) / N.
    """

    def __init__(self, system, *, temperature=None, energy=None, seed, method="md-nvt",
                 time_step=None, thermostat_time=0.5, skin=None, n_threads=1, velocities=None):
        if method not in METHODS:
            raise StudyError(f"setting 'method' = {method!r}: MD offers {', '.join(METHODS)}")
        if energy is not None:
            raise StudyError(f"setting 'energy' = {energy!r}: molecular dynamics takes a "
                             "temperature (md-nvt) or start velocities (md-nve), not an energy; "
                             "use method 'mc-nve' for a fixed total energy")
        if system.r_ni is None:
            raise StudyError("the system has no positions: call place_on_lattice() or "
                             "place_at_random() before making a sampler")
        sampling_reference(system, method, temperature)  # refuses a Feynman-Hibbs system
        self.method = method
        self.system = system
        self.pairs = system.pairs
        n = system.n_particles
        self.n = n
        self.nf = 3 * n - 3
        if temperature is not None:
            temperature = positive("temperature", temperature,
                                   "kT/epsilon, typically 0.7 to 10 in reduced units")
        elif method == "md-nvt":
            raise StudyError("setting 'temperature' is missing: md-nvt needs a target "
                             "temperature (kT/epsilon, typically 0.7 to 10)")
        self.temperature = temperature
        self.seed = seed
        self.rng = _rng.make_state(seed)
        self.box_i = np.array(system.box_i, dtype=float)
        # internal, cell-sorted copies
        self.r_ni = np.ascontiguousarray(system.r_ni, dtype=float).copy()
        self.species_n = system.species_n.astype(np.int64).copy()
        self.mass_n = system.mass_n.astype(float).copy()
        self.id_n = np.arange(n, dtype=np.int64)
        self.v_ni = self._start_velocities(velocities, temperature)
        # a state-dependent time step and skin; without a set temperature,
        # that of the start velocities
        t_state = temperature if temperature is not None else \
            max(2.0 * kinetic_energy(self.v_ni, self.mass_n) / self.nf, 1e-12)
        self.time_step = (default_time_step(t_state, system.masses_a) if time_step is None
                          else positive("time_step", time_step,
                                        "in (0, 0.05]; 0.005 is usual for LJ"))
        if self.time_step > 0.05:
            raise StudyError(f"setting 'time_step' = {time_step!r}: must be in (0, 0.05] "
                             "(reduced); 0.005 is usual for LJ")
        self.thermostat_time = positive("thermostat_time", thermostat_time,
                                        "a time in reduced units, typically 0.1 to 2")
        self.n_threads = count("n_threads", n_threads)
        if self.n_threads > numba.config.NUMBA_NUM_THREADS:
            raise StudyError(f"setting 'n_threads' = {n_threads}: at most "
                             f"{numba.config.NUMBA_NUM_THREADS} threads on this machine")
        rc = self.pairs.rc_max
        if skin is None:
            skin = choose_skin(system.density, t_state, rc)
        self.skin = positive("skin", skin,
                             "a length in sigma, 0.3 for a liquid to 1.0 for a dilute gas")
        self.f_ni = np.zeros((n, 3))
        # per-chunk force buffers of the parallel kernel (a dummy when serial)
        self.f_cni = np.zeros((self.n_threads, n, 3) if self.n_threads > 1 else (1, 1, 3))
        self.nlist = NeighbourList(n, self.box_i, rc, self.skin)
        self.obs = np.zeros(5)
        self.step = 0
        self._update_tail()
        self.rebuild_list()
        self._forces(" in the start configuration")
        self.obs[4] = kinetic_energy(self.v_ni, self.mass_n)

    # -- internals ---------------------------------------------------------------
    def _start_velocities(self, velocities, temperature):
        """Start velocities, shape=(n, 3): those given, the system's, or a Maxwell-Boltzmann draw."""
        n = self.n
        v_ni = np.zeros((n, 3))
        v = velocities
        if v is None and temperature is None:
            v = getattr(self.system, "v_ni", None)
            if v is None:
                raise StudyError("md-nve needs start velocities: give 'temperature' (Maxwell-"
                                 "Boltzmann start) or 'velocities', or a system with v_ni")
        if v is None:
            maxwell_boltzmann(self.rng, self.mass_n, temperature, v_ni)
        else:
            v = np.asarray(v, dtype=float)
            if v.shape != (n, 3) or not np.all(np.isfinite(v)):
                raise StudyError(f"setting 'velocities': shape {v.shape}, expected ({n}, 3) "
                                 "finite numbers")
            v_ni[:] = v
            if temperature is not None and not np.any(v):
                raise StudyError("setting 'velocities': all zero; the thermostat rescales "
                                 "velocities and cannot start from rest; give nonzero "
                                 "velocities or leave them out for a Maxwell-Boltzmann start")
        return v_ni

    def _update_tail(self):
        self.volume = float(np.prod(self.box_i))
        self.u_tail, self.p_tail = self.pairs.tail_corrections(self.n / self.volume,
                                                               self.system.fractions_a)

    def rebuild_list(self):
        """Sort the particles into cell order and rebuild the neighbour list from scratch."""
        order = self.nlist.sort_order(self.r_ni)
        if not np.array_equal(order, np.arange(self.n)):
            for name in ("r_ni", "v_ni", "f_ni", "species_n", "mass_n", "id_n"):
                setattr(self, name, np.ascontiguousarray(getattr(self, name)[order]))
        self.nlist.build(self.r_ni)

    def _forces(self, where):
        if self.n_threads > 1:
            u, s, w = self._with_threads(forces_half_parallel, self.r_ni, self.box_i,
                                         self.species_n, self.pairs.params_ab, self.pairs.form,
                                         self.pairs.table, self.nlist.nb_nk, self.nlist.count_n,
                                         self.f_ni, self.f_cni)
        else:
            u, s, w = forces_half(self.r_ni, self.box_i, self.species_n, self.pairs.params_ab,
                                  self.pairs.form, self.pairs.table, self.nlist.nb_nk,
                                  self.nlist.count_n, self.f_ni)
        check_finite(u, where)
        self.obs[0], self.obs[1], self.obs[2] = u, s, w

    def _with_threads(self, fn, *args):
        old = numba.get_num_threads()
        try:
            numba.set_num_threads(self.n_threads)
            return fn(*args)
        finally:
            numba.set_num_threads(old)

    def _advance(self, n_steps, thermostat):
        """n_steps velocity-Verlet steps, rebuilding the list when needed."""
        kT = self.temperature if self.temperature is not None else 1.0
        c = math.exp(-self.time_step / self.thermostat_time)
        half_skin2 = 0.25 * self.skin ** 2
        pairs, nl = self.pairs, self.nlist
        left = int(n_steps)
        if self.n_threads > 1:
            for _ in range(left):
                if kick_drift(self.time_step, self.r_ni, self.v_ni, self.f_ni, self.mass_n,
                              nl.r_ref_ni) > half_skin2:
                    self.rebuild_list()
                u, sh, w = forces_half_parallel(self.r_ni, self.box_i, self.species_n,
                                                pairs.params_ab, pairs.form, pairs.table,
                                                nl.nb_nk, nl.count_n, self.f_ni, self.f_cni)
                self.obs[0], self.obs[1], self.obs[2] = u, sh, w
                check_finite(u, f" at MD step {self.step + 1}")
                kick_thermostat(self.time_step, self.v_ni, self.f_ni, self.mass_n, thermostat,
                                kT, self.nf, c, self.rng, self.obs)
                self.step += 1
            return
        def block(steps, resume):
            return verlet_block(steps, resume, self.time_step, self.r_ni, self.v_ni, self.f_ni,
                                self.mass_n, nl.r_ref_ni, half_skin2, self.box_i,
                                self.species_n, pairs.params_ab, pairs.form, pairs.table,
                                nl.nb_nk, nl.count_n, thermostat, kT, self.nf, c, self.rng,
                                self.obs)
        done, status = run_in_blocks(left, block, self.rebuild_list)
        self.step += done
        if status == 2:
            check_finite(self.obs[0], f" at MD step {self.step + 1}")

    def _run_steps(self, n_steps, thermostat):
        if self.n_threads > 1:
            self._with_threads(self._advance, n_steps, thermostat)
        else:
            self._advance(n_steps, thermostat)

    # -- protocol ------------------------------------------------------------------
    def equilibrate(self, n_steps):
        """Run ``n_steps`` unrecorded steps, thermostat on when a temperature is set."""
        n_steps = count("equilibration steps", n_steps, 0)
        self._run_steps(n_steps, self.temperature is not None)
        self.sync_system()

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` steps.

        Returns
        -------
        dict of str -> ndarray, shape=(n_samples,), float64
            See the class Notes; energies per particle, reduced.
        """
        n_samples = count("n_samples", n_samples)
        interval = count("interval", interval)
        keys = ("u_trunc", "u_full", "u_model", "kinetic", "temperature_inst", "pressure",
                "pressure_conf", "e_conserved")
        out = {k: np.empty(n_samples) for k in keys}
        thermostat = self.method == "md-nvt"
        n, vol = self.n, self.volume
        for t in range(n_samples):
            self._run_steps(interval, thermostat)
            u, sh, w, e_th, kin = self.obs
            out["u_trunc"][t] = u / n
            out["u_full"][t] = u / n + self.u_tail
            out["u_model"][t] = (u - sh) / n
            out["kinetic"][t] = kin / n
            t_inst = 2.0 * kin / self.nf
            out["temperature_inst"][t] = t_inst
            p_conf = w / (3.0 * vol) + self.p_tail
            out["pressure_conf"][t] = p_conf
            out["pressure"][t] = n / vol * t_inst + p_conf
            out["e_conserved"][t] = (kin + u - sh + e_th) / n
        self.sync_system()
        return out

    def expand_box(self, axis, ratio):
        """Enlarge the box ``ratio``-fold along ``axis`` (0, 1, 2), particles left in place.

        The new space is empty: the gas then fills it in an NVE run (the
        direct route).  Forces and the tail correction are recomputed.
        """
        if isinstance(axis, bool) or axis not in (0, 1, 2):
            raise StudyError(f"setting 'axis' = {axis!r}: must be 0, 1 or 2 (x, y or z)")
        ratio = positive("ratio", ratio, "a volume ratio > 1, for example 2")
        if ratio <= 1.0:
            raise StudyError(f"setting 'ratio' = {ratio!r}: the box can only grow (ratio > 1)")
        wrap_positions(self.r_ni, self.box_i)  # in the old box, so nobody jumps across
        self.box_i = self.box_i.copy()
        self.box_i[axis] *= ratio
        self.nlist.set_box(self.box_i)
        self._update_tail()
        self.rebuild_list()
        self._forces(" after enlarging the box")
        self.sync_system()

    def set_method(self, method):
        """Switch between "md-nvt" and "md-nve" (e.g. NVE after an NVT start)."""
        if method not in METHODS:
            raise StudyError(f"setting 'method' = {method!r}: MD offers {', '.join(METHODS)}")
        if method == "md-nvt" and self.temperature is None:
            raise StudyError("md-nvt needs a temperature; this sampler was made without one")
        self.method = method

    # -- state -------------------------------------------------------------------------
    def positions(self):
        """Positions in the system's original particle order, wrapped into the box."""
        r = self.r_ni.copy()
        wrap_positions(r, self.box_i)
        out = np.empty_like(r)
        out[self.id_n] = r
        return out

    def velocities(self):
        """Velocities in the system's original particle order."""
        out = np.empty_like(self.v_ni)
        out[self.id_n] = self.v_ni
        return out

    def sync_system(self):
        """Copy positions, velocities (``v_ni``) and box into the wrapped System."""
        self.system.r_ni = self.positions()
        self.system.v_ni = self.velocities()
        self.system.box_i = self.box_i.copy()

    def get_state(self):
        """Everything needed to continue bit for bit (copies)."""
        return {
            "method": self.method,
            "r_ni": self.r_ni.copy(), "v_ni": self.v_ni.copy(), "f_ni": self.f_ni.copy(),
            "species_n": self.species_n.copy(), "mass_n": self.mass_n.copy(),
            "id_n": self.id_n.copy(), "r_ref_ni": self.nlist.r_ref_ni.copy(),
            "box_i": self.box_i.copy(), "rng": self.rng.copy(), "step": int(self.step),
            "observables": self.obs.copy(), "time_step": float(self.time_step),
            "skin": float(self.skin),
        }

    def set_state(self, state):
        """Continue from :meth:`get_state` output (same system and settings)."""
        need = ("r_ni", "v_ni", "f_ni", "species_n", "mass_n", "id_n", "r_ref_ni", "box_i",
                "rng", "step", "observables")
        missing = [k for k in need if k not in state]
        if missing:
            raise StudyError(f"MD state is missing {', '.join(missing)}; it was not written "
                             "by MDSampler.get_state")
        if np.shape(state["r_ni"]) != (self.n, 3):
            raise StudyError(f"MD state holds {np.shape(state['r_ni'])[0]} particles; this "
                             f"sampler has {self.n}")
        for name in ("r_ni", "v_ni", "f_ni", "mass_n"):
            setattr(self, name, np.array(state[name], dtype=float))
        self.species_n = np.array(state["species_n"], dtype=np.int64)
        self.id_n = np.array(state["id_n"], dtype=np.int64)
        self.box_i = np.array(state["box_i"], dtype=float)
        self.rng = np.array(state["rng"], dtype=np.uint64)
        self.step = int(state["step"])
        self.obs = np.array(state["observables"], dtype=float)
        if "method" in state:
            self.method = str(state["method"])
        if "time_step" in state:
            self.time_step = float(state["time_step"])
        self.nlist.set_box(self.box_i)
        self._update_tail()
        # Rebuild the list exactly as it was: from the build-time positions,
        # which are already cell-sorted, so the order comes out unchanged.
        r_ref = np.array(state["r_ref_ni"], dtype=float)
        order = self.nlist.sort_order(r_ref)
        if not np.array_equal(order, np.arange(self.n)):
            raise StudyError("MD state: the stored list positions are not in cell order for "
                             "this box; the state does not belong to this sampler's settings")
        self.nlist.build(r_ref)
        self.sync_system()

    def settings(self):
        """Settings as plain numbers and strings (for file attributes)."""
        return {
            "method": self.method,
            "temperature": float("nan") if self.temperature is None else self.temperature,
            "time_step": self.time_step, "thermostat": "stochastic velocity rescaling",
            "thermostat_time": self.thermostat_time, "skin": self.skin,
            "n_threads": self.n_threads, "n_particles": self.n, "dof": self.nf,
            "box_x": float(self.box_i[0]), "box_y": float(self.box_i[1]),
            "box_z": float(self.box_i[2]), "cutoff_max": float(self.pairs.rc_max),
            "seed": repr(self.seed), "dynamics_potential": "truncated and shifted",
        }
