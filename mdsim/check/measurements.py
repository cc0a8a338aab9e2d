"""Measured data files: free-expansion measurements and second-virial coefficients.

Both are plain CSV files.  Lines starting with ``#`` (after optional
spaces) and blank lines are skipped, so a file can carry a comment header
saying where its numbers come from.  The first remaining line is the
header; each column name carries its unit::

    initial_temperature_K, initial_pressure_bar, volume_ratio, delta_T_K, delta_T_uncertainty_K

Expansion measurements (:func:`read_expansion_data`), one row per experiment:

- ``initial_temperature_K`` or ``initial_temperature_C``;
- one of ``initial_pressure_Pa``, ``_kPa``, ``_bar``, ``_MPa``, ``_atm``,
  or ``initial_density_mol_m3`` (or ``_mol_L``);
- ``volume_ratio`` (V_final / V_initial, > 1);
- ``delta_T_K`` (T_final - T_initial; negative when the gas cools) and
  ``delta_T_uncertainty_K`` (one standard uncertainty, > 0);
- optionally ``label`` (free text naming the experiment).

Second-virial measurements (:func:`read_virial_data`): ``temperature_K``
(or ``_C``), ``B_cm3_mol`` (or ``B_m3_mol``), ``B_uncertainty_cm3_mol``
(or ``B_uncertainty_m3_mol``; > 0).

A file is read whole before anything is computed: every bad row (a missing
value, a word where a number belongs, a non-physical number, a ratio <= 1)
is reported by line number and column, at most :data:`MAX_REPORTED`
of them in one :class:`~mdsim.errors.StudyError`.  Values are returned in SI:
K, Pa, mol/m^3, m^3/mol.
"""
import csv
import dataclasses
import difflib
import math
from pathlib import Path

import numpy as np

from mdsim.errors import StudyError

# Most row problems listed in one error message.
MAX_REPORTED = 20

CELSIUS_OFFSET_K = 273.15

# column name -> (quantity, factor to SI, offset to SI)
_TEMPERATURE = {"_K": (1.0, 0.0), "_C": (1.0, CELSIUS_OFFSET_K)}
_PRESSURE = {"_Pa": 1.0, "_kPa": 1e3, "_bar": 1e5, "_MPa": 1e6, "_atm": 101325.0}
_DENSITY = {"_mol_m3": 1.0, "_mol_L": 1e3}
_VIRIAL_B = {"_cm3_mol": 1e-6, "_m3_mol": 1.0}


def _expansion_columns():
    cols = {}
    for suffix, (f, off) in _TEMPERATURE.items():
        cols["initial_temperature" + suffix] = ("temperature", f, off)
    for suffix, f in _PRESSURE.items():
        cols["initial_pressure" + suffix] = ("pressure", f, 0.0)
    for suffix, f in _DENSITY.items():
        cols["initial_density" + suffix] = ("density", f, 0.0)
    cols["volume_ratio"] = ("volume_ratio", 1.0, 0.0)
    cols["delta_T_K"] = ("delta_T", 1.0, 0.0)
    cols["delta_T_uncertainty_K"] = ("delta_T_uncertainty", 1.0, 0.0)
    cols["label"] = ("label", None, None)
    return cols


def _virial_columns():
    cols = {}
    for suffix, (f, off) in _TEMPERATURE.items():
        cols["temperature" + suffix] = ("temperature", f, off)
    for suffix, f in _VIRIAL_B.items():
        cols["B" + suffix] = ("B", f, 0.0)
        cols["B_uncertainty" + suffix] = ("B_uncertainty", f, 0.0)
    cols["label"] = ("label", None, None)
    return cols


EXPANSION_COLUMNS = _expansion_columns()
VIRIAL_COLUMNS = _virial_columns()


@dataclasses.dataclass(frozen=True)
class ExpansionData:
    """Free-expansion measurements, one entry per experiment (SI units).

    Attributes
    ----------
    path : Path
    line_n : ndarray, shape=(n,), int
        Line number of each row in the file (from 1), for messages.
    temperature_K : ndarray, shape=(n,)
        Initial temperature.
    pressure_Pa : ndarray, shape=(n,) or None
        Initial pressure (when the file gives pressures).
    density_mol_m3 : ndarray, shape=(n,) or None
        Initial molar density (when the file gives densities).
    volume_ratio : ndarray, shape=(n,)
    delta_T_K, delta_T_uncertainty_K : ndarray, shape=(n,)
        Measured T_final - T_initial and its standard uncertainty.
    labels : list of str, length n
    """

    path: Path
    line_n: np.ndarray
    temperature_K: np.ndarray
    pressure_Pa: np.ndarray | None
    density_mol_m3: np.ndarray | None
    volume_ratio: np.ndarray
    delta_T_K: np.ndarray
    delta_T_uncertainty_K: np.ndarray
    labels: list

    def __len__(self):
        return int(self.temperature_K.size)

    def state(self, k):
        """(T_i_K, p_i_Pa or None, rho_i_mol_m3 or None, volume_ratio) of row k."""
        p = None if self.pressure_Pa is None else float(self.pressure_Pa[k])
        rho = None if self.density_mol_m3 is None else float(self.density_mol_m3[k])
        return float(self.temperature_K[k]), p, rho, float(self.volume_ratio[k])


@dataclasses.dataclass(frozen=True)
class VirialData:
    """Second-virial measurements (SI units).

    Attributes
    ----------
    path : Path
    line_n : ndarray, shape=(n,), int
    temperature_K : ndarray, shape=(n,)
    B_m3_mol, B_uncertainty_m3_mol : ndarray, shape=(n,)
    labels : list of str
    """

    path: Path
    line_n: np.ndarray
    temperature_K: np.ndarray
    B_m3_mol: np.ndarray
    B_uncertainty_m3_mol: np.ndarray
    labels: list

    def __len__(self):
        return int(self.temperature_K.size)


class _Problems:
    """Collects the problems of one file and raises them together."""

    def __init__(self, path, kind):
        self.path, self.kind, self.items = path, kind, []

    def add(self, line, column, text):
        where = f"line {line}" + (f", column '{column}'" if column else "")
        self.items.append(f"{where}: {text}")

    def raise_if_any(self, fix):
        if not self.items:
            return
        shown = self.items[:MAX_REPORTED]
        more = len(self.items) - len(shown)
        tail = f"; ... and {more} more" if more > 0 else ""
        raise StudyError(f"{self.kind} file '{self.path}': {len(self.items)} problem(s), nothing "
                         f"was computed: " + "; ".join(shown) + tail + f". {fix}")


def _rows(path, kind):
    """(header line number, header fields, [(line number, fields)]) of a CSV file."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise StudyError(f"{kind} file '{path}': cannot be read ({exc}); give the path of a "
                         "UTF-8 CSV file") from None
    header = None
    rows = []
    for line_no, fields in enumerate(csv.reader(text.splitlines()), start=1):
        joined = ",".join(fields).strip()
        if not joined or joined.startswith("#"):
            continue
        fields = [f.strip() for f in fields]
        if header is None:
            header = (line_no, fields)
        else:
            rows.append((line_no, fields))
    if header is None:
        raise StudyError(f"{kind} file '{path}': no header line; the first line that is not a "
                         "comment must name the columns with their units")
    return path, header, rows


def _header(path, kind, header, known, groups, example):
    """Map each header field to its column spec; every header problem in one message."""
    line_no, names = header
    problems = _Problems(path, kind)
    specs = []
    seen = {}
    for name in names:
        if name not in known:
            near = difflib.get_close_matches(name, list(known), n=1, cutoff=0.6)
            hint = f"did you mean '{near[0]}'?" if near else \
                f"known columns: {', '.join(known)}"
            problems.add(line_no, name, f"unknown column or unit; {hint}")
            specs.append(None)
            continue
        q = known[name][0]
        if q in seen:
            problems.add(line_no, name, f"gives the {q} a second time (already column "
                         f"'{seen[q]}'); keep one")
        seen.setdefault(q, name)
        specs.append(known[name])
    for required, alternatives in groups:
        present = [q for q in alternatives if q in seen]
        if not present:
            problems.add(line_no, None, f"no {required} column; add one of "
                         + ", ".join(n for n, s in known.items() if s[0] in alternatives))
        elif len(present) > 1:
            problems.add(line_no, None, f"both {' and '.join(seen[q] for q in present)}: give "
                         f"one {required} column, not several")
    problems.raise_if_any(f"Example header: {example}")
    return specs


# quantity -> (test on the SI value, text of the allowed range)
_LIMITS = {
    "temperature": (lambda v: v > 0.0, "must be above 0 K (absolute temperature)"),
    "pressure": (lambda v: v > 0.0, "must be positive"),
    "density": (lambda v: v > 0.0, "must be positive"),
    "volume_ratio": (lambda v: v > 1.0, "must be greater than 1 (V_final / V_initial: a free "
                     "expansion enlarges the volume)"),
    "delta_T": (lambda v: True, ""),
    "delta_T_uncertainty": (lambda v: v > 0.0, "must be positive (one standard uncertainty; "
                            "a zero uncertainty would give the row infinite weight)"),
    "B": (lambda v: True, ""),
    "B_uncertainty": (lambda v: v > 0.0, "must be positive (one standard uncertainty)"),
}


def _parse(path, kind, known, groups, example):
    path, header, rows = _rows(path, kind)
    specs = _header(path, kind, header, known, groups, example)
    names = header[1]
    problems = _Problems(path, kind)
    values = {spec[0]: [] for spec in specs}
    lines = []
    for line_no, fields in rows:
        if len(fields) != len(names):
            problems.add(line_no, None, f"{len(fields)} values for {len(names)} columns; every "
                         "row needs one value per header column (leave no value out)")
            continue
        row = {}
        ok = True
        for name, spec, text in zip(names, specs, fields):
            q, factor, offset = spec
            if q == "label":
                row[q] = text
                continue
            if text == "":
                problems.add(line_no, name, "missing value")
                ok = False
                continue
            try:
                raw = float(text)
            except ValueError:
                problems.add(line_no, name, f"'{text}' is not a number")
                ok = False
                continue
            if not math.isfinite(raw):
                problems.add(line_no, name, f"'{text}' is not a finite number")
                ok = False
                continue
            value = raw * factor + offset
            test, allowed = _LIMITS[q]
            if not test(value):
                unit_note = f" ({value:g} in SI)" if (factor != 1.0 or offset != 0.0) else ""
                problems.add(line_no, name, f"{text}{unit_note} {allowed}")
                ok = False
                continue
            row[q] = value
        if ok:
            for q in values:
                values[q].append(row[q])
            lines.append(line_no)
    if not rows:
        problems.add(header[0] + 1, None, "no data rows after the header")
    problems.raise_if_any("Fix these rows (or comment them out with '#') and run again.")
    return path, np.array(lines, dtype=int), values


def read_expansion_data(path):
    """Read a file of free-expansion measurements.

    Parameters
    ----------
    path : str or Path
        CSV file (see the module docstring for the columns).

    Returns
    -------
    ExpansionData

    Raises
    ------
    StudyError
        Naming every bad header field and every bad row (line and column),
        at most ``MAX_REPORTED`` of them.
    """
    groups = [("initial temperature", ("temperature",)),
              ("initial pressure or density", ("pressure", "density")),
              ("volume ratio", ("volume_ratio",)),
              ("temperature change", ("delta_T",)),
              ("temperature-change uncertainty", ("delta_T_uncertainty",))]
    example = ("initial_temperature_K, initial_pressure_bar, volume_ratio, delta_T_K, "
               "delta_T_uncertainty_K")
    path, lines, v = _parse(path, "expansion data", EXPANSION_COLUMNS, groups, example)
    n = lines.size
    return ExpansionData(
        path=path, line_n=lines,
        temperature_K=np.array(v["temperature"], dtype=float),
        pressure_Pa=np.array(v["pressure"], dtype=float) if "pressure" in v else None,
        density_mol_m3=np.array(v["density"], dtype=float) if "density" in v else None,
        volume_ratio=np.array(v["volume_ratio"], dtype=float),
        delta_T_K=np.array(v["delta_T"], dtype=float),
        delta_T_uncertainty_K=np.array(v["delta_T_uncertainty"], dtype=float),
        labels=list(v["label"]) if "label" in v else [f"line {k}" for k in lines[:n]])


def read_virial_data(path):
    """Read a file of second-virial measurements.

    Parameters
    ----------
    path : str or Path
        CSV file with ``temperature_K``, ``B_cm3_mol``, ``B_uncertainty_cm3_mol``
        (or the ``_C`` and ``_m3_mol`` variants).

    Returns
    -------
    VirialData

    Raises
    ------
    StudyError
        As :func:`read_expansion_data`.
    """
    groups = [("temperature", ("temperature",)), ("second virial coefficient", ("B",)),
              ("uncertainty of B", ("B_uncertainty",))]
    example = "temperature_K, B_cm3_mol, B_uncertainty_cm3_mol"
    path, lines, v = _parse(path, "second-virial data", VIRIAL_COLUMNS, groups, example)
    return VirialData(
        path=path, line_n=lines,
        temperature_K=np.array(v["temperature"], dtype=float),
        B_m3_mol=np.array(v["B"], dtype=float),
        B_uncertainty_m3_mol=np.array(v["B_uncertainty"], dtype=float),
        labels=list(v["label"]) if "label" in v else [f"line {k}" for k in lines])


def write_expansion_data(path, rows, comments=(), pressure_unit="bar"):
    """Write expansion measurements in the format :func:`read_expansion_data` reads.

    Parameters
    ----------
    path : str or Path
    rows : iterable of dict
        Each with ``temperature_K``, ``pressure_Pa``, ``volume_ratio``,
        ``delta_T_K``, ``delta_T_uncertainty_K``.
    comments : sequence of str
        Written first, each as a ``# `` line.
    pressure_unit : {"bar", "Pa", "kPa", "MPa", "atm"}
    """
    if "_" + pressure_unit not in _PRESSURE:
        raise StudyError(f"pressure_unit = {pressure_unit!r}: allowed "
                         f"{', '.join(s[1:] for s in _PRESSURE)}")
    f = _PRESSURE["_" + pressure_unit]
    out = [f"# {c}" for c in comments]
    out.append(f"initial_temperature_K,initial_pressure_{pressure_unit},volume_ratio,delta_T_K,"
               "delta_T_uncertainty_K")
    for r in rows:
        out.append(f"{r['temperature_K']:.6g},{r['pressure_Pa'] / f:.6g},{r['volume_ratio']:.6g},"
                   f"{r['delta_T_K']:.5f},{r['delta_T_uncertainty_K']:.4g}")
    Path(path).write_text("\n".join(out) + "\n", encoding="utf-8")


def write_virial_data(path, temperature_K, B_m3_mol, B_uncertainty_m3_mol, comments=()):
    """Write second-virial measurements (in cm^3/mol) for :func:`read_virial_data`."""
    out = [f"# {c}" for c in comments]
    out.append("temperature_K,B_cm3_mol,B_uncertainty_cm3_mol")
    for T, B, u in zip(temperature_K, B_m3_mol, B_uncertainty_m3_mol):
        out.append(f"{T:.6g},{B * 1e6:.5f},{u * 1e6:.4g}")
    Path(path).write_text("\n".join(out) + "\n", encoding="utf-8")
