"""Checking study-file values against the schema, and the one-line error messages.

:class:`Context` knows the file being read and raises the
:class:`mdsim.errors.StudyError` of every check: it names the file, the
table, the key, the value, the problem, what is allowed and what to do.
:func:`check_value` converts one value by its :class:`mdsim.study.schema.Key`
(quantities to SI); :func:`check_table` checks a whole table, refuses
unknown keys with the nearest valid one, and fills in the defaults.

Examples
--------
>>> from mdsim.study.schema import SCHEMA
>>> ctx = Context("study.toml")
>>> check_table(ctx, "expansion", {"volume_ratio": 2}, SCHEMA["expansion"])
{'volume_ratio': 2.0}
>>> check_table(ctx, "expansion", {"volume_ratoi": 2}, SCHEMA["expansion"])
Traceback (most recent call last):
...
mdsim.errors.StudyError: study file 'study.toml', [expansion] key 'volume_ratoi' = 2: ...
did you mean 'volume_ratio'? ...
"""
import dataclasses
import difflib
import math
import numbers
import re
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.study.routes import RENAMED_ROUTES
from mdsim.study.schema import MAX_SWEEP_VALUES, NO_DEFAULT, REMOVED_KEYS, RENAMED_KEYS
from mdsim.units import parse_epsilon_K, parse_quantity, registry

__all__ = ["MISSING", "Context", "suggest", "describe_range", "check_value", "check_table"]


class _Missing:
    def __repr__(self):
        return "MISSING"


#: The "value" of a key that is absent: :meth:`Context.fail` then shows no value.
MISSING = _Missing()


class Context:
    """The study file being read, for messages.

    Parameters
    ----------
    path : str or os.PathLike
        The study file.
    molar_mass_kg_mol : float, optional
        The gas's mean molar mass, once known: a mass density given where a
        molar density belongs is then refused with its molar value.
    """

    def __init__(self, path, molar_mass_kg_mol=None):
        self.path = Path(path)
        self.molar_mass_kg_mol = molar_mass_kg_mol

    def where(self, table, key=None):
        """``study file 'PATH', [table] key 'key'`` (the key part when given)."""
        loc = f"study file '{self.path}', [{table}]"
        return loc + (f" key '{key}'" if key else "")

    def fail(self, table, key, value, problem, allowed="", hint=""):
        """Raise the StudyError of one bad value (``value`` MISSING: an absent key or table).

        Raises
        ------
        StudyError
            Always: ``WHERE = VALUE: PROBLEM; allowed: ALLOWED; HINT``.
        """
        msg = f"{self.where(table, key)}"
        if value is not MISSING:
            msg += f" = {value!r}"
        msg += f": {problem}"
        if allowed:
            msg += f"; allowed: {allowed}"
        if hint:
            msg += f"; {hint}"
        raise StudyError(msg)


def suggest(key, valid):
    """``did you mean 'X'? valid keys: ...`` for an unknown ``key``."""
    close = difflib.get_close_matches(key, list(valid), n=1, cutoff=0.5)
    valid_list = ", ".join(sorted(valid))
    if close:
        return f"did you mean '{close[0]}'? valid keys: {valid_list}"
    return f"valid keys: {valid_list}"


def describe_range(spec):
    """The range of a Key as text in its display unit, such as ``> 0 and <= 100 K``."""
    parts = []
    if spec.low is not None:
        parts.append((">= " if spec.low_inclusive else "> ") + f"{spec.low / spec.unit_si:g}")
    if spec.high is not None:
        parts.append(f"<= {spec.high / spec.unit_si:g}")
    return (" and ".join(parts) + (f" {spec.unit}" if spec.unit else "")).strip()


def _example(key, spec):
    return f"for example {key} = {spec.example}" if spec.example else ""


def _quoted(choices):
    return ", ".join(f'"{c}"' for c in choices)


def _out_of_range(spec, value):
    too_low = spec.low is not None and (value < spec.low if spec.low_inclusive
                                        else value <= spec.low)
    return too_low or (spec.high is not None and value > spec.high)


def _check_string(ctx, table, key, value, spec):
    ex = _example(key, spec)
    if not isinstance(value, str):
        ctx.fail(table, key, value, "must be a string", "text in double quotes", ex)
    if spec.choices and value not in spec.choices:
        close = difflib.get_close_matches(value, spec.choices, n=1, cutoff=0.4)
        ctx.fail(table, key, value, "unknown choice", _quoted(spec.choices),
                 f"did you mean '{close[0]}'?" if close else ex)
    if spec.pattern and not re.match(spec.pattern, value.strip()):
        ctx.fail(table, key, value, "not in the expected format", spec.help or spec.example, ex)
    return value.strip() if spec.pattern else value


def _check_bool(ctx, table, key, value, spec):
    if not isinstance(value, bool):
        ctx.fail(table, key, value, "must be true or false", "true, false",
                 "write it without quotes")
    return value


def _check_int(ctx, table, key, value, spec):
    if isinstance(value, bool) or not isinstance(value, int):
        ctx.fail(table, key, value, "must be a whole number", describe_range(spec),
                 _example(key, spec))
    if spec.choices and value not in spec.choices:
        ctx.fail(table, key, value, "not an allowed value",
                 ", ".join(str(c) for c in spec.choices), spec.help)
    if _out_of_range(spec, value):
        ctx.fail(table, key, value, "out of range", describe_range(spec),
                 spec.help or _example(key, spec))
    return value


def _check_routes(ctx, table, key, value, spec):
    """A list of distinct route names out of ``spec.choices``; old names say their new one."""
    ex = _example(key, spec)
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        ctx.fail(table, key, value, "must be a list of route names", _quoted(spec.choices), ex)
    for v in value:
        if v in RENAMED_ROUTES and RENAMED_ROUTES[v] in spec.choices:
            ctx.fail(table, key, value, f"the route '{v}' is now called '{RENAMED_ROUTES[v]}'",
                     _quoted(spec.choices), f"write \"{RENAMED_ROUTES[v]}\" instead")
        if v not in spec.choices:
            close = difflib.get_close_matches(v, spec.choices, n=1, cutoff=0.4)
            ctx.fail(table, key, value, f"unknown route '{v}'", _quoted(spec.choices),
                     f"did you mean '{close[0]}'?" if close else ex)
    if len(set(value)) != len(value):
        ctx.fail(table, key, value, "a route is listed twice", "each route once", "")
    return list(value)


def _check_list(ctx, table, key, value, spec):
    """A non-empty list of distinct values, each checked as ``spec.item``."""
    if not isinstance(value, list) or not value:
        ctx.fail(table, key, value, "must be a non-empty list", describe_range(spec),
                 _example(key, spec))
    if len(value) > MAX_SWEEP_VALUES:
        ctx.fail(table, key, f"<list of {len(value)}>", "too many values",
                 f"at most {MAX_SWEEP_VALUES}", "split the study into several files")
    item_spec = dataclasses.replace(spec, kind=spec.item, item="")
    out = [check_value(ctx, table, key, v, item_spec) for v in value]
    if len(set(out)) != len(out):
        ctx.fail(table, key, value, "a value is listed twice", "distinct values",
                 "remove the repeated value")
    return out


def _check_number(ctx, table, key, value, spec):
    """A plain number, an epsilon or a quantity with a unit, converted to SI and range-checked."""
    ex = _example(key, spec)
    if spec.kind == "number":
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            ctx.fail(table, key, value, "must be a plain number (no unit)",
                     describe_range(spec), ex)
        out = float(value)
    elif spec.kind == "epsilon":
        out = parse_epsilon_K(value, ctx.where(table, key))
    elif spec.kind == "molar_density":
        out = _parse_molar_density(ctx, table, key, value)
    else:
        out = parse_quantity(value, spec.kind, ctx.where(table, key))
    if not math.isfinite(out):
        ctx.fail(table, key, value, "must be finite", describe_range(spec), ex)
    if _out_of_range(spec, out):
        read_as = f" (read as {out / spec.unit_si:g} {spec.unit})" if spec.unit else ""
        ctx.fail(table, key, value, f"out of range{read_as}", describe_range(spec),
                 spec.help or ex)
    return out


_CHECKERS = {"string": _check_string, "bool": _check_bool, "int": _check_int,
             "routes": _check_routes, "list": _check_list}
# Kinds whose checks need more than the value (a folder, the species): the caller checks them.
_RAW_KINDS = ("table", "tables", "k_ij", "heat_capacity", "vector", "c9")


def check_value(ctx, table, key, value, spec):
    """Convert and check one value according to its schema entry.

    Parameters
    ----------
    ctx : Context
    table, key : str
        Where the value is, for messages.
    value : object
        The value as parsed from TOML.
    spec : Key

    Returns
    -------
    object
        The value converted: quantities as floats in SI, epsilon as
        epsilon/k in K, lists checked item by item; kinds "table",
        "tables", "k_ij", "heat_capacity", "vector" and "c9" unchanged (their callers
        check them).

    Raises
    ------
    StudyError
        Through ``ctx.fail`` or the unit parser.
    """
    if spec.kind in _RAW_KINDS:
        return value
    return _CHECKERS.get(spec.kind, _check_number)(ctx, table, key, value, spec)


def _unknown_key(ctx, table, key, value, schema, valid):
    if (table, key) in REMOVED_KEYS:
        ctx.fail(table, key, value, f"the key '{key}' is no longer read",
                 "", REMOVED_KEYS[(table, key)])
    new = RENAMED_KEYS.get(table, {}).get(key)
    if new in valid:
        ctx.fail(table, key, value, f"the key '{key}' is now called '{new}'", "",
                 f"write {new} = {value!r}".replace("'", '"'))
    hint = suggest(key, valid)
    if key in schema:
        hint = f"'{key}' does not belong here; {hint}"
    ctx.fail(table, key, value, "unknown key", "", hint)


def check_table(ctx, table, data, schema, allowed=None):
    """Check the keys of one table; return {key: converted value} with the defaults filled in.

    Parameters
    ----------
    ctx : Context
    table : str
        The table's name, for messages ("simulation", "gas.species #2").
    data : dict
        The table as parsed from TOML.
    schema : dict of str to Key
    allowed : set of str, optional
        The keys of ``schema`` allowed here (all when None).

    Returns
    -------
    dict
        Every key given or with a default (``Key.default`` not NO_DEFAULT),
        in schema order.

    Raises
    ------
    StudyError
        For a table that is not a table, an unknown or renamed key, a bad
        value or a missing required key.
    """
    if not isinstance(data, dict):
        ctx.fail(table, None, data, "must be a table", f"[{table}] with key = value lines")
    valid = set(schema) if allowed is None else set(allowed)
    given = {}
    for key, value in data.items():
        if key not in valid:
            _unknown_key(ctx, table, key, value, schema, valid)
        given[key] = check_value(ctx, table, key, value, schema[key])
    out = {}
    for key, spec in schema.items():
        if key not in valid:
            continue
        if key in given:
            out[key] = given[key]
        elif spec.required:
            ctx.fail(table, key, MISSING, "missing required key", "",
                     f"add {key} = {spec.example}" + (f" ({spec.help})" if spec.help else ""))
        elif spec.default is not NO_DEFAULT:
            default = spec.default
            if isinstance(default, str) and spec.kind != "string":
                default = check_value(ctx, table, key, default, spec)
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
        if ctx.molar_mass_kg_mol:
            hint = (f'for this gas (mean molar mass {ctx.molar_mass_kg_mol * 1e3:.6g} g/mol) '
                    f'that is density = "{mass_density / ctx.molar_mass_kg_mol:.6g} mol/m^3"')
        else:
            hint = "divide the mass density by the molar mass"
        ctx.fail(table, key, value, "a mass density; densities are molar here",
                 'a molar density such as "500 mol/m^3"', hint)


def _mass_density_kg_m3(value):
    """The value in kg/m^3 if ``value`` reads as a mass density, else None."""
    if not isinstance(value, str):
        return None
    import pint
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
