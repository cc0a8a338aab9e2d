"""Thermostatted molecular dynamics of non-linear rigid molecules in stage files.

:class:`BodyMDStageSampler` wraps :class:`mdsim.engine.body_md.BodyMDSampler`
in the protocol of :func:`mdsim.sampling.state_point.sample_state_point`
(built from a :class:`mdsim.sampling.body_stage.BodySystem`, ``equilibrate``,
``run``, ``get_state``/``set_state``, ``settings``) for the energy route's
``sampler = "md"`` (method :data:`BODY_MD_METHOD`), with a checkpoint after
every block that continues the run bit for bit.  Fixed-energy runs (the
microcanonical and direct routes) are not offered for non-linear molecules
yet.

Reduced units of the molecule's first site.  Run-file ``positions`` and
``velocities`` are the centres and their velocities in the order the system
gave them; the checkpoint also holds ``quat_nq`` and ``angular_momenta``
(body frame) in that order, from which a continued stage starts.
"""
import copy

from mdsim.engine.body_md import BodyMDSampler
from mdsim.engine.body_integrator import BODY_ROTATIONAL_DOF
from mdsim.engine.rigid_integrator import translational_dof
from mdsim.errors import SettingError, StudyError

__all__ = ["BODY_MD_METHOD", "BodyMDStageSampler"]

BODY_MD_METHOD = "rigid-body-md-nvt"
"""The method name of thermostatted MD of non-linear rigid molecules in stage files."""


class BodyMDStageSampler:
    """Thermostatted MD of a :class:`~mdsim.sampling.body_stage.BodySystem` behind the protocol.

    Parameters
    ----------
    system : BodySystem
        Its model is run in its shifted-energy form; its ``v_ni`` and
        ``pb_ni`` (velocities, body-frame angular momenta), when set, start
        the run, otherwise they are drawn at ``temperature``.
    temperature : float
        kT, reduced (the thermostat's target).
    energy : None
        Refused when given (thermostatted only).
    seed : int or list of int
    method : str
        :data:`BODY_MD_METHOD`.
    time_step, thermostat_time, skin : float, optional
        Reduced; defaults of :class:`~mdsim.engine.body_md.BodyMDSampler`.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> from mdsim.sampling.body_stage import body_system
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> s = BodyMDStageSampler(body_system(bent, 300.0, 2000.0, 27, 3.0, seed=1),
    ...                        temperature=6.0, seed=2, method=BODY_MD_METHOD)
    >>> s.equilibrate(20)
    >>> sorted(s.run(2, 5))[:3]
    ['e_conserved', 'kinetic', 'kinetic_rot']
    """

    def __init__(self, system, temperature=None, energy=None, seed=0, method=BODY_MD_METHOD,
                 time_step=None, thermostat_time=0.5, skin=None):
        if method != BODY_MD_METHOD or temperature is None or energy is not None:
            raise StudyError(f"setting 'method' = {method!r}: non-linear rigid molecules are "
                             f"run by thermostatted MD ({BODY_MD_METHOD!r}) at a set temperature")
        if system.model.n_types > 1:
            raise SettingError("system", f"{system.model.n_types} kinds of molecule", "MD of "
                               "non-linear molecules takes one kind of molecule")
        self.method, self.system = method, system
        self.model = copy.copy(system.model)
        self.model.shifted = 1  # the dynamics need the shifted energy (mdsim.engine.body_md)
        self.dof_per_particle = int(system.dof_per_particle)
        momenta = None
        if system.v_ni is not None and getattr(system, "pb_ni", None) is not None:
            momenta = (system.v_ni, system.pb_ni)
        self.md = BodyMDSampler(self.model, system.r_ni, system.quat_nq, system.box_i,
                                system.inertia_i, temperature=temperature, seed=seed,
                                time_step=time_step, thermostat_time=thermostat_time, skin=skin,
                                momenta=momenta)

    @property
    def kinetic_dof_total(self):
        """3N - 3 + 3N: the kinetic degrees of freedom of the box."""
        return translational_dof(self.md.n) + BODY_ROTATIONAL_DOF * self.md.n

    def equilibrate(self, n_steps):
        """Unrecorded thermostatted steps."""
        self.md.equilibrate(n_steps)

    def run(self, n_samples, interval):
        """Production samples: the engine's series plus "kinetic" (K / N) and
        "temperature_inst" (2K / (6N - 3))."""
        out = self.md.run(n_samples, interval)
        out["kinetic"] = out["kinetic_trans"] + out["kinetic_rot"]
        out["temperature_inst"] = 2.0 * self.md.n / self.kinetic_dof_total * out["kinetic"]
        return out

    def positions(self):
        """The molecular centres in the system's order, shape=(n, 3), sigma."""
        return self.md.in_given_order("r_ni")

    def velocities(self):
        """The centres' velocities in the system's order, shape=(n, 3), reduced."""
        return self.md.in_given_order("v_ni")

    def get_state(self):
        """The engine's state (bit for bit) plus the orientations and body-frame angular
        momenta in the system's order, from which a continued stage starts."""
        state = self.md.get_state()
        state["engine_quat_nq"] = state.pop("quat_nq")  # the engine's own (cell) order
        state["quat_nq"] = self.md.in_given_order("quat_nq")
        state["angular_momenta"] = self.md.in_given_order("pb_ni")
        return state

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        engine = {k: v for k, v in state.items() if k not in ("quat_nq", "angular_momenta")}
        engine["quat_nq"] = engine.pop("engine_quat_nq")
        self.md.set_state(engine)

    def settings(self):
        """Settings as plain numbers and strings (for HDF5 attributes)."""
        md = self.md
        return {"method": self.method, "temperature_red": float(md.temperature),
                "n_particles": int(md.n), "density_red": float(self.system.density),
                "dof_per_particle": self.dof_per_particle,
                "kinetic_dof_total": int(self.kinetic_dof_total),
                "time_step_red": float(md.time_step),
                "thermostat_time_red": float(md.thermostat_time),
                "skin_red": float(md.nlist.skin), "cutoff_red": float(md.model.rc),
                "u_tail_red": float(md.u_tail), "p_tail_red": float(md.p_tail)}
