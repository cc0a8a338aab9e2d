"""The routes to the final temperature: their names, their order, their labels.

The one home of these facts (``docs/physics.md`` describes each route).
Every table, CSV row set and report lists routes in :data:`ROUTES` order;
the final temperature of a state point comes from the first route of
:data:`FINAL_PREFERENCE` that has a result.
"""
__all__ = ["SIMULATION_ROUTES", "VIRIAL_ROUTES", "ROUTES", "DEFAULT_ROUTES", "FINAL_PREFERENCE",
           "ROUTE_LABELS", "RENAMED_ROUTES"]

#: Routes that simulate (study key ``[simulation] routes``), best first.
SIMULATION_ROUTES = ("energy", "microcanonical", "direct")
#: Routes from the virial series of the same potential; they always run.
VIRIAL_ROUTES = ("virial_b2", "virial_b2b3")
#: Every route, in the order of tables, CSV rows and plots.
ROUTES = VIRIAL_ROUTES + SIMULATION_ROUTES
#: The simulation routes a study runs when it does not say.
DEFAULT_ROUTES = ("energy",)
#: Where a state point's final temperature comes from: the first of these with a result.
FINAL_PREFERENCE = SIMULATION_ROUTES + ("virial_b2b3",)
#: Short labels for tables and plots.
ROUTE_LABELS = {
    "virial_b2": "virial B2",
    "virial_b2b3": "virial B2+B3",
    "energy": "energy",
    "microcanonical": "microcanonical",
    "direct": "direct",
}
#: Names used by earlier versions of the tool, and what they are called now.
RENAMED_ROUTES = {"partition": "direct", "virial_b3": "virial_b2b3"}
