"""Second and third virial coefficients of spherical pair potentials.

Core functions are unit-agnostic: the temperature ``T`` is in the energy
unit of the potential (kelvin for potentials given as u/k in K, 1 for
reduced units), lengths in the potential's length unit, and the results are
per molecule: B2 in length^3, B3 in length^6.  The SI layer
(``*_m3_mol``, ``*_m6_mol2``) assumes potentials in kelvin and angstrom,
which is how the study reader builds them.

The coefficients are deterministic Gauss-Legendre quadratures on a fixed,
potential-dependent set of panels (dense across the repulsive wall and the
well), so they are smooth functions of T, safe inside root finders.

Modules: ``quadrature`` (panels, nodes, Mayer function, input checks),
``second`` (B2), ``third`` (B3 and its numba kernels), ``quantum``
(first-order Wigner-Kirkwood correction, de Boer parameter),
``quantum_second`` (the second-order term), ``quantum_third`` (the
first-order term of B3), ``radial`` (Numerov and Riccati-Bessel kernels), ``phase_shifts`` and
``quantum_exact`` (the exact quantum B2 from phase shifts), ``temperatures`` (Boyle,
B2 maximum, zero-pressure Joule-Thomson inversion), ``si`` (molar units),
``threebody`` (the Axilrod-Teller energy and its non-additive B3, imported
from its module).
This package re-exports their public names: ``from analysis.virial import
b2, b3`` works.

Array suffixes: ``_r`` radial quadrature nodes, ``_t`` temperatures,
``_k`` derivative order in T (0: value, 1: d/dT, 2: d2/dT2), ``_g`` the
uniform grid of the inner triangle integral G(x).
"""
from analysis.virial.quadrature import (DEFAULT_NODES_B2, DEFAULT_NODES_B3, R_B3_SIGMA,
                                        R_FAR_SIGMA, mayer)
from analysis.virial.quantum import (DE_BOER_FIRST_ORDER_LIMIT, DE_BOER_NEGLIGIBLE,
                                     DE_BOER_SECOND_ORDER_LIMIT, QuantumCorrectionWarning,
                                     b2_quantum, check_de_boer, de_boer_parameter,
                                     h2_over_mu_K_A2, level_enough)
from analysis.virial.quantum_exact import STATISTICS, SpinComponent, b2_exact, spin_components
from analysis.virial.quantum_second import b2_second_order
from analysis.virial.quantum_third import b3_quantum_first_order
from analysis.virial.second import b2, b2_mixture
from analysis.virial.si import ANGSTROM_M, M3_MOL_PER_A3, M6_MOL2_PER_A6, b2_m3_mol, b3_m6_mol2
from analysis.virial.temperatures import (b2_maximum_temperature, boyle_temperature,
                                          joule_thomson_inversion_zero_pressure)
from analysis.virial.third import b3, b3_cross, b3_mixture

__all__ = ["b2", "b2_mixture", "b3", "b3_cross", "b3_mixture", "mayer",
           "b2_quantum", "h2_over_mu_K_A2", "de_boer_parameter", "check_de_boer",
           "QuantumCorrectionWarning", "DE_BOER_FIRST_ORDER_LIMIT", "DE_BOER_NEGLIGIBLE",
           "DE_BOER_SECOND_ORDER_LIMIT", "level_enough", "b2_second_order", "b2_exact",
           "b3_quantum_first_order",
           "spin_components", "SpinComponent", "STATISTICS",
           "boyle_temperature", "b2_maximum_temperature", "joule_thomson_inversion_zero_pressure",
           "b2_m3_mol", "b3_m6_mol2", "ANGSTROM_M", "M3_MOL_PER_A3", "M6_MOL2_PER_A6",
           "DEFAULT_NODES_B2", "DEFAULT_NODES_B3", "R_FAR_SIGMA", "R_B3_SIGMA"]
