"""Checking the ideal-gas heat capacity of a study, ``[gas] ideal_heat_capacity``.

For rigid molecules ``[gas] ideal_heat_capacity_counts`` says what it holds
(:func:`heat_capacity_counts`): the vibrational part only, or the whole
ideal-gas c_v of which the model's translations and rotations carry (f/2) R.

:func:`check_heat_capacity` validates the specification but keeps it as
written, for the analysis package to build its model from
(``analysis.heatcapacity.heat_capacity_from_spec``); CSV tables in it must
be in the study's folder (:mod:`mdsim.study.datafiles`).
"""
import math
import numbers

import numpy as np

from mdsim.study.datafiles import data_file, data_lines
from mdsim.study.values import MISSING, suggest
from mdsim.units import R_GAS, parse_quantity

__all__ = ["check_heat_capacity", "heat_capacity_counts", "HEAT_CAPACITY_CSV_HEADER",
           "HEAT_CAPACITY_DICT_KEYS"]

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


def heat_capacity_counts(ctx, gas_raw, molecules):
    """What ``[gas] ideal_heat_capacity`` holds: ``[gas] ideal_heat_capacity_counts``.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    gas_raw : dict
        ``[gas]`` as written (the key's value already checked against its choices).
    molecules : list of analysis.molecules.RigidMolecule or None
        The gas's rigid molecules, None for spheres.

    Returns
    -------
    counts : str or None
        "vibrations" (the vibrational part: the model adds its kinetic
        (f/2) R), "all motions" (the whole c_v_ig: the model's (f/2) R is
        part of it), or None for spheres (the whole c_v_ig, always).
    given : bool
        Whether the study gave it (else the default of linear molecules).

    Raises
    ------
    StudyError
        The key given for spheres (it means nothing there), or missing for
        a gas with a non-linear molecule, whose vibrations alone pass 1.5 R
        so that a vibrational part and a whole c_v_ig look alike.
    """
    key = "ideal_heat_capacity_counts"
    given = gas_raw.get(key)
    if molecules is None:
        if given is not None:
            ctx.fail("gas", key, given, "applies to rigid molecules (form = \"rigid-molecule\") "
                     "only; for atoms and other spherical potentials ideal_heat_capacity is "
                     "always the whole ideal-gas c_v", "", "remove it")
        return None, False
    if given is not None:
        return given, True
    nonlinear = [m.name for m in molecules if m.is_nonlinear]
    if nonlinear:
        ctx.fail("gas", key, MISSING, f"required: molecule '{nonlinear[0]}' is not linear, its "
                 "vibrations alone pass 1.5 R, so the tool cannot tell whether "
                 "ideal_heat_capacity is the vibrational part or the whole ideal-gas c_v",
                 "", 'add ideal_heat_capacity_counts = "vibrations" (the model adds the 3 R of '
                 'a non-linear molecule\'s translations and rotations) or "all motions" (the '
                 'tool takes them off)')
    return "vibrations", False


def _check_vibrational(ctx, value, c, kinetic_dof):
    """A rigid molecule's vibrational c_v: 0 <= c (< 1.5 R for linear molecules).

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
                 "heat capacity itself and ideal_heat_capacity holds only the vibrational part "
                 '(ideal_heat_capacity_counts = "vibrations")', "0 <= c_v < 1.5 R",
                 f'give the vibrational part, e.g. "0 R" (the total c_v is then '
                 f'{kinetic_dof / 2:.4g} R), or write ideal_heat_capacity_counts = "all motions" '
                 "to give the whole c_v")


def _check_whole(ctx, value, T_K, c, kinetic_dof):
    """A rigid molecule's whole c_v_ig (c at temperatures T_K): never below the kinetic part.

    The message names the lowest value and its temperature.
    """
    kinetic = 0.5 * kinetic_dof * R_GAS
    k = min(range(len(c)), key=c.__getitem__)
    if c[k] < kinetic * (1.0 - 1e-9):
        at = "" if T_K[k] is None else f" at {T_K[k]:g} K"
        ctx.fail("gas", "ideal_heat_capacity", value,
                 f'with ideal_heat_capacity_counts = "all motions" it is the whole ideal-gas c_v, '
                 f"but it is {c[k] / R_GAS:.4g} R{at}, below the {kinetic_dof / 2:.4g} R that the "
                 "rigid model's translations and rotations carry", f">= {kinetic_dof / 2:.4g} R "
                 "everywhere on its range", "give the whole c_v_ig, or the vibrational part with "
                 'ideal_heat_capacity_counts = "vibrations"')


def _model_samples(model):
    """(T, c_v) where a table or polynomial model is lowest: its rows, or its range on a grid.

    A table's monotone piecewise cubic stays between the values of the rows
    either side, so its rows hold its lowest value; a polynomial is sampled
    at 401 points of its valid range (an open range: 1 K to 2000 K).
    """
    rows = getattr(model, "temperature_K", None)
    if rows is not None:
        return [float(t) for t in rows], [float(c) for c in model.cv_J_molK]
    lo, hi = model.valid_range
    grid = np.linspace(lo if lo > 0.0 else 1.0, hi if math.isfinite(hi) else 2000.0, 401)
    return [float(t) for t in grid], [float(c) for c in model.cv(grid)]


def check_heat_capacity(ctx, value, base_dir, kinetic_dof=3.0, counts=None):
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
        atoms; above 3 for rigid molecules).
    counts : str or None, optional
        :func:`heat_capacity_counts`: None for spheres (c_v >= 1.5 R);
        "vibrations" for rigid molecules whose c_v holds only the
        vibrational part (from 0 up to below 1.5 R for linear molecules, at
        the lowest temperature: the table's first row or the polynomial's
        lower limit, or 298.15 K without one); "all motions" for their whole
        c_v_ig, never below the model's (f/2) R anywhere on its range.

    Returns
    -------
    str or dict
        The specification as written, with CSV paths made absolute and
        polynomial coefficients as floats (the input of
        ``analysis.heatcapacity.heat_capacity_from_spec``).
    """
    spec = _heat_capacity_spec(ctx, value, base_dir, kinetic_dof, counts)
    constant = isinstance(spec, str) and not spec.strip().lower().endswith(".csv")
    if counts is not None and not constant:  # a table or polynomial
        from analysis.heatcapacity import heat_capacity_from_spec
        model = heat_capacity_from_spec(spec, where=ctx.where("gas", "ideal_heat_capacity"))
        if counts == "all motions":
            _check_whole(ctx, value, *_model_samples(model), kinetic_dof)
        else:
            low = model.valid_range[0] if model.valid_range[0] > 0.0 else 298.15
            _check_vibrational(ctx, value, float(model.cv(low)), kinetic_dof)
    return spec


def _heat_capacity_spec(ctx, value, base_dir, kinetic_dof, counts):
    """The checked specification (see :func:`check_heat_capacity`); constants checked here."""
    table, key = "gas", "ideal_heat_capacity"
    if isinstance(value, str):
        if value.strip().lower().endswith(".csv"):
            return _heat_capacity_csv(ctx, value, base_dir)
        c = parse_quantity(value, "molar_heat_capacity", ctx.where(table, key))
        if counts == "all motions":
            _check_whole(ctx, value, [None], [c], kinetic_dof)
            return value
        if counts is not None:
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
