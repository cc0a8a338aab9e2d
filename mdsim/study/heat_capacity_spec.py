"""Checking the ideal-gas heat capacity of a study, ``[gas] ideal_heat_capacity``.

:func:`check_heat_capacity` validates the specification but keeps it as
written, for the analysis package to build its model from
(``analysis.heatcapacity.heat_capacity_from_spec``); CSV tables in it must
be in the study's folder (:mod:`mdsim.study.datafiles`).
"""
import math
import numbers

from mdsim.study.datafiles import data_file, data_lines
from mdsim.study.values import suggest
from mdsim.units import R_GAS, parse_quantity

__all__ = ["check_heat_capacity", "HEAT_CAPACITY_CSV_HEADER", "HEAT_CAPACITY_DICT_KEYS"]

#: The header line of a heat-capacity CSV table.
HEAT_CAPACITY_CSV_HEADER = ("temperature_K", "cv_J_molK")
#: Keys of a heat-capacity inline table.
HEAT_CAPACITY_DICT_KEYS = ("polynomial", "unit", "valid_range_K", "table")
_HEAT_CAPACITY_FORMS = ('"1.5 R", "20.8 J/(mol K)", { polynomial = [a0, a1, ...], '
                        'unit = "J/(mol K)", valid_range_K = [T_low, T_high] }, a CSV file name '
                        'ending in .csv, or { table = "file.csv" }')


def _heat_capacity_csv(ctx, value, base_dir):
    """Check a c_v table file in the study's folder and return its absolute path."""
    table, key = "gas", "ideal_heat_capacity"
    path = data_file(ctx, table, key, value.strip(), base_dir, "a CSV of temperature_K, cv_J_molK")
    lines = data_lines(ctx, table, key, value, path)
    header = tuple(f.strip() for f in lines[0].split(",")) if lines else ()
    if header != HEAT_CAPACITY_CSV_HEADER:
        ctx.fail(table, key, value, f"file '{path}' has header {header!r}",
                 "a first line 'temperature_K, cv_J_molK'", "then one 'T, c_v' pair per line")
    if len(lines) < 3:
        ctx.fail(table, key, value, f"file '{path}' has fewer than two data rows", "",
                 "give c_v at two or more temperatures")
    return str(path)


def _heat_capacity_polynomial(ctx, value):
    """Check ``{ polynomial = [...], unit = "...", valid_range_K = [lo, hi] }``."""
    table, key = "gas", "ideal_heat_capacity"
    coeffs = value.get("polynomial")
    if not isinstance(coeffs, list) or not coeffs or not all(
            isinstance(a, numbers.Real) and not isinstance(a, bool) and math.isfinite(a)
            for a in coeffs):
        ctx.fail(table, key, value, "'polynomial' must be a non-empty list of numbers",
                 "[a0, a1, ...] meaning sum a_k (T/K)^k", "")
    unit = value.get("unit")
    if not isinstance(unit, str):
        ctx.fail(table, key, value, "'unit' is missing or not a string", '"J/(mol K)" or "R"', "")
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


def _check_vibrational(ctx, value, c, kinetic_dof):
    """A rigid molecule's c_v: the vibrational part only, 0 <= c (< 1.5 R for linear molecules).

    The upper bound is not applied when a non-linear molecule (6 kinetic
    degrees of freedom) is in the gas: the many vibrations of a polyatomic
    molecule pass 1.5 R near room temperature (propane about 7 R at 400 K).
    """
    if c < 0.0:
        ctx.fail("gas", "ideal_heat_capacity", value, "a heat capacity cannot be negative",
                 ">= 0", '"0 R" when the vibrations are frozen')
    if kinetic_dof <= 5.0 and c >= 1.5 * R_GAS * (1.0 - 1e-9):
        ctx.fail("gas", "ideal_heat_capacity", value,
                 f"{c / R_GAS:.4g} R already counts translations (and rotations): with a "
                 f"rigid-molecule potential the model carries {kinetic_dof:.4g}/2 R of kinetic "
                 "heat capacity itself and ideal_heat_capacity holds only the vibrational part",
                 "0 <= c_v < 1.5 R", f'give the vibrational part, e.g. "0 R" (the total c_v '
                 f'is then {kinetic_dof / 2:.4g} R)')


def check_heat_capacity(ctx, value, base_dir, kinetic_dof=3.0):
    """Validate the ideal-gas c_v specification of ``[gas] ideal_heat_capacity``.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    value : str or dict
        As written: "1.5 R", "20.8 J/(mol K)", "cv.csv",
        ``{ table = "cv.csv" }`` or ``{ polynomial = [...], unit = ... }``.
    base_dir : Path
        The study file's folder.
    kinetic_dof : float, optional
        Kinetic degrees of freedom the potential's model carries (3 for
        atoms; above 3 for rigid molecules, whose c_v then holds only the
        vibrational part: from 0 up to below 1.5 R at its lowest
        temperature, the table's first row or the polynomial's lower limit,
        or 298.15 K without one).

    Returns
    -------
    str or dict
        The specification as written, with CSV paths made absolute and
        polynomial coefficients as floats (the input of
        ``analysis.heatcapacity.heat_capacity_from_spec``).
    """
    spec = _heat_capacity_spec(ctx, value, base_dir, kinetic_dof)
    constant = isinstance(spec, str) and not spec.strip().lower().endswith(".csv")
    if kinetic_dof > 3.0 and not constant:  # a table or polynomial: at its lowest temperature
        from analysis.heatcapacity import heat_capacity_from_spec
        model = heat_capacity_from_spec(spec, where=ctx.where("gas", "ideal_heat_capacity"))
        low = model.valid_range[0] if model.valid_range[0] > 0.0 else 298.15
        _check_vibrational(ctx, value, float(model.cv(low)), kinetic_dof)
    return spec


def _heat_capacity_spec(ctx, value, base_dir, kinetic_dof):
    """The checked specification (see :func:`check_heat_capacity`); constants checked here."""
    table, key = "gas", "ideal_heat_capacity"
    if isinstance(value, str):
        if value.strip().lower().endswith(".csv"):
            return _heat_capacity_csv(ctx, value, base_dir)
        c = parse_quantity(value, "molar_heat_capacity", ctx.where(table, key))
        if kinetic_dof > 3.0:
            _check_vibrational(ctx, value, c, kinetic_dof)
            return value
        if c < 1.5 * R_GAS * (1.0 - 1e-9):
            ctx.fail(table, key, value, f"{c:.4g} J/(mol K) is below the translational 1.5 R = "
                     f"{1.5 * R_GAS:.4g} J/(mol K)", ">= 1.5 R",
                     "an ideal gas has at least the translational heat capacity")
        return value
    if not isinstance(value, dict):
        ctx.fail(table, key, value, "not a heat-capacity specification", _HEAT_CAPACITY_FORMS, "")
    for k in value:
        if k not in HEAT_CAPACITY_DICT_KEYS:
            ctx.fail(table, key, value, f"unknown key '{k}' in the heat-capacity table",
                     _HEAT_CAPACITY_FORMS, suggest(k, HEAT_CAPACITY_DICT_KEYS))
    if "table" in value:
        if set(value) != {"table"} or not isinstance(value["table"], str):
            ctx.fail(table, key, value, "'table' takes a CSV file name and no other key",
                     _HEAT_CAPACITY_FORMS, "")
        return {"table": _heat_capacity_csv(ctx, value["table"], base_dir)}
    return _heat_capacity_polynomial(ctx, value)
