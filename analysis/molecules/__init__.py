"""Rigid multi-site molecules for the virial routes.

``model`` (the molecule: sites, charges, axial multipoles, inertia),
``electrostatics`` (point-charge and axial multipole energies),
``pair_energy`` (the energy of two molecules), ``second`` (B2 by
orientation quadrature), ``rotations`` (quadrature rules over rotations,
random rotations), ``second_rotations`` (B2 of non-linear molecules by
quadrature over both molecules' rotations), ``third`` (B3 by Monte Carlo integration with its
standard error), ``gas`` (:class:`MolecularVirialGas`, the virial equation
of state of a gas or mixture of molecules and atoms), ``reduced`` (a
linear molecule in the engine's reduced units).
"""
from analysis.molecules.model import RigidMolecule, Site
from analysis.molecules.second import OrientationGrid, b2_molecules, pair_grid
from analysis.molecules.second_rotations import RotationGrid
from analysis.molecules.third import TripletDraws
from analysis.molecules.gas import MolecularVirialGas

__all__ = ["RigidMolecule", "Site", "OrientationGrid", "RotationGrid", "pair_grid", "b2_molecules",
           "TripletDraws", "MolecularVirialGas"]
