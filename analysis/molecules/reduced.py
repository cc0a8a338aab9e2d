"""A linear rigid molecule (or an atom) in the reduced units of the engine.

The engine's rigid-molecule kernels (:mod:`mdsim.engine.rigid_pair`) take,
per molecule type, the axial site offsets from the centre of mass (sigma),
the site potentials in reduced units, the reduced quadrupole
Q* = Q / sqrt(4 pi epsilon_0 epsilon sigma^5), dipole
mu* = mu / sqrt(4 pi epsilon_0 epsilon sigma^3) and site charges
q* = q / sqrt(4 pi epsilon_0 epsilon sigma).  This module turns a
:class:`~analysis.molecules.model.RigidMolecule` (kelvin, angstrom, e,
e angstrom, e angstrom^2) into those numbers.
"""
import math


from analysis.molecules.electrostatics import COULOMB_K_ANGSTROM
from analysis.molecules.model import LINEAR_TOLERANCE_ANGSTROM
from mdsim.errors import StudyError

__all__ = ["reduced_linear_type"]


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
    charges = [float(q) * math.sqrt(COULOMB_K_ANGSTROM / (scale * length))
               for q in molecule.charge_s]
    return site_z, pots, float(quad), float(dipole), charges
