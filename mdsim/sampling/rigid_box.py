"""A cubic box of linear rigid molecules (one kind, or a mixture with atoms) at (T, rho) in
reduced units: the common set-up of the Monte Carlo (:mod:`mdsim.sampling.rigid`) and
molecular-dynamics (:mod:`mdsim.sampling.rigid_dynamics`) state points.

The reduced units are those of the first molecule's first site: its epsilon
and sigma, and the first molecule's mass.  A mixture's molecules are placed
on the lattice in a seeded random order of their types.
"""
import dataclasses

import numpy as np

from analysis.molecules.pair_energy import OVERLAP_SIGMA
from analysis.molecules.reduced import reduced_linear_type
from mdsim.checks import count, positive
from mdsim.engine.rigid_mc import lattice_start
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.errors import SettingError
from mdsim.units import ReducedUnits

__all__ = ["RigidBox", "rigid_box", "mixture_box", "reduced_inertia", "centre_core",
           "COULOMB", "electrostatics_note", "ordered_types"]

#: The site charges' energy in simulations (:class:`LinearPairModel` ``coulomb``): plain
#: Coulomb inside the molecular cut-off, which met Ewald 4 to 10 times more closely than the
#: (damped) shifted force for neutral molecules (docs/physics.md section 7b.4).
COULOMB = "cut"


@dataclasses.dataclass(frozen=True)
class RigidBox:
    """The reduced model and start configuration of a state point.

    Attributes
    ----------
    temperature_K, density_mol_m3 : float
        The state asked for (SI).
    temperature : float
        kT/epsilon.
    units : mdsim.units.ReducedUnits
    model : mdsim.engine.rigid_model.LinearPairModel
    mass_t : ndarray, shape=(n_types,)
        Molecule masses in units of the first type's.
    inertia_t : ndarray, shape=(n_types,), m sigma^2
        Moments of inertia of the linear rotors (0 for an atom).
    box_i : ndarray, shape=(3,), sigma
    centre_ni, axis_ni : ndarray, shape=(n, 3)
        Centres on a simple cubic lattice, axes uniform on the sphere.
    type_n : ndarray, shape=(n,), int64
        The type (index into the molecules) of each molecule.
    """

    temperature_K: float
    density_mol_m3: float
    temperature: float
    units: ReducedUnits
    model: LinearPairModel
    mass_t: np.ndarray
    inertia_t: np.ndarray
    box_i: np.ndarray
    centre_ni: np.ndarray
    axis_ni: np.ndarray
    type_n: np.ndarray = None

    @property
    def inertia(self):
        """The moment of inertia of the first type, m sigma^2."""
        return float(self.inertia_t[0])


def reduced_inertia(molecule, units):
    """The moment of inertia of a linear rotor in reduced units, m sigma^2 (0 for an atom).

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> round(reduced_inertia(n2, ReducedUnits(34.897, 3.3211e-10, 0.0280134)), 5)
    0.02482
    """
    return float(molecule.moments_of_inertia()[-1] / (units.mass_kg * units.sigma_m ** 2))


def centre_core(molecule, sigma_angstrom=None):
    """The hard core at the centre of a molecule with a point multipole, in sigma of its first
    site (or ``sigma_angstrom``; 0 without one): OVERLAP_SIGMA times its largest site sigma,
    the overlap rule of :mod:`analysis.molecules.pair_energy` (docs/physics.md section 7a.1).

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(133.22, 2.9847)
    >>> co2 = RigidMolecule("CO2", [Site(lj, (0, 0, -1.2088), 0.022),
    ...                             Site(lj, (0, 0, 1.2088), 0.022)], quadrupole_e_angstrom2=0.79)
    >>> centre_core(co2)
    0.5
    """
    if molecule.quadrupole == 0.0 and molecule.dipole == 0.0:
        return 0.0
    sigma = max(s.potential.sigma for s in molecule.sites)
    unit = molecule.sites[0].potential.sigma if sigma_angstrom is None else sigma_angstrom
    return OVERLAP_SIGMA * sigma / unit


def rigid_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed,
              shifted=False):
    """The :class:`RigidBox` of ``n_molecules`` molecules at (T, rho).

    Parameters
    ----------
    molecule : RigidMolecule
        Linear, two or more sites, optional site charges or axial point
        dipole and quadrupole.
    temperature_K : float, K
    density_mol_m3 : float, mol/m^3
    n_molecules : int
    cutoff : float, sigma
        Molecular (centre-centre) cut-off.
    seed : int or list of int
        Seeds the start axes.
    shifted : bool
        The shifted-energy pair model (molecular dynamics) instead of the
        plain cut (Monte Carlo).

    Returns
    -------
    RigidBox

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> b = rigid_box(n2, 300.0, 4000.0, 64, 3.0, seed=1)
    >>> round(b.temperature, 3), round(b.inertia, 4), round(float(b.box_i[0]), 3)
    (8.597, 0.0248, 8.985)
    """
    n = count("n_molecules", n_molecules, 2, "molecules in the box")
    return mixture_box([molecule], [n], temperature_K, density_mol_m3, cutoff, seed, shifted)


def mixture_box(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed,
                shifted=False):
    """The :class:`RigidBox` of a mixture of linear molecules and atoms at (T, rho).

    Parameters
    ----------
    molecules : list of RigidMolecule
        One per type: linear molecules (optional site charges, or axial
        point dipole and quadrupole) or atoms (one site at the origin).
    counts_t : list of int
        Molecules of each type (each >= 0, at least 2 in all).
    temperature_K, density_mol_m3, cutoff, seed, shifted
        As for :func:`rigid_box`; the seed also orders the types on the lattice.

    Returns
    -------
    RigidBox

    Notes
    -----
    The hard core at the centres (:func:`centre_core`) is the largest of the
    molecules with a multipole and applies to every pair: between other
    pairs it lies far inside the site-site repulsion, so it removes nothing
    (for air's 2CLJQ N2, O2 and LJ Ar: two centres that close put two sites
    within 0.56 of their sigma, a site-site energy above 600 kT at 295 K).

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(116.79, 3.3952), (0, 0, 0), 0.039948)])
    >>> b = mixture_box([n2, ar], [50, 14], 300.0, 4000.0, 3.0, seed=1)
    >>> np.bincount(b.type_n).tolist(), b.model.rotates_t.tolist(), float(b.inertia_t[1])
    ([50, 14], [1, 0], 0.0)
    """
    T = positive("temperature_K", temperature_K, "a temperature in K")
    rho = positive("density_mol_m3", density_mol_m3, "a molar density in mol/m^3")
    type_n = ordered_types(counts_t, len(molecules), seed)
    n = len(type_n)
    site = molecules[0].sites[0].potential
    units = ReducedUnits(site.epsilon, site.sigma * 1e-10, molecules[0].molar_mass_kg_mol)
    model = LinearPairModel([reduced_linear_type(m, site.epsilon, site.sigma) for m in molecules],
                            positive("cutoff", cutoff, "a cut-off in sigma"), shifted=shifted,
                            core=max(centre_core(m, site.sigma) for m in molecules),
                            coulomb=COULOMB)
    mass_t = np.array([m.molar_mass_kg_mol for m in molecules]) / molecules[0].molar_mass_kg_mol
    inertia_t = np.array([reduced_inertia(m, units) for m in molecules])
    box_i = np.full(3, (n / units.density_to_reduced(rho)) ** (1.0 / 3.0))
    centre_ni, axis_ni = lattice_start(n, box_i, seed)
    return RigidBox(T, rho, units.temperature_to_reduced(T), units, model, mass_t, inertia_t,
                    box_i, centre_ni, axis_ni, type_n)


def ordered_types(counts_t, n_types, seed):
    """The type of each molecule of a mixture's box: ``counts_t`` checked, then in a seeded
    random order (a pure gas keeps its order: no draw).

    >>> ordered_types([3, 1], 2, seed=1).tolist()
    [0, 0, 0, 1]
    """
    counts_t = [count(f"counts_t[{t}]", c, 0, "molecules of a type") for t, c in
                enumerate(counts_t)]
    if len(counts_t) != n_types:
        raise SettingError("counts_t", counts_t, f"needs one count per molecule ({n_types})")
    count("n_molecules", sum(counts_t), 2, "molecules in the box")
    type_n = np.repeat(np.arange(len(counts_t), dtype=np.int64), counts_t)
    if len(counts_t) > 1:
        type_n = np.random.default_rng([*np.atleast_1d(seed).tolist(), 1]).permutation(type_n)
    return type_n


def electrostatics_note(molecules, cutoff):
    """What a simulation of these molecules does with their charges and multipoles ("" if none).

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(50.0, 3.0)
    >>> m = RigidMolecule("AB", [Site(lj, (0, 0, -0.5), 0.01, 0.2),
    ...                          Site(lj, (0, 0, 0.5), 0.01, -0.2)])
    >>> electrostatics_note([m], 4.0)[:60]
    'site charges by plain Coulomb between molecules whose centre'
    """
    parts = []
    if any(m.has_charges for m in molecules):
        parts.append("site charges by plain Coulomb between molecules whose centres are "
                     f"within the molecular cut-off {cutoff:g} sigma")
    if any(m.dipole for m in molecules):
        parts.append("point dipoles cut at the molecular cut-off like the quadrupole")
    if not parts:
        return ""
    return ("; ".join(parts) + ": plain cut in Monte Carlo, shifted energy in molecular dynamics, "
            "no long-range part (the error against Ewald summation: docs/physics.md section 7b.4)")
