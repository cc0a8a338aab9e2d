"""Study files: a TOML description of a gas, its pair potential and the runs.

A study file is read with ``tomllib`` (data only; nothing in it is
evaluated) and checked against the schema below: every key has a type, a
dimension where it is a physical quantity, and a range.  An unknown key is an
error that suggests the nearest valid one.  Every error names the file, the
table, the key, the value, what is allowed and what to do.

Tables read here:

``[study]``
    ``name`` (required; letters, digits, ``-``, ``_``, ``.``), ``description``.
``[gas]``
    ``name``; ``molar_mass`` ("39.948 g/mol"); ``ideal_heat_capacity`` (the
    ideal-gas c_v: "1.5 R", "20.8 J/(mol K)", a table
    ``{ polynomial = [a0, a1, ...], unit = "J/(mol K)" }`` meaning
    sum a_k (T/K)^k, or the name of a CSV file with header
    ``temperature_K, cv_J_molK``; kept raw for the analysis package);
    ``quantum_correction`` (bool, default false); ``dof_per_particle``
    (kinetic degrees of freedom per molecule for the microcanonical route:
    3 atoms, 5 rigid linear molecules, 6 rigid non-linear; default 3);
    ``[[gas.species]]`` for mixtures, each with ``name``, ``mole_fraction``,
    ``molar_mass`` and its own ``potential`` sub-table.
``[potential]``
    ``form`` ("lennard-jones", "mie", "exp-6", "table"); ``epsilon`` (epsilon/k
    as a temperature "119.8 K", or an energy per mole "996 J/mol");
    ``sigma`` ("3.405 angstrom"); Mie: ``repulsive_exponent``,
    ``attractive_exponent``; exp-6: ``r_min`` (or ``sigma``, from which r_min
    is solved) and ``steepness``; table: ``table_file`` (relative to the
    study file; two columns r, u with a header naming the units, such as
    ``r_angstrom, u_K`` or ``r_angstrom, u_J_mol``); ``cutoff`` in units of
    sigma (default 3.0); ``k_ij`` for mixtures (a number for two species or
    a symmetric matrix); ``source`` (text: where the parameters come
    from, shown in reports).  For a mixture, ``[potential]`` holds only
    ``cutoff``, ``k_ij`` and ``source``.
``[initial]``
    ``temperature`` ("295.15 K") and exactly one of ``pressure`` ("22 bar")
    or ``density`` (a MOLAR density, "500 mol/m^3"; a mass density such as
    "1.8 kg/m^3" is refused with the molar value it corresponds to).  A key
    swept in ``[sweep]`` is left out here.
``[expansion]``
    ``volume_ratio`` (V_f / V_i, a plain number > 1).
``[simulation]``
    ``routes`` (any of "energy", "microcanonical", "direct"; default
    ["energy"]; [] for the virial routes only), ``particles`` (optional:
    chosen by the tool from the target when absent), ``target_stderr``
    ("0.05 K"), ``max_cpu_time`` ("10 min"), ``seed`` (int, default 1),
    ``sampler`` ("mc" or "md": the energy route's NVT sampler).
``[sweep]``
    Lists over ``temperature``, ``pressure`` or ``density`` (not both), and
    ``volume_ratio``; every combination is a state point
    (:mod:`mdsim.study.statepoints`).
``[cluster]``
    For the dask and array executors: ``system`` ("slurm", "pbs"),
    ``partition``, ``cpus_per_job``, ``memory_per_job`` ("4GB"), ``time_limit``
    ("HH:MM:SS" or "D-HH:MM:SS"), ``network_interface``, ``batch_jobs``, ``address``
    (an existing Dask scheduler, "tcp://host:8786").

The run tables are validated here and kept as dictionaries of converted
values in SI (K, Pa, mol/m^3, s), with every default filled in:
``Study.initial``, ``.expansion``, ``.simulation``, ``.sweep`` (lists),
``.cluster``.  Absent ``[initial]``/``[expansion]`` tables are allowed
(``mdsim sample`` needs neither); :meth:`Study.state_points` then says what
to add.

File paths (``table_file``, heat-capacity CSV files) are relative to the
study file's directory; absolute paths and paths with ``..`` are allowed
(they are the user's own files), and their content is only ever read as
numbers, never evaluated.

Potentials are built with energies as u/k in kelvin and lengths in angstrom
(``Gas.pairs_K_angstrom``); :meth:`Study.system` rescales them to the reduced
units of species 0.
"""
import dataclasses
import difflib
import math
import numbers
import os
import re
import tomllib
from pathlib import Path

import numpy as np

from mdsim.study.routes import DEFAULT_ROUTES, RENAMED_ROUTES, SIMULATION_ROUTES as ROUTES
from mdsim.errors import StudyError
from mdsim.engine.potentials import Exp6, LennardJones, Mie, PairMatrix, read_table
from mdsim.units import ReducedUnits, parse_epsilon_K, parse_quantity, R_GAS

ANGSTROM = 1e-10

FORMS = ("lennard-jones", "mie", "exp-6", "table")
PIPELINE_TABLES = ("initial", "expansion", "simulation", "sweep", "cluster")

# Column headers accepted in potential tables: name -> factor to angstrom or to K.
TABLE_R_UNITS = {"r_angstrom": 1.0, "r_nm": 10.0, "r_m": 1e10}
TABLE_U_UNITS = {"u_K": 1.0, "u_J_mol": 1.0 / R_GAS, "u_kJ_mol": 1000.0 / R_GAS}
HEAT_CAPACITY_CSV_HEADER = ("temperature_K", "cv_J_molK")

# Below this reduced density the default start is random placement, above it
# a lattice (random insertion gets slow and a lattice melts quickly when dense).
RANDOM_START_MAX_DENSITY_RED = 0.1


@dataclasses.dataclass(frozen=True)
class Key:
    """One key of a table in the study-file schema.

    ``kind`` is one of "string", "bool", "int", "number", "epsilon",
    "heat_capacity", "table", "tables", "k_ij" or a quantity kind of
    :data:`mdsim.units.KINDS` (value returned in SI).  ``low``/``high``
    bound the value (SI for quantities; exclusive unless ``*_inclusive``).
    """

    kind: str
    required: bool = False
    default: object = None
    low: float = None
    high: float = None
    low_inclusive: bool = False
    choices: tuple = ()
    example: str = ""
    help: str = ""
    unit: str = ""          # unit used to show the range in messages
    unit_si: float = 1.0    # its size in SI
    item: str = ""          # for kind "list": the kind of each item
    pattern: str = ""       # for kind "string": a regular expression the text must match


LENGTH_UNIT = {"unit": "angstrom", "unit_si": 1e-10}
MASS_UNIT = {"unit": "g/mol", "unit_si": 1e-3}

SCHEMA = {
    "study": {
        "name": Key("string", required=True, example='"argon-295K"',
                    help="a short name for the study, used in file names"),
        "description": Key("string", default="", example='"argon from 22 bar"'),
    },
    "gas": {
        "name": Key("string", default="", example='"argon"'),
        "molar_mass": Key("molar_mass", low=0.5e-3, high=1.0, example='"39.948 g/mol"', **MASS_UNIT),
        "ideal_heat_capacity": Key("heat_capacity", required=True, example='"1.5 R"',
                                   help="the ideal-gas c_v (translation plus internal modes)"),
        "quantum_correction": Key("bool", default=False, example="true"),
        "dof_per_particle": Key("int", default=3, choices=(3, 5, 6), example="3",
                                help="3 for atoms, 5 for rigid linear, 6 for rigid non-linear"),
        "species": Key("tables", example="[[gas.species]]"),
    },
    "species": {
        "name": Key("string", required=True, example='"nitrogen"'),
        "mole_fraction": Key("number", required=True, low=0.0, high=1.0 + 1e-12, example="0.78"),
        "molar_mass": Key("molar_mass", required=True, low=0.5e-3, high=1.0,
                          example='"28.0134 g/mol"', **MASS_UNIT),
        "potential": Key("table", required=True, example="{ form = \"lennard-jones\", ... }"),
    },
    "potential": {
        "form": Key("string", choices=FORMS, example='"lennard-jones"'),
        "epsilon": Key("epsilon", low=0.01, high=1e5, example='"119.8 K"', unit="K",
                       help="epsilon/k in K or an energy per mole"),
        "sigma": Key("length", low=0.5 * ANGSTROM, high=50 * ANGSTROM, example='"3.405 angstrom"',
                     **LENGTH_UNIT),
        "repulsive_exponent": Key("number", low=3.0, high=200.0, example="12.0"),
        "attractive_exponent": Key("number", low=3.0, high=100.0, example="6.0"),
        "r_min": Key("length", low=0.5 * ANGSTROM, high=50 * ANGSTROM, example='"3.86 angstrom"',
                     **LENGTH_UNIT),
        "steepness": Key("number", low=6.0, high=100.0, example="14.0"),
        "table_file": Key("string", example='"argon_potential.csv"'),
        "cutoff": Key("number", default=3.0, low=1.5, high=12.0, low_inclusive=True,
                      example="3.0", help="in units of sigma"),
        "k_ij": Key("k_ij", example="0.0"),
        "source": Key("string", default="", example='"second-virial fit, HCB 1954"',
                      help="where the parameters come from (shown in reports)"),
    },
}

SAMPLERS = ("mc", "md")
CLUSTER_SYSTEMS = ("slurm", "pbs")
# Densest state accepted: close-packed spheres of diameter sigma, rho sigma^3 = sqrt(2).
CLOSE_PACKED_DENSITY_RED = math.sqrt(2.0)
TEMPERATURE_RANGE_K = (1e-3, 1e5)
PRESSURE_RANGE_PA = (0.0, 1e10)
DENSITY_RANGE_MOL_M3 = (0.0, 1e6)
VOLUME_RATIO_MAX = 1e6
MAX_SWEEP_VALUES = 1000
SEED_MAX = 2 ** 63 - 1

_T = {"unit": "K", "unit_si": 1.0}
_P = {"unit": "bar", "unit_si": 1e5}
_RHO = {"unit": "mol/m^3", "unit_si": 1.0}
_TIME = {"unit": "min", "unit_si": 60.0}

SCHEMA.update({
    "initial": {
        "temperature": Key("temperature", low=TEMPERATURE_RANGE_K[0], high=TEMPERATURE_RANGE_K[1],
                           example='"295.15 K"', help="the temperature before the expansion", **_T),
        "pressure": Key("pressure", low=PRESSURE_RANGE_PA[0], high=PRESSURE_RANGE_PA[1],
                        example='"22 bar"', help="the pressure before the expansion", **_P),
        "density": Key("molar_density", low=DENSITY_RANGE_MOL_M3[0], high=DENSITY_RANGE_MOL_M3[1],
                       example='"500 mol/m^3"', help="the molar density before the expansion",
                       **_RHO),
    },
    "expansion": {
        "volume_ratio": Key("number", low=1.0, high=VOLUME_RATIO_MAX, example="2.0",
                            help="V_final / V_initial, above 1 (2.0: into an equal evacuated "
                            "volume)"),
    },
    "simulation": {
        "routes": Key("routes", default=list(DEFAULT_ROUTES), choices=ROUTES,
                      example='["energy"]', help="[] runs the virial routes only"),
        "particles": Key("int", low=32, high=100000, low_inclusive=True, example="500",
                         help="leave it out to let the tool choose from target_stderr"),
        "target_stderr": Key("temperature", default="0.05 K", low=0.0, high=100.0,
                             example='"0.05 K"',
                             help="the standard error of Delta T to reach (a temperature "
                             "difference in K)", **_T),
        "max_cpu_time": Key("time", default="10 min", low=0.0, high=30 * 86400.0,
                            example='"10 min"', help="CPU budget per task", **_TIME),
        "seed": Key("int", default=1, low=0, high=SEED_MAX, low_inclusive=True, example="1"),
        "sampler": Key("string", default="mc", choices=SAMPLERS, example='"mc"',
                       help="NVT Monte Carlo or thermostatted MD for the energy route"),
    },
    "sweep": {
        "temperature": Key("list", item="temperature", low=TEMPERATURE_RANGE_K[0],
                           high=TEMPERATURE_RANGE_K[1], example='["250 K", "295.15 K"]', **_T),
        "pressure": Key("list", item="pressure", low=PRESSURE_RANGE_PA[0],
                        high=PRESSURE_RANGE_PA[1], example='["10 bar", "22 bar"]', **_P),
        "density": Key("list", item="molar_density", low=DENSITY_RANGE_MOL_M3[0],
                       high=DENSITY_RANGE_MOL_M3[1], example='["100 mol/m^3", "500 mol/m^3"]',
                       **_RHO),
        "volume_ratio": Key("list", item="number", low=1.0, high=VOLUME_RATIO_MAX,
                            example="[1.5, 2.0]"),
    },
    "cluster": {
        "system": Key("string", choices=CLUSTER_SYSTEMS, example='"slurm"',
                      help="the batch scheduler of the cluster"),
        "partition": Key("string", pattern=r"^[A-Za-z0-9_.\-]+$", example='"compute"',
                         help="the scheduler's partition or queue"),
        "cpus_per_job": Key("int", default=1, low=1, high=1024, low_inclusive=True, example="4",
                            help="CPU cores of each batch job"),
        "memory_per_job": Key("string", default="2GB",
                      pattern=r"^\d+(\.\d+)?\s*([KMGT]i?B)$", example='"4GB"',
                      help="memory of each batch job: a number and KB, MB, GB, TB (or KiB, "
                      "MiB, ...)"),
        "time_limit": Key("string", default="01:00:00",
                        pattern=r"^(\d+-)?\d{1,3}:[0-5]\d:[0-5]\d$", example='"02:00:00"',
                        help="the time limit of each batch job, HH:MM:SS or D-HH:MM:SS"),
        "network_interface": Key("string", pattern=r"^[A-Za-z0-9_.\-]+$", example='"ib0"',
                         help="network interface the workers talk over"),
        "batch_jobs": Key("int", default=1, low=1, high=10000, low_inclusive=True, example="4",
                    help="number of batch jobs (Dask workers) to start"),
        "address": Key("string", pattern=r"^(tcp|tls|ucx|inproc|ws|wss)://\S+$",
                       example='"tcp://10.0.0.1:8786"',
                       help="an existing Dask scheduler to use instead of starting one"),
    },
})

# [table]: the grid and sampling of a corresponding-states table (mdsim.cstable.table), reduced units.
SCHEMA["table"] = {
    "temperatures": Key("list", item="number", low=0.3, high=50.0,
                        example="[1.5, 2.0, 3.0]", help="reduced temperatures kT/epsilon"),
    "densities": Key("list", item="number", low=0.0, high=1.2,
                     example="[0.02, 0.05, 0.1, 0.2]",
                     help="reduced densities rho sigma^3 (0 is added: the exact virial limit)"),
    "particles": Key("int", default=256, low=32, high=100000, low_inclusive=True, example="256",
                     help="particles per grid point (raised where the cut-off needs a bigger box)"),
    "equilibration": Key("int", default=1000, low=0, high=10 ** 8, low_inclusive=True,
                         example="1000", help="Monte Carlo sweeps discarded at each point"),
    "samples": Key("int", default=4000, low=20, high=10 ** 8, low_inclusive=True,
                   example="4000", help="production samples (one per sweep) at each point"),
    "seed": Key("int", default=1, low=0, high=SEED_MAX, low_inclusive=True, example="1"),
    "virial_below": Key("number", default=0.02, low=0.0, high=1.0, low_inclusive=True,
                        example="0.02", help="reduced density below which the table is the "
                        "exact B2 + B3 series"),
    "simulation_above": Key("number", default=0.05, low=0.0, high=1.2, example="0.05",
                            help="reduced density above which the table is the simulation "
                            "(smooth blend in between)"),
}

TOP_LEVEL = ("study", "gas", "potential", "table") + PIPELINE_TABLES

# Keys each potential form needs (besides 'form'); exp-6 needs one of r_min/sigma.
FORM_KEYS = {
    "lennard-jones": ({"epsilon", "sigma"}, set()),
    "mie": ({"epsilon", "sigma", "repulsive_exponent", "attractive_exponent"}, set()),
    "exp-6": ({"epsilon", "steepness"}, {"r_min", "sigma"}),
    "table": ({"table_file"}, set()),
}
MIXING_KEYS = {"cutoff", "k_ij", "source"}


# -- error helpers ------------------------------------------------------------------

class _Context:
    """Where we are in the file, for messages."""

    def __init__(self, path):
        self.path = Path(path)

    def where(self, table, key=None):
        loc = f"study file '{self.path}', [{table}]"
        return loc + (f" key '{key}'" if key else "")

    def fail(self, table, key, value, problem, allowed="", hint=""):
        msg = f"{self.where(table, key)}"
        if value is not _MISSING:
            msg += f" = {value!r}"
        msg += f": {problem}"
        if allowed:
            msg += f"; allowed: {allowed}"
        if hint:
            msg += f"; {hint}"
        raise StudyError(msg)


_MISSING = object()


def _suggest(key, valid):
    close = difflib.get_close_matches(key, list(valid), n=1, cutoff=0.5)
    valid_list = ", ".join(sorted(valid))
    if close:
        return f"did you mean '{close[0]}'? valid keys: {valid_list}"
    return f"valid keys: {valid_list}"


def _describe_range(spec):
    parts = []
    if spec.low is not None:
        parts.append((">= " if spec.low_inclusive else "> ") + f"{spec.low / spec.unit_si:g}")
    if spec.high is not None:
        parts.append(f"<= {spec.high / spec.unit_si:g}")
    return (" and ".join(parts) + (f" {spec.unit}" if spec.unit else "")).strip()


def _check_value(ctx, table, key, value, spec):
    """Convert and check one value according to its schema entry."""
    kind = spec.kind
    ex = f"for example {key} = {spec.example}" if spec.example else ""
    if kind == "string":
        if not isinstance(value, str):
            ctx.fail(table, key, value, "must be a string", "text in double quotes", ex)
        if spec.choices and value not in spec.choices:
            close = difflib.get_close_matches(value, spec.choices, n=1, cutoff=0.4)
            hint = f"did you mean '{close[0]}'?" if close else ex
            ctx.fail(table, key, value, "unknown choice", ", ".join(f'"{c}"' for c in spec.choices),
                     hint)
        if spec.pattern and not re.match(spec.pattern, value.strip()):
            ctx.fail(table, key, value, "not in the expected format", spec.help or spec.example, ex)
        return value.strip() if spec.pattern else value
    if kind == "bool":
        if not isinstance(value, bool):
            ctx.fail(table, key, value, "must be true or false", "true, false",
                     "write it without quotes")
        return value
    if kind == "int":
        if isinstance(value, bool) or not isinstance(value, int):
            ctx.fail(table, key, value, "must be a whole number", _describe_range(spec), ex)
        if spec.choices and value not in spec.choices:
            ctx.fail(table, key, value, "not an allowed value",
                     ", ".join(str(c) for c in spec.choices), spec.help)
        too_low = spec.low is not None and (value < spec.low if spec.low_inclusive
                                            else value <= spec.low)
        if too_low or (spec.high is not None and value > spec.high):
            ctx.fail(table, key, value, "out of range", _describe_range(spec), spec.help or ex)
        return value
    if kind == "routes":
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            ctx.fail(table, key, value, "must be a list of route names",
                     ", ".join(f'"{c}"' for c in spec.choices), ex)
        for v in value:
            if v in RENAMED_ROUTES and RENAMED_ROUTES[v] in spec.choices:
                ctx.fail(table, key, value, f"the route '{v}' is now called "
                         f"'{RENAMED_ROUTES[v]}'", ", ".join(f'"{c}"' for c in spec.choices),
                         f"write \"{RENAMED_ROUTES[v]}\" instead")
            if v not in spec.choices:
                close = difflib.get_close_matches(v, spec.choices, n=1, cutoff=0.4)
                hint = f"did you mean '{close[0]}'?" if close else ex
                ctx.fail(table, key, value, f"unknown route '{v}'",
                         ", ".join(f'"{c}"' for c in spec.choices), hint)
        if len(set(value)) != len(value):
            ctx.fail(table, key, value, "a route is listed twice", "each route once", "")
        return list(value)
    if kind == "list":
        if not isinstance(value, list) or not value:
            ctx.fail(table, key, value, "must be a non-empty list", _describe_range(spec), ex)
        if len(value) > MAX_SWEEP_VALUES:
            ctx.fail(table, key, f"<list of {len(value)}>", "too many values",
                     f"at most {MAX_SWEEP_VALUES}", "split the study into several files")
        item_spec = dataclasses.replace(spec, kind=spec.item, item="")
        out = [_check_value(ctx, table, key, v, item_spec) for v in value]
        if len(set(out)) != len(out):
            ctx.fail(table, key, value, "a value is listed twice", "distinct values",
                     "remove the repeated value")
        return out
    if kind == "number":
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            ctx.fail(table, key, value, "must be a plain number (no unit)",
                     _describe_range(spec), ex)
        out = float(value)
    elif kind == "epsilon":
        out = parse_epsilon_K(value, ctx.where(table, key))
    elif kind in ("table", "tables", "k_ij", "heat_capacity"):
        return value  # checked by the caller, which knows the context
    elif kind == "molar_density":
        out = _parse_molar_density(ctx, table, key, value)
    else:
        out = parse_quantity(value, kind, ctx.where(table, key))
    if not math.isfinite(out):
        ctx.fail(table, key, value, "must be finite", _describe_range(spec), ex)
    too_low = spec.low is not None and (out < spec.low if spec.low_inclusive else out <= spec.low)
    too_high = spec.high is not None and out > spec.high
    if too_low or too_high:
        read_as = f" (read as {out / spec.unit_si:g} {spec.unit})" if spec.unit else ""
        ctx.fail(table, key, value, f"out of range{read_as}", _describe_range(spec),
                 spec.help or ex)
    return out


#: Keys that earlier versions of the tool read, by table, and their names now.
RENAMED_KEYS = {
    "cluster": {"cores": "cpus_per_job", "memory": "memory_per_job", "walltime": "time_limit",
                "interface": "network_interface", "jobs": "batch_jobs"},
}


def _check_table(ctx, table, data, schema, allowed=None):
    """Check the keys of one table; return {key: converted value} with defaults."""
    if not isinstance(data, dict):
        ctx.fail(table, None, data, "must be a table", f"[{table}] with key = value lines")
    valid = set(schema) if allowed is None else set(allowed)
    out = {}
    for key, value in data.items():
        if key not in valid:
            new = RENAMED_KEYS.get(table, {}).get(key)
            if new in valid:
                ctx.fail(table, key, value, f"the key '{key}' is now called '{new}'", "",
                         f"write {new} = {value!r}".replace("'", '"'))
            hint = _suggest(key, valid)
            if key in schema:
                hint = f"'{key}' does not belong here; {hint}"
            ctx.fail(table, key, value, "unknown key", "", hint)
        out[key] = _check_value(ctx, table, key, value, schema[key])
    for key in valid:
        spec = schema[key]
        if key not in out:
            if spec.required:
                ctx.fail(table, key, _MISSING, "missing required key", "",
                         f"add {key} = {spec.example}" + (f" ({spec.help})" if spec.help else ""))
            if spec.default is not None:
                default = spec.default
                if isinstance(default, str) and spec.kind != "string":
                    default = _check_value(ctx, table, key, default, spec)
                out[key] = list(default) if isinstance(default, (list, tuple)) else default
    return out


def _parse_molar_density(ctx, table, key, value):
    """A molar density in mol/m^3; a mass density is refused with its molar value."""
    where = ctx.where(table, key)
    try:
        return parse_quantity(value, "molar_density", where)
    except StudyError:
        mass_density = _mass_density_kg_m3(value)
        if mass_density is None:
            raise
        molar_mass = getattr(ctx, "molar_mass_kg_mol", None)
        if molar_mass:
            hint = (f'for this gas (mean molar mass {molar_mass * 1e3:.6g} g/mol) that is '
                    f'density = "{mass_density / molar_mass:.6g} mol/m^3"')
        else:
            hint = "divide the mass density by the molar mass"
        ctx.fail(table, key, value, "a mass density; densities are molar here",
                 'a molar density such as "500 mol/m^3"', hint)


def _mass_density_kg_m3(value):
    """The value in kg/m^3 if ``value`` reads as a mass density, else None."""
    if not isinstance(value, str):
        return None
    import pint
    from mdsim.units import registry
    ureg = registry()
    try:
        q = ureg.Quantity(value.strip())
        if q.dimensionality == ureg.get_dimensionality("[mass] / [length] ** 3"):
            out = float(q.to("kg/m^3").magnitude)
            return out if math.isfinite(out) else None
    except (pint.errors.PintError, ValueError, TypeError, SyntaxError, AttributeError,
            KeyError, IndexError, ZeroDivisionError):
        return None  # not readable as a quantity at all: the molar parser's message stands
    return None


# -- the gas -----------------------------------------------------------------------

@dataclasses.dataclass
class Gas:
    """A validated gas: its species, pair potentials and ideal-gas heat capacity.

    Attributes
    ----------
    name : str
    species_names : list of str, length n_species
    pairs_K_angstrom : PairMatrix
        Pair potentials with energies u/k in K and lengths in angstrom.
    fractions : ndarray, shape=(n_species,), float64
        Mole fractions (sum to 1).
    molar_masses_kg_mol : ndarray, shape=(n_species,), float64
    quantum_correction : bool
    ideal_heat_capacity : str or dict
        The validated raw specification ("1.5 R", "20.8 J/(mol K)",
        {"polynomial": [...], "unit": ...} or an absolute CSV path).
    dof_per_particle : int
    units : ReducedUnits
        Reduced units of species 0.
    """

    name: str
    species_names: list
    pairs_K_angstrom: PairMatrix
    fractions: np.ndarray
    molar_masses_kg_mol: np.ndarray
    quantum_correction: bool
    ideal_heat_capacity: object
    dof_per_particle: int
    units: ReducedUnits

    @property
    def n_species(self):
        return len(self.species_names)



def _contained_file(ctx, table, key, value, base_dir, hint):
    """Resolve a data-file path given in a study and keep it inside the study's folder.

    A study is data: it must not make the tool read files elsewhere on the
    machine, so absolute paths and paths that climb out of the study file's
    folder (``..``, or a link pointing outside) are refused.  ``mdsim run``
    copies the files it uses into the run directory, so a run directory
    stays readable wherever it is moved.
    """
    path = Path(value)
    if path.is_absolute():
        ctx.fail(table, key, value, "absolute paths are not accepted", "a path relative to the "
                 "study file's folder", "copy the file next to the study file (" + hint + ")")
    base = Path(base_dir).resolve()
    full = (base / path).resolve()
    if not full.is_relative_to(base):
        ctx.fail(table, key, value, f"the path leads outside the study file's folder '{base}'",
                 "a path inside that folder", "copy the file next to the study file (" + hint + ")")
    return full


def _table_potential(ctx, table, file_value, base_dir):
    path = _contained_file(ctx, table, "table_file", file_value, base_dir,
                           "a two-column r, u table")
    if not path.exists():
        ctx.fail(table, "table_file", file_value, f"file '{path}' does not exist", "",
                 "paths are relative to the study file")
    if path.is_dir():
        ctx.fail(table, "table_file", file_value, f"'{path}' is a directory, not a file")
    if not path.is_file():  # a device or pipe (/dev/zero) would be read for ever
        ctx.fail(table, "table_file", file_value, f"'{path}' is not a regular file",
                 "", "give a CSV file of r, u")
    header = None
    try:
        with open(path, encoding="utf-8") as fh:
            for line in fh:
                text = line.split("#", 1)[0].strip()
                if text:
                    header = [f.strip() for f in text.replace(",", " ").split()]
                    break
    except UnicodeDecodeError:
        ctx.fail(table, "table_file", file_value, f"'{path}' is not UTF-8 text")
    allowed = (f"a first line naming the columns: one of {', '.join(TABLE_R_UNITS)} then one of "
               f"{', '.join(TABLE_U_UNITS)}")
    if header is None or len(header) != 2 or header[0] not in TABLE_R_UNITS \
            or header[1] not in TABLE_U_UNITS:
        ctx.fail(table, "table_file", file_value,
                 f"the header {' '.join(header) if header else '(none)'!r} does not name the units",
                 allowed, "for example 'r_angstrom, u_K'")
    try:
        return read_table(path, energy_scale=TABLE_U_UNITS[header[1]],
                          length_scale=TABLE_R_UNITS[header[0]])
    except StudyError as exc:
        raise StudyError(f"{ctx.where(table, 'table_file')}: {exc}") from None


def _build_potential(ctx, table, values, base_dir):
    """A PairPotential in K and angstrom from a checked potential table."""
    form = values.get("form")
    if form is None:
        ctx.fail(table, "form", _MISSING, "missing required key", ", ".join(f'"{f}"' for f in FORMS),
                 'add form = "lennard-jones"')
    needed, one_of = FORM_KEYS[form]
    present = set(values) - {"form"} - MIXING_KEYS
    for key in sorted(needed - present):
        spec = SCHEMA["potential"][key]
        ctx.fail(table, key, _MISSING, f"missing; the {form} form needs "
                 + ", ".join(sorted(needed | one_of)), "", f"add {key} = {spec.example}")
    if one_of:
        given = one_of & present
        if len(given) != 1:
            ctx.fail(table, "r_min", _MISSING if not given else values.get("r_min"),
                     f"give exactly one of {' or '.join(sorted(one_of))} for the {form} form",
                     "", "r_min is the position of the minimum, sigma the zero crossing")
    extra = present - needed - one_of
    if extra:
        key = sorted(extra)[0]
        ctx.fail(table, key, values[key], f"does not apply to the {form} form", "",
                 f"the {form} form takes " + ", ".join(sorted(needed | one_of)))
    try:
        if form == "lennard-jones":
            return LennardJones(values["epsilon"], values["sigma"] / ANGSTROM)
        if form == "mie":
            return Mie(values["epsilon"], values["sigma"] / ANGSTROM,
                       values["repulsive_exponent"], values["attractive_exponent"])
        if form == "exp-6":
            alpha = values["steepness"]
            if "r_min" in values:
                r_min = values["r_min"] / ANGSTROM
            else:
                # sigma / r_min depends on alpha only: solve once at r_min = 1.
                r_min = values["sigma"] / ANGSTROM / Exp6(1.0, 1.0, alpha).sigma
            return Exp6(values["epsilon"], r_min, alpha)
        return _table_potential(ctx, table, values["table_file"], base_dir)
    except StudyError as exc:
        if str(exc).startswith("study file"):
            raise
        raise StudyError(f"{ctx.where(table)}: {exc}") from None


HEAT_CAPACITY_DICT_KEYS = ("polynomial", "unit", "valid_range_K", "table")


def _check_heat_capacity_csv(ctx, value, base_dir, allowed):
    """Check a c_v table file and return its absolute path."""
    table, key = "gas", "ideal_heat_capacity"
    path = _contained_file(ctx, table, key, value.strip(), base_dir,
                           "a CSV of temperature_K, cv_J_molK")
    if not path.is_file():
        what = "is a directory" if path.is_dir() else "does not exist"
        ctx.fail(table, key, value, f"file '{path}' {what}", allowed,
                 "CSV paths are relative to the study file")
    try:
        with open(path, encoding="utf-8") as fh:
            lines = [ln.split("#", 1)[0].strip() for ln in fh]
    except UnicodeDecodeError:
        ctx.fail(table, key, value, f"file '{path}' is not UTF-8 text")
    lines = [ln for ln in lines if ln]
    header = tuple(f.strip() for f in lines[0].split(",")) if lines else ()
    if header != HEAT_CAPACITY_CSV_HEADER:
        ctx.fail(table, key, value, f"file '{path}' has header {header!r}",
                 "a first line 'temperature_K, cv_J_molK'", "then one 'T, c_v' pair per line")
    if len(lines) < 3:
        ctx.fail(table, key, value, f"file '{path}' has fewer than two data rows", "",
                 "give c_v at two or more temperatures")
    return str(path.resolve())


def _check_heat_capacity(ctx, value, base_dir):
    """Validate the ideal-gas c_v specification; return it raw (CSV paths made absolute)."""
    table, key = "gas", "ideal_heat_capacity"
    allowed = ('"1.5 R", "20.8 J/(mol K)", { polynomial = [a0, a1, ...], unit = "J/(mol K)", '
               'valid_range_K = [T_low, T_high] }, a CSV file name ending in .csv, '
               'or { table = "file.csv" }')
    c_min = 1.5 * R_GAS * (1.0 - 1e-9)
    if isinstance(value, str):
        if value.strip().lower().endswith(".csv"):
            return _check_heat_capacity_csv(ctx, value, base_dir, allowed)
        c = parse_quantity(value, "molar_heat_capacity", ctx.where(table, key))
        if c < c_min:
            ctx.fail(table, key, value, f"{c:.4g} J/(mol K) is below the translational 1.5 R = "
                     f"{1.5 * R_GAS:.4g} J/(mol K)", ">= 1.5 R",
                     "an ideal gas has at least the translational heat capacity")
        return value
    if isinstance(value, dict):
        for k in value:
            if k not in HEAT_CAPACITY_DICT_KEYS:
                ctx.fail(table, key, value, f"unknown key '{k}' in the heat-capacity table", allowed,
                         _suggest(k, HEAT_CAPACITY_DICT_KEYS))
        if "table" in value:
            if set(value) != {"table"} or not isinstance(value["table"], str):
                ctx.fail(table, key, value, "'table' takes a CSV file name and no other key",
                         allowed, "")
            return {"table": _check_heat_capacity_csv(ctx, value["table"], base_dir, allowed)}
        coeffs = value.get("polynomial")
        if not isinstance(coeffs, list) or not coeffs or not all(
                isinstance(a, numbers.Real) and not isinstance(a, bool) and math.isfinite(a)
                for a in coeffs):
            ctx.fail(table, key, value, "'polynomial' must be a non-empty list of numbers",
                     "[a0, a1, ...] meaning sum a_k (T/K)^k", "")
        unit = value.get("unit")
        if not isinstance(unit, str):
            ctx.fail(table, key, value, "'unit' is missing or not a string",
                     '"J/(mol K)" or "R"', "")
        parse_quantity("1 " + unit, "molar_heat_capacity", ctx.where(table, key) + " (unit)")
        out = {"polynomial": [float(a) for a in coeffs], "unit": unit}
        if "valid_range_K" in value:
            rng = value["valid_range_K"]
            ok = (isinstance(rng, list) and len(rng) == 2
                  and all(isinstance(t, numbers.Real) and not isinstance(t, bool) for t in rng)
                  and 0.0 <= rng[0] < rng[1])
            if not ok:
                ctx.fail(table, key, value, "'valid_range_K' must be [T_low, T_high] in K",
                         "0 <= T_low < T_high", "for example valid_range_K = [100.0, 1000.0]")
            out["valid_range_K"] = [float(t) for t in rng]
        return out
    ctx.fail(table, key, value, "not a heat-capacity specification", allowed, "")


def _check_k_ij(ctx, value, n_species, names=None):
    """k_ij as a number (two species), a symmetric matrix, or pairs of species names:
    ``k_ij = { "nitrogen-oxygen" = 0.01, "nitrogen-argon" = 0.0 }``."""
    table, key = "potential", "k_ij"
    if n_species < 2:
        ctx.fail(table, key, value, "k_ij applies to mixtures only", "", "remove it for a pure gas")
    if isinstance(value, dict):
        names = list(names or [])
        k = np.zeros((n_species, n_species))
        for pair, kv in value.items():
            parts = [t.strip() for t in str(pair).split("-")]
            if len(parts) != 2 or parts[0] == parts[1]:
                ctx.fail(table, key, value, f"pair '{pair}' is not two species names joined "
                         "by '-'", '{ "nitrogen-oxygen" = 0.01 }', "")
            for part in parts:
                if part not in names:
                    close = difflib.get_close_matches(part, names, n=1, cutoff=0.5)
                    ctx.fail(table, key, value, f"unknown species '{part}' in pair '{pair}'",
                             ", ".join(f"'{n}'" for n in names),
                             f"did you mean '{close[0]}'?" if close else
                             "use the names of the [[gas.species]] blocks")
            if isinstance(kv, bool) or not isinstance(kv, numbers.Real):
                ctx.fail(table, key, value, f"the value of '{pair}' must be a number", "", "")
            a, b = names.index(parts[0]), names.index(parts[1])
            k[a, b] = k[b, a] = float(kv)
    elif isinstance(value, numbers.Real) and not isinstance(value, bool):
        if n_species != 2:
            ctx.fail(table, key, value, f"a single number needs exactly 2 species (found {n_species})",
                     f"a symmetric {n_species}x{n_species} matrix", "")
        k = np.array([[0.0, float(value)], [float(value), 0.0]])
    else:
        try:
            k = np.array(value, dtype=float)
        except (TypeError, ValueError):
            k = None
        if k is None or k.shape != (n_species, n_species):
            ctx.fail(table, key, value, "not a number or a square matrix",
                     f"a symmetric {n_species}x{n_species} matrix with zero diagonal", "")
    if not np.all(np.isfinite(k)) or not np.allclose(k, k.T) or np.any(np.diag(k) != 0.0):
        ctx.fail(table, key, value, "must be finite, symmetric with zero diagonal", "", "")
    if np.any(np.abs(k) >= 1.0):
        ctx.fail(table, key, value, "|k_ij| must be below 1", "-1 < k_ij < 1",
                 "typical values are below 0.1")
    return k


def _read_gas(ctx, doc, base_dir):
    if "gas" not in doc:
        ctx.fail("gas", None, _MISSING, "missing table", "", "add a [gas] table with molar_mass "
                 "and ideal_heat_capacity")
    gas = _check_table(ctx, "gas", doc["gas"], SCHEMA["gas"])
    pot_raw = doc.get("potential", {})
    if not isinstance(pot_raw, dict):
        ctx.fail("potential", None, pot_raw, "must be a table")
    if "species" in gas:
        species = gas["species"]
        if not isinstance(species, list) or not species or not all(isinstance(s, dict)
                                                                 for s in species):
            ctx.fail("gas", "species", species, "must be an array of tables", "",
                     "write each species as a [[gas.species]] block")
        if "molar_mass" in gas:
            ctx.fail("gas", "molar_mass", doc["gas"]["molar_mass"],
                     "a mixture gives molar_mass per species", "",
                     "move it into each [[gas.species]]")
        mix = _check_table(ctx, "potential", pot_raw, SCHEMA["potential"], allowed=MIXING_KEYS)
        names, fractions, masses, pots = [], [], [], []
        for k, sp in enumerate(species):
            tname = f"gas.species #{k + 1}"
            vals = _check_table(ctx, tname, sp, SCHEMA["species"])
            if vals["name"] in names:
                ctx.fail(tname, "name", vals["name"], "duplicate species name", "",
                         "give each species its own name")
            names.append(vals["name"])
            fractions.append(vals["mole_fraction"])
            masses.append(vals["molar_mass"])
            ptable = f"{tname} potential"
            pvals = _check_table(ctx, ptable, vals["potential"], SCHEMA["potential"],
                                 allowed=set(SCHEMA["potential"]) - {"cutoff", "k_ij"})
            pots.append(_build_potential(ctx, ptable, pvals, base_dir))
        total = sum(fractions)
        if abs(total - 1.0) > 1e-6:
            ctx.fail("gas.species", "mole_fraction", fractions,
                     f"the mole fractions sum to {total:.8g}", "a sum of 1 within 1e-6",
                     "rescale them")
        if any(x <= 0 for x in fractions):
            ctx.fail("gas.species", "mole_fraction", fractions, "every mole fraction must be > 0",
                     "0 < x <= 1", "remove species that are absent")
        forms = {p.name for p in pots}
        if len(forms) > 1:
            ctx.fail("gas.species", "potential", sorted(forms),
                     "all species of a mixture must use the same potential form", "", "")
        k_ij = _check_k_ij(ctx, mix["k_ij"], len(pots), names) if "k_ij" in mix else None
        cutoff = mix["cutoff"]
    else:
        if "molar_mass" not in gas:
            ctx.fail("gas", "molar_mass", _MISSING, "missing required key", "",
                     'add molar_mass = "39.948 g/mol" (or [[gas.species]] for a mixture)')
        pvals = _check_table(ctx, "potential", pot_raw, SCHEMA["potential"])
        if "k_ij" in pvals:
            ctx.fail("potential", "k_ij", pvals["k_ij"], "k_ij applies to mixtures only", "",
                     "remove it for a pure gas")
        if "potential" not in doc:
            ctx.fail("potential", None, _MISSING, "missing table", "",
                     'add a [potential] table with form = "lennard-jones", epsilon and sigma')
        pots = [_build_potential(ctx, "potential", pvals, base_dir)]
        names = [gas.get("name") or "gas"]
        fractions = [1.0]
        masses = [gas["molar_mass"]]
        k_ij = None
        cutoff = pvals["cutoff"]
    try:
        pairs = PairMatrix(pots, cutoff, k_ij=k_ij)
    except StudyError as exc:
        raise StudyError(f"{ctx.where('potential')}: {exc}") from None
    p0 = pairs.pots[0][0]
    units = ReducedUnits(p0.epsilon, p0.sigma * ANGSTROM, masses[0])
    return Gas(name=gas.get("name") or names[0], species_names=names, pairs_K_angstrom=pairs,
               fractions=np.array(fractions, dtype=float),
               molar_masses_kg_mol=np.array(masses, dtype=float),
               quantum_correction=gas["quantum_correction"],
               ideal_heat_capacity=_check_heat_capacity(ctx, gas["ideal_heat_capacity"], base_dir),
               dof_per_particle=gas["dof_per_particle"], units=units)


# -- the run tables ------------------------------------------------------------------

def close_packed_density_mol_m3(gas):
    """The densest molar density accepted: rho sigma_x^3 = sqrt(2).

    sigma_x^3 = sum_ab x_a x_b sigma_ab^3 (the one-fluid mean; sigma the
    zero crossing of each pair potential).  Close-packed spheres of
    diameter sigma have rho sigma^3 = sqrt(2); no fluid or solid of the
    model is denser.
    """
    pairs = gas.pairs_K_angstrom
    x = gas.fractions
    s3 = sum(x[a] * x[b] * (pairs.pots[a][b].sigma * ANGSTROM) ** 3
             for a in range(gas.n_species) for b in range(gas.n_species))
    from mdsim.units import N_A
    return CLOSE_PACKED_DENSITY_RED / (N_A * s3)


def _read_run_tables(ctx, doc, gas):
    """Validate [initial], [expansion], [simulation], [sweep], [cluster] (SI values)."""
    ctx.molar_mass_kg_mol = float(np.dot(gas.fractions, gas.molar_masses_kg_mol))
    out = {}
    for table in PIPELINE_TABLES:
        out[table] = _check_table(ctx, table, doc.get(table, {}), SCHEMA[table])
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
    rho_max = close_packed_density_mol_m3(gas)
    for table, values in (("initial", [initial.get("density")]), ("sweep", sweep.get("density", []))):
        for k, rho in enumerate(values):
            if rho is not None and rho > rho_max:
                raw = doc[table]["density"]
                ctx.fail(table, "density", raw if table == "initial" else raw[k],
                         f"{rho:.6g} mol/m^3 is denser than close packing",
                         f"< {rho_max:.6g} mol/m^3 (rho sigma^3 = sqrt 2 for this gas)",
                         "check the unit (mol/m^3, not mol/L) and the value")
    return out


# -- the study ---------------------------------------------------------------------

@dataclasses.dataclass
class Study:
    """A validated study file.

    Attributes
    ----------
    path : Path
        The study file (absolute).
    name, description : str
    gas : Gas
    initial, expansion, simulation, sweep, cluster : dict
        The run tables, validated, in SI (K, Pa, mol/m^3, s), defaults
        filled in: ``initial`` holds ``temperature`` and ``pressure`` or
        ``density`` (those not swept); ``expansion`` ``volume_ratio``;
        ``simulation`` ``routes``, ``particles`` (absent: the tool
        chooses), ``target_stderr`` (K), ``max_cpu_time`` (s), ``seed``,
        ``sampler``; ``sweep`` lists of SI values; ``cluster`` the
        scheduler settings (``cpus_per_job``, ``memory_per_job``, ``time_limit``, ``batch_jobs``
        always present).
    raw : dict
        The whole parsed file.
    """

    path: Path
    name: str
    description: str
    gas: Gas
    initial: dict
    expansion: dict
    simulation: dict
    sweep: dict
    cluster: dict
    raw: dict

    @property
    def units(self):
        """Reduced units of the reference species (species 0)."""
        return self.gas.units

    def state_points(self):
        """The state points of the study, in the order of :mod:`mdsim.study.statepoints`.

        Returns
        -------
        list of StatePoint

        Raises
        ------
        StudyError
            When the file has no initial temperature, pressure or density,
            or no volume ratio.
        """
        from mdsim.study.statepoints import state_points
        return state_points(self)

    def counts(self, n_particles):
        """Particles per species for a total, by largest remainders of N x_a."""
        n = int(n_particles)
        x = self.gas.fractions
        exact = n * x
        counts = np.floor(exact).astype(np.int64)
        order = np.argsort(-(exact - counts), kind="stable")
        for k in order[: n - int(counts.sum())]:
            counts[k] += 1
        return counts

    def reduced_pairs(self):
        """The pair matrix in reduced units of species 0."""
        u = self.gas.units
        return self.gas.pairs_K_angstrom.scaled(u.epsilon_K, u.sigma_m / ANGSTROM)

    def system(self, n_particles, density_mol_m3, start="auto", seed=0):
        """A System in reduced units at a molar density, with a start configuration.

        Parameters
        ----------
        n_particles : int
            Total number of particles (>= 2; typically 200 to 4000).
        density_mol_m3 : float
            Molar density, mol/m^3.
        start : {"auto", "lattice", "random"}
            "auto": random placement below reduced density
            ``RANDOM_START_MAX_DENSITY_RED``, a lattice above it.
        seed : int
            Seed for the start configuration.

        Returns
        -------
        System
        """
        from mdsim.engine.system import System
        if isinstance(n_particles, bool) or not isinstance(n_particles, numbers.Integral) \
                or n_particles < 2:
            raise StudyError(f"setting 'particles' = {n_particles!r}: must be a whole number >= 2 "
                             "(typically 200 to 4000)")
        if start not in ("auto", "lattice", "random"):
            raise StudyError(f"setting 'start' = {start!r}: allowed 'auto', 'lattice', 'random'")
        rho_red = self.units.density_to_reduced(float(density_mol_m3))
        counts = self.counts(n_particles)
        if np.any(counts == 0):
            raise StudyError(f"setting 'particles' = {n_particles}: too few for the mixture "
                             f"(counts {counts.tolist()}); use more particles")
        masses = self.gas.molar_masses_kg_mol / self.gas.molar_masses_kg_mol[0]
        system = System.cubic(self.reduced_pairs(), counts, rho_red, masses_a=masses,
                              dof_per_particle=self.gas.dof_per_particle)
        if start == "auto":
            start = "random" if rho_red < RANDOM_START_MAX_DENSITY_RED else "lattice"
        if start == "random":
            system.place_at_random(seed)
        else:
            system.place_on_lattice(seed)
        return system


_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.\-]*$")


def read_study(path):
    """Read and validate a study file.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    Study

    Raises
    ------
    StudyError
        For a missing, unreadable or invalid file (the message names the
        file, table, key, value, what is allowed and a hint).
    """
    path = Path(os.fspath(path)).expanduser().absolute()
    if not path.exists():
        raise StudyError(f"study file '{path}' does not exist; check the path "
                         "(example studies are in configs/)")
    if path.is_dir():
        raise StudyError(f"study file '{path}' is a directory; give the path of a .toml file")
    if not path.is_file():  # a device or pipe (/dev/zero) would be read for ever
        raise StudyError(f"study file '{path}' is not a regular file; give the path of a .toml "
                         "file")
    try:
        text = path.read_bytes().decode("utf-8")
    except UnicodeDecodeError as exc:
        raise StudyError(f"study file '{path}' is not UTF-8 text (byte {exc.start}); "
                         "save it as UTF-8") from None
    except OSError as exc:
        raise StudyError(f"study file '{path}' cannot be read ({exc.strerror})") from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(f"study file '{path}' is not valid TOML ({exc}); "
                         "check quotes, brackets and '=' signs") from None
    ctx = _Context(path)
    for key, value in doc.items():
        if key not in TOP_LEVEL:
            ctx.fail(key, None, value, "unknown table", ", ".join(TOP_LEVEL), _suggest(key, TOP_LEVEL))
        if not isinstance(value, dict):
            ctx.fail(key, None, value, "must be a table", f"[{key}] followed by key = value lines")
    if "study" not in doc:
        ctx.fail("study", None, _MISSING, "missing table", "", 'add [study] with name = "..."')
    st = _check_table(ctx, "study", doc["study"], SCHEMA["study"])
    if not _NAME_RE.match(st["name"]):
        ctx.fail("study", "name", st["name"], "not usable in file names",
                 "letters, digits, '-', '_' and '.', starting with a letter or digit", "")
    gas = _read_gas(ctx, doc, path.parent)
    tables = _read_run_tables(ctx, doc, gas)
    study = Study(path=path, name=st["name"], description=st["description"], gas=gas,
                  raw=doc, **tables)
    if tables["initial"] or tables["sweep"] or tables["expansion"]:
        study.state_points()  # every state point checked before any work starts
    return study
