"""The simulation routes of a task, one module each (``docs/physics.md``).

``energy`` (:mod:`mdsim.pipeline.routes.energy`)
    NVT sampling of u_res at the initial state and at the final density;
    T_f from U(T_f, rho_f) = U(T_i, rho_i) by Newton steps or MBAR.  Any c_v_ig(T).
``microcanonical`` (:mod:`mdsim.pipeline.routes.microcanonical`)
    Microcanonical Monte Carlo (rigid molecules: fixed-energy MD) at the final
    density and the initial state's energy; T_f from the Ray temperature.
    Constant classical c_v_ig only.
``direct`` (:mod:`mdsim.pipeline.routes.direct`)
    The wall removed: NVE MD of the gas filling the enlarged box.  Atoms or rigid
    molecules (:mod:`mdsim.pipeline.routes.rigid_direct`).

Each runner takes a :class:`mdsim.pipeline.task.RunningTask` and returns
``(result, series, final_pressure, extra)``: the solver's result from
:mod:`analysis.expansion`, the arrays for the plots, the final pressure
{value, stderr} in Pa (or None) and details for the task file.
"""
from mdsim.pipeline.routes.direct import run_direct
from mdsim.pipeline.routes.energy import run_energy
from mdsim.pipeline.routes.microcanonical import run_microcanonical

__all__ = ["ROUTE_RUNNERS", "run_energy", "run_microcanonical", "run_direct"]

ROUTE_RUNNERS = {"energy": run_energy, "microcanonical": run_microcanonical,
                 "direct": run_direct}
"""The runner of each simulation route, keyed by the names of
:data:`mdsim.study.routes.SIMULATION_ROUTES` (one runner per route a study may name)."""

