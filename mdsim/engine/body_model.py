"""Rigid bodies of any shape in reduced units: the model the kernels of :mod:`mdsim.engine.body_pair` take.

:class:`BodyPairModel` checks a list of body types (body-frame site
positions in the principal-axes frame, centre of mass at the origin, with
like-site Lennard-Jones or Mie potentials and optional site charges of a
neutral body), builds the model arrays (site pairs mixed by
Lorentz-Berthelot, with the Coulomb columns of charged sites,
:mod:`mdsim.engine.site_pairs`), turns
orientations into lab-frame site offsets, gives the isotropic site-site
tail correction and evaluates one pair for checks.  Reduced units, as in
:mod:`mdsim.engine.body_pair`.

Array suffixes: ``_n`` body, ``_q`` quaternion component, ``_s`` site of
one body, ``_k`` site of all types, ``_i`` Cartesian coordinate.
"""
import math

import numpy as np

from mdsim.engine.body_pair import body_forces_half
from mdsim.engine.body_rotation import rotate_sites
from mdsim.engine.site_pairs import (check_coulomb, check_neutral, coulomb_rows,
                                     site_insertion_tail, site_site_tail, site_table)
from mdsim.errors import SettingError, SimulationError

__all__ = ["BodyPairModel"]


class BodyPairModel:
    """The pair interaction of rigid bodies of any shape in reduced units, for the kernels.

    Parameters
    ----------
    types : list of (site_positions, site_potentials[, site_charges])
        One entry per body type: the body-frame site positions, shape
        (n_sites, 3), sigma (principal-axes frame, centre of mass at the
        origin), their like-site potentials (:class:`LennardJones` or
        :class:`Mie`, reduced units) and optionally their reduced charges
        q* (0 if left out; a body's charges must sum to 0).
    cutoff : float, sigma
        Molecular (centre-centre) cut-off.
    shifted : bool
        Shifted-energy model (for molecular dynamics) instead of the plain
        cut (:mod:`mdsim.engine.body_pair`).
    coulomb : {"cut", "dsf"}
        The site charges' energy inside the molecular cut-off, as for linear
        molecules (:class:`mdsim.engine.rigid_model.LinearPairModel`): plain
        Coulomb q q / r ("cut", the more accurate against Ewald for neutral
        molecules, docs/physics.md section 7b.4) or the damped shifted force
        ("dsf", Fennell and Gezelter 2006, Rc the cut-off).
    damping : float, 1/sigma
        alpha of the damped shifted force ("dsf" only).

    Attributes
    ----------
    site_start_t : ndarray, shape=(n_types + 1,), int64
    site_body_ki : ndarray, shape=(n_sites, 3), float64, sigma
    params_kk, form, rc, shifted
        The arguments of the kernels (``params_kk`` carries the Coulomb
        columns only when some site is charged).
    charge_k : ndarray, shape=(n_sites,)
        Reduced site charges.
    charged : bool
        True when some site carries a charge.
    max_sites : int
        The most sites of any type (the middle axis of ``offset_nsi``).
    rotates_t : ndarray, shape=(n_types,), int64
        0 for an atom (one site at the centre), which Monte Carlo never turns.

    Examples
    --------
    A bent three-site body, two of them side by side, equal orientations:

    >>> from mdsim.engine.potentials import LennardJones
    >>> pos = [[0.0, 0.1, 0.0], [0.25, -0.05, 0.0], [-0.25, -0.05, 0.0]]
    >>> m = BodyPairModel([(pos, [LennardJones(1.0, 1.0)] * 3)], 4.0)
    >>> q = np.array([1.0, 0.0, 0.0, 0.0])
    >>> u, force_b, torque_a, torque_b = m.pair([0.0, 0.0, 1.5], q, q)
    >>> round(u, 4), bool(force_b[2] < 0.0)  # attracted at 1.5 sigma
    (-2.5983, True)

    With site charges (+0.5, -0.25, -0.25) the pair gains their Coulomb energy:

    >>> mq = BodyPairModel([(pos, [LennardJones(1.0, 1.0)] * 3, [0.5, -0.25, -0.25])], 4.0)
    >>> round(mq.pair([0.0, 0.0, 1.5], q, q)[0] - u, 4)
    0.0018
    """

    def __init__(self, types, cutoff, shifted=False, coulomb="cut", damping=0.0):
        bodies, charges = [], []
        for t, entry in enumerate(types):
            if len(entry) not in (2, 3):
                raise SettingError(f"types[{t}]", len(entry), "needs (site_positions, "
                                   "site_potentials[, site_charges])")
            positions, site_pots = entry[:2]
            pos = np.asarray(positions, dtype=float)
            if pos.ndim != 2 or pos.shape[1] != 3 or pos.shape[0] != len(site_pots) or \
                    not np.all(np.isfinite(pos)):
                raise SettingError(f"types[{t}]", np.shape(positions), "needs finite site "
                                   "positions of shape (n_sites, 3), one potential per site")
            site_q = [float(v) for v in entry[2]] if len(entry) == 3 else [0.0] * len(pos)
            if len(site_q) != len(pos):
                raise SettingError(f"types[{t}] site charges", site_q, f"needs one charge per "
                                   f"site ({len(pos)})")
            check_neutral(f"types[{t}]", site_q)
            bodies.append(pos)
            charges += site_q
        self.site_potentials, lj_rows, self.form, self.site_start_t = site_table(
            [t[1] for t in types])
        self.site_body_ki = np.ascontiguousarray(np.concatenate(bodies))
        self.max_sites = max(len(b) for b in bodies)
        self.rotates_t = np.array([int(len(b) > 1 or np.any(b != 0.0)) for b in bodies],
                                  dtype=np.int64)
        rc = float(cutoff)
        if not rc > 0.0 or not math.isfinite(rc):
            raise SettingError("cutoff", cutoff, "must be a positive number of sigma")
        self.rc = rc
        self.shifted = int(bool(shifted))
        self.coulomb, self.damping = check_coulomb(coulomb, damping)
        self.charge_k = np.array(charges)
        self.charged = bool(np.any(self.charge_k != 0.0))
        # without charges the rows stay those of the pair potentials: the kernels skip Coulomb
        self.params_kk = (coulomb_rows(lj_rows, self.charge_k, rc, self.coulomb, self.damping)
                          if self.charged else lj_rows)

    @property
    def n_types(self):
        return len(self.site_start_t) - 1

    def offsets(self, quat_nq, type_n):
        """Lab-frame site offsets of bodies at orientations ``quat_nq``.

        Returns
        -------
        ndarray, shape=(n, max_sites, 3), float64, sigma
            Rows past a body's own sites are 0.
        """
        q = np.asarray(quat_nq, dtype=float).reshape(-1, 4)
        out = np.zeros((len(q), self.max_sites, 3))
        st = self.site_start_t
        for n, t in enumerate(np.asarray(type_n, dtype=np.int64).reshape(len(q))):
            rotate_sites(q[n, 0], q[n, 1], q[n, 2], q[n, 3], self.site_body_ki, st[t], st[t + 1],
                         out[n])
        return out

    def tail(self, density, fraction_t=None):
        """Isotropic site-site tail of the plain cut: (u_tail per body, p_tail), reduced
        (:func:`mdsim.engine.site_pairs.site_site_tail`)."""
        return site_site_tail(self.site_potentials, self.site_start_t, self.rc, density,
                              fraction_t, np.linalg.norm(self.site_body_ki, axis=1))

    def insertion_tail(self, density, fraction_t=None, type_a=0):
        """Tail energy of one inserted body of type ``type_a``, epsilon
        (:func:`mdsim.engine.site_pairs.site_insertion_tail`)."""
        return site_insertion_tail(self.site_potentials, self.site_start_t, self.rc, density,
                                   fraction_t, type_a, np.linalg.norm(self.site_body_ki, axis=1))

    def pair(self, d_i, quat_a, quat_b, type_a=0, type_b=0):
        """Energy, force on b and torques on a and b of one pair (0 beyond the cut-off).

        Parameters
        ----------
        d_i : array_like, shape=(3,), sigma
            From the centre of a to the centre of b.
        quat_a, quat_b : array_like, shape=(4,)
            Unit quaternions of the orientations (:mod:`mdsim.engine.body_rotation`).

        Returns
        -------
        u : float, epsilon
        force_b_i : ndarray, shape=(3,), epsilon/sigma
        torque_a_i, torque_b_i : ndarray, shape=(3,), epsilon
        """
        d_i = np.asarray(d_i, dtype=float).reshape(3)
        type_n = np.array([type_a, type_b], dtype=np.int64)
        offset_nsi = self.offsets(np.array([quat_a, quat_b], dtype=float), type_n)
        # the two bodies in a box too large for any image to matter, through the kernel
        centre_ni = np.array([np.zeros(3), d_i])
        box_i = np.full(3, 4.0 * (self.rc + float(np.abs(d_i).max())))
        force_ni, torque_ni = np.zeros((2, 3)), np.zeros((2, 3))
        u, _ = self.forces(centre_ni, offset_nsi, type_n, box_i,
                           np.array([[1], [0]], dtype=np.int32), np.array([1, 0], dtype=np.int32),
                           force_ni, torque_ni)
        return float(u), force_ni[1], torque_ni[0], torque_ni[1]

    def forces(self, centre_ni, offset_nsi, type_n, box_i, nb_nj, count_n, force_ni, torque_ni):
        """:func:`body_forces_half` with this model; raises SimulationError on a non-finite energy."""
        u, w = body_forces_half(centre_ni, offset_nsi, type_n, box_i, self.site_start_t,
                                self.params_kk, self.form, self.rc, self.shifted, nb_nj, count_n,
                                force_ni, torque_ni)
        if not (math.isfinite(u) and math.isfinite(w)):
            raise SimulationError(f"rigid bodies: non-finite pair energy {u} (two bodies "
                                  "overlap); start from a looser configuration")
        return u, w
