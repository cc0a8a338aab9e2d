"""The interaction energy of two rigid molecules at given positions and orientations.

u/k in kelvin, lengths in angstrom.  Site-site pair potentials (like sites
their own potential, unlike sites by the Lorentz-Berthelot rules of
:func:`mdsim.engine.potentials.combine`), Coulomb energies of site charges,
and the point dipoles and quadrupoles at the molecules' centres
(:mod:`analysis.molecules.electrostatics`).  :func:`pair_energy` takes the
axes of linear molecules (and atoms); :func:`pair_energy_rotated` takes the
rotation matrices of any molecules, non-linear ones too.  Both sum the same
site-pair terms (:func:`site_sum`) and centre terms (:func:`multipole_terms`).

Array suffixes: ``_v`` the three Cartesian components (last axis).
"""
import numpy as np

from analysis.molecules.electrostatics import (charge_charge, dipole_dipole, dipole_quadrupole,
                                               quadrupole_quadrupole)
from mdsim.engine.potentials import combine
from mdsim.errors import StudyError

__all__ = ["OVERLAP_SIGMA", "site_pair_potential", "check_mixable", "site_sum", "multipole_terms",
           "pair_energy", "pair_energy_rotated"]

#: Two sites closer than this fraction of their sigma overlap: the pair's
#: energy is +inf (Mayer function -1).  The repulsion there is above
#: 4 epsilon 2^12 (about 16000 epsilon), so nothing is lost at any
#: temperature the tool meets, and point multipoles (whose energies diverge
#: as the centres meet) cannot outweigh a site overlap.
OVERLAP_SIGMA = 0.5


def site_pair_potential(pot_a, pot_b):
    """The pair potential between two sites: the like potential, or Lorentz-Berthelot."""
    if pot_a is pot_b or pot_a == pot_b:
        return pot_a
    return combine(pot_a, pot_b)


def check_mixable(mol_a, mol_b):
    """Refuse a pair of molecules whose electrostatics do not mix (charges with multipoles)."""
    if (mol_a.has_charges and mol_b.has_multipoles) or (mol_a.has_multipoles
                                                       and mol_b.has_charges):
        raise StudyError(f"molecules '{mol_a.name}' and '{mol_b.name}': one carries site charges "
                         "and the other point multipoles; their charge-multipole energy is not "
                         "yet supported (give both molecules charges, or both multipoles)")


def _multipoles(mol_a, mol_b, ea_v, eb_v, n_v, r):
    u = 0.0
    if mol_a.dipole and mol_b.dipole:
        u = u + dipole_dipole(mol_a.dipole, mol_b.dipole, ea_v, eb_v, n_v, r)
    if mol_a.dipole and mol_b.quadrupole:
        u = u + dipole_quadrupole(mol_a.dipole, mol_b.quadrupole, ea_v, eb_v, n_v, r)
    if mol_a.quadrupole and mol_b.dipole:
        u = u + dipole_quadrupole(mol_b.dipole, mol_a.quadrupole, eb_v, ea_v, -n_v, r)
    if mol_a.quadrupole and mol_b.quadrupole:
        u = u + quadrupole_quadrupole(mol_a.quadrupole, mol_b.quadrupole, ea_v, eb_v, n_v, r)
    return u


def site_sum(mol_a, mol_b, distance, shape):
    """Site-pair energies of two molecules summed, K, and where two sites overlap.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
    distance : callable
        ``distance(i, j)``: the distances between site i of a and site j of
        b, angstrom, an array that broadcasts to ``shape``.
    shape : tuple of int

    Returns
    -------
    u : ndarray, K
        The site potentials (like sites their own, unlike sites by
        Lorentz-Berthelot) and the Coulomb energies of site charges, each
        pair taken at no less than ``OVERLAP_SIGMA`` sigma.
    overlap : ndarray of bool
        True where two sites are closer than ``OVERLAP_SIGMA`` sigma.
    """
    u = np.zeros(shape)
    overlap = np.zeros(shape, dtype=bool)
    for i, sa in enumerate(mol_a.sites):
        for j, sb in enumerate(mol_b.sites):
            dist = np.broadcast_to(distance(i, j), shape)
            pot = site_pair_potential(sa.potential, sb.potential)
            overlap |= dist < OVERLAP_SIGMA * pot.sigma
            safe = np.maximum(dist, OVERLAP_SIGMA * pot.sigma)
            u = u + pot.energy(safe.ravel()).reshape(shape)
            if sa.charge_e and sb.charge_e:
                u = u + charge_charge(sa.charge_e, sb.charge_e, safe)
    return u, overlap


def multipole_terms(mol_a, mol_b, d_v, ea_v, eb_v):
    """Point-multipole energy of two molecules, K, and where their centres overlap.

    Zero and nowhere unless both carry multipoles; then the centres closer
    than ``OVERLAP_SIGMA`` times the largest site sigma overlap (the
    multipole energies diverge as the centres meet, where crossed linear
    molecules need not overlap any sites).  ``d_v`` runs from the origin of
    a to that of b; ``ea_v``, ``eb_v`` are the axes.
    """
    if not (mol_a.has_multipoles and mol_b.has_multipoles):
        return 0.0, False
    r = np.sqrt(np.sum(d_v * d_v, axis=-1))
    overlap = r < OVERLAP_SIGMA * max(s.potential.sigma for s in mol_a.sites + mol_b.sites)
    n_v = d_v / np.maximum(r, 1e-300)[..., None]
    return _multipoles(mol_a, mol_b, ea_v, eb_v, n_v, np.maximum(r, 1e-300)), overlap


def pair_energy(mol_a, mol_b, d_v, ea_v, eb_v):
    """Energy u/k of molecule b at offset ``d_v`` from molecule a, K.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
        Linear molecules or atoms.
    d_v : ndarray, shape=(..., 3), angstrom
        From the origin of a to the origin of b.
    ea_v, eb_v : ndarray, shape=(..., 3)
        Unit vectors along the molecules' axes (ignored for atoms).

    Returns
    -------
    ndarray, shape=(...), K
        +inf where two sites overlap (closer than ``OVERLAP_SIGMA`` sigma),
        and, for molecules with point multipoles, where the centres are
        closer than ``OVERLAP_SIGMA`` times the largest site sigma.

    Examples
    --------
    Two argon atoms at the Lennard-Jones minimum 2^(1/6) sigma:

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(119.8, 3.405), (0, 0, 0), 0.039948)])
    >>> z = np.array([0.0, 0.0, 1.0])
    >>> round(float(pair_energy(ar, ar, 2 ** (1 / 6) * 3.405 * z, z, z)), 6)
    -119.8
    """
    check_mixable(mol_a, mol_b)
    d_v, ea_v, eb_v = (np.asarray(a, dtype=float) for a in (d_v, ea_v, eb_v))
    za_s = mol_a.axial_positions_s()
    zb_s = mol_b.axial_positions_s()
    shape = np.broadcast_shapes(d_v.shape, ea_v.shape, eb_v.shape)[:-1]

    def distance(i, j):
        sep_v = d_v + zb_s[j] * eb_v - za_s[i] * ea_v
        return np.sqrt(np.sum(sep_v * sep_v, axis=-1))

    u, overlap = site_sum(mol_a, mol_b, distance, shape)
    u_centre, centre_overlap = multipole_terms(mol_a, mol_b, d_v, ea_v, eb_v)
    return np.where(overlap | centre_overlap, np.inf, u + u_centre)


def pair_energy_rotated(mol_a, mol_b, d_v, rot_a, rot_b):
    """Energy u/k of two rigid molecules of any shape, given their rotations, K.

    Parameters
    ----------
    mol_a, mol_b : RigidMolecule
        Any molecules (non-linear, linear, atoms).
    d_v : ndarray, shape=(..., 3), angstrom
        From the origin of a's site positions to the origin of b's.
    rot_a, rot_b : ndarray, shape=(..., 3, 3)
        Rotation matrices taking body-frame vectors to the lab frame: a
        site at body position p sits at ``origin + rot @ p``; the axis of a
        linear molecule (for its multipoles) turns the same way.

    Returns
    -------
    ndarray, shape=(...), K
        As :func:`pair_energy` (+inf where sites, or centres with
        multipoles, overlap).

    Examples
    --------
    Two water-like bent molecules (three LJ sites), the second turned
    half a turn about z: the energy does not depend on which one is turned
    when the offset is along z.

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> half = np.diag([-1.0, -1.0, 1.0])
    >>> d = np.array([0.0, 0.0, 4.0])
    >>> a = pair_energy_rotated(bent, bent, d, np.eye(3), half)
    >>> b = pair_energy_rotated(bent, bent, d, half, np.eye(3))
    >>> bool(np.isclose(a, b, rtol=1e-12)), bool(a < 0.0)
    (True, True)
    """
    check_mixable(mol_a, mol_b)
    d_v, rot_a, rot_b = (np.asarray(a, dtype=float) for a in (d_v, rot_a, rot_b))
    shape = np.broadcast_shapes(d_v.shape[:-1], rot_a.shape[:-2], rot_b.shape[:-2])
    off_a = np.einsum("...ij,sj->s...i", rot_a, mol_a.position_sv)
    off_b = np.einsum("...ij,sj->s...i", rot_b, mol_b.position_sv)

    def distance(i, j):
        sep_v = d_v + off_b[j] - off_a[i]
        return np.sqrt(np.sum(sep_v * sep_v, axis=-1))

    u, overlap = site_sum(mol_a, mol_b, distance, shape)
    u_centre, centre_overlap = 0.0, False
    if mol_a.has_multipoles and mol_b.has_multipoles:  # linear molecules: axes turn with them
        u_centre, centre_overlap = multipole_terms(mol_a, mol_b, d_v, rot_a @ mol_a.axis_v,
                                                   rot_b @ mol_b.axis_v)
    return np.where(overlap | centre_overlap, np.inf, u + u_centre)
