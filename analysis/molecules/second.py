"""B2 of rigid linear molecules (and atoms) by Gauss quadrature over distance and relative orientation.

(Non-linear molecules take the quadrature over both molecules' rotations of
:mod:`analysis.molecules.second_rotations`; :func:`pair_grid` picks.)

B2 = -2 pi int_0^inf R^2 <f(R, w1, w2)>_w dR, the average over the
orientations of both molecules taken with the separation along z:
molecule 1's axis at polar angle theta1 in the xz plane, molecule 2's at
(theta2, phi), so <.> = (1/4) int d cos(theta1) int d cos(theta2)
(1/pi) int_0^pi dphi (phi -> -phi is a mirror image; for end-symmetric
molecules such as N2 and CO2 cos(theta) runs over [0, 1] only).  Gauss-Legendre
nodes in cos(theta1), cos(theta2), phi and, on panels, in R; beyond the
panels the tail is integrated exactly in y = R_far / R.  The energies are
computed once per pair of molecules; B2 and its T-derivatives at any T are
then sums over the fixed grid, smooth in T (safe inside root finders).

Units: T in K, lengths in angstrom, B2 per molecule in angstrom^3.
Array suffixes: ``_r`` radial nodes, ``_o`` orientation nodes, ``_t``
temperatures.
"""
import math

import numpy as np

from analysis.molecules.pair_energy import pair_energy
from analysis.molecules.second_rotations import DEFAULT_ROTATION_DEGREE, RotationGrid
from analysis.virial.quadrature import check_temperature, mayer, panel_nodes, shape_out
from mdsim.checks import count

__all__ = ["DEFAULT_ORIENTATION_NODES", "DEFAULT_RADIAL_NODES", "OrientationGrid", "pair_grid",
           "b2_molecules"]

#: Gauss-Legendre nodes in each of cos(theta1), cos(theta2) and phi (on
#: [0, 1] for an end-symmetric molecule); see the tests for the convergence.
DEFAULT_ORIENTATION_NODES = 8
#: Gauss-Legendre nodes per radial panel.
DEFAULT_RADIAL_NODES = 6


def _radial_nodes(mol_a, mol_b, n):
    """Radial nodes and weights: panels to R_far, then the tail in y = R_far / R."""
    sigma = max(s.potential.sigma for s in mol_a.sites + mol_b.sites)
    ext = float(np.max(np.abs(mol_a.axial_positions_s())) + np.max(np.abs(
        mol_b.axial_positions_s())))
    wall = np.linspace(0.3 * sigma, 1.6 * sigma + ext, 40)
    out = np.linspace(1.6 * sigma + ext, 3.0 * sigma + ext, 8)[1:]
    far = np.linspace(3.0 * sigma + ext, 8.0 * sigma + ext, 6)[1:]
    breaks = np.concatenate([[0.0], wall, out, far])
    r, w, _ = panel_nodes(breaks, n)
    r_far = breaks[-1]
    y, wy = np.polynomial.legendre.leggauss(2 * n)
    y = 0.5 * (y + 1.0)
    wy = 0.5 * wy
    return np.concatenate([r, r_far / y]), np.concatenate([w, wy * r_far / y ** 2])


def _orientation_nodes(mol_a, mol_b, n):
    """Axes of both molecules at the orientation nodes and the weights (sum 1)."""
    x, wx = np.polynomial.legendre.leggauss(n)

    def cosines(mol):
        if mol.n_sites == 1:  # an atom: its orientation plays no part
            return np.array([1.0]), np.array([1.0])
        if mol.is_end_symmetric:  # e and -e are the same molecule: cos(theta) in [0, 1]
            return 0.5 * (x + 1.0), 0.5 * wx
        return x, 0.5 * wx

    c1, w1 = cosines(mol_a)
    c2, w2 = cosines(mol_b)
    if mol_a.n_sites == 1 or mol_b.n_sites == 1:
        phi, wphi = np.array([0.0]), np.array([1.0])
    else:
        phi, wphi = 0.5 * math.pi * (x + 1.0), 0.5 * wx
    C1, C2, P = np.meshgrid(c1, c2, phi, indexing="ij")
    W = (w1[:, None, None] * w2[None, :, None] * wphi[None, None, :]).ravel()
    C1, C2, P = C1.ravel(), C2.ravel(), P.ravel()
    S1 = np.sqrt(np.clip(1.0 - C1 * C1, 0.0, None))
    S2 = np.sqrt(np.clip(1.0 - C2 * C2, 0.0, None))
    e1_ov = np.stack([S1, np.zeros_like(S1), C1], axis=-1)
    e2_ov = np.stack([S2 * np.cos(P), S2 * np.sin(P), C2], axis=-1)
    return e1_ov, e2_ov, W


class OrientationGrid:
    """The energies of a pair of molecules on the (R, orientation) quadrature grid.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
    n_orientation : int, optional
        Gauss-Legendre nodes in each orientation variable.
    n_radial : int, optional
        Gauss-Legendre nodes per radial panel.
    """

    def __init__(self, mol_a, mol_b, n_orientation=DEFAULT_ORIENTATION_NODES,
                 n_radial=DEFAULT_RADIAL_NODES):
        n_o = count("n_orientation", n_orientation, 2, "Gauss-Legendre nodes, e.g. 12")
        n_r = count("n_radial", n_radial, 4, "Gauss-Legendre nodes per panel, e.g. 8")
        self.r_r, w_r = _radial_nodes(mol_a, mol_b, n_r)
        e1_ov, e2_ov, self.w_o = _orientation_nodes(mol_a, mol_b, n_o)
        z = np.array([0.0, 0.0, 1.0])
        d_rv = self.r_r[:, None] * z[None, :]
        self.u_ro = pair_energy(mol_a, mol_b, d_rv[:, None, :], e1_ov[None, :, :],
                                e2_ov[None, :, :])
        self.weight_r = -2.0 * math.pi * w_r * self.r_r ** 2

    def b2(self, T):
        """B2 (angstrom^3) and its first two T-derivatives at T in K."""
        T_t = check_temperature(T).ravel()
        out = np.empty((3, T_t.size))
        for k, t in enumerate(T_t):
            f, d1, d2 = mayer(self.u_ro, t)
            out[:, k] = [self.weight_r @ (g @ self.w_o) for g in (f, d1, d2)]
        return shape_out(tuple(out), T)


def pair_grid(mol_a, mol_b, n_orientation=DEFAULT_ORIENTATION_NODES,
              n_radial=DEFAULT_RADIAL_NODES, degree=DEFAULT_ROTATION_DEGREE):
    """The B2 quadrature grid of a pair of molecules.

    :class:`OrientationGrid` (``n_orientation``, ``n_radial``) when both are
    linear molecules or atoms; else :class:`RotationGrid` over both
    molecules' rotations (Lebedev ``degree``).
    """
    if not (mol_a.is_nonlinear or mol_b.is_nonlinear):
        return OrientationGrid(mol_a, mol_b, n_orientation, n_radial)
    return RotationGrid(mol_a, mol_b, degree)


def b2_molecules(mol_a, mol_b, T, n_orientation=DEFAULT_ORIENTATION_NODES,
                 n_radial=DEFAULT_RADIAL_NODES, degree=DEFAULT_ROTATION_DEGREE):
    """Second virial coefficient of two rigid molecules (or atoms), with T-derivatives.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
    T : float or ndarray, K
    n_orientation, n_radial : int, optional
        Quadrature nodes of linear molecules (see :class:`OrientationGrid`).
    degree : int, optional
        Lebedev degree of the rotation quadrature of non-linear molecules
        (see :class:`RotationGrid`).

    Returns
    -------
    B2, dB2_dT, d2B2_dT2 : float or ndarray shaped like T
        Per molecule: angstrom^3, angstrom^3/K, angstrom^3/K^2.

    Notes
    -----
    B2 = -(1/2) int <exp(-u/kT) - 1>_w1,w2 dR over all centre separations,
    averaged over both orientations (Gray and Gubbins, Theory of Molecular
    Fluids, vol. 1, 1984, section 3.2); derivatives under the integral.

    Examples
    --------
    A one-site molecule is the Lennard-Jones atom: B2* = -2.5381 at T* = 1
    (Hirschfelder, Curtiss and Bird 1954, Table I-B):

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> atom = RigidMolecule("LJ", [Site(LennardJones(1.0, 1.0), (0, 0, 0), 0.04)])
    >>> B, dB, d2B = b2_molecules(atom, atom, 1.0)
    >>> round(B / (2.0 * math.pi / 3.0), 4)
    -2.5381
    """
    return pair_grid(mol_a, mol_b, n_orientation, n_radial, degree).b2(T)
