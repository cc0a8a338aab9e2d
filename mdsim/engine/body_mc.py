"""Canonical Monte Carlo of rigid bodies of any shape (non-linear molecules): the sampler.

:class:`BodyMCSampler` is :class:`mdsim.engine.rigid_mc.RigidMCSampler`
(step tuning in equilibration only, frozen production, the recorded energy
and pressure with the isotropic site-site tail, the molecular virial) for
bodies whose orientation is a unit quaternion and whose sites sit anywhere
in the body frame (:class:`mdsim.engine.body_model.BodyPairModel`; kernels
in :mod:`mdsim.engine.body_mc_kernels`).

Reduced units of the model.  Array suffixes: ``_n`` body, ``_q`` quaternion
component, ``_i`` Cartesian coordinate, ``_m`` move kind (0 translation,
1 rotation).
"""
import math

import numpy as np

from mdsim.engine.body_mc_kernels import body_energy_virial, body_moves
from mdsim.engine.body_model import BodyPairModel
from mdsim.engine.body_rotation import random_orientations
from mdsim.engine.rigid_mc import RigidMCSampler, lattice_start
from mdsim.errors import SettingError, SimulationError

__all__ = ["BodyMCSampler", "body_lattice_start"]


def body_lattice_start(n_bodies, box_i, seed):
    """Centres on a simple cubic lattice filling the box, orientations uniform over rotations.

    Returns
    -------
    centre_ni : ndarray, shape=(n, 3), float64
    quat_nq : ndarray, shape=(n, 4), float64

    Examples
    --------
    >>> c, q = body_lattice_start(8, np.array([4.0, 4.0, 4.0]), seed=1)
    >>> c[1].tolist(), q.shape
    ([0.0, 0.0, 2.0], (8, 4))
    """
    centre_ni, _ = lattice_start(n_bodies, box_i, seed)
    return centre_ni, random_orientations(len(centre_ni), [*np.atleast_1d(seed).tolist(), 2])


class BodyMCSampler(RigidMCSampler):
    """Canonical (NVT) Monte Carlo of rigid bodies of any shape (and their mixtures with atoms).

    Parameters
    ----------
    model : BodyPairModel
        The pair model (its plain cut is used; ``shifted`` must be False).
    centre_ni : array_like, shape=(n, 3), sigma
    quat_nq : array_like, shape=(n, 4)
        Orientations as quaternions (normalised here); copied.
    type_n, box_i, temperature, seed, max_displacement, max_angle, target_acceptance
        As for :class:`RigidMCSampler`.

    Attributes
    ----------
    quat_nq : ndarray, shape=(n, 4)
    offset_nsi : ndarray, shape=(n, max_sites, 3), sigma
        Lab-frame site offsets, kept equal to the orientations' (updated by the moves).

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> pos = [[0.0, 0.1, 0.0], [0.25, -0.05, 0.0], [-0.25, -0.05, 0.0]]
    >>> m = BodyPairModel([(pos, [LennardJones(1.0, 1.0)] * 3)], 2.5)
    >>> box = np.full(3, 8.0)
    >>> c, q = body_lattice_start(64, box, seed=2)
    >>> s = BodyMCSampler(m, c, q, np.zeros(64, int), box, temperature=4.0, seed=3)
    >>> s.equilibrate(5)
    >>> out = s.run(3, 2)
    >>> sorted(out), out["u_full"].shape
    (['acceptance', 'pressure', 'u_full', 'u_trunc'], (3,))
    """

    model_class = BodyPairModel

    def __init__(self, model, centre_ni, quat_nq, type_n, box_i, **settings):
        super().__init__(model, centre_ni, quat_nq, type_n, box_i, **settings)

    def set_orientations(self, quat_nq):
        """Set the orientations (normalised here) and their site offsets."""
        q = np.ascontiguousarray(quat_nq, dtype=np.float64)
        norm = np.linalg.norm(q, axis=-1) if q.shape == (self.n_molecules, 4) else np.zeros(1)
        if q.shape != (self.n_molecules, 4) or not np.all(norm > 0.0) or \
                not np.all(np.isfinite(norm)):
            raise SettingError("quat_nq", q.shape, f"needs an ({self.n_molecules}, 4) array of "
                               "finite non-zero quaternions")
        self.quat_nq = q / norm[:, None]
        self.offset_nsi = self.model.offsets(self.quat_nq, self.type_n)

    def energy_and_virial(self):
        """Total truncated energy and molecular virial of the current configuration, epsilon."""
        m = self.model
        return body_energy_virial(self.centre_ni, self.offset_nsi, self.type_n, self.box_i,
                                  self.ncell_i, self.head_c, self.next_n, m.site_start_t,
                                  m.params_kk, m.form, m.rc)

    def _moves(self, n_moves):
        m = self.model
        tried, acc = self.tried_m.copy(), self.accepted_m.copy()
        self.u_trunc = body_moves(
            self.centre_ni, self.quat_nq, self.offset_nsi, self.type_n, self.box_i,
            self.ncell_i, self.head_c, self.next_n, self.cell_n, m.site_start_t, m.site_body_ki,
            m.params_kk, m.form, m.rc, m.rotates_t, self.state, int(n_moves),
            float(self.max_displacement), float(self.max_angle), 1.0 / self.temperature,
            float(self.u_trunc), self.tried_m, self.accepted_m)
        if not math.isfinite(self.u_trunc):
            raise SimulationError("rigid-body Monte Carlo: the running energy is no longer finite")
        return self.tried_m - tried, self.accepted_m - acc
