"""The whole check: predict every measurement, compare, and optionally fit, sample and suggest.

:func:`run_check` strings the steps together: it checks the options, predicts
each row from its best source (:func:`mdsim.check.predictors.predict_rows`),
computes the z-scores, chi-square and the verdict
(:mod:`mdsim.check.statistics`), checks second-virial data apart, fits the
parameters (:mod:`mdsim.check.fit`), samples their posterior
(:mod:`mdsim.check.posterior`) and ranks candidate next experiments
(:mod:`mdsim.check.suggest`).  Sensitivities, fits, posteriors and
suggestions use the fast model of :mod:`mdsim.check.model`.
"""
import numpy as np

from analysis.results import to_plain
from mdsim.check.fit import Objective, fit_parameters, sensitivities
from mdsim.check.model import model_for_study
from mdsim.check.posterior import sample_posterior
from mdsim.check.predictors import TablePredictor, predict_rows, run_predictions
from mdsim.check.statistics import DEFAULT_LEVEL, chi2_test, verdict_sentence
from mdsim.check.suggest import suggest_experiments
from mdsim.errors import SettingError, StudyError

__all__ = ["run_check"]

STDERR_BASIS = ("stderr: from (J^T W J)^-1 with the stated measurement uncertainties taken as "
                "correct (not rescaled), so a poor fit shows in chi2/dof instead of being "
                "absorbed; stderr_scaled multiplies by sqrt(chi2/dof) for readers who prefer that")


def run_check(study, data, virial_data=None, table=None, runs_dir=None, fit=False,
              fit_shape=False, posterior=None, suggest=None, level=DEFAULT_LEVEL):
    """Check a study's potential against measurements; optionally fit, sample, suggest.

    Parameters
    ----------
    study : Study
    data : ExpansionData
    virial_data : VirialData, optional
        Second-virial measurements: checked apart, and fitted jointly.
    table : CorrespondingStatesTable, optional
        Predict (and fit) through the table instead of the virial route.
    runs_dir : str or Path or list of them, optional
        Run directories whose finished simulations are reused for the
        check where they hold a measured state point.
    fit, fit_shape : bool
    posterior : dict, optional
        ``{"steps": int, "walkers": int, "seed": int}`` to sample the
        posterior with emcee (needs ``fit``).
    suggest : dict, optional
        ``temperature_K``, ``pressure_Pa``, ``volume_ratio`` as (lo, hi) or
        None (the data's range), ``uncertainty_K`` or None (the median
        measurement uncertainty), ``criterion``, ``count``.
    level : float
        Significance level of the verdicts.

    Returns
    -------
    dict
        JSON-ready apart from the keys ``_fit`` and ``_posterior_chain``
        (ndarrays), see :mod:`mdsim.cli.cmd_check` for the layout.

    Raises
    ------
    SettingError
        Naming the argument (``posterior``, ``fit_shape``, ``table``,
        ``runs_dir``, ``level``, ``suggest.*``) that cannot be used.
    """
    _check_options(fit, fit_shape, posterior)
    notes = []
    model, theta0 = _model(study, fit_shape, fit or suggest is not None or table is not None,
                           notes)
    predictor = None
    if table is not None:
        predictor = TablePredictor(table, model, float(study.gas.molar_masses_kg_mol[0]))
    runs_dirs = _as_list(runs_dir)
    runs = [run for d in runs_dirs for run in run_predictions(d, study)]
    preds = predict_rows(study, data, runs, predictor, theta0)
    files = {"virial_data_file": str(virial_data.path) if virial_data is not None else None,
             "table_file": (str(getattr(table, "path", "")) or None) if table is not None
             else None,
             "runs_dir": [str(d) for d in runs_dirs] if runs_dirs else None}
    out = _check_result(study, data, files, preds, model, theta0, predictor, level, notes)
    if virial_data is not None:
        out["second_virial"] = _second_virial(study, virial_data, _subject(study), level)
    objective = fit_result = None
    if fit:
        objective, fit_result = _fit(out, data, virial_data, model, theta0, predictor, preds,
                                     level, posterior)
    if suggest is not None:
        if objective is None:
            objective, _ = _data_objective(model, theta0, data, virial_data, predictor, preds)
        theta = fit_result["theta"] if fit_result is not None else theta0
        out["suggestions"] = _suggestions(suggest, data, model, theta, objective, predictor)
        out["suggestions"]["at"] = ("fitted parameters" if fit_result is not None
                                    else "the study's parameters")
    return out


# -- the options and the model --------------------------------------------------------------

def _check_options(fit, fit_shape, posterior):
    if posterior and not fit:
        raise SettingError("posterior", None, "needs the fit ('fit'): the posterior starts "
                           "from the fitted parameters")
    if fit_shape and not fit:
        raise SettingError("fit_shape", None, "needs the fit ('fit')")


def _model(study, fit_shape, needed, notes):
    """(ExpansionModel, start parameters) of the study, or (None, None) with a note."""
    try:
        return model_for_study(study, fit_shape=fit_shape)
    except StudyError as exc:
        if needed:
            raise
        notes.append(f"sensitivities not computed: {' '.join(str(exc).split())}")
        return None, None


def _as_list(runs_dir):
    if runs_dir is None:
        return []
    if isinstance(runs_dir, (list, tuple)):
        return list(runs_dir)
    return [runs_dir]


def _subject(study):
    """"The <form> parameters epsilon/k = ..., sigma = ... (gas)" for the verdicts."""
    pot = study.gas.pairs_K_angstrom.pots[0][0]
    return (f"The {pot.describe()['form']} parameters epsilon/k = {pot.epsilon:.5g} K, sigma = "
            f"{pot.sigma:.5g} angstrom" + (f" ({study.gas.name})" if study.gas.name else ""))


# -- the check at the study's parameters ----------------------------------------------------

def _check_result(study, data, files, preds, model, theta0, predictor, level, notes):
    """The result's head: the files, rows, chi-square, verdict and notes of the check."""
    used = preds.used
    n = len(data)
    sigma = np.sqrt(data.delta_T_uncertainty_K ** 2 + preds.stderr_K ** 2)
    resid = data.delta_T_K - preds.delta_T_K
    z = resid / sigma
    sens = None
    if model is not None:
        sens = sensitivities(model, theta0, data.temperature_K, data.volume_ratio,
                             data.pressure_Pa, data.density_mol_m3, predictor=predictor)
    routes_used = sorted({preds.route[k] for k in range(n) if used[k]})
    route_text = "; ".join(routes_used) if routes_used else "no route"
    stats = None
    if used.any():
        stats = chi2_test(z[used], 0, level)
        verdict = verdict_sentence(stats, _subject(study), int(used.sum()),
                                   f"'{data.path.name}'", route_text)
    else:
        verdict = ("No measurement could be predicted (the B2 + B3 series does not hold at any "
                   "of them): give a corresponding-states table or run directories with "
                   "simulations of these states.")
    if (~used).any():
        notes.append(f"{int((~used).sum())} row(s) not predicted and left out of chi-square: "
                     "lines " + ", ".join(str(int(data.line_n[k])) for k in range(n) if not used[k]))
    notes.append("prediction uncertainty: 0 for the virial route (it has no statistical error; "
                 "its truncation shows in the B2-only column), the standard error for table and "
                 "simulation routes; z combines it with the measurement's in quadrature")
    pot = study.gas.pairs_K_angstrom.pots[0][0]
    return {"study": study.name, "study_file": str(study.path), "data_file": str(data.path),
            **files,
            "potential": dict(pot.describe(), epsilon_K=pot.epsilon, sigma_angstrom=pot.sigma),
            "potential_source": study.raw.get("potential", {}).get("source", ""),
            "level": level, "rows": _rows(data, preds, resid, z, sens), "check": stats,
            "verdict": verdict, "notes": notes, "check_points_used": int(used.sum())}


def _rows(data, preds, resid, z, sens):
    """One JSON-ready record per measurement."""
    rows = []
    used = preds.used
    for k in range(len(data)):
        T, p, rho, r = data.state(k)
        rows.append({
            "line": int(data.line_n[k]), "label": data.labels[k],
            "initial_temperature_K": T, "initial_pressure_Pa": p,
            "initial_density_mol_m3": rho, "volume_ratio": r,
            "measured_delta_T_K": float(data.delta_T_K[k]),
            "measured_uncertainty_K": float(data.delta_T_uncertainty_K[k]),
            "predicted_delta_T_K": to_plain(preds.delta_T_K[k]),
            "prediction_stderr_K": to_plain(preds.stderr_K[k]) if used[k] else None,
            "route": preds.route[k] or None,
            "predicted_delta_T_B2_only_K": to_plain(preds.delta_T_B2_K[k]),
            "residual_K": to_plain(resid[k]), "z": to_plain(z[k]), "used": bool(used[k]),
            "d_delta_T_d_epsilon_K_per_K": to_plain(sens[k, 0]) if sens is not None else None,
            "d_delta_T_d_sigma_K_per_angstrom": (to_plain(sens[k, 1]) if sens is not None
                                                 else None),
            "notes": preds.notes[k]})
    return rows


def _second_virial(study, virial_data, what, level):
    """The check of second-virial measurements against B2 of the study's potential."""
    from mdsim.study.statepoints import virial_gas
    B = np.asarray(virial_gas(study).B(virial_data.temperature_K), dtype=float)
    zb = (virial_data.B_m3_mol - B) / virial_data.B_uncertainty_m3_mol
    sb = chi2_test(zb, 0, level)
    return {
        "rows": [{"line": int(virial_data.line_n[k]),
                  "temperature_K": float(virial_data.temperature_K[k]),
                  "measured_B_m3_mol": float(virial_data.B_m3_mol[k]),
                  "uncertainty_m3_mol": float(virial_data.B_uncertainty_m3_mol[k]),
                  "predicted_B_m3_mol": float(B[k]), "z": float(zb[k])}
                 for k in range(len(virial_data))],
        "check": sb,
        "verdict": verdict_sentence(sb, what, len(virial_data), f"'{virial_data.path.name}'",
                                    "B2 of the potential")
        .replace("free-expansion", "second-virial")}


# -- the fit and the posterior ---------------------------------------------------------------

def _data_objective(model, theta0, data, virial_data, predictor, preds):
    """(Objective, expansion rows used) of the data the model can predict at ``theta0``."""
    if predictor is not None:
        ok = preds.table[2]
        use_rows = np.flatnonzero(ok)
        return Objective(model, data, use_rows, virial_data, predictor,
                         preds.table[1][ok]), use_rows
    _, conv = model.delta_T(theta0, data.temperature_K, data.volume_ratio, data.pressure_Pa,
                            data.density_mol_m3)
    use_rows = np.flatnonzero(conv)
    return Objective(model, data, use_rows, virial_data), use_rows


def _fit(out, data, virial_data, model, theta0, predictor, preds, level, posterior):
    """Fit the parameters; add ``fit``, ``_fit`` (and the posterior) to ``out``.

    Returns the objective at the fit and the fit (:func:`fit_parameters`).
    """
    objective, use_rows = _data_objective(model, theta0, data, virial_data, predictor, preds)
    T = data.temperature_K
    bounds = model.bounds(np.concatenate([T, virial_data.temperature_K])
                          if virial_data is not None else T)
    fit_result = fit_parameters(objective, theta0, bounds, level)
    if predictor is not None:
        # the table's standard errors belong in the weights at the fitted parameters
        _, err, ok2 = predictor.delta_T(fit_result["theta"], objective.T, objective.r,
                                        objective.p, objective.rho)
        objective = Objective(model, data, use_rows, virial_data, predictor,
                              np.where(ok2, err, 0.0))
        fit_result = fit_parameters(objective, fit_result["theta"], bounds, level)
    th = fit_result["theta"]
    pred_fit = objective.predict(th)
    for j, k in enumerate(use_rows):
        out["rows"][k]["fit_predicted_delta_T_K"] = to_plain(pred_fit[j])
        out["rows"][k]["fit_z"] = to_plain((data.delta_T_K[k] - pred_fit[j]) / objective.sigma[j])
    out["fit"] = _fit_record(model, data, virial_data, predictor, theta0, objective, use_rows,
                             fit_result)
    out["_fit"] = {"theta": th, "covariance": fit_result["covariance"], "start": theta0,
                   "names": model.names}
    if posterior:
        out["posterior"], out["_posterior_chain"] = _posterior(objective, fit_result, bounds,
                                                               posterior, model.names)
    return objective, fit_result


def _fit_record(model, data, virial_data, predictor, theta0, objective, use_rows, fit_result):
    """The JSON-ready ``fit`` entry of the result."""
    th, names, st = fit_result["theta"], model.names, fit_result["stats"]
    if predictor is None:
        _, conv_best = model.delta_T(th, objective.T, objective.r, objective.p, objective.rho)
    else:
        conv_best = np.ones(use_rows.size, dtype=bool)
    record = {name: {"value": float(th[j]), "stderr": float(fit_result["stderr"][j]),
                     "stderr_scaled": float(fit_result["stderr_scaled"][j])}
              for j, name in enumerate(names)}
    data_names = f"'{data.path.name}'" + (f" and '{virial_data.path.name}'" if virial_data
                                          else "")
    record.update({
        "correlation": float(fit_result["correlation"][0, 1]),
        "correlation_matrix": fit_result["correlation"].tolist(),
        "covariance": fit_result["covariance"].tolist(),
        "parameters": list(names),
        "chi2": st["chi2"], "dof": st["dof"], "chi2_per_dof": st["chi2_per_dof"],
        "p_value": st["p_value"],
        "points_used": objective.n_points,
        "points_used_by_kind": {"expansion": int(use_rows.size),
                                "second_virial": len(virial_data) if virial_data else 0},
        "start": {n_: float(v) for n_, v in zip(names, theta0)},
        "route": "table" if predictor is not None else "virial B2+B3",
        "stderr_basis": STDERR_BASIS,
        "form": model.form if not model.fit_shape else "mie (n-6, n fitted)",
        "rows_where_series_fails_at_best_fit": [int(data.line_n[k]) for j, k in
                                                enumerate(use_rows) if not conv_best[j]],
        "verdict": verdict_sentence(
            st, "The fitted " + _potential_text(model.form, th, names), objective.n_points,
            data_names, "virial B2+B3" if predictor is None else "the table")
        .replace(" free-expansion measurements", " measurements")})
    return record


def _potential_text(form, theta, names):
    parts = []
    for n, v in zip(names, theta):
        if n == "epsilon_K":
            parts.append(f"epsilon/k = {v:.5g} K")
        elif n == "sigma_angstrom":
            parts.append(f"sigma = {v:.5g} angstrom")
        else:
            parts.append(f"repulsive exponent = {v:.4g}")
    return f"{form} " + ", ".join(parts)


def _posterior(objective, fit_result, bounds, posterior, names):
    """(JSON-ready summary, chain) of the emcee posterior."""
    post = sample_posterior(objective, fit_result, bounds,
                            n_walkers=posterior.get("walkers", 16),
                            n_steps=posterior.get("steps", 600),
                            burn=posterior.get("burn", 200),
                            seed=posterior.get("seed", 1))
    summary = {"parameters": list(names), "mean": post["mean"].tolist(),
               "std": post["std"].tolist(),
               "quantiles_16_50_84": post["quantiles"].tolist(),
               "acceptance": post["acceptance"], "walkers": post["n_walkers"],
               "steps": post["n_steps"], "burn_in": post["burn"], "seed": post["seed"],
               "prior": "flat inside the fit bounds", "sampler": "emcee EnsembleSampler"}
    return summary, post["chain"]


# -- suggestions --------------------------------------------------------------------------------

def _suggestions(suggest, data, model, theta, objective, predictor):
    """Rank candidate next experiments over the given ranges (or the data's)."""
    T_rng = suggest.get("temperature_K") or (float(data.temperature_K.min()),
                                             float(data.temperature_K.max()))
    if suggest.get("pressure_Pa"):
        p_rng = suggest["pressure_Pa"]
    elif data.pressure_Pa is not None:
        p_rng = (float(data.pressure_Pa.min()), float(data.pressure_Pa.max()))
    else:
        raise SettingError("suggest.pressure_Pa", None, "the data give densities, so the "
                           "candidate initial pressures (LOW, HIGH) must be given")
    r_rng = suggest.get("volume_ratio") or (float(data.volume_ratio.min()),
                                            float(data.volume_ratio.max()))
    u_new = suggest.get("uncertainty_K") or float(np.median(data.delta_T_uncertainty_K))
    return suggest_experiments(model, theta, objective, T_rng, p_rng, r_rng, u_new,
                               criterion=suggest.get("criterion", "det"),
                               count=suggest.get("count", 5), predictor=predictor)
