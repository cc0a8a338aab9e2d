"""A cubic box of non-linear rigid molecules (one kind, or a mixture with atoms and linear
molecules, each a rigid body) at (T, rho) in reduced units: the set-up
of its Monte Carlo (:mod:`mdsim.sampling.body_stage`) and of :func:`mdsim.sampling.rigid.sample_rigid_state`.

The reduced units are those of the molecule's first site (its epsilon and
sigma) and the molecule's mass, as for linear molecules
(:mod:`mdsim.sampling.rigid_box`).  The sites are placed in the principal-axes
frame with the centre of mass at the origin
(:func:`analysis.molecules.reduced.reduced_body_type`).
"""
import dataclasses

import numpy as np

from analysis.molecules.reduced import reduced_body_type
from mdsim.checks import count, positive
from mdsim.engine.body_mc import body_lattice_start
from mdsim.engine.body_model import BodyPairModel
from mdsim.sampling.rigid_box import COULOMB, ordered_types
from mdsim.units import ReducedUnits

__all__ = ["BodyBox", "body_box", "body_mixture_box", "reduced_principal_inertia"]


@dataclasses.dataclass(frozen=True)
class BodyBox:
    """The reduced model and start configuration of a state point of non-linear molecules.

    Attributes
    ----------
    temperature_K, density_mol_m3 : float
        The state asked for (SI).
    temperature : float
        kT/epsilon.
    units : mdsim.units.ReducedUnits
    model : mdsim.engine.body_model.BodyPairModel
    mass_t : ndarray, shape=(n_types,)
        Masses of the types in the first type's (the unit of mass).
    inertia_ti : ndarray, shape=(n_types, 3), m sigma^2
        Principal moments of inertia of each type (ascending), reduced: (0,
        I, I) for a linear molecule, 0 for an atom.
    box_i : ndarray, shape=(3,), sigma
    centre_ni : ndarray, shape=(n, 3), sigma
        Centres on a simple cubic lattice.
    quat_nq : ndarray, shape=(n, 4)
        Orientations uniform over the rotations.
    type_n : ndarray, shape=(n,), int64
    """

    temperature_K: float
    density_mol_m3: float
    temperature: float
    units: ReducedUnits
    model: BodyPairModel
    mass_t: np.ndarray
    inertia_ti: np.ndarray
    box_i: np.ndarray
    centre_ni: np.ndarray
    quat_nq: np.ndarray
    type_n: np.ndarray

    @property
    def inertia_i(self):
        """The first type's principal moments, m sigma^2 (one kind: the molecule's)."""
        return self.inertia_ti[0]


def reduced_principal_inertia(molecule, units):
    """Principal moments of inertia of a molecule in reduced units, m sigma^2 (ascending).

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> np.round(reduced_principal_inertia(bent, ReducedUnits(50.0, 3e-10, 0.018)), 5).tolist()
    [0.00395, 0.0079, 0.01185]
    """
    return np.asarray(molecule.moments_of_inertia(), dtype=float) / (
        units.mass_kg * units.sigma_m ** 2)


def body_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed,
             shifted=False):
    """The :class:`BodyBox` of ``n_molecules`` non-linear molecules at (T, rho).

    Parameters
    ----------
    molecule : RigidMolecule
        Any shape, site Lennard-Jones or Mie with optional site charges (plain
        Coulomb inside the molecular cut-off, docs/physics.md section 7b.4).
    temperature_K : float, K
    density_mol_m3 : float, mol/m^3
    n_molecules : int
    cutoff : float, sigma
        Molecular (centre-centre) cut-off.
    seed : int or list of int
        Seeds the start orientations.
    shifted : bool
        The shifted-energy pair model (molecular dynamics) instead of the
        plain cut (Monte Carlo).

    Returns
    -------
    BodyBox

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> b = body_box(bent, 300.0, 2000.0, 27, 3.0, seed=1)
    >>> round(b.temperature, 3), b.quat_nq.shape, round(float(b.box_i[0]), 3)
    (6.0, (27, 4), 9.399)
    """
    n = count("n_molecules", n_molecules, 2, "molecules in the box")
    return body_mixture_box([molecule], [n], temperature_K, density_mol_m3, cutoff, seed,
                            shifted)


def body_mixture_box(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed,
                     shifted=False):
    """The :class:`BodyBox` of a mixture with non-linear molecules at (T, rho): every species a
    rigid body.

    Parameters
    ----------
    molecules : list of RigidMolecule
        One per type: non-linear molecules, linear ones (their sites on the
        body's axis) and atoms (one site at the centre, never turned), site
        Lennard-Jones or Mie with optional site charges (no point
        multipoles); unlike sites by Lorentz-Berthelot
        (:mod:`mdsim.engine.site_pairs`).
    counts_t : list of int
        Molecules of each type (each >= 0, at least 2 in all).
    temperature_K, density_mol_m3, cutoff, seed, shifted
        As for :func:`body_box`; the seed also orders the types on the lattice,
        as :func:`mdsim.sampling.rigid_box.mixture_box` does.

    Returns
    -------
    BodyBox

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(116.79, 3.3952), (0, 0, 0), 0.039948)])
    >>> b = body_mixture_box([bent, ar], [20, 7], 300.0, 2000.0, 3.0, seed=1)
    >>> np.bincount(b.type_n).tolist(), b.model.rotates_t.tolist(), b.inertia_ti[1].tolist()
    ([20, 7], [1, 0], [0.0, 0.0, 0.0])
    >>> round(float(b.mass_t[1]), 4)  # argon's mass in the bent molecule's
    2.2193
    """
    T = positive("temperature_K", temperature_K, "a temperature in K")
    rho = positive("density_mol_m3", density_mol_m3, "a molar density in mol/m^3")
    type_n = ordered_types(counts_t, len(molecules), seed)
    site = molecules[0].sites[0].potential
    units = ReducedUnits(site.epsilon, site.sigma * 1e-10, molecules[0].molar_mass_kg_mol)
    model = BodyPairModel([reduced_body_type(m, site.epsilon, site.sigma) for m in molecules],
                          positive("cutoff", cutoff, "a cut-off in sigma"), shifted=shifted,
                          coulomb=COULOMB)
    box_i = np.full(3, (len(type_n) / units.density_to_reduced(rho)) ** (1.0 / 3.0))
    centre_ni, quat_nq = body_lattice_start(len(type_n), box_i, seed)
    mass_t = np.array([m.molar_mass_kg_mol for m in molecules]) / molecules[0].molar_mass_kg_mol
    inertia_ti = np.array([reduced_principal_inertia(m, units) for m in molecules])
    return BodyBox(T, rho, units.temperature_to_reduced(T), units, model, mass_t, inertia_ti,
                   box_i, centre_ni, quat_nq, type_n)
