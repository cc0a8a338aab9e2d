"""The run tables of a study checked together: [initial], [expansion], [simulation], [sweep],
[cluster].

Each table is checked by the schema (:mod:`mdsim.study.schema`), which fills
in the defaults; here the tables are checked against each other (the
initial state is given one way, a swept key is not also given singly) and
against the gas (no density above close packing).
"""
import numpy as np

from mdsim.study.gas import close_packed_density_mol_m3
from mdsim.study.schema import PIPELINE_TABLES, SCHEMA
from mdsim.study.values import check_table

__all__ = ["read_run_tables"]

def _check_state_keys(ctx, doc, out):
    """The initial state is given one way: pressure or density, in [initial] or [sweep]."""
    initial, sweep = out["initial"], out["sweep"]
    given = {k for k in ("pressure", "density") if k in initial}
    swept = {k for k in ("pressure", "density") if k in sweep}
    if len(given) == 2:
        ctx.fail("initial", "density", doc["initial"]["density"],
                 "both pressure and density are given", "exactly one of pressure or density",
                 "remove one (the other follows from the model's equation of state)")
    if len(swept) == 2:
        ctx.fail("sweep", "density", doc["sweep"]["density"],
                 "both pressure and density are swept", "a sweep over pressure or over density",
                 "split the study into two files")
    for key in ("temperature", "pressure", "density"):
        if key in initial and key in sweep:
            ctx.fail("initial", key, doc["initial"][key], f"'{key}' is also swept in [sweep]", "",
                     f"remove it from [initial]; the [sweep] list gives every {key}")
    if given and swept and given != swept:
        g, w = given.pop(), swept.pop()
        ctx.fail("sweep", w, doc["sweep"][w], f"a sweep over {w} while [initial] gives {g}",
                 f"the initial state by {g} or by {w}, not both",
                 f"either sweep over {g} or replace [initial] {g} by this [sweep] {w} list")
    if "volume_ratio" in out["expansion"] and "volume_ratio" in sweep:
        ctx.fail("expansion", "volume_ratio", doc["expansion"]["volume_ratio"],
                 "'volume_ratio' is also swept in [sweep]", "",
                 "remove it from [expansion]; the [sweep] list gives every volume ratio")


def _check_densities(ctx, doc, out, gas):
    """No initial density above close packing of the gas's molecules."""
    rho_max = close_packed_density_mol_m3(gas)
    for table, values in (("initial", [out["initial"].get("density")]),
                          ("sweep", out["sweep"].get("density", []))):
        for k, rho in enumerate(values):
            if rho is not None and rho > rho_max:
                raw = doc[table]["density"]
                ctx.fail(table, "density", raw if table == "initial" else raw[k],
                         f"{rho:.6g} mol/m^3 is denser than close packing",
                         f"< {rho_max:.6g} mol/m^3 (rho sigma^3 = sqrt 2 for this gas)",
                         "check the unit (mol/m^3, not mol/L) and the value")


def _check_quantum_potential(ctx, doc, out, gas):
    """The Feynman-Hibbs simulation: energy route, Monte Carlo, a pure gas."""
    sim = out["simulation"]
    if sim["quantum_potential"] == "none":
        return
    raw = doc["simulation"]["quantum_potential"]
    if gas.molecules is not None:
        ctx.fail("simulation", "quantum_potential", raw, "the Feynman-Hibbs potential is a "
                 "correction to a spherical pair potential, not to rigid molecules", "",
                 "remove the key (the rigid N2, O2 and CO2 models are classical)")
    if gas.n_species != 1:
        ctx.fail("simulation", "quantum_potential", raw, f"the gas has {gas.n_species} species",
                 "a pure gas", "remove the key (the quantum-corrected simulation is for pure "
                 "gases)")
    other = [r for r in sim["routes"] if r != "energy"]
    if other:
        ctx.fail("simulation", "quantum_potential", raw,
                 f"the routes {other} run at fixed energy, where the Feynman-Hibbs "
                 "potential's temperature is the unknown final temperature and the "
                 "conserved K + U_FH is not the gas's energy K + U + 2 beta C "
                 "(docs/physics.md 3.5)",
                 'routes = ["energy"]', "use the energy route with this key: it finds the "
                 "same final temperature by canonical sampling")
    if sim["sampler"] == "md":  # "auto" samples with Monte Carlo here
        ctx.fail("simulation", "quantum_potential", raw,
                 f"sampler = {sim['sampler']!r}: the thermodynamic energy estimator of the "
                 "temperature-dependent potential is computed by the Monte Carlo sampler",
                 'sampler = "mc"', "set sampler = \"mc\" or remove the key")


def read_run_tables(ctx, doc, gas):
    """Validate [initial], [expansion], [simulation], [sweep], [cluster].

    Parameters
    ----------
    ctx : Context
    doc : dict
        The whole parsed study file (absent tables read as empty).
    gas : Gas
        The study's gas (its molar mass reads a mass density, its
        molecules' size bounds the density).

    Returns
    -------
    dict
        Table name -> {key: value in SI}, with the schema's defaults
        filled in (see :class:`Study`).
    """
    ctx.molar_mass_kg_mol = float(np.dot(gas.fractions, gas.molar_masses_kg_mol))
    out = {table: check_table(ctx, table, doc.get(table, {}), SCHEMA[table])
           for table in PIPELINE_TABLES}
    _check_state_keys(ctx, doc, out)
    _check_densities(ctx, doc, out, gas)
    _check_quantum_potential(ctx, doc, out, gas)
    _check_coexistence_table(ctx, out)
    return out


def _check_coexistence_table(ctx, out):
    """[simulation] coexistence_table: a file inside the study's folder, made absolute."""
    from mdsim.study.datafiles import data_file
    sim = out["simulation"]
    if sim.get("coexistence_table") is not None:
        sim["coexistence_table"] = str(data_file(
            ctx, "simulation", "coexistence_table", sim["coexistence_table"], ctx.path.parent,
            "a corresponding-states table with a coexistence grid, from 'mdsim table build'"))
