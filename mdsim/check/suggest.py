"""The next experiment: which initial state would shrink the parameter uncertainty most.

One new measurement at a candidate state adds a row j = d(Delta T)/d(theta)
of weight 1/s^2 to the Fisher information of the present data;
:func:`rank_candidates` gives the ratio new / present of the confidence
region's size in closed form and :func:`suggest_experiments` ranks a grid
of candidate states (:func:`candidate_grid`) by it.

Array suffixes: ``_pp`` parameter by parameter, ``_cp`` candidate by
parameter, ``_c`` candidate experiments.
"""
import numpy as np

from mdsim.check.fit import sensitivities
from mdsim.checks import positive
from mdsim.errors import SettingError, StudyError

__all__ = ["rank_candidates", "candidate_grid", "suggest_experiments"]


def rank_candidates(fisher_pp, jac_cp, sigma_c, criterion="det"):
    """How much one new measurement at each candidate shrinks the parameter covariance.

    Parameters
    ----------
    fisher_pp : ndarray, shape=(k, k)
        Fisher information of the present data, J^T W J.
    jac_cp : ndarray, shape=(m, k)
        d(Delta T)/d(parameter) at each candidate.
    sigma_c : ndarray, shape=(m,)
        Standard uncertainty of the new measurement at each candidate, K.
    criterion : {"det", "trace"}

    Returns
    -------
    ndarray, shape=(m,)
        The ratio new / present of sqrt(det C) ("det": the area of the
        confidence region) or of trace C ("trace"); smaller is better.

    Notes
    -----
    With C = F^-1 and a new row j of weight 1/s^2, the matrix determinant
    lemma gives det(F + j j^T / s^2) = det F (1 + j^T C j / s^2), and the
    Sherman-Morrison formula tr C' = tr C - |C j|^2 / (s^2 + j^T C j).
    """
    F = np.asarray(fisher_pp, dtype=float)
    J = np.atleast_2d(np.asarray(jac_cp, dtype=float))
    s2 = np.asarray(sigma_c, dtype=float) ** 2
    try:
        C = np.linalg.inv(F)
    except np.linalg.LinAlgError:
        raise StudyError("suggestions need the present data to determine the parameters "
                         "(singular Fisher information); add measurements") from None
    CJ = J @ C  # rows C j (C symmetric)
    q = np.einsum("ck,ck->c", CJ, J)
    if criterion == "det":
        return 1.0 / np.sqrt(1.0 + q / s2)
    if criterion == "trace":
        return (np.trace(C) - np.einsum("ck,ck->c", CJ, CJ) / (s2 + q)) / np.trace(C)
    raise SettingError("suggest.criterion", criterion, "allowed 'det' (area of the confidence "
                       "region) or 'trace' (sum of the parameter variances)")


def candidate_grid(temperature_K, pressure_Pa, volume_ratio, n_temperatures=7, n_pressures=7,
                   n_ratios=4):
    """Candidate initial states: (T, p, r) arrays over the given ranges (lo, hi) each."""
    Ts = np.linspace(*temperature_K, n_temperatures) if temperature_K[1] > temperature_K[0] \
        else np.array([temperature_K[0]])
    ps = np.geomspace(*pressure_Pa, n_pressures) if pressure_Pa[1] > pressure_Pa[0] \
        else np.array([pressure_Pa[0]])
    rs = np.linspace(*volume_ratio, n_ratios) if volume_ratio[1] > volume_ratio[0] \
        else np.array([volume_ratio[0]])
    T, p, r = (a.ravel() for a in np.meshgrid(Ts, ps, rs, indexing="ij"))
    return T, p, r


def suggest_experiments(model, theta, objective, temperature_K, pressure_Pa, volume_ratio,
                        uncertainty_K, criterion="det", count=5, predictor=None):
    """Rank candidate initial states for one new measurement.

    Parameters
    ----------
    model : ExpansionModel
    theta : ndarray
        Parameters at which to linearise (the fit's, or the study's).
    objective : Objective
        The present data (its Fisher information J^T J).
    temperature_K, pressure_Pa, volume_ratio : (lo, hi)
        Candidate ranges.
    uncertainty_K : float
        Standard uncertainty of the new measurement.
    criterion : {"det", "trace"}
    count : int
        How many to return.

    Returns
    -------
    dict
        ``criterion``, ``uncertainty_K``, ``ranges``, ``candidates`` (the
        best ``count``: ``temperature_K``, ``pressure_Pa``, ``volume_ratio``,
        ``predicted_delta_T_K``, ``d_delta_T_d_epsilon_K_per_K``,
        ``d_delta_T_d_sigma_K_per_angstrom``, ``shrink``), ``n_candidates``,
        ``n_skipped`` (the virial series does not hold there).
    """
    for name, (lo, hi), low in (("temperature_K", temperature_K, 0.0),
                                ("pressure_Pa", pressure_Pa, 0.0),
                                ("volume_ratio", volume_ratio, 1.0)):
        if not (lo > low and hi >= lo):
            raise SettingError(f"suggest.{name}", f"({lo:g}, {hi:g})",
                               f"need {low:g} < low <= high")
    uncertainty_K = positive("suggest.uncertainty_K", uncertainty_K, "in K, for example 0.05")
    T, p, r = candidate_grid(temperature_K, pressure_Pa, volume_ratio)
    dT, conv = model.delta_T(theta, T, r, p_Pa=p)
    keep = conv
    if predictor is not None:
        dT, err, ok = predictor.delta_T(theta, T, r, p_Pa=p)
        keep = ok
        sig = np.sqrt(uncertainty_K ** 2 + np.nan_to_num(err) ** 2)
    else:
        sig = np.full(T.size, float(uncertainty_K))
    if not np.any(keep):
        raise SettingError("suggest", None, "no candidate state in the given ranges can be "
                           "predicted (the B2 + B3 series does not hold at any); lower the "
                           "pressure range or predict through a corresponding-states table")
    T, p, r, dT, sig = T[keep], p[keep], r[keep], dT[keep], sig[keep]
    J = sensitivities(model, theta, T, r, p_Pa=p, predictor=predictor)
    Jd = objective.jacobian(theta)
    shrink = rank_candidates(Jd.T @ Jd, J, sig, criterion)
    cands = [{"temperature_K": float(T[c]), "pressure_Pa": float(p[c]),
              "volume_ratio": float(r[c]), "predicted_delta_T_K": float(dT[c]),
              "d_delta_T_d_epsilon_K_per_K": float(J[c, 0]),
              "d_delta_T_d_sigma_K_per_angstrom": float(J[c, 1]), "shrink": float(shrink[c])}
             for c in np.argsort(shrink)[:count]]
    return {"criterion": criterion, "uncertainty_K": float(uncertainty_K),
            "ranges": {"temperature_K": list(temperature_K), "pressure_Pa": list(pressure_Pa),
                       "volume_ratio": list(volume_ratio)},
            "parameters": {n: float(v) for n, v in zip(model.names, theta)},
            "n_candidates": int(keep.size), "n_skipped": int(keep.size - keep.sum()),
            "candidates": cands,
            "meaning": ("shrink: new / present " + ("sqrt(det) of the parameter covariance "
                        "(the area of the confidence region)" if criterion == "det" else
                        "trace of the parameter covariance") + " after one more measurement "
                        "there; smaller is better")}
