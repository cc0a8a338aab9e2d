"""Non-linear rigid molecules (one kind, or a mixture with atoms and linear molecules) in stage
files: a system and a Monte Carlo sampler behind the protocol.

The counterpart of :mod:`mdsim.sampling.rigid_stage` for molecules whose
sites are not on one line: :class:`BodySystem` holds the arrays of a box of
them (orientations as unit quaternions) and :class:`BodyMCStageSampler`
wraps :class:`mdsim.engine.body_mc.BodyMCSampler` in the sampler protocol
of :func:`mdsim.sampling.state_point.sample_state_point` (method
:data:`BODY_METHOD`), so that their states are sampled into resumable run
files, with a checkpoint after every block that continues the run bit for
bit.  The run file's ``positions`` are the molecular centres; the
orientations live in the checkpoint state (``quat_nq``).

Reduced units of the molecule's first site (:mod:`mdsim.sampling.body_box`).
"""
import dataclasses

import numpy as np

from mdsim.engine.body_integrator import body_rotational_dof
from mdsim.sampling.body_box import body_box, body_mixture_box
from mdsim.sampling.rigid_stage import RigidMCStageSampler, RigidSystem

__all__ = ["BODY_METHOD", "BodySystem", "BodyMCStageSampler", "body_system",
           "body_mixture_system"]

BODY_METHOD = "rigid-body-mc-nvt"
"""The method name of canonical Monte Carlo of non-linear rigid molecules in stage files."""


@dataclasses.dataclass
class BodySystem(RigidSystem):
    """Non-linear rigid molecules in a cubic box: a :class:`RigidSystem` whose orientations are
    unit quaternions (``axis_ni`` is None).

    Attributes
    ----------
    quat_nq : ndarray, shape=(n, 4)
        Orientations (:mod:`mdsim.engine.body_rotation`).
    inertia_ti : ndarray, shape=(n_types, 3), m sigma^2
        Principal moments of inertia of each type (0, I, I for a linear
        molecule, 0 for an atom).
    pb_ni : ndarray, shape=(n, 3), optional
        Body-frame angular momenta to start MD from (a continued stage).
    model, box_i, r_ni, dof_per_particle, type_n, mass_t
        As for :class:`RigidSystem` (the model a
        :class:`mdsim.engine.body_model.BodyPairModel`; 3 + 3 degrees of
        freedom per non-linear molecule, the most of a mixture's).
    """

    quat_nq: np.ndarray = None
    inertia_ti: np.ndarray = None
    pb_ni: np.ndarray = None

    @property
    def rotational_dof(self):
        """The rotations of the box: 3 per non-linear molecule, 2 per linear one, 0 per atom
        (:func:`mdsim.engine.body_integrator.body_rotational_dof`)."""
        return body_rotational_dof(self.inertia_ti[self.type_n])


def body_system(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed):
    """A :class:`BodySystem` of one non-linear molecule at a density (lattice, random orientations).

    Arguments as for :func:`mdsim.sampling.body_box.body_box`.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> s = body_system(bent, 300.0, 2000.0, 27, 3.0, seed=1)
    >>> s.n_particles, s.dof_per_particle, s.quat_nq.shape
    (27, 6, (27, 4))
    """
    box = body_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed)
    return BodySystem(box.model, box.box_i, box.centre_ni, None, int(molecule.kinetic_dof),
                      box.type_n, mass_t=box.mass_t, quat_nq=box.quat_nq,
                      inertia_ti=box.inertia_ti)


def body_mixture_system(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed):
    """A :class:`BodySystem` of a mixture with non-linear molecules, every species a rigid body
    (:func:`mdsim.sampling.body_box.body_mixture_box`: lattice centres, the types in a seeded
    random order, random orientations); arguments as there.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(116.79, 3.3952), (0, 0, 0), 0.039948)])
    >>> s = body_mixture_system([bent, ar], [20, 7], 300.0, 2000.0, 3.0, seed=1)
    >>> s.n_particles, s.dof_per_particle, np.bincount(s.type_n).tolist(), s.rotational_dof
    (27, 6, [20, 7], 60)
    """
    box = body_mixture_box(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed)
    return BodySystem(box.model, box.box_i, box.centre_ni, None,
                      max(int(m.kinetic_dof) for m in molecules), box.type_n,
                      mass_t=box.mass_t, quat_nq=box.quat_nq, inertia_ti=box.inertia_ti)


class BodyMCStageSampler(RigidMCStageSampler):
    """Canonical Monte Carlo of a :class:`BodySystem` behind the sampler protocol.

    As :class:`~mdsim.sampling.rigid_stage.RigidMCStageSampler` (parameters,
    tuned steps, settings), with the orientations as quaternions.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> s = BodyMCStageSampler(body_system(bent, 300.0, 2000.0, 27, 3.0, seed=1),
    ...                        temperature=6.0, seed=2, method=BODY_METHOD)
    >>> s.equilibrate(2)
    >>> sorted(s.get_state())[:4]
    ['accepted_m', 'cell_n', 'head_c', 'max_angle']
    """

    method_name = BODY_METHOD

    @staticmethod
    def engine(system, **settings):
        """The engine's sampler of the system (:class:`mdsim.engine.body_mc.BodyMCSampler`)."""
        from mdsim.engine.body_mc import BodyMCSampler
        return BodyMCSampler(system.model, system.r_ni, system.quat_nq, system.type_n,
                             system.box_i, **settings)

    def orientation_state(self):
        """The orientation arrays of the checkpoint: {"quat_nq": the quaternions}."""
        return {"quat_nq": self.mc.quat_nq}

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state` (site offsets recomputed)."""
        super().set_state(state)
        self.mc.offset_nsi = self.mc.model.offsets(self.mc.quat_nq, self.mc.type_n)
