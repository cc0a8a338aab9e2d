"""Where a check's predictions come from: finished simulations, the corresponding-states table.

Per measured row :func:`mdsim.check.run.run_check` takes the first that
applies:

1. a finished simulation of exactly this state point in a run directory of
   the same gas and potential (:func:`run_predictions`, :func:`match_run`:
   its best simulation route, with its standard error);
2. the corresponding-states table (:class:`TablePredictor`, Delta T with the
   table's standard error);
3. the B2 + B3 virial route (:func:`analysis.expansion.virial_expansion`;
   no statistical error).
"""
import dataclasses
import json
from pathlib import Path

import numpy as np

from mdsim.errors import ConvergenceError, SettingError, StudyError
from mdsim.study.routes import SIMULATION_ROUTES

__all__ = ["TablePredictor", "load_table", "run_predictions", "match_run", "RowPredictions",
           "predict_rows"]


class TablePredictor:
    """Delta T and its standard error from a corresponding-states table (:mod:`mdsim.cstable`).

    Parameters
    ----------
    table : CorrespondingStatesTable
        Its ``form`` and ``shape`` must be those of ``model``.
    model : ExpansionModel
        The study's potential (a fixed shape: no shape fit).
    molar_mass_kg_mol : float
    """

    def __init__(self, table, model, molar_mass_kg_mol):
        where = str(getattr(table, "path", "")) or None
        if model.fit_shape:
            raise SettingError("fit_shape", None, "cannot be used with a corresponding-states "
                               "table ('table'): a table holds one fixed shape")
        form = getattr(table, "form", None)
        if form is not None and form != model.form:
            raise SettingError("table", where, f"the table is for the {form!r} form, the "
                               f"study's potential is {model.form!r}; build a table for this "
                               "form (mdsim table build)")
        shape = getattr(table, "shape", None) or {}
        for key, mine in (("repulsive_exponent", model.repulsive),
                          ("attractive_exponent", model.attractive)):
            if key in shape and abs(float(shape[key]) - mine) > 1e-9:
                raise SettingError("table", where, f"the table's {key} is {shape[key]}, the "
                                   f"study's {mine}; build a table for this shape")
        self.table, self.model, self.molar_mass = table, model, float(molar_mass_kg_mol)

    def delta_T(self, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None):
        """(delta_T_K, stderr_K, ok) arrays, shape=(n,); ``ok`` false where the table does not apply."""
        # looked up on the module at call time, so that tests can stand in for it
        from mdsim.cstable import expansion
        n = len(T_K)
        out = np.full(n, np.nan)
        err = np.full(n, np.nan)
        ok = np.zeros(n, dtype=bool)
        for k in range(n):
            try:
                v, s = expansion.table_delta_T(
                    self.table, float(theta[0]), float(theta[1]), self.molar_mass,
                    self.model.cv_ig, float(T_K[k]), float(volume_ratio[k]),
                    p_i_Pa=None if p_Pa is None else float(p_Pa[k]),
                    rho_i_mol_m3=None if rho_mol_m3 is None else float(rho_mol_m3[k]))
            except StudyError:
                continue
            out[k], err[k], ok[k] = v, s, True
        return out, err, ok


def load_table(path):
    """The corresponding-states table at ``path`` (:class:`mdsim.cstable.CorrespondingStatesTable`)."""
    from mdsim.cstable.table import CorrespondingStatesTable
    return CorrespondingStatesTable.load(path)


def _same(a, b, rel=1e-6):
    if a is None or b is None:
        return False
    return abs(a - b) <= rel * max(abs(a), abs(b))


def _run_dirs(runs_dir):
    """The run directories (with ``results.json``) at or directly below ``runs_dir``."""
    root = Path(runs_dir)
    if not root.is_dir():
        raise SettingError("runs_dir", str(runs_dir), "not a directory; give a run directory "
                           "made by 'mdsim run' (or a directory holding several)")
    dirs = [root] if (root / "results.json").is_file() else sorted(
        p.parent for p in root.glob("*/results.json"))
    if not dirs:
        raise SettingError("runs_dir", str(runs_dir), "no results.json in it or in its "
                           "subdirectories; run the study first ('mdsim run')")
    return dirs


def _best_simulations(summary, source):
    """Per state point of a run's results.json, its first simulation route with an error."""
    out = []
    for rec in summary.get("state_points", []):
        ini = rec.get("initial", {})
        for route in SIMULATION_ROUTES:
            e = rec.get("delta_T_K", {}).get(route)
            if e and e.get("value") is not None and e.get("stderr") is not None:
                out.append({"temperature_K": ini.get("temperature_K"),
                            "pressure_Pa": ini.get("pressure_Pa"),
                            "density_mol_m3": ini.get("density_mol_m3"),
                            "volume_ratio": rec.get("volume_ratio"), "route": route,
                            "delta_T_K": e["value"], "stderr_K": e["stderr"],
                            "source": source})
                break
    return out


def run_predictions(runs_dir, study):
    """Simulation results of run directories that share the study's gas and potential.

    Parameters
    ----------
    runs_dir : str or Path
        A run directory (with ``results.json``) or a directory of them.
    study : Study

    Returns
    -------
    list of dict
        ``temperature_K``, ``pressure_Pa``, ``density_mol_m3``,
        ``volume_ratio``, ``route``, ``delta_T_K``, ``stderr_K``,
        ``source`` (the run directory).
    """
    from mdsim.study.reader import read_study
    mine = [p.describe() for p in study.gas.pairs_K_angstrom.pots[0]]
    out = []
    for d in _run_dirs(runs_dir):
        try:
            other = read_study(d / "study.toml")
            summary = json.loads((d / "results.json").read_text(encoding="utf-8"))
        except (OSError, ValueError, StudyError):
            continue
        theirs = [p.describe() for p in other.gas.pairs_K_angstrom.pots[0]]
        if theirs != mine or other.gas.ideal_heat_capacity != study.gas.ideal_heat_capacity \
                or list(other.gas.fractions) != list(study.gas.fractions):
            continue
        out += _best_simulations(summary, str(d))
    return out


def match_run(runs, T, p, rho, r):
    """The first of ``runs`` (from :func:`run_predictions`) at this initial state, or None.

    Parameters
    ----------
    runs : list of dict
    T : float
        Initial temperature, K.
    p, rho : float or None
        Initial pressure (Pa) or molar density (mol/m^3); a run matches on
        whichever is given.
    r : float
        Volume ratio.

    Examples
    --------
    >>> runs = [{"temperature_K": 300.0, "volume_ratio": 2.0, "pressure_Pa": 1e6,
    ...          "density_mol_m3": 400.0, "delta_T_K": -1.0}]
    >>> match_run(runs, 300.0, 1e6, None, 2.0)["delta_T_K"]
    -1.0
    >>> match_run(runs, 300.0, 2e6, None, 2.0) is None
    True
    """
    for run in runs:
        if not (_same(run["temperature_K"], T) and _same(run["volume_ratio"], r)):
            continue
        if (p is not None and _same(run["pressure_Pa"], p)) or \
                (rho is not None and _same(run["density_mol_m3"], rho)):
            return run
    return None


@dataclasses.dataclass
class RowPredictions:
    """The prediction of every measured row from its best source (arrays shape=(n,)).

    Attributes
    ----------
    delta_T_K : ndarray
        Predicted Delta T, K; NaN where no source applies.
    stderr_K : ndarray
        Its standard error, K (0 for the virial route, which has no
        statistical error).
    delta_T_B2_K : ndarray
        The B2-only virial prediction, K; NaN where the virial route fails.
    route : list of str
        Where each prediction came from ("" where none).
    notes : list of list of str
        Per row, what the reader should know (a fallback, a failure).
    table : tuple of ndarray or None
        ``(delta_T_K, stderr_K, ok)`` through the table at the study's
        parameters, when a table was given.
    """

    delta_T_K: np.ndarray
    stderr_K: np.ndarray
    delta_T_B2_K: np.ndarray
    route: list
    notes: list
    table: tuple | None = None

    @property
    def used(self):
        """Rows with a prediction (they enter chi-square)."""
        return np.isfinite(self.delta_T_K)


def predict_rows(study, data, runs=(), predictor=None, theta=None):
    """Predict every measurement from the first source that applies.

    Parameters
    ----------
    study : Study
    data : ExpansionData
    runs : list of dict
        Finished simulations (:func:`run_predictions`); first choice.
    predictor : TablePredictor, optional
        The corresponding-states table; second choice.
    theta : ndarray, optional
        The study's parameters (needed with ``predictor``).

    Returns
    -------
    RowPredictions
        The B2 + B3 virial route is the last choice; rows where it fails
        and no other source applies stay unpredicted, with a note.
    """
    from analysis.expansion import virial_expansion
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas
    cv_ig = ideal_heat_capacity(study)
    gas = virial_gas(study)
    n = len(data)
    out = RowPredictions(np.full(n, np.nan), np.zeros(n), np.full(n, np.nan), [""] * n,
                         [[] for _ in range(n)])
    if predictor is not None:
        out.table = predictor.delta_T(theta, data.temperature_K, data.volume_ratio,
                                      data.pressure_Pa, data.density_mol_m3)
    for k in range(n):
        T, p, rho, r = data.state(k)
        try:
            res = virial_expansion(gas, cv_ig, T, r, p_i=p, rho_i=rho, order=3)
            out.delta_T_B2_K[k] = res.delta_T_B2_K
            virial, why = res.delta_T_K, None
        except (StudyError, ConvergenceError) as exc:
            virial, why = None, " ".join(str(exc).split())
        _choose(out, k, match_run(runs, T, p, rho, r), virial, why)
    return out


def _choose(out, k, run, virial, why):
    """Fill row k from a simulation, else the table, else the virial route (or say why not)."""
    tab = out.table
    if run is not None:
        out.delta_T_K[k], out.stderr_K[k] = run["delta_T_K"], run["stderr_K"]
        out.route[k] = f"simulation ({run['route']} route, {run['source']})"
    elif tab is not None and tab[2][k]:
        out.delta_T_K[k], out.stderr_K[k], out.route[k] = tab[0][k], tab[1][k], "table"
    elif virial is not None:
        out.delta_T_K[k], out.route[k] = virial, "virial B2+B3"
        if tab is not None:
            out.notes[k].append("outside the corresponding-states table: predicted by the "
                                "virial B2+B3 route (a fit through the table leaves it out)")
    elif tab is not None:
        out.notes[k].append(f"outside the corresponding-states table, and the virial route "
                            f"fails ({why}); give a run directory with a simulation of this "
                            "state")
    else:
        out.notes[k].append(f"not predicted: {why}; give a corresponding-states table, or a "
                            "run directory with a simulation of this state")
