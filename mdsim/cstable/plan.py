"""The table's settings and its grid plan: which reduced states are simulated, and how.

:func:`table_settings` validates a study's ``[table]`` (the keys and ranges
of the study schema) and adds the potential's shape; :func:`write_plan`
stores the plan of a build in ``OUT.points/plan.json`` (and refuses a plan
that differs from one already there, so that a resumed build cannot mix
settings); every simulated grid point has its run file
``OUT.points/NNNN.h5`` (:func:`point_path`).
"""
import json
import math
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.files import atomic_write_text

__all__ = ["table_settings", "plan_points", "write_plan", "read_plan", "points_dir_for",
           "point_path", "is_point_complete", "reduced_potential", "SHAPE_FORMS", "METHOD"]

SHAPE_FORMS = ("lennard-jones", "mie")
# The sampling method of every grid point (NVT Monte Carlo).
METHOD = "mc-nvt"
# A box edge at least this factor times twice the cut-off.
BOX_MARGIN = 1.02
# The plan's keys that must agree for a build to resume (study name and file may change).
PLAN_KEYS = ("form", "shape", "cutoff", "particles", "equilibration", "samples", "seed",
             "temperatures", "densities", "virial_below", "simulation_above",
             "coexistence_temperatures", "coexistence_particles", "coexistence_cycles")


def _potential_shape(study):
    """(form, shape dict, reduced PairMatrix) of a pure gas of fixed-shape potential."""
    gas = study.gas
    if gas.n_species != 1:
        raise StudyError(f"study '{study.path}': a corresponding-states table needs a pure gas; "
                         f"this one has {gas.n_species} species; write a study with one "
                         "[potential] table")
    from mdsim.study.quantum_potential import uses_feynman_hibbs
    if uses_feynman_hibbs(study):
        raise StudyError(f"study '{study.path}': [simulation] quantum_potential = "
                         "'feynman-hibbs': a corresponding-states table is classical (the "
                         "Feynman-Hibbs potential depends on the mass and the temperature, not "
                         "on the shape alone); remove the key to build the classical table")
    pairs = study.reduced_pairs()
    pot = pairs.pots[0][0]
    from mdsim.engine.potentials import FORM_NAMES
    form = FORM_NAMES.get(pot.form, str(pot.form))
    if form not in SHAPE_FORMS:
        raise StudyError(f"[potential] form = {form!r}: a corresponding-states table needs a "
                         f"potential of fixed shape ({', '.join(SHAPE_FORMS)}); the other forms "
                         "do not reduce to one problem for every epsilon and sigma")
    shape = {}
    if form == "mie":
        shape = {"repulsive_exponent": float(pot.repulsive),
                 "attractive_exponent": float(pot.attractive)}
    return form, shape, pairs


def table_settings(study):
    """The validated [table] settings of a study (reduced grid, sampling).

    Returns
    -------
    dict
        ``temperatures`` (sorted list), ``densities`` (sorted, positive),
        ``particles``, ``equilibration``, ``samples``, ``seed``,
        ``virial_below``, ``simulation_above``, ``coexistence_temperatures``
        (sorted; empty: no coexistence grid), ``coexistence_particles``,
        ``coexistence_cycles``, plus ``form``, ``shape``, ``cutoff``.
    """
    # the schema of [table] and its checker live with the study reader
    from mdsim.study import SCHEMA, Context, check_table
    raw = study.raw.get("table")
    if raw is None:
        raise StudyError(f"study '{study.path}' has no [table]; add one with "
                         "temperatures = [1.5, 2.0, 3.0] and densities = [0.05, 0.1, 0.2] "
                         "(reduced units; see configs/table_lj.toml)")
    ctx = Context(study.path)
    s = check_table(ctx, "table", raw, SCHEMA["table"])
    for key in ("temperatures", "densities"):
        if key not in s:
            ctx.fail("table", key, "<missing>", "missing required key", "",
                     f"add {key} = {SCHEMA['table'][key].example}")
    T_t = sorted(float(t) for t in s["temperatures"])
    rho_d = sorted(float(r) for r in s["densities"] if r > 0.0)
    if len(T_t) < 2:
        ctx.fail("table", "temperatures", s["temperatures"], "too few values",
                 "at least 2 (4 or more for cubic interpolation)", "add temperatures")
    if len(rho_d) < 1:
        ctx.fail("table", "densities", s["densities"], "no positive density",
                 "at least one value above 0", "add densities such as [0.05, 0.1]")
    if s["simulation_above"] <= s["virial_below"]:
        ctx.fail("table", "simulation_above", s["simulation_above"],
                 f"not above virial_below = {s['virial_below']}",
                 "simulation_above > virial_below", "raise simulation_above")
    form, shape, pairs = _potential_shape(study)
    s.update(temperatures=T_t, densities=rho_d, form=form, shape=shape,
             cutoff=float(pairs.cutoff),
             coexistence_temperatures=sorted(float(t) for t in
                                             s.get("coexistence_temperatures", [])))
    return s


def plan_points(settings):
    """One entry per simulated grid point: index, i_t, i_d, T*, rho*, N, seed.

    The particle number is raised where needed so that the box edge is at
    least ``BOX_MARGIN`` times twice the cut-off; ``i_d`` counts from 1
    (density index 0 is rho* = 0, the exact virial limit, never simulated).
    """
    rc = settings["cutoff"]
    points = []
    n_d = len(settings["densities"])
    for i, T in enumerate(settings["temperatures"]):
        for j, rho in enumerate(settings["densities"]):
            n_min = int(math.ceil(rho * (2.0 * rc * BOX_MARGIN) ** 3))
            points.append({"index": i * n_d + j, "i_t": i, "i_d": j + 1,
                           "temperature_red": T, "density_red": rho,
                           "particles": max(int(settings["particles"]), n_min),
                           "seed": [int(settings["seed"]), i, j]})
    return points


def points_dir_for(out_path):
    """The directory of per-point run files that belongs to table file ``out_path``."""
    out_path = Path(out_path)
    return out_path.with_name(out_path.name + ".points")


def point_path(points_dir, index):
    """The run file of grid point ``index``."""
    return Path(points_dir) / f"{int(index):04d}.h5"


def write_plan(points_dir, settings, study):
    """Write ``plan.json`` of a build (or check that the one there agrees); return the plan.

    Raises
    ------
    StudyError
        The directory holds a build with other settings.
    """
    plan = {k: settings[k] for k in PLAN_KEYS}
    plan["points"] = plan_points(settings)
    plan["study_name"] = study.name
    plan["study_file"] = str(study.path)
    points_dir = Path(points_dir)
    points_dir.mkdir(parents=True, exist_ok=True)
    path = points_dir / "plan.json"
    if path.exists():
        old = json.loads(path.read_text(encoding="utf-8"))
        changed = [k for k in plan if k not in ("study_name", "study_file")
                   and old.get(k, _before_grid(k)) != plan[k]]
        if changed:
            raise StudyError(f"'{points_dir}' holds a table build with other settings "
                             f"({', '.join(changed)} differ); choose another table file or "
                             "delete that directory")
    else:
        atomic_write_text(path, json.dumps(plan, indent=1))
    return plan


def _before_grid(key):
    """What a plan written before the coexistence grid stands for: no grid, the defaults."""
    if not key.startswith("coexistence_"):
        return None
    if key == "coexistence_temperatures":
        return []
    from mdsim.study import SCHEMA
    spec = SCHEMA["table"].get(key)
    return None if spec is None else spec.default


def read_plan(points_dir):
    """The plan of the build in ``points_dir`` (as :func:`write_plan` wrote it)."""
    return json.loads((Path(points_dir) / "plan.json").read_text(encoding="utf-8"))


def reduced_potential(plan):
    """The plan's pair potential in reduced units (epsilon = sigma = 1)."""
    from mdsim.engine.potentials import LennardJones, Mie
    if plan["form"] == "mie":
        return Mie(1.0, 1.0, plan["shape"]["repulsive_exponent"],
                   plan["shape"]["attractive_exponent"])
    return LennardJones(1.0, 1.0)


def is_point_complete(points_dir, index):
    """True when grid point ``index`` has a complete run file."""
    from mdsim.sampling.store import is_complete
    path = point_path(points_dir, index)
    return path.exists() and is_complete(path)
