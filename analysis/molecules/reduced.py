"""A rigid molecule (linear, any shape, or an atom) in the reduced units of the engine.

The engine's rigid-molecule kernels (:mod:`mdsim.engine.rigid_pair`) take,
per molecule type, the axial site offsets from the centre of mass (sigma),
the site potentials in reduced units, the reduced quadrupole
Q* = Q / sqrt(4 pi epsilon_0 epsilon sigma^5), dipole
mu* = mu / sqrt(4 pi epsilon_0 epsilon sigma^3) and site charges
q* = q / sqrt(4 pi epsilon_0 epsilon sigma); the rigid-body kernels
(:mod:`mdsim.engine.body_pair`) take the site positions in the principal-axes
frame (sigma), the site potentials and the same site charges.  This module turns a
:class:`~analysis.molecules.model.RigidMolecule` (kelvin, angstrom, e,
e angstrom, e angstrom^2) into those numbers.
"""
import math

import numpy as np

from analysis.molecules.electrostatics import COULOMB_K_ANGSTROM
from analysis.molecules.model import LINEAR_TOLERANCE_ANGSTROM
from mdsim.errors import StudyError

__all__ = ["reduced_linear_type", "principal_frame", "reduced_body_type", "reduced_charges"]


def reduced_linear_type(molecule, energy_unit_K, length_unit_angstrom):
    """``(site_z, site_potentials, quadrupole, dipole, site_charges)`` of a linear molecule
    in reduced units.

    Parameters
    ----------
    molecule : RigidMolecule
        A linear molecule of two or more sites (site charges, axial point
        dipole and quadrupole allowed), or an atom (one site at the origin:
        offset 0, no multipole).
    energy_unit_K : float
        epsilon/k of the reduced units, K.
    length_unit_angstrom : float
        sigma of the reduced units, angstrom.

    Returns
    -------
    site_z : list of float, sigma
        Site offsets along the axis from the centre of mass.
    site_potentials : list of PairPotential
        In reduced units.
    quadrupole : float
        Q* = Q sqrt(C / (epsilon sigma^5)), C = e^2 / (4 pi epsilon_0 k angstrom).
    dipole : float
        mu* = mu sqrt(C / (epsilon sigma^3)), along the axis.
    site_charges : list of float
        q* = q sqrt(C / (epsilon sigma)).

    Raises
    ------
    StudyError
        For a non-linear molecule, or a point multipole away from the
        centre of mass.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.014),
    ...                           Site(lj, (0, 0, 0.5232), 0.014)], quadrupole_e_angstrom2=0.3)
    >>> z, pots, q, mu, charges = reduced_linear_type(n2, 34.897, 3.3211)
    >>> [round(v, 4) for v in z], pots[0].epsilon, round(q, 4), mu, charges
    ([-0.1575, 0.1575], 1.0, 1.0328, 0.0, [0.0, 0.0])
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(116.79, 3.3952), (0, 0, 0), 0.04)])
    >>> z, pots, q, mu, charges = reduced_linear_type(ar, 34.897, 3.3211)
    >>> z, round(pots[0].epsilon, 4), q
    ([0.0], 3.3467, 0.0)
    """
    name = molecule.name
    if molecule.n_sites > 1 and not molecule.is_linear:
        raise StudyError(f"molecule '{name}': the rigid-molecule simulation kernels take linear "
                         "molecules and atoms (one site); use the virial routes for it")
    z = molecule.axial_positions_s()
    z_com = float(molecule.mass_s @ z / molecule.mass_s.sum())
    if molecule.has_multipoles and abs(z_com) > LINEAR_TOLERANCE_ANGSTROM:
        raise StudyError(f"molecule '{name}': its centre of mass lies {z_com:.4g} angstrom "
                         "from the origin of the site positions, where the point multipoles "
                         "sit; the kernels put them at the centre of mass: place the origin "
                         "there")
    scale = float(energy_unit_K)
    length = float(length_unit_angstrom)
    site_z = [float(v) for v in (z - z_com) / length]
    pots = [s.potential.scaled(scale, length) for s in molecule.sites]
    quad = molecule.quadrupole * math.sqrt(COULOMB_K_ANGSTROM / (scale * length ** 5))
    dipole = molecule.dipole * math.sqrt(COULOMB_K_ANGSTROM / (scale * length ** 3))
    return site_z, pots, float(quad), float(dipole), reduced_charges(molecule, scale, length)


def reduced_charges(molecule, energy_unit_K, length_unit_angstrom):
    """The site charges of a molecule in reduced units, q* = q sqrt(C / (epsilon sigma)).

    C = e^2 / (4 pi epsilon_0 k angstrom) (``COULOMB_K_ANGSTROM``), so
    that two reduced charges at reduced distance r interact with
    q1* q2* / r epsilon.

    Returns
    -------
    list of float

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> ab = RigidMolecule("AB", [Site(lj, (0, 0, -0.5), 0.01, 0.2),
    ...                           Site(lj, (0, 0, 0.5), 0.01, -0.2)])
    >>> [round(q, 4) for q in reduced_charges(ab, 50.0, 3.0)]  # 0.2 sqrt(167101 / 150)
    [6.6753, -6.6753]
    """
    scale = math.sqrt(COULOMB_K_ANGSTROM / (float(energy_unit_K) * float(length_unit_angstrom)))
    return [float(q) * scale for q in molecule.charge_s]


def principal_frame(molecule):
    """The molecule's site positions in its principal-axes frame, and that frame.

    Parameters
    ----------
    molecule : RigidMolecule

    Returns
    -------
    body_si : ndarray, shape=(n_sites, 3), angstrom
        Site positions from the centre of mass along the principal axes
        (ascending moments of inertia).
    frame_ii : ndarray, shape=(3, 3)
        A proper rotation (det +1) whose columns are the principal axes in
        the study's site frame: ``position = centre_of_mass + frame @ body``.

    Notes
    -----
    The principal axes are the eigenvectors of
    :meth:`RigidMolecule.inertia_tensor` (Goldstein, Classical Mechanics,
    chapter 5).

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> body, frame = principal_frame(bent)
    >>> bool(np.allclose(body.T @ np.diag(bent.mass_s) @ body, np.diag(
    ...     np.diag(body.T @ np.diag(bent.mass_s) @ body)))), round(float(np.linalg.det(frame)), 12)
    (True, 1.0)
    """
    rel = molecule.position_sv - molecule.centre_of_mass_v()
    _, frame = np.linalg.eigh(molecule.inertia_tensor())
    if np.linalg.det(frame) < 0.0:
        frame[:, 2] *= -1.0
    return rel @ frame, frame


def reduced_body_type(molecule, energy_unit_K, length_unit_angstrom):
    """``(site_positions, site_potentials, site_charges)`` of a rigid molecule of any shape in
    reduced units.

    Parameters
    ----------
    molecule : RigidMolecule
        Sites with Lennard-Jones or Mie potentials and optional site
        charges; no point multipoles (they sit on a linear molecule's axis,
        which a rigid body's kernels do not know).
    energy_unit_K, length_unit_angstrom : float
        epsilon/k and sigma of the reduced units.

    Returns
    -------
    site_positions : ndarray, shape=(n_sites, 3), sigma
        In the principal-axes frame, centre of mass at the origin
        (:func:`principal_frame`).
    site_potentials : list of PairPotential
        In reduced units.
    site_charges : list of float
        :func:`reduced_charges`.

    Raises
    ------
    StudyError
        For point multipoles.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> pos, pots, charges = reduced_body_type(bent, 50.0, 3.0)
    >>> pos.shape, pots[0].epsilon, round(float(np.linalg.norm(pos[1] - pos[2])), 4), charges
    ((3, 3), 1.0, 0.5333, [0.0, 0.0, 0.0])
    """
    if molecule.has_multipoles:
        raise StudyError(f"molecule '{molecule.name}': point dipoles and quadrupoles sit on a "
                         "linear molecule's axis, and the rigid-body kernels have no axis; "
                         "describe the molecule by site charges (charge_e) instead")
    scale, length = float(energy_unit_K), float(length_unit_angstrom)
    body_si, _ = principal_frame(molecule)
    return (body_si / length, [s.potential.scaled(scale, length) for s in molecule.sites],
            reduced_charges(molecule, scale, length))
