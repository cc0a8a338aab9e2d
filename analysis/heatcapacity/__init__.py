"""Ideal-gas heat capacity models c_v_ig(T) and their integrals.

A simulation of spherical particles carries only the translational part of
a molecule's heat capacity (3/2 R); rotations and vibrations come from the
user as one of these models:

- :class:`ConstantHeatCapacity`: c_v_ig = const (for example 1.5 R, 2.5 R).
- :class:`PolynomialHeatCapacity`: c_v_ig = sum_k a_k T^k, a_k in
  J/(mol K^(k+1)), T in K.
- :class:`TabulatedHeatCapacity`: a table (T, c_v_ig) interpolated by a
  monotone piecewise cubic (PCHIP, Fritsch and Carlson, SIAM J. Numer. Anal.
  17, 238, 1980), read from a CSV file with header
  ``temperature_K, cv_J_molK``.

Each model gives ``cv(T)`` in J/(mol K), ``u(T)`` = int_{T_ref}^T c_v dT in
J/mol (exact: closed forms for the constant and the polynomial, the exact
integral of the piecewise cubic for the table), ``s(T)`` =
int_{T_ref}^T c_v / T dT in J/(mol K), and ``valid_range`` in K.  A
temperature outside the range raises :class:`~mdsim.errors.StudyError`
naming the model, the range and what to do.  The models are in the module
``models``.

:func:`heat_capacity_from_spec` builds a model from the raw forms a study
file holds ("1.5 R", "20.8 J/(mol K)", {polynomial = [...], unit = "J/(mol K)"},
a CSV path); it and the readers are in the module ``reading``.  This package
re-exports the public names of both.
"""
from analysis.heatcapacity.models import (ConstantHeatCapacity, IdealGasHeatCapacity,
                                          KineticPlusInternal, PolynomialHeatCapacity,
                                          TabulatedHeatCapacity, WholeOfRigidModel)
from analysis.heatcapacity.reading import (TABLE_HEADER, heat_capacity_from_spec,
                                           parse_molar_heat_capacity, read_heat_capacity_table)

__all__ = ["IdealGasHeatCapacity", "ConstantHeatCapacity", "PolynomialHeatCapacity",
           "TabulatedHeatCapacity", "KineticPlusInternal", "WholeOfRigidModel",
           "heat_capacity_from_spec",
           "parse_molar_heat_capacity", "read_heat_capacity_table", "TABLE_HEADER"]
