"""Molecular dynamics of rigid bodies of any shape (non-linear molecules, one kind or a mixture
with linear molecules and atoms): the sampler.

The bodies interact through :mod:`mdsim.engine.body_pair` (site
Lennard-Jones or Mie, one centre-centre cut-off) in its shifted-energy
form, so that the dynamics conserve energy; the plain-cut energy (the Monte
Carlo model) is evaluated beside it at every sample.  The steps are the
symplectic splitting of :mod:`mdsim.engine.body_integrator` with, in
equilibration or "md-nvt", stochastic velocity rescaling of translations
(3N - 3 degrees of freedom) and rotations (3 per non-linear body, 2 per
linear one, none for an atom) separately.  Each type has its mass and
principal moments (:func:`mdsim.engine.body_inertia.body_inertia_table`: a
linear type's moment about its axis is 0, an atom's three are).  A half Verlet
list on the centres (:class:`mdsim.engine.neighbours.NeighbourList`) is
rebuilt when a centre has moved half the skin; the bodies are kept in its
cell-sorted order, ``id_n`` maps back to the order they were given in.

Array suffixes: ``_n`` body, ``_i`` Cartesian component, ``_q`` quaternion
component.
"""
import math

import numpy as np

from mdsim.checks import count, positive, positive_array
from mdsim.engine import rng as _rng
from mdsim.engine.body_inertia import body_inertia_table
from mdsim.engine.body_integrator import (body_block, body_kinetic_parts, body_rotational_dof,
                                          body_start_momenta)
from mdsim.engine.body_pair import body_forces_half
from mdsim.engine.integrator import run_in_blocks
from mdsim.engine.neighbours import NeighbourList, choose_skin
from mdsim.engine.rigid_integrator import translational_dof
from mdsim.engine.rigid_md import METHODS
from mdsim.engine.rigid_md_steps import rigid_time_step, sampler_temperature
from mdsim.errors import SettingError, SimulationError

__all__ = ["BodyMDSampler"]


class BodyMDSampler:
    """Molecular dynamics of rigid bodies, one kind or a mixture (NVT by velocity rescaling, or
    NVE).

    Parameters
    ----------
    model : BodyPairModel
        Built with ``shifted=True``.
    centre_ni : array_like, shape=(n, 3), sigma
    quat_nq : array_like, shape=(n, 4)
        Orientations (normalised here).
    box_i : array_like, shape=(3,), sigma
    inertia_ti : array_like, shape=(n_types, 3), or (3,) for one kind, m sigma^2
        Principal moments of inertia of each body type
        (:func:`mdsim.engine.body_inertia.body_inertia_table`).
    temperature : float or None
        kT, reduced: the start momenta's and the thermostat's; None for "md-nve"
        from given ``momenta`` (no thermostat at all).
    seed : int or list of int
    mass_t : array_like, shape=(n_types,), optional
        Masses of the types in the unit of mass (the first type's); default 1
        for one kind, required for a mixture.
    type_n : array_like, shape=(n,), int, optional
        The type of each body (default all 0).
    method : {"md-nvt", "md-nve"}
        Production with or without the thermostat (equilibration always has it).
    time_step, thermostat_time : float, optional
        Reduced; the time step by default that of
        :func:`mdsim.engine.rigid_md_steps.rigid_time_step` for the lightest
        mass and the smallest positive moment of the types in the box.
    skin : float, optional
        Verlet skin, sigma (default :func:`mdsim.engine.neighbours.choose_skin`).
    momenta : (v_ni, pb_ni), optional
        Velocities and body-frame angular momenta to start from (a continued
        run); default a canonical draw at ``temperature``.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from mdsim.engine.body_model import BodyPairModel
    >>> from mdsim.engine.body_mc import body_lattice_start
    >>> pos = [[0.0, 0.1, 0.0], [0.25, -0.05, 0.0], [-0.25, -0.05, 0.0]]
    >>> model = BodyPairModel([(pos, [LennardJones(1.0, 1.0)] * 3)], 2.5, shifted=True)
    >>> c, q = body_lattice_start(27, np.full(3, 7.5), seed=1)
    >>> md = BodyMDSampler(model, c, q, [7.5] * 3, [0.01, 0.04, 0.05], temperature=3.0, seed=1)
    >>> out = md.run(3, 10)
    >>> out["e_conserved"].shape, sorted(out)[:2]
    ((3,), ['e_conserved', 'kinetic_rot'])
    """

    def __init__(self, model, centre_ni, quat_nq, box_i, inertia_ti, *, temperature, seed,
                 mass_t=None, type_n=None, method="md-nvt", time_step=None,
                 thermostat_time=0.5, skin=None, momenta=None):
        if method not in METHODS:
            raise SettingError("method", method, f"molecular dynamics offers {', '.join(METHODS)}")
        if not model.shifted:
            raise SettingError("model", "plain cut", "molecular dynamics needs the shifted-"
                               "energy model: build BodyPairModel(..., shifted=True)")
        self.model, self.method = model, method
        r = np.array(centre_ni, dtype=float)
        q = np.array(quat_nq, dtype=float)
        n = len(r)
        if r.shape != (n, 3) or q.shape != (n, 4) or n < 2 or not np.all(np.isfinite(r)):
            raise SettingError("centre_ni, quat_nq", (r.shape, q.shape), "need (n, 3) finite "
                               "centres and (n, 4) quaternions, n >= 2")
        self.inertia_ti = body_inertia_table(model, inertia_ti)
        self.mass_t = self._masses(mass_t, len(self.inertia_ti))
        self.type_n = self._types(type_n, n, len(self.inertia_ti))
        self.box_i = np.asarray(box_i, dtype=float).reshape(3)
        if np.any(self.box_i <= 2.0 * model.rc):
            raise SettingError("box_i", self.box_i.tolist(), f"each edge must exceed twice the "
                               f"cut-off {model.rc:g}; use more molecules or a shorter cut-off")
        self.n = n
        self.temperature = temperature = sampler_temperature(temperature, method, momenta)
        self.rng = _rng.make_state(seed)
        self.mass_n = self.mass_t[self.type_n]
        self.inertia_ni = self.inertia_ti[self.type_n]
        self.r_ni = r
        self.quat_nq = q / np.linalg.norm(q, axis=1)[:, None]
        self.offset_nsi = model.offsets(self.quat_nq, self.type_n)
        if momenta is None:
            self.v_ni, self.pb_ni = body_start_momenta(self.rng, self.mass_n, self.inertia_ni,
                                                       self.temperature)
        else:
            self.v_ni, self.pb_ni = (np.array(x, dtype=float) for x in momenta)
            if self.v_ni.shape != (n, 3) or self.pb_ni.shape != (n, 3) or not (
                    np.all(np.isfinite(self.v_ni)) and np.all(np.isfinite(self.pb_ni))):
                raise SettingError("momenta", "(v_ni, pb_ni)", f"needs two ({n}, 3) finite "
                                   "arrays: velocities and body-frame angular momenta")
            self.pb_ni[self.inertia_ni == 0.0] = 0.0  # no spin about a linear body's axis
        self.nf_trans, self.nf_rot = translational_dof(n), body_rotational_dof(self.inertia_ni)
        t_state = temperature if temperature is not None else self.temperature_now()
        present = np.unique(self.type_n)
        self.time_step = (rigid_time_step(t_state, self.mass_t[present],
                                          self.inertia_ti[present].ravel())
                          if time_step is None else positive("time_step", time_step, "reduced"))
        self.thermostat_time = positive("thermostat_time", thermostat_time, "reduced time")
        self.volume = float(np.prod(self.box_i))
        fraction_t = np.bincount(self.type_n, minlength=len(self.mass_t)) / n
        self.u_tail, self.p_tail = model.tail(n / self.volume, fraction_t)
        skin = choose_skin(n / self.volume, t_state, model.rc) if skin is None else skin
        self.nlist = NeighbourList(n, self.box_i, model.rc, skin)
        self.skin = self.nlist.skin
        self.id_n = np.arange(n, dtype=np.int64)
        self.f_ni, self.tau_ni = np.zeros((n, 3)), np.zeros((n, 3))
        self.obs = np.zeros(5)
        self.step = 0
        self.rebuild_list()
        self._forces(self.model.shifted, self.f_ni, self.tau_ni)
        self.obs[3:] = body_kinetic_parts(self.v_ni, self.pb_ni, self.mass_n, self.inertia_ni)

    @staticmethod
    def _masses(mass_t, n_types):
        if mass_t is None:
            if n_types > 1:
                raise SettingError("mass_t", None, f"a mixture of {n_types} body types needs "
                                   "their masses (in the first type's)")
            return np.ones(1)
        m = positive_array("mass_t", mass_t, "body masses, reduced")
        if m.shape != (n_types,):
            raise SettingError("mass_t", m.tolist(), f"needs one mass per body type ({n_types})")
        return m

    @staticmethod
    def _types(type_n, n, n_types):
        if type_n is None:
            return np.zeros(n, dtype=np.int64)
        t = np.asarray(type_n)
        if t.shape != (n,) or not np.issubdtype(t.dtype, np.integer) or t.min() < 0 \
                or t.max() >= n_types:
            raise SettingError("type_n", t.tolist()[:5], f"needs {n} integers in "
                               f"0..{n_types - 1} (the model's body types)")
        return t.astype(np.int64)

    def rebuild_list(self):
        """Sort the bodies into cell order and rebuild the neighbour list."""
        order = self.nlist.sort_order(self.r_ni)
        if not np.array_equal(order, np.arange(self.n)):
            for name in ("r_ni", "v_ni", "quat_nq", "pb_ni", "offset_nsi", "f_ni", "tau_ni",
                         "id_n", "type_n", "mass_n", "inertia_ni"):
                setattr(self, name, np.ascontiguousarray(getattr(self, name)[order]))
        self.nlist.build(self.r_ni)

    def _forces(self, shifted, f_ni, tau_ni):
        m = self.model
        u, w = body_forces_half(self.r_ni, self.offset_nsi, self.type_n, self.box_i,
                                m.site_start_t, m.params_kk, m.form, m.rc, shifted,
                                self.nlist.nb_nk, self.nlist.count_n, f_ni, tau_ni)
        if not math.isfinite(u):
            raise SimulationError("rigid-body MD: non-finite energy (two bodies overlap); start "
                                  "from a looser configuration")
        if shifted:
            self.obs[0], self.obs[1] = u, w
        return u

    def _advance(self, n_steps, thermostat):
        m = self.model
        c = math.exp(-self.time_step / self.thermostat_time)
        kT = self.temperature if self.temperature is not None else 0.0  # no thermostat: unused

        def block(steps, resume):
            return body_block(
                steps, resume, self.time_step, self.r_ni, self.v_ni, self.quat_nq, self.pb_ni,
                self.offset_nsi, self.f_ni, self.tau_ni, self.mass_n, self.inertia_ni,
                self.nlist.r_ref_ni, 0.25 * self.nlist.skin ** 2, self.type_n, self.box_i,
                m.site_start_t, m.site_body_ki, m.params_kk, m.form, m.rc, m.shifted,
                self.nlist.nb_nk, self.nlist.count_n, thermostat, kT,
                self.nf_trans, self.nf_rot, c, self.rng, self.obs)
        done, status = run_in_blocks(n_steps, block, self.rebuild_list)
        self.step += done
        if status == 2:
            raise SimulationError(f"rigid-body MD: non-finite energy at step {self.step + 1}; "
                                  "shorten the time step")

    def equilibrate(self, n_steps):
        """``n_steps`` unrecorded steps, the thermostat on when a temperature is set."""
        self._advance(count("equilibration steps", n_steps, 0), self.temperature is not None)

    def plain_cut_energy(self):
        """The plain-cut energy of the current configuration (the Monte Carlo model), epsilon
        (the whole box, without the tail)."""
        return self._forces(0, np.zeros((self.n, 3)), np.zeros((self.n, 3)))

    def temperature_now(self):
        """The kinetic temperature 2 K / F of the current momenta, F = 3N - 3 + F_rot."""
        kt, kr = body_kinetic_parts(self.v_ni, self.pb_ni, self.mass_n, self.inertia_ni)
        return 2.0 * (kt + kr) / (self.nf_trans + self.nf_rot)

    def set_method(self, method):
        """Switch between "md-nvt" and "md-nve" (NVE production after an NVT start)."""
        if method not in METHODS:
            raise SettingError("method", method, f"molecular dynamics offers {', '.join(METHODS)}")
        if method == "md-nvt" and self.temperature is None:
            raise SettingError("method", method, "md-nvt needs a temperature; this sampler was "
                               "made without one")
        self.method = method

    def scale_momenta(self, factor):
        """Multiply every velocity and body angular momentum by ``factor`` (> 0): the kinetic
        energy by factor^2, its split between translations and rotations kept."""
        factor = positive("factor", factor, "a positive scale of the momenta")
        self.v_ni *= factor
        self.pb_ni *= factor
        self.obs[3:] = body_kinetic_parts(self.v_ni, self.pb_ni, self.mass_n, self.inertia_ni)

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` steps.

        Returns
        -------
        dict of str -> ndarray, shape=(n_samples,), float64
            Per body: "u_model" (shifted), "u_full" (plain cut plus tail, the
            Monte Carlo model), "kinetic_trans", "kinetic_rot"; the kinetic
            temperatures "temperature_trans" (2 K_trans / (3N - 3)) and
            "temperature_rot" (2 K_rot / F_rot, 3 per non-linear body and 2
            per linear one; NaN without any); "pressure" (the set kT in NVT,
            the translational one in NVE, with the plain-cut virial of the
            shifted model and the tail); "e_conserved" (kinetic plus shifted
            energy minus what the thermostat added).
        """
        n_samples = count("n_samples", n_samples)
        interval = count("interval", interval)
        keys = ("u_model", "u_full", "kinetic_trans", "kinetic_rot", "temperature_trans",
                "temperature_rot", "pressure", "e_conserved")
        out = {k: np.empty(n_samples) for k in keys}
        thermostat = self.method == "md-nvt"
        n = self.n
        scratch = np.zeros((n, 3)), np.zeros((n, 3))
        for t in range(n_samples):
            self._advance(interval, thermostat)
            u, w, e_th, kt, kr = self.obs
            out["u_model"][t] = u / n
            out["u_full"][t] = self._forces(0, *scratch) / n + self.u_tail
            out["kinetic_trans"][t] = kt / n
            out["kinetic_rot"][t] = kr / n
            out["temperature_trans"][t] = 2.0 * kt / self.nf_trans
            out["temperature_rot"][t] = 2.0 * kr / self.nf_rot if self.nf_rot else math.nan
            t_kin = self.temperature if thermostat else out["temperature_trans"][t]
            out["pressure"][t] = (n * t_kin + w / 3.0) / self.volume + self.p_tail
            out["e_conserved"][t] = (kt + kr + u + e_th) / n
        return out

    _STATE_ARRAYS = ("r_ni", "v_ni", "quat_nq", "pb_ni", "offset_nsi", "f_ni", "tau_ni", "id_n",
                     "type_n", "rng", "obs")

    def get_state(self):
        """Everything needed to continue bit for bit (copies)."""
        state = {name: getattr(self, name).copy() for name in self._STATE_ARRAYS}
        state.update(r_ref_ni=self.nlist.r_ref_ni.copy(), step=int(self.step),
                     method=self.method, time_step=float(self.time_step))
        return state

    def set_state(self, state):
        """Continue from :meth:`get_state` output (same model, box and settings)."""
        missing = [k for k in (*self._STATE_ARRAYS, "r_ref_ni", "step") if k not in state
                   and not (k == "type_n" and len(self.mass_t) == 1)]  # one kind: all 0
        if missing:
            raise SettingError("state", f"missing {', '.join(missing)}", "was not written by "
                               "BodyMDSampler.get_state")
        if np.shape(state["r_ni"]) != (self.n, 3):
            raise SettingError("state", f"{np.shape(state['r_ni'])[0]} bodies",
                               f"this sampler has {self.n}")
        for name in self._STATE_ARRAYS:
            if name in state:
                setattr(self, name, np.array(state[name], dtype=getattr(self, name).dtype))
        self.mass_n, self.inertia_ni = self.mass_t[self.type_n], self.inertia_ti[self.type_n]
        self.step = int(state["step"])
        self.method = str(state["method"])
        self.time_step = float(state["time_step"])
        # the list as it was built, from the build-time centres in cell order: their sort sets
        # the cell boundaries the build reads (without it a box of 3 or more cells a side
        # would be listed from the start configuration's boundaries)
        r_ref = np.array(state["r_ref_ni"], dtype=float)
        if not np.array_equal(self.nlist.sort_order(r_ref), np.arange(self.n)):
            raise SettingError("state", "r_ref_ni", "not in cell order for this box; the state "
                               "belongs to another sampler")
        self.nlist.build(r_ref)

    def in_given_order(self, name):
        """A per-body array (``"r_ni"`` wrapped into the box, ``"quat_nq"``, ``"v_ni"``,
        ``"pb_ni"``, ``"type_n"``) in the order the bodies were given (a copy)."""
        a = getattr(self, name).copy()
        if name == "r_ni":
            a = np.mod(a, self.box_i)
        out = np.empty_like(a)
        out[self.id_n] = a
        return out
