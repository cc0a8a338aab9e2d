"""The direct route for a gas of rigid molecules: the wall removed, followed by rigid MD.

The route of :mod:`mdsim.pipeline.routes.direct` unchanged, with the
stages of :mod:`mdsim.sampling.rigid_md_stage`: the initial state by
thermostatted rigid MD (``rigid-md-nvt``, with the pressure iteration), the
box enlarged r-fold along z with the molecules (centres, axes, velocities
and angular momenta) left in place, then fixed-energy rigid MD
(``rigid-md-nve``) while the gas fills the box and relaxes.  Non-linear
molecules run the same stages of :mod:`mdsim.sampling.body_md_stage`
(``rigid-body-md-nvt``, ``rigid-body-md-nve``; orientations as quaternions,
body-frame angular momenta).  The kinetic degrees of freedom are
F = 3N - 3 + F_rot (3 translations per molecule, the total momentum
conserved, and 2 rotations per linear rotor, 3 per non-linear molecule,
none for the atoms of a mixture): in the temperature series
(``temperature_inst`` = 2K / F), in the canonical energy the run starts at
and in the solver (:func:`analysis.expansion.direct_route`).
"""
import dataclasses
import math

import numpy as np

from mdsim.errors import SimulationError
from mdsim.pipeline.rigid_chain import RigidChain
from mdsim.engine.rigid_integrator import translational_dof
from mdsim.pipeline.routes.direct import WallRemovedChain
from mdsim.sampling.body_md_stage import BODY_MD_NVE_METHOD, BodyMDStageSampler
from mdsim.sampling.rigid_md_stage import RigidMDStageSampler, kinetic_dof_total

__all__ = ["RigidWallRemovedChain"]


class RigidWallRemovedChain(WallRemovedChain, RigidChain):
    """:class:`~mdsim.pipeline.routes.direct.WallRemovedChain` of rigid molecules.

    Parameters as for ``WallRemovedChain``; ``base`` is a
    :class:`mdsim.sampling.rigid_stage.RigidSystem` of the initial state.  A
    continued stage starts from the previous one's axes and angular momenta
    as well (:class:`mdsim.pipeline.rigid_chain.RigidChain`).
    """

    nve_method = "rigid-md-nve"

    @property
    def nonlinear(self):
        """True for a box of non-linear molecules (orientations as quaternions)."""
        return getattr(self.base, "quat_nq", None) is not None

    def make_expanded(self):
        """An empty rigid system in the enlarged box (centres all zero until set)."""
        n = self.base.n_particles
        if self.nonlinear:
            return dataclasses.replace(self.base, box_i=self.box_f.copy(), r_ni=np.zeros((n, 3)),
                                       quat_nq=np.array(self.base.quat_nq, dtype=float),
                                       v_ni=None, pb_ni=None)
        return dataclasses.replace(self.base, box_i=self.box_f.copy(), r_ni=np.zeros((n, 3)),
                                   axis_ni=np.array(self.base.axis_ni, dtype=float),
                                   v_ni=None, l_ni=None)

    def lightest_mass(self):
        """The lightest molecule's mass in the reduced units (the first molecule's mass)."""
        return float(np.min(self.base.mass_t[np.unique(self.base.type_n)]))

    def kinetic_dof(self):
        """3N - 3 + 2 N_rot (:func:`mdsim.sampling.rigid_md_stage.kinetic_dof_total`), or
        3N - 3 + F_rot with non-linear molecules
        (:attr:`mdsim.sampling.body_stage.BodySystem.rotational_dof`)."""
        n = self.base.n_particles
        if self.nonlinear:
            return translational_dof(n) + self.base.rotational_dof
        return kinetic_dof_total(n, self.base.n_rotors)

    def start_at_canonical_energy(self, system, start):
        """The expanded system with its velocities and angular momenta scaled by one factor so
        that its shifted-model energy is the canonical mean of the initial state,
        F/(2N) kT_i + <u_model>_i per molecule (the first NVT production stage), as for atoms
        (:func:`mdsim.pipeline.routes.direct.start_at_canonical_energy`)."""
        n = system.n_particles
        F = self.kinetic_dof()
        e_canonical = 0.5 * F / n * self.T_i_red + float(np.mean(start.samples["u_model"]))
        if self.nonlinear:
            probe = BodyMDStageSampler(system, energy=e_canonical, seed=0,
                                       method=BODY_MD_NVE_METHOD, time_step=self.dt).md
        else:
            probe = RigidMDStageSampler(system, energy=e_canonical, seed=0,
                                        method="rigid-md-nve", time_step=self.dt).md
        u_model = float(probe.obs[0])
        k_now = 0.5 * F * probe.temperature_now()
        k_target = n * e_canonical - u_model
        if not (k_target > 0 and k_now > 0):
            raise SimulationError(f"direct route: the expanded configuration's model energy "
                                  f"{u_model / n:.6g} per molecule is above the initial state's "
                                  f"mean energy {e_canonical:.6g}; use more molecules")
        scale = math.sqrt(k_target / k_now)
        system.v_ni = np.asarray(system.v_ni, dtype=float) * scale
        if self.nonlinear:
            system.pb_ni = np.asarray(system.pb_ni, dtype=float) * scale
        else:
            system.l_ni = np.asarray(system.l_ni, dtype=float) * scale
        return system
