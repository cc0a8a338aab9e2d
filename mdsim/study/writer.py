"""The resolved study: a study written back as TOML with every default filled in.

A run directory keeps the study it ran as ``study.toml``
(``docs/run-directory.md``): the study file's own tables plus every
simulation default, written with units, and the data files the study names
(potential tables, heat-capacity CSV files) referred to under ``inputs/``,
where the pipeline copies them.  Reading that file back plans the same
tasks.

Examples
--------
>>> print(dumps_toml({"study": {"name": "argon"}, "expansion": {"volume_ratio": 2.0}}))
# The resolved study: the study file with every default filled in, written by 'mdsim run'.
<BLANKLINE>
[study]
name = "argon"
<BLANKLINE>
[expansion]
volume_ratio = 2.0
<BLANKLINE>
"""
import json
import math
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.study.routes import SIMULATION_ROUTES

__all__ = ["INPUTS_DIR", "resolved_study_document", "dumps_toml"]

#: Folder of a run directory that holds copies of the data files a study names.
INPUTS_DIR = "inputs"


def _toml_value(value, where):
    """One TOML value; ``where`` names the key for the error message."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise StudyError(f"{where} = {value!r}: not a finite number")
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)  # a TOML basic string
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v, where) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{_toml_key(k)} = {_toml_value(v, f'{where}.{k}')}"
                                for k, v in value.items()) + " }"
    raise StudyError(f"{where} = {value!r}: cannot be written to the resolved study")


def _toml_key(key):
    """A bare TOML key when it may be one, otherwise a quoted key."""
    key = str(key)
    if key and all(c.isalnum() or c in "-_" for c in key):
        return key
    return json.dumps(key)


def _relocate_data_files(study, doc, copies):
    """Point the document's data-file paths at ``inputs/`` and record the copies to make."""
    base = Path(study.path).parent.resolve()

    def inputs_name(source):
        src = Path(source).resolve()
        rel = Path(INPUTS_DIR) / src.relative_to(base)
        copies[rel.as_posix()] = str(src)
        return rel.as_posix()

    def relocate(pot):
        if isinstance(pot, dict) and isinstance(pot.get("table_file"), str):
            pot["table_file"] = inputs_name(base / pot["table_file"])

    relocate(doc.get("potential"))
    for sp in doc.get("gas", {}).get("species", []) or []:
        relocate(sp.get("potential"))
    table = study.simulation.get("coexistence_table")  # absolute, inside the study folder
    if table is not None:
        doc.setdefault("simulation", {})["coexistence_table"] = inputs_name(table)
    cv = study.gas.ideal_heat_capacity  # CSV paths in it are absolute, inside the study folder
    if isinstance(cv, str) and cv.strip().lower().endswith(".csv"):
        cv = inputs_name(cv)
    elif isinstance(cv, dict) and "table" in cv:
        cv = {"table": inputs_name(cv["table"])}
    doc.setdefault("gas", {})["ideal_heat_capacity"] = cv


def _simulation_table(study):
    """``[simulation]`` with every default, in the units the study file uses (K, s)."""
    s = study.simulation
    # the virial routes always run; the file lists the simulation routes only, once each
    routes = list(dict.fromkeys(r for r in s["routes"] if r in SIMULATION_ROUTES))
    table = {"routes": routes, "target_stderr": f"{float(s['target_stderr'])!r} K",
             "max_cpu_time": f"{float(s['max_cpu_time'])!r} s", "seed": int(s["seed"]),
             "sampler": s["sampler"], "quantum_potential": s["quantum_potential"]}
    if s.get("particles") is not None:
        table["particles"] = int(s["particles"])
    return table


def resolved_study_document(study, copies=None):
    """The study file's tables with every pipeline default filled in.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    copies : dict, optional
        Receives ``{destination relative to the run directory: absolute
        source path}`` of the data files the study names: the document
        refers to them as ``inputs/<path relative to the study file>``, so
        the run directory's ``study.toml`` reads the same wherever the run
        directory is, once they are copied there.

    Returns
    -------
    dict
        ``{table name: {key: value}}``, plain data for :func:`dumps_toml`.
    """
    copies = {} if copies is None else copies
    doc = json.loads(json.dumps(study.raw))  # a deep copy of plain data
    _relocate_data_files(study, doc, copies)
    gas = doc["gas"]
    gas.setdefault("quantum", study.gas.quantum)
    if study.gas.molecules is None:  # rigid molecules: the model sets it (a mixture has several)
        gas.setdefault("dof_per_particle", int(study.gas.dof_per_particle))
    doc.setdefault("potential", {})
    if "species" not in gas:
        pairs = study.gas.pairs_K_angstrom
        doc["potential"].setdefault("cutoff", float(pairs.rc_max / pairs.pots[0][0].sigma))
    doc.setdefault("simulation", {}).update(_simulation_table(study))
    return doc


def dumps_toml(doc):
    """TOML text of a document of tables.

    Parameters
    ----------
    doc : dict
        ``{table: {key: value}}``; values are strings, numbers, bools,
        lists and inline tables (dicts).

    Returns
    -------
    str

    Raises
    ------
    StudyError
        A value TOML cannot hold (a non-finite number, another type), naming
        its table and key.
    """
    lines = ["# The resolved study: the study file with every default filled in, "
             "written by 'mdsim run'.", ""]
    for table, body in doc.items():
        if not isinstance(body, dict):
            raise StudyError(f"top-level '{table}' is not a table")
        lines.append(f"[{_toml_key(table)}]")
        for key, value in body.items():
            lines.append(f"{_toml_key(key)} = {_toml_value(value, f'[{table}] {key}')}")
        lines.append("")
    return "\n".join(lines)
