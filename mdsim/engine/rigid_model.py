"""Rigid linear molecules in reduced units: the model the kernels of :mod:`~mdsim.engine.rigid_pair` take.

:class:`LinearPairModel` checks a list of molecule types (axial site
offsets, like-site Lennard-Jones or Mie potentials, site charges, axial
point dipoles and quadrupoles), builds the model arrays (site pairs mixed
by Lorentz-Berthelot, charge products with the damped shifted-force
constants), gives the
isotropic site-site tail correction and evaluates one pair for checks.
Reduced units, as in :mod:`mdsim.engine.rigid_pair`.
"""
import math

import numpy as np

from mdsim.engine.site_pairs import (check_coulomb, check_neutral, coulomb_rows,
                                     site_insertion_tail, site_pair_potential, site_site_tail,
                                     site_table)
from mdsim.engine.rigid_pair import forces_half
from mdsim.errors import SettingError, SimulationError

__all__ = ["LinearPairModel"]


class LinearPairModel:
    """The pair interaction of rigid linear molecules in reduced units, for the kernels.

    Parameters
    ----------
    types : list of (site_z, site_potentials, quadrupole[, dipole[, site_charges]])
        One entry per molecule type: the axial site offsets from the centre
        (sigma), their like-site potentials (:class:`LennardJones` or
        :class:`Mie`, reduced units), the reduced point quadrupole Q*, and
        optionally the reduced point dipole mu* (along the axis) and the
        reduced site charges q* (0 if left out).
    cutoff : float, sigma
        Molecular (centre-centre) cut-off.
    shifted : bool
        Shifted-energy model (for molecular dynamics) instead of the plain
        cut (module docstring).
    core : float, sigma
        Hard core at the centre for Monte Carlo (0: none): two centres closer
        than it overlap (energy +inf), where point multipoles at the centres
        diverge and crossed molecules' sites need not keep them apart.
    coulomb : {"cut", "dsf"}
        The site charges' energy inside the molecular cut-off: "cut", plain
        Coulomb q q / r (the charges of a neutral molecule treated as its
        multipoles are: cut at the molecular cut-off; the more accurate
        against Ewald, docs/physics.md section 7b.4), or "dsf", the damped
        shifted-force energy (Fennell and Gezelter 2006) with Rc the cut-off.
    damping : float, 1/sigma
        alpha of the damped shifted-force energy ("dsf" only; 0 there is the
        undamped shifted force).

    Attributes
    ----------
    site_start_t, site_z_k, params_kk, form, elec_tm, rc, shifted
        The arguments of :func:`forces_half`, in its order.
    charged : bool
        True when some site carries a charge.
    core : float, sigma
    rotates_t : ndarray, shape=(n_types,), int64
        1 for a type whose energy depends on its axis, 0 for an atom (one
        site at the centre, no multipole), which Monte Carlo never turns.

    Notes
    -----
    An atom is a type of one site at offset 0 without a quadrupole; a
    mixture of molecules and atoms is one model of several types, unlike
    sites mixed by the Lorentz-Berthelot rules of
    :func:`mdsim.engine.potentials.combine` (the one home of the rule, which
    the virial routes use too).  Site charges and point multipoles do not
    mix: the kernels have no charge-multipole term, so a model with both
    (in one type or in two) is refused, as the virial routes refuse it.

    Examples
    --------
    Two LJ sites at +-0.1575 sigma (nitrogen-like), two molecules side by side:

    >>> from mdsim.engine.potentials import LennardJones
    >>> m = LinearPairModel([([-0.1575, 0.1575], [LennardJones(1.0, 1.0)] * 2, 0.0)], 4.0)
    >>> z, x = np.array([0.0, 0.0, 1.0]), np.array([1.5, 0.0, 0.0])
    >>> u, force_b, torque_a, torque_b = m.pair(x, z, z)
    >>> round(u, 4), bool(abs(force_b[0]) > 0 and np.allclose(torque_a, 0))
    (-1.2101, True)
    """

    def __init__(self, types, cutoff, shifted=False, core=0.0, coulomb="cut", damping=0.0):
        zs, site_pots_t, moments, charges = [], [], [], []
        for t, entry in enumerate(types):
            site_z, site_pots, quad, dipole, site_q = _type_entry(t, entry)
            zs += site_z
            site_pots_t.append(list(site_pots))
            charges += site_q
            moments.append((dipole, quad))
        pots, lj_rows, self.form, self.site_start_t = site_table(site_pots_t)
        starts = self.site_start_t
        rc = float(cutoff)
        if not rc > 0.0 or not math.isfinite(rc):
            raise SettingError("cutoff", cutoff, "must be a positive number of sigma")
        self.site_z_k = np.array(zs)
        self.site_potentials = pots
        self.charge_k = np.array(charges, dtype=float)
        self.charged = bool(np.any(self.charge_k != 0.0))
        charged_t = [float(np.any(self.charge_k[starts[t]:starts[t + 1]] != 0.0))
                     for t in range(len(moments))]
        self.elec_tm = np.column_stack([np.array(moments, dtype=float).reshape(-1, 2),
                                          charged_t])
        if self.charged and np.any(self.elec_tm[:, :2] != 0.0):
            raise SettingError("types", "site charges and point multipoles", "the kernels have "
                               "no charge-multipole energy; give every molecule charges, or "
                               "every molecule multipoles")
        self.coulomb, self.damping = check_coulomb(coulomb, damping)
        self.params_kk = coulomb_rows(lj_rows, self.charge_k, rc, self.coulomb, self.damping)
        self.rotates_t = np.array([int(np.any(self.elec_tm[t, :2] != 0.0) or np.any(
            self.site_z_k[starts[t]:starts[t + 1]] != 0.0)) for t in range(len(moments))],
            dtype=np.int64)
        self.rc = rc
        self.shifted = int(bool(shifted))
        self.core = float(core)
        if not 0.0 <= self.core < rc:
            raise SettingError("core", core, f"must lie in [0, cut-off {rc:g}) sigma")

    @property
    def n_types(self):
        return len(self.elec_tm)

    def arrays(self):
        """``(site_start_t, site_z_k, params_kk, form, elec_tm, rc, shifted)``."""
        return (self.site_start_t, self.site_z_k, self.params_kk, self.form, self.elec_tm,
                self.rc, self.shifted)

    def site_pair_potential(self, k, m):
        """The potential between sites k and m (like, or Lorentz-Berthelot)."""
        return site_pair_potential(self.site_potentials, k, m)

    def tail(self, density, fraction_t=None):
        """Isotropic site-site tail of the plain cut: (u_tail per molecule, p_tail), reduced
        (:func:`mdsim.engine.site_pairs.site_site_tail`, which takes the same ``density``
        and ``fraction_t``).  The charge, dipole and quadrupole energies of neutral molecules
        average to zero over orientations and get no tail.
        """
        return site_site_tail(self.site_potentials, self.site_start_t, self.rc, density,
                              fraction_t, np.abs(self.site_z_k))

    def insertion_tail(self, density, fraction_t=None, type_a=0):
        """Long-range tail energy of one inserted molecule of type ``type_a``, epsilon
        (:func:`mdsim.engine.site_pairs.site_insertion_tail`: twice the tail energy per
        molecule of a pure fluid).

        Examples
        --------
        >>> from mdsim.engine.potentials import LennardJones
        >>> m = LinearPairModel([([-0.16, 0.16], [LennardJones(1.0, 1.0)] * 2, 0.5)], 3.0)
        >>> round(float(m.insertion_tail(0.1) / m.tail(0.1)[0]), 12)
        2.0
        """
        return site_insertion_tail(self.site_potentials, self.site_start_t, self.rc, density,
                                   fraction_t, type_a, np.abs(self.site_z_k))

    def pair(self, d_i, axis_a_i, axis_b_i, type_a=0, type_b=0):
        """Energy, force on b and torques on a and b of one pair (0 beyond the cut-off).

        Parameters
        ----------
        d_i : array_like, shape=(3,), sigma
            From the centre of a to the centre of b.
        axis_a_i, axis_b_i : array_like, shape=(3,)
            Unit axes.

        Returns
        -------
        u : float, epsilon
        force_b_i : ndarray, shape=(3,), epsilon/sigma
        torque_a_i, torque_b_i : ndarray, shape=(3,), epsilon
        """
        d_i, a_i, b_i = (np.asarray(v, dtype=float).reshape(3) for v in
                         (d_i, axis_a_i, axis_b_i))
        # the two molecules in a box too large for any image to matter, through the kernel
        centre_ni = np.array([np.zeros(3), d_i])
        box_i = np.full(3, 4.0 * (self.rc + float(np.abs(d_i).max())))
        force_ni, torque_ni = np.zeros((2, 3)), np.zeros((2, 3))
        u, _ = forces_half(centre_ni, np.array([a_i, b_i]), np.array([type_a, type_b]),
                           box_i, *self.arrays(), np.array([[1], [0]], dtype=np.int32),
                           np.array([1, 0], dtype=np.int32),
                           force_ni, torque_ni)
        return float(u), force_ni[1], torque_ni[0], torque_ni[1]

    def forces(self, centre_ni, axis_ni, type_n, box_i, nb_nj, count_n, force_ni, torque_ni):
        """:func:`forces_half` with this model; raises SimulationError on a non-finite energy."""
        u, w = forces_half(centre_ni, axis_ni, type_n, box_i, self.site_start_t, self.site_z_k,
                           self.params_kk, self.form, self.elec_tm, self.rc, self.shifted, nb_nj,
                           count_n, force_ni, torque_ni)
        if not (math.isfinite(u) and math.isfinite(w)):
            raise SimulationError(f"rigid molecules: non-finite pair energy {u} (two molecules "
                                  "overlap); start from a looser configuration")
        return u, w


def _type_entry(t, entry):
    """One checked entry of ``types``: (site_z, potentials, quadrupole, dipole, site charges)."""
    if not 3 <= len(entry) <= 5:
        raise SettingError(f"types[{t}]", len(entry), "needs (site_z, site_potentials, "
                           "quadrupole[, dipole[, site_charges]])")
    site_z, site_pots, quad = entry[:3]
    dipole = float(entry[3]) if len(entry) > 3 else 0.0
    site_z = [float(z) for z in site_z]
    site_q = [0.0] * len(site_z) if len(entry) < 5 else [float(q) for q in entry[4]]
    if not site_z or len(site_z) != len(site_pots) or len(site_q) != len(site_z):
        raise SettingError(f"types[{t}]", site_z, "needs one potential (and one charge, if "
                           "given) per site and at least one site")
    values = [float(quad), dipole, *site_q]
    if not all(math.isfinite(v) for v in values):
        raise SettingError(f"types[{t}]", values, "multipoles and charges must be finite")
    check_neutral(f"types[{t}]", site_q)
    return site_z, site_pots, float(quad), dipole, site_q
