"""The study layer: study files read, checked and expanded into state points.

A study file (TOML) describes a gas, its pair potential and the runs; it is
read by :func:`read_study` into a :class:`Study` whose run tables hold SI
values with every default filled in.  :func:`state_points` expands the
initial states and volume ratios; :func:`resolve_initial_density` turns a
pressure into a density with the model's virial series.  The route names
and their order have their home in :mod:`mdsim.study.routes`.

Modules: :mod:`~mdsim.study.schema` (the keys, kinds, ranges and defaults),
:mod:`~mdsim.study.values` (checking values, error messages),
:mod:`~mdsim.study.datafiles` (data files kept in the study's folder),
:mod:`~mdsim.study.potential` (pair potentials from ``[potential]``),
:mod:`~mdsim.study.gas` (the gas and its potentials),
:mod:`~mdsim.study.heat_capacity_spec` (its ideal-gas heat capacity),
:mod:`~mdsim.study.reader` (the run tables, :class:`Study`,
:func:`read_study`), :mod:`~mdsim.study.statepoints`,
:mod:`~mdsim.study.routes`.
"""
from mdsim.study.gas import Gas, close_packed_density_mol_m3
from mdsim.study.reader import Study, read_study
from mdsim.study.routes import (DEFAULT_ROUTES, FINAL_PREFERENCE, RENAMED_ROUTES, ROUTE_LABELS,
                                ROUTES, SIMULATION_ROUTES, VIRIAL_ROUTES)
from mdsim.study.schema import SCHEMA, Key
from mdsim.study.statepoints import (StatePoint, ideal_heat_capacity, resolve_initial_density,
                                     state_points, virial_gas, virial_warnings,
                                     with_initial_state)
from mdsim.study.values import Context, check_table

__all__ = ["read_study", "Study", "Gas", "StatePoint", "state_points", "with_initial_state",
           "resolve_initial_density",
           "virial_gas", "virial_warnings", "ideal_heat_capacity", "close_packed_density_mol_m3",
           "SCHEMA", "Key", "Context", "check_table",
           "SIMULATION_ROUTES", "VIRIAL_ROUTES", "ROUTES", "DEFAULT_ROUTES", "FINAL_PREFERENCE",
           "ROUTE_LABELS", "RENAMED_ROUTES"]
