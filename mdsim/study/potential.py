"""Pair potentials from a study's ``[potential]`` table, in kelvin and angstrom.

Each form needs its own keys (:data:`FORM_KEYS`); a key of another form is
refused.  The potential is built with energies as u/k in K and lengths in
angstrom; :meth:`mdsim.study.reader.Study.reduced_pairs` rescales it to the
reduced units of species 0.  A tabulated potential (form "table") is read
from a two-column file whose header names the units (:data:`TABLE_R_UNITS`,
:data:`TABLE_U_UNITS`).  For a mixture, ``k_ij`` corrects the
Lorentz-Berthelot cross well depths (:func:`check_k_ij`).
"""
import difflib
import numbers

import numpy as np

from mdsim.errors import StudyError
from mdsim.engine.potentials import Exp6, LennardJones, Mie, read_table
from mdsim.study.datafiles import data_file, data_lines
from mdsim.study.schema import ANGSTROM, FORMS, SCHEMA
from mdsim.study.values import MISSING
from mdsim.units import R_GAS

__all__ = ["FORM_KEYS", "MIXING_KEYS", "TABLE_R_UNITS", "TABLE_U_UNITS", "build_potential",
           "check_k_ij"]

#: Keys each form needs (besides 'form'), and keys of which it needs exactly one.
FORM_KEYS = {
    "lennard-jones": ({"epsilon", "sigma"}, set()),
    "mie": ({"epsilon", "sigma", "repulsive_exponent", "attractive_exponent"}, set()),
    "exp-6": ({"epsilon", "steepness"}, {"r_min", "sigma"}),
    "table": ({"table_file"}, set()),
}
#: Keys of [potential] that belong to the whole gas, not to one form.
MIXING_KEYS = {"cutoff", "k_ij", "source", "three_body_c9", "fitted_range"}

#: Column headers accepted in potential tables: name -> factor to angstrom or to K.
TABLE_R_UNITS = {"r_angstrom": 1.0, "r_nm": 10.0, "r_m": 1e10}
TABLE_U_UNITS = {"u_K": 1.0, "u_J_mol": 1.0 / R_GAS, "u_kJ_mol": 1000.0 / R_GAS}


def _table_potential(ctx, table, file_value, base_dir):
    """A tabulated potential from a file in the study's folder."""
    key = "table_file"
    path = data_file(ctx, table, key, file_value, base_dir, "a two-column r, u table")
    lines = data_lines(ctx, table, key, file_value, path)
    header = lines[0].replace(",", " ").split() if lines else None
    if header is None or len(header) != 2 or header[0] not in TABLE_R_UNITS \
            or header[1] not in TABLE_U_UNITS:
        ctx.fail(table, key, file_value,
                 f"the header {' '.join(header) if header else '(none)'!r} does not name the units",
                 f"a first line naming the columns: one of {', '.join(TABLE_R_UNITS)} then one "
                 f"of {', '.join(TABLE_U_UNITS)}", "for example 'r_angstrom, u_K'")
    try:
        return read_table(path, energy_scale=TABLE_U_UNITS[header[1]],
                          length_scale=TABLE_R_UNITS[header[0]])
    except StudyError as exc:
        raise StudyError(f"{ctx.where(table, key)}: {exc}") from None


def _check_form_keys(ctx, table, values):
    """The form of a checked potential table, once its keys fit that form."""
    form = values.get("form")
    if form is None:
        ctx.fail(table, "form", MISSING, "missing required key", ", ".join(f'"{f}"' for f in FORMS),
                 'add form = "lennard-jones"')
    needed, one_of = FORM_KEYS[form]
    takes = ", ".join(sorted(needed | one_of))
    present = set(values) - {"form"} - MIXING_KEYS
    for key in sorted(needed - present):
        ctx.fail(table, key, MISSING, f"missing; the {form} form needs {takes}", "",
                 f"add {key} = {SCHEMA['potential'][key].example}")
    if one_of:
        given = one_of & present
        if len(given) != 1:
            ctx.fail(table, "r_min", MISSING if not given else values.get("r_min"),
                     f"give exactly one of {' or '.join(sorted(one_of))} for the {form} form",
                     "", "r_min is the position of the minimum, sigma the zero crossing")
    extra = present - needed - one_of
    if extra:
        key = sorted(extra)[0]
        ctx.fail(table, key, values[key], f"does not apply to the {form} form", "",
                 f"the {form} form takes {takes}")
    return form


def build_potential(ctx, table, values, base_dir):
    """A pair potential in K and angstrom from a checked potential table.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    table : str
        The table's name, for messages ("potential", "gas.species #1 potential").
    values : dict
        The table checked by :func:`mdsim.study.values.check_table` (SI values).
    base_dir : Path
        The study file's folder (for ``table_file``).

    Returns
    -------
    mdsim.engine.potentials.PairPotential
        Energies u/k in K, lengths in angstrom.
    """
    form = _check_form_keys(ctx, table, values)
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


def _k_ij_by_names(ctx, value, names):
    """k_ij from ``{ "nitrogen-oxygen" = 0.01, ... }``: pairs of species names."""
    table, key = "potential", "k_ij"
    n = len(names)
    k = np.zeros((n, n))
    for pair, kv in value.items():
        parts = [t.strip() for t in str(pair).split("-")]
        if len(parts) != 2 or parts[0] == parts[1]:
            ctx.fail(table, key, value, f"pair '{pair}' is not two species names joined by '-'",
                     '{ "nitrogen-oxygen" = 0.01 }', "")
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
    return k


def check_k_ij(ctx, value, names):
    """The binary interaction parameters of a mixture as a matrix.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    value : float, list of lists or dict
        A number (two species), a symmetric matrix with zero diagonal, or
        pairs of species names: ``k_ij = { "nitrogen-oxygen" = 0.01 }``.
    names : list of str
        The species names, in [[gas.species]] order.

    Returns
    -------
    ndarray, shape=(n_species, n_species), float64
        Symmetric, zero diagonal, every |k_ij| < 1.
    """
    table, key = "potential", "k_ij"
    n_species = len(names)
    if n_species < 2:
        ctx.fail(table, key, value, "k_ij applies to mixtures only", "", "remove it for a pure gas")
    if isinstance(value, dict):
        k = _k_ij_by_names(ctx, value, list(names))
    elif isinstance(value, numbers.Real) and not isinstance(value, bool):
        if n_species != 2:
            ctx.fail(table, key, value,
                     f"a single number needs exactly 2 species (found {n_species})",
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
