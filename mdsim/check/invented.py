"""Invented measurements: a model's Delta T at chosen parameters plus Gaussian noise.

Used by the fit's tests and demonstrations, where the true parameters are
known and a fit must recover them within its stated uncertainty.
"""
import numpy as np

__all__ = ["invented_measurements"]


def invented_measurements(model, theta_true, T_K, p_Pa, volume_ratio, uncertainty_K, seed):
    """Pseudo-measurements: the model's Delta T at ``theta_true`` plus Gaussian noise.

    Parameters
    ----------
    model : ExpansionModel
    theta_true : array_like
    T_K, p_Pa, volume_ratio, uncertainty_K : array_like, shape=(n,)
    seed : int
        numpy Generator seed.

    Returns
    -------
    list of dict
        ``temperature_K``, ``pressure_Pa``, ``volume_ratio``, ``delta_T_K``,
        ``delta_T_uncertainty_K``, ``true_delta_T_K`` (rows where the
        B2 + B3 series does not hold are dropped).
    """
    T, p, r = (np.asarray(a, dtype=float) for a in (T_K, p_Pa, volume_ratio))
    u = np.broadcast_to(np.asarray(uncertainty_K, dtype=float), T.shape)
    dT, conv = model.delta_T(np.asarray(theta_true, dtype=float), T, r, p_Pa=p)
    rng = np.random.default_rng(seed)
    noise = rng.normal(size=T.size) * u
    return [{"temperature_K": float(T[k]), "pressure_Pa": float(p[k]),
             "volume_ratio": float(r[k]), "delta_T_K": float(dT[k] + noise[k]),
             "delta_T_uncertainty_K": float(u[k]), "true_delta_T_K": float(dT[k])}
            for k in range(T.size) if conv[k]]
