"""Molecular dynamics of linear rigid molecules, one kind or a mixture with atoms: the sampler.

The molecules interact through :mod:`mdsim.engine.rigid_pair` (site
Lennard-Jones or Mie plus axial point quadrupoles, one centre-centre
cut-off) in its shifted-energy form, whose pair energy goes continuously to
zero at the cut-off so that the dynamics conserve energy; the plain-cut
energy (the Monte Carlo model) is evaluated beside it at every sample.  The
steps are the symplectic splitting of :mod:`mdsim.engine.rigid_integrator`
(half kick, drift with exact free rotation, half kick) with, in
equilibration or "md-nvt", stochastic velocity rescaling of translations
(3N - 3 degrees of freedom) and rotations (2 N_rot, two for each of the
N_rot linear rotors; an atom of a mixture has none) separately.  A half Verlet
list on the centres (:class:`mdsim.engine.neighbours.NeighbourList`) with
the molecular cut-off is rebuilt when a centre has moved half the skin.

Internally the molecules are kept in the list's cell-sorted order; ``id_n``
maps back to the order they were given in.

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate, ``_t``
molecule type.
"""
import math

import numpy as np
from mdsim.checks import count, positive, positive_array
from mdsim.engine import rng as _rng
from mdsim.engine.integrator import run_in_blocks
from mdsim.engine.neighbours import NeighbourList, choose_skin, wrap_positions
from mdsim.engine.rigid_integrator import (draw_axes, kinetic_parts, rigid_block,
                                           rotational_dof, start_momenta, translational_dof)
from mdsim.engine.rigid_md_steps import (rigid_time_step, sampler_temperature,
                                         temperatures_by_type)
from mdsim.engine.rigid_pair import forces_half
from mdsim.errors import SettingError, SimulationError, StudyError

__all__ = ["RigidMDSampler", "METHODS"]

METHODS = ("md-nvt", "md-nve")


class RigidMDSampler:
    """Molecular dynamics of linear rigid molecules and atoms (NVT by velocity rescaling, or NVE).

    Parameters
    ----------
    model : mdsim.engine.rigid_model.LinearPairModel
        The pair interaction, built with ``shifted=True`` (the plain cut's
        energy jumps at the cut-off are not forces, so its dynamics would
        not conserve energy).
    centre_ni : array_like, shape=(n, 3), sigma
        Centres of mass.
    axis_ni : array_like, shape=(n, 3), optional
        Unit axes; default drawn uniformly on the sphere from ``seed``.
    box_i : array_like, shape=(3,), sigma
    mass_t, inertia_t : array_like, shape=(n_types,)
        Mass (reduced) and moment of inertia (reduced, m sigma^2) of each
        molecule type: positive for a type that rotates, 0 for an atom
        (``model.rotates_t`` 0: one site at the centre, no quadrupole), which
        has no rotational degrees of freedom.
    type_n : array_like, shape=(n,), int, optional
        Molecule types; default all 0.
    temperature : float, optional
        kT/epsilon.  Required for "md-nvt"; for "md-nve" it sets the start
        momenta and the thermostat of :meth:`equilibrate`.
    seed : int or list of int
    method : {"md-nvt", "md-nve"}
    time_step : float, optional
        Reduced; default the smaller of 0.005 min(1, 1/sqrt(T*)) sqrt(m)
        (the atomic rule, the lightest m) and ``mdsim.engine.rigid_md_steps.ROTATION_STEP`` /
        sqrt(2 T* / I) (the smallest I of a rotor).
    thermostat_time : float
        Relaxation time of the thermostat, reduced.
    skin : float, optional
        Verlet skin, sigma; default
        :func:`mdsim.engine.neighbours.choose_skin`.
    momenta : (v_ni, l_ni), optional
        Start velocities and angular momenta (in the order given); default a
        canonical draw at ``temperature``.

    Notes
    -----
    ``run`` returns per molecule "u_model" (shifted energy, the one the
    dynamics conserve), "u_cut" (plain cut), "u_full" = u_cut + u_tail
    (the isotropic site-site tail of
    :meth:`~mdsim.engine.rigid_model.LinearPairModel.tail`),
    "kinetic_trans", "kinetic_rot", "e_conserved" = (K + U_model +
    E_thermostat) / N, and "temperature_trans" = 2 K_trans / (3N - 3),
    "temperature_rot" = 2 K_rot / (2 N_rot), "pressure_conf" = W / (3V) + p_tail
    (W the molecular virial of :func:`~mdsim.engine.rigid_pair.forces_half`,
    the same for both treatments of the cut-off), "pressure" =
    rho T_kin + pressure_conf, where T_kin is T_trans in NVE and the
    thermostat's target in NVT (the canonical mean of T_trans, exact, and
    without its noise: 1.2 % per sample for 100 molecules).

    The configurations are canonical for the shifted energy; "u_full" and
    the pressure are those of the plain cut plus its tail, the model of
    the Monte Carlo sampler, as if the two distributions were the same.
    They differ by the Boltzmann factor of the shift, exp(beta sum u(rc)),
    whose effect is a small fraction of the error bars at gas densities
    (the shift is below 0.03 epsilon per pair at rc = 3 sigma for N2; see
    tests/mdsim/test_rigid_md.py, MD against Monte Carlo).

    Examples
    --------
    Eight nitrogen-like molecules on a cubic lattice, a few steps at T* = 2:

    >>> from mdsim.engine.potentials import LennardJones
    >>> from mdsim.engine.rigid_model import LinearPairModel
    >>> model = LinearPairModel([([-0.16, 0.16], [LennardJones(1.0, 1.0)] * 2, 0.5)], 2.5,
    ...                         shifted=True)
    >>> g = (np.arange(2) + 0.5) * 3.0
    >>> r = np.stack(np.meshgrid(g, g, g, indexing="ij"), axis=-1).reshape(-1, 3)
    >>> md = RigidMDSampler(model, r, None, [6.0] * 3, mass_t=[1.0], inertia_t=[0.0256],
    ...                     temperature=2.0, seed=1)
    >>> out = md.run(3, 10)
    >>> sorted(out)[:3], out["e_conserved"].shape
    (['e_conserved', 'kinetic_rot', 'kinetic_trans'], (3,))
    """

    def __init__(self, model, centre_ni, axis_ni, box_i, *, mass_t, inertia_t, type_n=None,
                 temperature=None, seed, method="md-nvt", time_step=None, thermostat_time=0.5,
                 skin=None, momenta=None):
        if method not in METHODS:
            raise SettingError("method", method, f"molecular dynamics offers {', '.join(METHODS)}")
        if not model.shifted:
            raise SettingError("model", "plain cut", "molecular dynamics needs the shifted-"
                               "energy model: build LinearPairModel(..., shifted=True)")
        self.model, self.method, self.seed = model, method, seed
        r = np.array(centre_ni, dtype=float)
        n = r.shape[0] if r.ndim == 2 else 0
        if r.shape != (n, 3) or n < 2 or not np.all(np.isfinite(r)):
            raise SettingError("centre_ni", f"shape {r.shape}", "needs (n, 3) finite centres, "
                               "n >= 2")
        self.n = n
        self.rng = _rng.make_state(seed)
        self.type_n = self._types(type_n, model.n_types)
        self.mass_n = self._per_type("mass_t", positive_array(
            "mass_t", mass_t, "molecule masses, reduced"), model.n_types)[self.type_n]
        self.inertia_n = self._inertia(inertia_t, model)[self.type_n]
        self.box_i = positive_array("box_i", box_i, "box edges in sigma")
        if self.box_i.shape != (3,):
            raise SettingError("box_i", list(self.box_i), "needs three edges")
        if np.any(self.box_i <= 2.0 * model.rc):
            raise SettingError("box_i", self.box_i.tolist(), f"each edge must exceed twice the "
                               f"cut-off {model.rc:g} (minimum image); use more molecules or a "
                               "shorter cut-off")
        self.temperature = temperature = sampler_temperature(temperature, method, momenta)
        self.r_ni = r
        self.e_ni = self._axes(axis_ni)
        self.v_ni, self.l_ni = self._momenta(momenta)
        self.nf_trans, self.nf_rot = translational_dof(n), rotational_dof(self.inertia_n)
        t_state = temperature if temperature is not None else self.temperature_now()
        self.time_step = self._time_step(time_step, t_state)
        self.thermostat_time = positive("thermostat_time", thermostat_time, "reduced time")
        self.volume = float(np.prod(self.box_i))
        fractions_t = np.bincount(self.type_n, minlength=model.n_types) / n
        self.u_tail, self.p_tail = model.tail(n / self.volume, fractions_t)
        skin = choose_skin(n / self.volume, t_state, model.rc) if skin is None else skin
        self.nlist = NeighbourList(n, self.box_i, model.rc, skin)
        self.skin = self.nlist.skin
        self.id_n = np.arange(n, dtype=np.int64)
        self.f_ni, self.tau_ni = np.zeros((n, 3)), np.zeros((n, 3))
        self.obs = np.zeros(5)
        self.step = 0
        self.rebuild_list()
        self._forces("in the start configuration")
        self.obs[3:] = kinetic_parts(self.v_ni, self.l_ni, self.mass_n, self.inertia_n)

    # -- set-up --------------------------------------------------------------------
    @staticmethod
    def _per_type(name, values_t, n_types):
        if values_t.shape != (n_types,):
            raise SettingError(name, values_t.tolist(), f"needs one value per molecule type "
                               f"({n_types})")
        return values_t

    def _inertia(self, inertia_t, model):
        """Moments of inertia per type: positive for a type that rotates, 0 for an atom."""
        i_t = np.array(inertia_t, dtype=float).reshape(-1)
        self._per_type("inertia_t", i_t, model.n_types)
        rotates = model.rotates_t == 1
        bad = ~np.isfinite(i_t) | (rotates & ~(i_t > 0.0)) | (~rotates & (i_t != 0.0))
        if np.any(bad):
            t = int(np.flatnonzero(bad)[0])
            raise SettingError("inertia_t", i_t.tolist(), f"type {t} "
                               + ("rotates and needs a positive moment of inertia (m sigma^2)"
                                  if rotates[t] else "is an atom (one site at its centre, no "
                                  "quadrupole), which has no rotation: give 0"))
        return i_t

    def _types(self, type_n, n_types):
        if type_n is None:
            return np.zeros(self.n, dtype=np.int64)
        t = np.asarray(type_n)
        if t.shape != (self.n,) or not np.issubdtype(t.dtype, np.integer) or t.min() < 0 \
                or t.max() >= n_types:
            raise SettingError("type_n", t.tolist()[:5], f"needs {self.n} integers in "
                               f"0..{n_types - 1} (the model's molecule types)")
        return t.astype(np.int64)

    def _axes(self, axis_ni):
        if axis_ni is None:
            e = np.empty((self.n, 3))
            draw_axes(self.rng, e)
            return e
        e = np.array(axis_ni, dtype=float)
        if e.shape != (self.n, 3) or not np.all(np.abs(np.linalg.norm(e, axis=1) - 1) < 1e-9):
            raise SettingError("axis_ni", f"shape {e.shape}", f"needs ({self.n}, 3) unit vectors")
        return e

    def _momenta(self, momenta):
        if momenta is None:
            return start_momenta(self.rng, self.mass_n, self.inertia_n, self.e_ni,
                                 self.temperature)
        v, lm = (np.array(x, dtype=float) for x in momenta)
        if v.shape != (self.n, 3) or lm.shape != (self.n, 3) or not (
                np.all(np.isfinite(v)) and np.all(np.isfinite(lm))):
            raise SettingError("momenta", "(v_ni, l_ni)", f"needs two ({self.n}, 3) finite arrays")
        atoms = self.inertia_n == 0.0
        if self.temperature is not None and not (np.any(v) and (np.any(lm) or atoms.all())):
            raise SettingError("momenta", "all zero velocities or angular momenta",
                               "the thermostat rescales each group and cannot start from rest; "
                               "give nonzero momenta or leave them out for a canonical draw")
        axial = np.sum(lm * self.e_ni, axis=1)
        lm = lm - axial[:, None] * self.e_ni  # a linear rotor has no spin about its axis
        lm[atoms] = 0.0  # nor an atom any rotation
        return v, lm

    def _time_step(self, time_step, t_state):
        if time_step is not None:
            dt = positive("time_step", time_step, "reduced time, about 0.001 to 0.005")
            if dt > 0.05:
                raise SettingError("time_step", time_step, "must be at most 0.05 (reduced)")
            return dt
        return rigid_time_step(t_state, self.mass_n, self.inertia_n)

    # -- internals -----------------------------------------------------------------
    def rebuild_list(self):
        """Sort the molecules into cell order and rebuild the neighbour list."""
        order = self.nlist.sort_order(self.r_ni)
        if not np.array_equal(order, np.arange(self.n)):
            for name in ("r_ni", "v_ni", "e_ni", "l_ni", "f_ni", "tau_ni", "mass_n",
                         "inertia_n", "type_n", "id_n"):
                setattr(self, name, np.ascontiguousarray(getattr(self, name)[order]))
        self.nlist.build(self.r_ni)

    def _forces(self, where):
        u, w = forces_half(self.r_ni, self.e_ni, self.type_n, self.box_i, *self.model.arrays(),
                           self.nlist.nb_nk, self.nlist.count_n, self.f_ni, self.tau_ni)
        if not math.isfinite(u):
            raise SimulationError(f"rigid-molecule MD: non-finite energy {where} (two molecules "
                                  "overlap); start from a looser configuration")
        self.obs[0], self.obs[1] = u, w

    def _advance(self, n_steps, thermostat):
        kT = self.temperature if self.temperature is not None else 1.0
        c = math.exp(-self.time_step / self.thermostat_time)
        half_skin2 = 0.25 * self.skin ** 2

        def block(steps, resume):
            return rigid_block(
                steps, resume, self.time_step, self.r_ni, self.v_ni, self.e_ni, self.l_ni,
                self.f_ni, self.tau_ni, self.mass_n, self.inertia_n, self.nlist.r_ref_ni,
                half_skin2, self.type_n, self.box_i, *self.model.arrays(), self.nlist.nb_nk,
                self.nlist.count_n, thermostat, kT, self.nf_trans, self.nf_rot, c, self.rng,
                self.obs)
        done, status = run_in_blocks(n_steps, block, self.rebuild_list)
        self.step += done
        if status == 2:
            raise SimulationError(f"rigid-molecule MD: non-finite energy at step "
                                  f"{self.step + 1}; shorten the time step")

    def plain_cut_energy(self):
        """The plain-cut energy of the current configuration (the Monte Carlo model), epsilon
        (the whole box, without the tail)."""
        arrays = list(self.model.arrays())
        arrays[-1] = 0  # shifted = 0
        u, _ = forces_half(self.r_ni, self.e_ni, self.type_n, self.box_i, *arrays,
                           self.nlist.nb_nk, self.nlist.count_n, np.zeros((self.n, 3)),
                           np.zeros((self.n, 3)))
        return u

    # -- sampling ------------------------------------------------------------------
    def temperature_now(self):
        """The kinetic temperature 2 K / F of the current momenta, F = 3N - 3 + 2 N_rot."""
        kt, kr = kinetic_parts(self.v_ni, self.l_ni, self.mass_n, self.inertia_n)
        return 2.0 * (kt + kr) / (self.nf_trans + self.nf_rot)

    def temperatures_by_type(self):
        """Kinetic temperatures of each molecule type's translations and rotations now
        (:func:`mdsim.engine.rigid_md_steps.temperatures_by_type`)."""
        return temperatures_by_type(self.v_ni, self.l_ni, self.mass_n, self.inertia_n,
                                    self.type_n, self.model.n_types)

    def equilibrate(self, n_steps):
        """``n_steps`` unrecorded steps, the thermostat on when a temperature is set."""
        self._advance(count("equilibration steps", n_steps, 0), self.temperature is not None)

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` steps (class Notes).

        Returns
        -------
        dict of str -> ndarray, shape=(n_samples,), float64
        """
        n_samples = count("n_samples", n_samples)
        interval = count("interval", interval)
        keys = ("u_model", "u_cut", "u_full", "kinetic_trans", "kinetic_rot", "temperature_trans",
                "temperature_rot", "pressure_conf", "pressure", "e_conserved")
        out = {k: np.empty(n_samples) for k in keys}
        thermostat = self.method == "md-nvt"
        n = self.n
        for t in range(n_samples):
            self._advance(interval, thermostat)
            u, w, e_th, kt, kr = self.obs
            out["u_model"][t] = u / n
            out["u_cut"][t] = self.plain_cut_energy() / n
            out["u_full"][t] = out["u_cut"][t] + self.u_tail
            out["kinetic_trans"][t] = kt / n
            out["kinetic_rot"][t] = kr / n
            out["temperature_trans"][t] = 2.0 * kt / self.nf_trans
            out["temperature_rot"][t] = 2.0 * kr / self.nf_rot if self.nf_rot else math.nan
            out["pressure_conf"][t] = w / (3.0 * self.volume) + self.p_tail
            t_kin = self.temperature if thermostat else out["temperature_trans"][t]
            out["pressure"][t] = n / self.volume * t_kin + out["pressure_conf"][t]
            out["e_conserved"][t] = (kt + kr + u + e_th) / n
        return out

    def set_method(self, method):
        """Switch between "md-nvt" and "md-nve" (NVE production after an NVT start)."""
        if method not in METHODS:
            raise SettingError("method", method, f"molecular dynamics offers {', '.join(METHODS)}")
        if method == "md-nvt" and self.temperature is None:
            raise StudyError("md-nvt needs a temperature; this sampler was made without one")
        self.method = method

    _STATE_ARRAYS = ("r_ni", "v_ni", "e_ni", "l_ni", "f_ni", "tau_ni", "mass_n", "inertia_n",
                     "type_n", "id_n", "rng", "obs")

    def get_state(self):
        """Everything needed to continue bit for bit (copies)."""
        state = {name: getattr(self, name).copy() for name in self._STATE_ARRAYS}
        state.update(r_ref_ni=self.nlist.r_ref_ni.copy(), step=int(self.step),
                     method=self.method, time_step=float(self.time_step))
        return state

    def set_state(self, state):
        """Continue from :meth:`get_state` output (same model, box and settings)."""
        missing = [k for k in (*self._STATE_ARRAYS, "r_ref_ni", "step") if k not in state]
        if missing:
            raise SettingError("state", f"missing {', '.join(missing)}", "was not written by "
                               "RigidMDSampler.get_state")
        if np.shape(state["r_ni"]) != (self.n, 3):
            raise SettingError("state", f"{np.shape(state['r_ni'])[0]} molecules",
                               f"this sampler has {self.n}")
        for name in self._STATE_ARRAYS:
            setattr(self, name, np.array(state[name], dtype=getattr(self, name).dtype))
        self.step = int(state["step"])
        self.method = str(state.get("method", self.method))
        self.time_step = float(state.get("time_step", self.time_step))
        # the list as it was built: from the build-time centres, already in cell order
        r_ref = np.array(state["r_ref_ni"], dtype=float)
        if not np.array_equal(self.nlist.sort_order(r_ref), np.arange(self.n)):
            raise SettingError("state", "r_ref_ni", "not in cell order for this box; the state "
                               "belongs to another sampler")
        self.nlist.build(r_ref)

    def scale_momenta(self, factor):
        """Multiply every velocity and angular momentum by ``factor`` (> 0): the kinetic energy
        by factor^2, its split between translations and rotations kept (a start at a chosen
        total energy)."""
        factor = positive("factor", factor, "a positive scale of the momenta")
        self.v_ni *= factor
        self.l_ni *= factor
        self.obs[3:] = kinetic_parts(self.v_ni, self.l_ni, self.mass_n, self.inertia_n)

    def momenta(self):
        """Velocities and angular momenta in the order the molecules were given (copies)."""
        v_out, l_out = np.empty_like(self.v_ni), np.empty_like(self.l_ni)
        v_out[self.id_n], l_out[self.id_n] = self.v_ni, self.l_ni
        return v_out, l_out

    def configuration(self):
        """Centres (wrapped into the box) and axes in the order they were given."""
        r = self.r_ni.copy()
        wrap_positions(r, self.box_i)
        r_out, e_out = np.empty_like(r), np.empty_like(self.e_ni)
        r_out[self.id_n], e_out[self.id_n] = r, self.e_ni
        return r_out, e_out
