"""Heat capacity models from what a study file holds: a quantity, a polynomial, a CSV table.

Quantities are read with pint ("1.5 R", "20.8 J/(mol K)"; R is the gas
constant).  Tables are CSV files with the header ``temperature_K, cv_J_molK``.
"""
import csv
import math
import os

import numpy as np

from analysis.heatcapacity.models import (ConstantHeatCapacity, IdealGasHeatCapacity,
                                          PolynomialHeatCapacity, TabulatedHeatCapacity)
from mdsim.errors import StudyError

__all__ = ["TABLE_HEADER", "parse_molar_heat_capacity", "read_heat_capacity_table",
           "heat_capacity_from_spec"]

TABLE_HEADER = ("temperature_K", "cv_J_molK")

_UREG = None


def _registry():
    # A registry of its own: the shared one of mdsim.units converts offset units
    # automatically, which would read "20.8 J/(mol degC)" as 0.076 J/(mol K)
    # instead of refusing it.
    global _UREG
    if _UREG is None:
        import pint
        _UREG = pint.UnitRegistry()
    return _UREG


def _where(where):
    return f" (in {where})" if where else ""


def parse_molar_heat_capacity(text, where=""):
    """Read a molar heat capacity such as "1.5 R" or "20.8 J/(mol K)".

    Parameters
    ----------
    text : str
        A number with a unit of molar heat capacity; "R" is the gas constant.
    where : str
        Where the value came from, for error messages.

    Returns
    -------
    float
        The value in J/(mol K).
    """
    import pint
    ureg = _registry()
    try:
        q = ureg.Quantity(str(text))
    except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError) as exc:
        raise StudyError(
            f"ideal-gas heat capacity{_where(where)}: cannot read {text!r} as a quantity "
            f"({exc}); write a number with a unit, e.g. \"1.5 R\" or \"20.8 J/(mol K)\".") from exc
    if q.dimensionless or not q.check("[energy] / [substance] / [temperature]"):
        raise StudyError(
            f"ideal-gas heat capacity{_where(where)}: {text!r} is not a molar heat capacity; "
            "give units of R or J/(mol K), e.g. \"1.5 R\" or \"20.8 J/(mol K)\".")
    return float(q.to("J/(mol K)").magnitude)


def read_heat_capacity_table(path):
    """Read a c_v_ig table from a CSV file with header ``temperature_K, cv_J_molK``.

    Parameters
    ----------
    path : str or os.PathLike
        The file; lines starting with '#' are comments.

    Returns
    -------
    TabulatedHeatCapacity
    """
    path = os.fspath(path)
    if not os.path.isfile(path):
        raise StudyError(f"ideal-gas heat capacity table {path!r} does not exist; give the "
                         "path of a CSV file with header 'temperature_K, cv_J_molK'.")
    with open(path, newline="", encoding="utf-8") as fh:
        rows = [r for r in csv.reader(fh) if r and not r[0].lstrip().startswith("#")]
    if not rows:
        raise StudyError(f"ideal-gas heat capacity table {path!r} is empty; it needs the header "
                         "'temperature_K, cv_J_molK' and at least two rows.")
    header = tuple(c.strip() for c in rows[0])
    if header != TABLE_HEADER:
        raise StudyError(f"ideal-gas heat capacity table {path!r}: header is {', '.join(header)!r}; "
                         f"it must be exactly '{', '.join(TABLE_HEADER)}'.")
    try:
        data = np.array([[float(c) for c in r] for r in rows[1:]], dtype=np.float64)
    except ValueError as exc:
        raise StudyError(f"ideal-gas heat capacity table {path!r}: a row is not two numbers "
                         f"({exc}); each row is 'temperature_K, cv_J_molK'.") from exc
    if data.ndim != 2 or data.shape[1] != 2:
        raise StudyError(f"ideal-gas heat capacity table {path!r}: every row needs exactly two "
                         "numbers, temperature_K and cv_J_molK.")
    return TabulatedHeatCapacity(data[:, 0], data[:, 1], source=os.path.basename(path))


_DICT_KEYS = ("polynomial", "unit", "valid_range_K", "table")


def heat_capacity_from_spec(spec, where=""):
    """Build an ideal-gas heat capacity model from a study's raw value.

    Parameters
    ----------
    spec : str, dict, or IdealGasHeatCapacity
        - a quantity string: "1.5 R", "20.8 J/(mol K)" -> constant;
        - a path to a CSV file (header ``temperature_K, cv_J_molK``) -> table;
        - {"polynomial": [a0, a1, ...], "unit": "J/(mol K)" or "R",
          "valid_range_K": [T_low, T_high]} -> polynomial (T in K; with
          unit "R" the coefficients are multiples of R);
        - {"table": path} -> table;
        - a model object, returned as it is.
    where : str
        The study setting it came from, for error messages.

    Returns
    -------
    IdealGasHeatCapacity

    Examples
    --------
    >>> round(heat_capacity_from_spec("1.5 R").cv(300.0), 4)
    12.4717
    >>> model = heat_capacity_from_spec({"polynomial": [1.5, 1e-3], "unit": "R",
    ...                                  "valid_range_K": [100, 1000]})
    >>> round(model.cv(300.0) / 8.314462618, 6)
    1.8
    """
    if isinstance(spec, IdealGasHeatCapacity):
        return spec
    if isinstance(spec, os.PathLike):
        return read_heat_capacity_table(spec)
    if isinstance(spec, str):
        text = spec.strip()
        if text.lower().endswith(".csv") or os.path.isfile(text):
            return read_heat_capacity_table(text)
        return ConstantHeatCapacity(parse_molar_heat_capacity(text, where))
    if isinstance(spec, dict):
        unknown = sorted(set(spec) - set(_DICT_KEYS))
        if unknown:
            raise StudyError(f"ideal-gas heat capacity{_where(where)}: unknown key(s) {unknown}; "
                             f"allowed keys are {list(_DICT_KEYS)}.")
        if "table" in spec:
            return read_heat_capacity_table(spec["table"])
        if "polynomial" not in spec:
            raise StudyError(f"ideal-gas heat capacity{_where(where)}: a table of settings needs "
                             "'polynomial = [a0, a1, ...]' (with 'unit') or 'table = \"file.csv\"'.")
        unit = str(spec.get("unit", "J/(mol K)"))
        scale = parse_molar_heat_capacity(f"1 {unit}", where)
        coeffs = [float(c) * scale for c in spec["polynomial"]]
        return PolynomialHeatCapacity(coeffs, spec.get("valid_range_K", (0.0, math.inf)))
    raise StudyError(
        f"ideal-gas heat capacity{_where(where)} = {spec!r} is not understood; give a quantity "
        "string (\"1.5 R\", \"20.8 J/(mol K)\"), a CSV path, or {polynomial = [...], "
        "unit = \"J/(mol K)\"}.")
