"""Chi-square statistics of z-scores and the verdict sentence of a check.

Per row the residual is measured minus predicted, the z-score
residual / sqrt(u_meas^2 + u_pred^2), and chi-square the sum of z^2 with as
many degrees of freedom as rows used (no parameter is adjusted by a check;
a fit subtracts its parameter count).  The p-value is the chi-square
survival function (scipy.stats.chi2.sf).
"""
import numpy as np

from mdsim.errors import SettingError, StudyError

__all__ = ["chi2_test", "verdict_sentence", "DEFAULT_LEVEL"]

DEFAULT_LEVEL = 0.05


def chi2_test(z_n, n_params=0, level=DEFAULT_LEVEL):
    """Chi-square of z-scores, its degrees of freedom and p-value.

    Parameters
    ----------
    z_n : array_like, shape=(n,)
        (measured - predicted) / combined standard uncertainty.
    n_params : int
        Parameters adjusted to these data (0 for a check).
    level : float
        Significance level of the verdict, in (0, 1).

    Returns
    -------
    dict
        ``chi2``, ``dof``, ``chi2_per_dof``, ``p_value`` (probability of a
        chi-square at least this large if the model is right,
        ``scipy.stats.chi2.sf``), ``level``, ``consistent`` (p >= level).

    Examples
    --------
    >>> out = chi2_test([1.0, -1.0, 0.5])
    >>> out["chi2"], out["dof"], out["consistent"]
    (2.25, 3, True)
    """
    from scipy.stats import chi2 as chi2_dist
    if not (0.0 < level < 1.0):
        raise SettingError("level", level, "must lie between 0 and 1 (for example 0.05 for "
                           "the 5 % level)")
    z = np.asarray(z_n, dtype=float)
    dof = int(z.size - n_params)
    if dof < 1:
        raise StudyError(f"{z.size} usable measurement(s) for {n_params} parameter(s): at least "
                         f"{n_params + 1} are needed for a chi-square test; add measurements")
    c2 = float(np.sum(z * z))
    p = float(chi2_dist.sf(c2, dof))
    return {"chi2": c2, "dof": dof, "chi2_per_dof": c2 / dof, "p_value": p, "level": level,
            "consistent": bool(p >= level)}


def verdict_sentence(stats, what, n_rows, data_name, route_text):
    """One sentence a researcher can paste.

    Parameters
    ----------
    stats : dict
        From :func:`chi2_test`.
    what : str
        The subject ("The lennard-jones parameters ..."); one ending in
        "fit" takes "is", others "are".
    n_rows : int
        Measurements compared.
    data_name : str
        The data file(s), quoted.
    route_text : str
        Where the predictions came from.
    """
    word = "consistent" if stats["consistent"] else "inconsistent"
    return (f"{what} {'is' if what.endswith('fit') else 'are'} {word} with the {n_rows} "
            f"free-expansion measurements of {data_name} at the {stats['level']:.0%} level: "
            f"chi-square = {stats['chi2']:.4g} for {stats['dof']} degrees of freedom "
            f"(chi-square per degree of freedom {stats['chi2_per_dof']:.3g}, "
            f"p = {stats['p_value']:.2g}), with predictions from {route_text}.")
