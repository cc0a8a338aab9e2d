"""B2 of rigid molecules of any shape by quadrature over both molecules' rotations.

Molecule a sits at the origin unrotated; the direction n of molecule b's
centre, in a's frame, runs over a Lebedev rule on the sphere and b's
rotation over the rotation rule of :mod:`analysis.molecules.rotations`
(both of one degree), so the five angles of a pair's relative placement
are covered (a common rotation of the pair changes nothing).  Along each
direction the distance R is scaled by the pair's contact distance R_c(w),
the largest R at which two sites sit at their sigma: Gauss-Legendre
panels in x = R / R_c, dense across the wall (x from 0.55 to 1.25), and
beyond x = 5 the tail in y = 5 / x.  The wall then sits at the same x for
every orientation, so few radial nodes serve all.

Units: T in K, lengths in angstrom, B2 per molecule in angstrom^3.
Array suffixes: ``_r`` radial nodes, ``_o`` orientation nodes (directions
times rotations), ``_v`` Cartesian components.
"""
import math

import numpy as np

from analysis.molecules.pair_energy import check_mixable, multipole_terms, site_sum
from analysis.molecules.pair_energy import site_pair_potential
from analysis.molecules.rotations import rotation_rule, sphere_rule
from analysis.virial.quadrature import check_temperature, mayer, panel_nodes, shape_out
from mdsim.checks import count

__all__ = ["DEFAULT_ROTATION_DEGREE", "ROTATION_RADIAL_NODES", "CONTACT_BREAKS", "RotationGrid"]

#: Lebedev degree of the direction and rotation rules (tests: convergence in the degree).
DEFAULT_ROTATION_DEGREE = 11
#: Gauss-Legendre nodes per panel in x = R / R_c.
ROTATION_RADIAL_NODES = 4
#: Panel breaks in x = R / R_c; beyond the last the tail in y = x_far / x.
CONTACT_BREAKS = np.concatenate([[0.0, 0.4], np.linspace(0.55, 1.25, 8), [1.5, 2.0, 3.0, 5.0]])
# The contact distance is at least this fraction of the largest site-pair sigma (directions in
# which no two sites ever touch, possible for long crossed molecules).
_CONTACT_FLOOR_SIGMA = 0.5


def _radial_rule(n):
    """Nodes x and weights x^2 w of the integral over x = R / R_c, panels and tail."""
    x, w, _ = panel_nodes(CONTACT_BREAKS, n)
    x_far = CONTACT_BREAKS[-1]
    y, wy = np.polynomial.legendre.leggauss(2 * n)
    y = 0.5 * (y + 1.0)
    wy = 0.5 * wy
    x = np.concatenate([x, x_far / y])
    w = np.concatenate([w, wy * x_far / y ** 2])
    return x, w * x * x


def _orientations(mol_a, mol_b, degree):
    """Directions n (a's frame), rotations of b and weights (sum 1) of the orientation nodes."""
    if mol_a.n_sites == 1:  # two atoms: one direction, no rotation
        return np.array([[0.0, 0.0, 1.0]]), np.eye(3)[None], np.ones(1)
    n_nv, w_n = sphere_rule(degree, "degree")
    if mol_b.n_sites == 1:
        rot_mvv, w_m = np.eye(3)[None], np.ones(1)
    else:
        rot_mvv, w_m = rotation_rule(degree, "degree")
    n_ov = np.repeat(n_nv, len(w_m), axis=0)
    rot_ovv = np.tile(rot_mvv, (len(w_n), 1, 1))
    return n_ov, rot_ovv, np.outer(w_n, w_m).ravel()


class RotationGrid:
    """The energies of two rigid molecules of any shape on the (R, rotations) quadrature grid.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
        Any molecules (the linear ones and atoms too, though
        :class:`analysis.molecules.OrientationGrid` is faster for them).
    degree : int, optional
        Lebedev degree of the direction and rotation rules
        (:func:`analysis.molecules.rotations.sphere_rule`): degree 11 has
        50 directions times 50 x 12 rotations.
    n_radial : int, optional
        Gauss-Legendre nodes per panel of x = R / R_c.

    Notes
    -----
    B2 = -2 pi int R^2 <f(R, w)>_w dR (Gray and Gubbins, Theory of
    Molecular Fluids, vol. 1, 1984, section 3.2), here
    -2 pi sum_o w_o R_c(o)^3 int x^2 f(x R_c(o), o) dx.  Measured on rigid
    propane (TraPPE-UA, tests/analysis/molecules/test_propane.py): degree
    11 agrees with degree 17 to 1e-4 from 150 to 1000 K, degree 9 to 6e-3;
    the radial rule is converged to 1e-5 (docs/physics.md section 7a.2).

    Examples
    --------
    A bent molecule of three sites so close together that it is nearly one
    Lennard-Jones site of 9 epsilon (every site pair counts):

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> from analysis.virial import b2
    >>> lj = LennardJones(1.0, 1.0)
    >>> tiny = RigidMolecule("tiny", [Site(lj, (0.0, 0.0, 0.0), 0.01),
    ...                               Site(lj, (1e-4, 0.0, 0.0), 0.01),
    ...                               Site(lj, (0.0, 1e-4, 0.0), 0.01)])
    >>> grid = RotationGrid(tiny, tiny, degree=3)
    >>> exact = b2(LennardJones(9.0, 1.0), 20.0)[0]
    >>> bool(abs(grid.b2(20.0)[0] / exact - 1.0) < 1e-4)
    True
    """

    def __init__(self, mol_a, mol_b, degree=DEFAULT_ROTATION_DEGREE,
                 n_radial=ROTATION_RADIAL_NODES):
        check_mixable(mol_a, mol_b)
        if mol_a.n_sites == 1 and mol_b.n_sites > 1:  # B_ab = B_ba: the atom second
            mol_a, mol_b = mol_b, mol_a
        n_r = count("n_radial", n_radial, 4, "Gauss-Legendre nodes per panel, e.g. 4")
        n_ov, rot_ovv, self.w_o = _orientations(mol_a, mol_b, degree)
        off_b = np.einsum("oij,sj->soi", rot_ovv, mol_b.position_sv)
        pairs = {}
        r_contact = np.full(len(self.w_o), _CONTACT_FLOOR_SIGMA * max(
            site_pair_potential(sa.potential, sb.potential).sigma
            for sa in mol_a.sites for sb in mol_b.sites))
        for i, sa in enumerate(mol_a.sites):
            for j, sb in enumerate(mol_b.sites):
                d_ov = off_b[j] - mol_a.position_sv[i]
                nd, dd = np.sum(n_ov * d_ov, axis=1), np.sum(d_ov * d_ov, axis=1)
                sigma = site_pair_potential(sa.potential, sb.potential).sigma
                disc = nd * nd - dd + sigma * sigma
                reach = np.where(disc >= 0.0, -nd + np.sqrt(np.maximum(disc, 0.0)), 0.0)
                r_contact = np.maximum(r_contact, reach)
                pairs[i, j] = (nd, dd)
        x, wx = _radial_rule(n_r)
        self.r_ro = x[:, None] * r_contact[None, :]
        r = self.r_ro

        def distance(i, j):
            nd, dd = pairs[i, j]
            return np.sqrt(np.maximum(r * r + 2.0 * r * nd + dd, 0.0))

        u, overlap = site_sum(mol_a, mol_b, distance, r.shape)
        u_centre, centre_overlap = 0.0, False
        if mol_a.has_multipoles and mol_b.has_multipoles:  # linear molecules only
            u_centre, centre_overlap = multipole_terms(
                mol_a, mol_b, r[..., None] * n_ov[None], mol_a.axis_v,
                (rot_ovv @ mol_b.axis_v)[None])
        self.u_ro = np.where(overlap | centre_overlap, np.inf, u + u_centre)
        self.weight_ro = -2.0 * math.pi * wx[:, None] * (r_contact ** 3 * self.w_o)[None, :]

    def b2(self, T):
        """B2 (angstrom^3) and its first two T-derivatives at T in K."""
        T_t = check_temperature(T).ravel()
        out = np.empty((3, T_t.size))
        for k, t in enumerate(T_t):
            out[:, k] = [np.sum(self.weight_ro * g) for g in mayer(self.u_ro, t)]
        return shape_out(tuple(out), T)
