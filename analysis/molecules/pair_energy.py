"""The interaction energy of two rigid linear molecules (or atoms) at given positions and axes.

u/k in kelvin, lengths in angstrom.  Site-site pair potentials (like sites
their own potential, unlike sites by the Lorentz-Berthelot rules of
:func:`mdsim.engine.potentials.combine`), Coulomb energies of site charges,
and the point dipoles and quadrupoles at the molecules' centres
(:mod:`analysis.molecules.electrostatics`).

Array suffixes: ``_v`` the three Cartesian components (last axis).
"""
import numpy as np

from analysis.molecules.electrostatics import (charge_charge, dipole_dipole, dipole_quadrupole,
                                               quadrupole_quadrupole)
from mdsim.engine.potentials import combine
from mdsim.errors import StudyError

__all__ = ["OVERLAP_SIGMA", "site_pair_potential", "pair_energy"]

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


def _check_mixable(mol_a, mol_b):
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
    _check_mixable(mol_a, mol_b)
    d_v, ea_v, eb_v = (np.asarray(a, dtype=float) for a in (d_v, ea_v, eb_v))
    za_s = mol_a.axial_positions_s()
    zb_s = mol_b.axial_positions_s()
    r = np.sqrt(np.sum(d_v * d_v, axis=-1))
    u = np.zeros(np.broadcast_shapes(d_v.shape, ea_v.shape, eb_v.shape)[:-1])
    overlap = np.zeros(u.shape, dtype=bool)
    for sa, za in zip(mol_a.sites, za_s):
        for sb, zb in zip(mol_b.sites, zb_s):
            sep_v = d_v + zb * eb_v - za * ea_v
            dist = np.sqrt(np.sum(sep_v * sep_v, axis=-1))
            pot = site_pair_potential(sa.potential, sb.potential)
            overlap |= dist < OVERLAP_SIGMA * pot.sigma
            safe = np.maximum(dist, OVERLAP_SIGMA * pot.sigma)
            u = u + pot.energy(safe.ravel()).reshape(u.shape)
            if sa.charge_e and sb.charge_e:
                u = u + charge_charge(sa.charge_e, sb.charge_e, safe)
    if mol_a.has_multipoles and mol_b.has_multipoles:
        # the multipole energies diverge as the centres meet, where no site may overlap
        # (crossed linear molecules): centres closer than OVERLAP_SIGMA sigma overlap too
        overlap |= r < OVERLAP_SIGMA * max(s.potential.sigma for s in mol_a.sites + mol_b.sites)
        n_v = d_v / np.maximum(r, 1e-300)[..., None]
        u = u + _multipoles(mol_a, mol_b, ea_v, eb_v, n_v, np.maximum(r, 1e-300))
    return np.where(overlap, np.inf, u)
