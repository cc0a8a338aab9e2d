"""Corresponding-states tables: u_res*(T*, rho*) of one potential shape, built once.

For a pair potential of fixed shape (Lennard-Jones; Mie with fixed
exponents) every (epsilon, sigma) maps onto one reduced problem, so a table
of the reduced residual properties on a (T*, rho*) grid, sampled once,
serves every parameter set.

Modules, by idea:

- :mod:`~mdsim.cstable.plan`: the ``[table]`` settings, the grid plan, the point files;
- :mod:`~mdsim.cstable.point`: sampling one grid point; the job for the executors;
- :mod:`~mdsim.cstable.build`: :func:`build_table`, the points on an executor;
- :mod:`~mdsim.cstable.series`: the B2 + B3 series, the blend, the spline bases;
- :mod:`~mdsim.cstable.assemble`: the table file from the point files;
- :mod:`~mdsim.cstable.table`: :class:`CorrespondingStatesTable`, reading and interpolation;
- :mod:`~mdsim.cstable.expansion`: Delta T of a free expansion through a table.
"""
from mdsim.cstable.assemble import assemble_table, read_point
from mdsim.cstable.build import EXECUTORS, build_table
from mdsim.cstable.expansion import table_delta_T, table_delta_T_full
from mdsim.cstable.plan import (METHOD, is_point_complete, plan_points, points_dir_for,
                                read_plan, table_settings, write_plan)
from mdsim.cstable.point import point_job, run_point, system_for
from mdsim.cstable.series import VirialSeries, blend, cardinal_basis, virial_nodes
from mdsim.cstable.table import QUANTITIES, CorrespondingStatesTable

__all__ = [
    "CorrespondingStatesTable", "build_table", "assemble_table", "table_delta_T",
    "table_delta_T_full", "table_settings", "plan_points", "write_plan", "read_plan",
    "points_dir_for", "is_point_complete", "read_point", "run_point", "point_job", "system_for",
    "VirialSeries", "virial_nodes", "blend", "cardinal_basis", "METHOD", "QUANTITIES",
    "EXECUTORS",
]
