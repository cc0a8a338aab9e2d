"""A rigid molecule: interaction sites, point charges, axial multipoles, masses and inertia.

The model object of the analysis layer.  Lengths in angstrom, site energies
u/k in kelvin (the pair potentials of :mod:`mdsim.engine.potentials`),
charges in e, dipole moments in e angstrom, quadrupole moments in
e angstrom^2, masses in kg/mol.  Site positions are in the body frame; the
point dipole and quadrupole sit at its origin, on the molecule's axis (the
line of the sites), so they need a linear molecule of two or more sites.
A non-linear molecule (sites not on one line) carries site potentials and
point charges only.  An atom is a molecule of one site at the origin.

Array suffixes: ``_s`` sites, ``_v`` the three Cartesian components.
"""
import dataclasses

import numpy as np

from mdsim.engine.potentials import PairPotential
from mdsim.errors import StudyError
from mdsim.units import N_A

__all__ = ["Site", "RigidMolecule", "LINEAR_TOLERANCE_ANGSTROM"]

#: Sites closer than this to the axis through the outer sites count as on it.
LINEAR_TOLERANCE_ANGSTROM = 1e-6


@dataclasses.dataclass(frozen=True)
class Site:
    """One interaction site of a rigid molecule.

    Attributes
    ----------
    potential : PairPotential
        Its like-site pair potential (u/k in K, lengths in angstrom).
    position_v : tuple of float, angstrom
        Body-frame position.
    mass_kg_mol : float
        The mass carried by the site (0 for a massless site).
    charge_e : float
        Point charge in elementary charges.
    """

    potential: PairPotential
    position_v: tuple
    mass_kg_mol: float
    charge_e: float = 0.0


class RigidMolecule:
    """A rigid set of sites with optional point dipole and quadrupole on its axis.

    Parameters
    ----------
    name : str
    sites : list of Site
    dipole_e_angstrom, quadrupole_e_angstrom2 : float, optional
        Point multipoles at the body origin along the axis (needs a linear
        molecule of two or more sites); the quadrupole is Buckingham's
        Theta = (1/2) sum q (3 z^2 - r^2).
    source : str, optional
        The published parameter set.

    Examples
    --------
    Two-centre Lennard-Jones nitrogen (bond 1.0464 angstrom):

    >>> from mdsim.engine.potentials import LennardJones
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> n2.is_linear, n2.rotational_dof, n2.kinetic_dof
    (True, 2, 5)
    """

    def __init__(self, name, sites, dipole_e_angstrom=0.0, quadrupole_e_angstrom2=0.0,
                 source=""):
        self.name = str(name)
        self.sites = list(sites)
        self.source = str(source)
        if not self.sites:
            raise StudyError(f"molecule '{self.name}': needs at least one site")
        for k, s in enumerate(self.sites):
            if not isinstance(s.potential, PairPotential):
                raise StudyError(f"molecule '{self.name}', site {k + 1}: the potential must be a "
                                 "pair potential of mdsim.engine.potentials")
        self.position_sv = np.array([np.asarray(s.position_v, dtype=float) for s in self.sites])
        if self.position_sv.shape != (len(self.sites), 3) or not np.all(np.isfinite(
                self.position_sv)):
            raise StudyError(f"molecule '{self.name}': each site position must be three finite "
                             "numbers in angstrom")
        self.mass_s = np.array([float(s.mass_kg_mol) for s in self.sites])
        self.charge_s = np.array([float(s.charge_e) for s in self.sites])
        if np.any(self.mass_s < 0.0) or self.mass_s.sum() <= 0.0:
            raise StudyError(f"molecule '{self.name}': site masses {self.mass_s.tolist()} kg/mol; "
                             "need masses >= 0 with a positive total")
        if abs(self.charge_s.sum()) > 1e-9:
            raise StudyError(f"molecule '{self.name}': the site charges sum to "
                             f"{self.charge_s.sum():.6g} e; a molecule of a gas must be neutral "
                             "(make the charges sum to 0)")
        self.dipole = float(dipole_e_angstrom)
        self.quadrupole = float(quadrupole_e_angstrom2)
        self.axis_v = self._axis()
        if (self.dipole or self.quadrupole) and len(self.sites) >= 2 and self.axis_v is None:
            raise StudyError(f"molecule '{self.name}': its sites are not on one line, and a point "
                             "dipole or quadrupole sits on a linear molecule's axis (axial "
                             "multipoles are for linear molecules only); describe the non-linear "
                             "molecule's electrostatics by site charges (charge_e) instead")
        if (self.dipole or self.quadrupole) and self.axis_v is None:
            raise StudyError(f"molecule '{self.name}': a point dipole or quadrupole sits on the "
                             "molecule's axis, which needs a linear molecule of two or more sites")

    def _axis(self):
        """Unit vector of the line of the sites, or None (non-linear or one site)."""
        pos = self.position_sv
        if len(pos) < 2:
            return None
        d = pos - pos[0]
        far = int(np.argmax(np.linalg.norm(d, axis=1)))
        length = np.linalg.norm(d[far])
        if length == 0.0:
            return None
        axis = d[far] / length
        off = d - np.outer(d @ axis, axis)
        if np.max(np.linalg.norm(off, axis=1)) > LINEAR_TOLERANCE_ANGSTROM:
            return None
        return axis

    @property
    def n_sites(self):
        """The number of interaction sites."""
        return len(self.sites)

    @property
    def molar_mass_kg_mol(self):
        """The molecule's molar mass, kg/mol (the sum of its site masses)."""
        return float(self.mass_s.sum())

    @property
    def is_linear(self):
        """True for two or more sites on one line."""
        return self.axis_v is not None

    @property
    def is_nonlinear(self):
        """True for sites not all on one line: its orientation is a rotation, not an axis."""
        return self.n_sites > 1 and not self.is_linear

    @property
    def rotational_dof(self):
        """Rotational degrees of freedom: 0 for an atom, 2 linear, 3 non-linear."""
        if self.n_sites == 1:
            return 0
        return 2 if self.is_linear else 3

    @property
    def kinetic_dof(self):
        """Kinetic degrees of freedom of the rigid molecule: 3 + rotational_dof."""
        return 3 + self.rotational_dof

    @property
    def extent_angstrom(self):
        """The largest distance of a site from the origin of the site positions, angstrom."""
        return float(np.max(np.linalg.norm(self.position_sv, axis=1)))

    @property
    def has_multipoles(self):
        """True when the molecule carries a point dipole or quadrupole."""
        return bool(self.dipole or self.quadrupole)

    @property
    def has_charges(self):
        """True when a site carries a point charge."""
        return bool(np.any(self.charge_s != 0.0))

    @property
    def is_end_symmetric(self):
        """True for a linear molecule that its reflection through the centre leaves unchanged.

        Then the orientations e and -e are the same molecule (N2, CO2: no
        dipole, sites and charges symmetric about the origin).
        """
        if self.n_sites == 1 or not self.is_linear or self.dipole:
            return self.n_sites == 1
        z = self.axial_positions_s()
        for k, zk in enumerate(z):
            mirror = [j for j, zj in enumerate(z) if abs(zj + zk) <= LINEAR_TOLERANCE_ANGSTROM]
            if not any(self.sites[j].potential is self.sites[k].potential
                       and self.charge_s[j] == self.charge_s[k] for j in mirror):
                return False
        return True

    def centre_of_mass_v(self):
        """Centre of mass in the body frame, angstrom."""
        return self.mass_s @ self.position_sv / self.mass_s.sum()

    def inertia_tensor(self):
        """Inertia tensor about the centre of mass in the site frame, kg m^2.

        I = sum_s m_s (|r_s|^2 1 - r_s r_s^T), r_s from the centre of mass
        (Goldstein, Classical Mechanics, chapter 5).
        """
        r = (self.position_sv - self.centre_of_mass_v()) * 1e-10
        m = self.mass_s / N_A
        return np.einsum("s,sk,sk->", m, r, r) * np.eye(3) - np.einsum("s,si,sj->ij", m, r, r)

    def moments_of_inertia(self):
        """Principal moments of inertia about the centre of mass, kg m^2 (ascending).

        Notes
        -----
        The eigenvalues of :meth:`inertia_tensor`; a linear molecule has one
        zero moment.

        Examples
        --------
        >>> from mdsim.engine.potentials import LennardJones
        >>> lj = LennardJones(34.897, 3.3211)
        >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.55), 0.014),
        ...                           Site(lj, (0, 0, 0.55), 0.014)])
        >>> [f"{m:.3e}" for m in n2.moments_of_inertia()]
        ['0.000e+00', '1.406e-46', '1.406e-46']
        """
        moments = np.linalg.eigvalsh(self.inertia_tensor())
        return np.where(np.abs(moments) < 1e-12 * max(moments.max(), 1e-300), 0.0, moments)

    def axial_positions_s(self):
        """Site coordinates along the axis, angstrom (0 for an atom).

        Raises
        ------
        StudyError
            For a non-linear molecule, or sites off the axis through the origin.
        """
        if self.n_sites == 1:
            if np.any(self.position_sv[0] != 0.0):
                raise StudyError(f"molecule '{self.name}': a one-site molecule has its site at "
                                 "the origin; give position = [0, 0, 0]")
            return np.zeros(1)
        if not self.is_linear:
            raise StudyError(f"molecule '{self.name}': its sites are not on one line, so they "
                             "have no axial coordinates (a non-linear molecule is described by "
                             "its site positions and rotations)")
        z = self.position_sv @ self.axis_v
        off = self.position_sv - np.outer(z, self.axis_v)
        if np.max(np.linalg.norm(off, axis=1)) > LINEAR_TOLERANCE_ANGSTROM:
            raise StudyError(f"molecule '{self.name}': the axis of the sites must pass through "
                             "the origin of the site positions (where the multipoles sit)")
        return z

    def __repr__(self):
        return (f"RigidMolecule({self.name!r}, {self.n_sites} sites, dipole={self.dipole:g} e A, "
                f"quadrupole={self.quadrupole:g} e A^2)")
