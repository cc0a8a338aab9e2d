"""The SI layer of the virial coefficients: potentials in kelvin and angstrom, B in mol units.

The study reader builds potentials with energies as u/k in K and lengths in
angstrom; these convert per-molecule coefficients to molar ones.
"""
from analysis.virial.quadrature import DEFAULT_NODES_B2, DEFAULT_NODES_B3
from analysis.virial.second import b2
from analysis.virial.third import b3
from mdsim.units import N_A

__all__ = ["ANGSTROM_M", "M3_MOL_PER_A3", "M6_MOL2_PER_A6", "b2_m3_mol", "b3_m6_mol2"]

ANGSTROM_M = 1.0e-10
M3_MOL_PER_A3 = N_A * ANGSTROM_M ** 3
M6_MOL2_PER_A6 = (N_A * ANGSTROM_M ** 3) ** 2


def b2_m3_mol(pot_K_A, T_K, n_nodes=DEFAULT_NODES_B2):
    """B2, dB2/dT, d2B2/dT2 in m^3/mol (/K, /K^2) for a potential in K and angstrom."""
    return tuple(M3_MOL_PER_A3 * v for v in b2(pot_K_A, T_K, n_nodes))


def b3_m6_mol2(pot_K_A, T_K, n_nodes=DEFAULT_NODES_B3):
    """B3, dB3/dT, d2B3/dT2 in m^6/mol^2 (/K, /K^2) for a potential in K and angstrom."""
    return tuple(M6_MOL2_PER_A6 * v for v in b3(pot_K_A, T_K, n_nodes))
