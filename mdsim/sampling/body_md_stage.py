"""Molecular dynamics of non-linear rigid molecules (one kind, or a mixture with linear molecules
and atoms, every species a rigid body) in stage files, thermostatted or at fixed energy.

:class:`BodyMDStageSampler` wraps :class:`mdsim.engine.body_md.BodyMDSampler`
in the protocol of :func:`mdsim.sampling.state_point.sample_state_point`
(built from a :class:`mdsim.sampling.body_stage.BodySystem`, ``equilibrate``,
``run``, ``get_state``/``set_state``, ``settings``): the energy route's
``sampler = "md"`` (method :data:`BODY_MD_METHOD`) and the fixed-energy runs
of the microcanonical and direct routes (:data:`BODY_MD_NVE_METHOD`), with a
checkpoint after every block that continues the run bit for bit.  The fixed
energy, a fresh start's thermostatted equilibration and the scaling of the
momenta to that energy are those of the linear molecules'
:class:`mdsim.sampling.rigid_md_stage.RigidMDStageSampler`, with 3N - 3 + F_rot
kinetic degrees of freedom (F_rot: 3 per non-linear molecule, 2 per linear
one, none for an atom).

Reduced units of the first molecule's first site and the first molecule's
mass.  Run-file ``positions`` and ``velocities`` are the centres and their
velocities in the order the system gave them; the checkpoint also holds
``quat_nq``, ``angular_momenta`` (body frame) and ``type_n`` in that order,
from which a continued stage starts.
"""
import math

import numpy as np

from mdsim.engine.body_md import BodyMDSampler
from mdsim.sampling.rigid_md_stage import RigidMDStageSampler

__all__ = ["BODY_MD_METHOD", "BODY_MD_NVE_METHOD", "BODY_MD_METHODS", "BodyMDStageSampler",
           "mean_free_time"]

BODY_MD_METHOD = "rigid-body-md-nvt"
"""The method name of thermostatted MD of non-linear rigid molecules in stage files."""
BODY_MD_NVE_METHOD = "rigid-body-md-nve"
"""The method name of fixed-energy MD of non-linear rigid molecules in stage files."""
BODY_MD_METHODS = {BODY_MD_METHOD: "md-nvt", BODY_MD_NVE_METHOD: "md-nve"}
"""The stage methods of MD of non-linear rigid molecules and the engine method of each."""


def mean_free_time(system, temperature):
    """The mean time between collisions of a molecule of a :class:`BodySystem`, reduced.

    Parameters
    ----------
    system : BodySystem
        Its density, the sites of its molecules and, for a mixture, their
        masses and types.
    temperature : float
        kT, reduced.

    Returns
    -------
    float
        t_c = 1 / (sqrt(2) pi d^2 rho v_mean) with v_mean = sqrt(8 kT / (pi m)),
        in the reduced time unit (m = 1 for one kind; a mixture's mean mass).

    Notes
    -----
    The mean free time of hard spheres of diameter d (Chapman and
    Cowling, The Mathematical Theory of Non-Uniform Gases, 3rd ed. 1970,
    section 5.21), with d the diameter of the sphere that holds every site
    with half its sigma: twice the largest distance of a site from the
    centre plus the largest site sigma (of a mixture, the largest molecule's:
    a rough scale for the spacing of samples, not a transport property).
    It sets how long MD of a dilute gas
    of these molecules must run to forget its start and to measure its
    correlation time (:mod:`mdsim.pipeline.rigid_chain`): the energy of
    propane at rho sigma^3 = 0.02 relaxes from the lattice in about 1.5 t_c
    and decorrelates over about 0.8 t_c (measured).

    Examples
    --------
    Two sites 0.5 sigma apart (d = 1.5 sigma) at rho sigma^3 = 0.02, kT = 2 epsilon:

    >>> from types import SimpleNamespace
    >>> from mdsim.engine.potentials import LennardJones
    >>> model = SimpleNamespace(site_body_ki=np.array([[0.25, 0.0, 0.0], [-0.25, 0.0, 0.0]]),
    ...                         site_potentials=[LennardJones(1.0, 1.0)])
    >>> round(mean_free_time(SimpleNamespace(model=model, density=0.02), 2.0), 4)
    2.2163
    """
    model = system.model
    reach = float(np.max(np.linalg.norm(model.site_body_ki, axis=1)))
    d = 2.0 * reach + max(p.sigma for p in model.site_potentials)
    mass_t = getattr(system, "mass_t", None)
    mass = 1.0 if mass_t is None else float(np.mean(np.asarray(mass_t)[system.type_n]))
    v_mean = math.sqrt(8.0 * float(temperature) / (math.pi * mass))
    return 1.0 / (math.sqrt(2.0) * math.pi * d * d * float(system.density) * v_mean)


class BodyMDStageSampler(RigidMDStageSampler):
    """MD of a :class:`~mdsim.sampling.body_stage.BodySystem` behind the protocol.

    As :class:`~mdsim.sampling.rigid_md_stage.RigidMDStageSampler` (parameters,
    the fixed energy, settings), with the orientations as quaternions, the
    body-frame angular momenta ``pb_ni`` of the system as its start momenta
    (with ``v_ni``) and F = 3N - 3 + F_rot kinetic degrees of freedom
    (:attr:`~mdsim.sampling.body_stage.BodySystem.rotational_dof`); one kind of
    molecule or a mixture (the system's ``mass_t``, ``inertia_ti`` and
    ``type_n``).  ``method`` is one of :data:`BODY_MD_METHODS`.

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
    >>> s = BodyMDStageSampler(body_system(bent, 300.0, 2000.0, 27, 3.0, seed=1), energy=8.0,
    ...                        seed=2, method=BODY_MD_NVE_METHOD, start_temperature=6.0)
    >>> s.equilibrate(20)
    >>> out = s.run(1, 1)
    >>> round(float(out["u_full"][0] + out["kinetic"][0]), 3), s.kinetic_dof()  # the energy
    (8.0, 159)
    """

    methods = BODY_MD_METHODS

    @staticmethod
    def start_momenta(system):
        """The system's (velocities, body-frame angular momenta) to start from, or None."""
        if system.v_ni is not None and getattr(system, "pb_ni", None) is not None:
            return system.v_ni, system.pb_ni
        return None

    def engine(self, system, **settings):
        """The engine's sampler of the system (:class:`mdsim.engine.body_md.BodyMDSampler`)."""
        return BodyMDSampler(self.model, system.r_ni, system.quat_nq, system.box_i,
                             system.inertia_ti, mass_t=system.mass_t, type_n=system.type_n,
                             **settings)

    def positions(self):
        """The molecular centres in the system's order, shape=(n, 3), sigma."""
        return self.md.in_given_order("r_ni")

    def velocities(self):
        """The centres' velocities in the system's order, shape=(n, 3), reduced."""
        return self.md.in_given_order("v_ni")

    def get_state(self):
        """The engine's state (bit for bit) plus the orientations, body-frame angular momenta
        and types in the system's order, from which a continued stage starts."""
        state = self.md.get_state()
        for name in ("quat_nq", "type_n"):  # the engine's own (cell) order
            state[f"engine_{name}"] = state.pop(name)
        state["quat_nq"] = self.md.in_given_order("quat_nq")
        state["type_n"] = self.md.in_given_order("type_n")
        state["angular_momenta"] = self.md.in_given_order("pb_ni")
        return state

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        engine = {k: v for k, v in state.items()
                  if k not in ("quat_nq", "type_n", "angular_momenta")}
        for name in ("quat_nq", "type_n"):
            if f"engine_{name}" in engine:
                engine[name] = engine.pop(f"engine_{name}")
        self.md.set_state(engine)
