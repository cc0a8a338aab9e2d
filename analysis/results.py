"""A small base for result objects: a plain-text table and a JSON-ready dict.

Result classes are dataclasses that inherit :class:`Result`; their field
names are the keys of the output, plain words with the unit at the end
(``final_temperature_K``, ``final_pressure_Pa``, ``initial_density_mol_m3``,
``entropy_generated_J_molK``, ``delta_T_stderr_K``), reduced quantities
ending in ``_red``.  Lists of text go in ``warnings`` and ``notes``.

>>> from dataclasses import dataclass
>>> @dataclass(frozen=True)
... class Demo(Result):
...     delta_T_K: float
...     warnings: tuple = ()
>>> Demo(-3.0).to_dict()
{'delta_T_K': -3.0, 'warnings': []}
"""
import dataclasses
import math
import numbers

import numpy as np

_TEXT_LISTS = ("warnings", "notes")


def to_plain(value):
    """Turn a value into something ``json.dumps`` accepts.

    numpy scalars and arrays become floats, ints and lists; nested results
    and dataclasses become dicts; tuples become lists; NaN and infinities
    become None (JSON has no such numbers).
    """
    if isinstance(value, Result):
        return value.to_dict()
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): to_plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return [to_plain(v) for v in value.tolist()]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def _format(value):
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, list):
        if value and all(isinstance(v, (int, float)) or v is None for v in value):
            return "[" + ", ".join(_format(v) for v in value) + "]"
        return f"{len(value)} item(s)"
    if isinstance(value, dict):
        return f"{len(value)} field(s)"
    return str(value)


class Result:
    """Mixin for dataclass results: ``to_dict()`` and ``to_table()``."""

    def to_dict(self):
        """The result as a JSON-ready dict keyed by the field names."""
        return {f.name: to_plain(getattr(self, f.name)) for f in dataclasses.fields(self)}

    def to_table(self, title=None):
        """The result as a plain-text two-column table.

        Parameters
        ----------
        title : str, optional
            First line; the class name by default.

        Returns
        -------
        str
            ``name  value`` rows; warnings and notes listed below the table.
        """
        data = self.to_dict()
        rows = []
        for k, v in data.items():
            if k in _TEXT_LISTS:
                continue
            if isinstance(v, dict) and v:
                rows.append((k, ""))
                rows += [(f"  {sub}", _format(x)) for sub, x in v.items()]
            else:
                rows.append((k, _format(v)))
        width = max((len(k) for k, _ in rows), default=0)
        title = title or type(self).__name__
        lines = [title, "-" * max(len(title), width + 14)]
        lines += [f"{k.ljust(width)}  {v}" for k, v in rows]
        for key in _TEXT_LISTS:
            items = data.get(key) or []
            if items:
                lines.append(f"{key}:")
                lines += [f"  - {item}" for item in items]
        return "\n".join(lines)

    def __str__(self):
        return self.to_table()
