"""The posterior of the potential's parameters, sampled with emcee.

Flat priors inside the fit's bounds and the Gaussian likelihood
exp(-chi^2 / 2) of the fit's weighted residuals; the walkers start in a
Gaussian ball of the fit's covariance.  emcee is an optional dependency
(the ``fit`` extra).
"""
import numpy as np

from mdsim.errors import SettingError

__all__ = ["sample_posterior"]


def sample_posterior(objective, fit, bounds, n_walkers=16, n_steps=600, burn=200, seed=1):
    """MCMC posterior of the parameters with emcee (flat priors inside ``bounds``).

    Parameters
    ----------
    objective : Objective
        Its chi-square gives the log-likelihood -chi^2 / 2.
    fit : dict
        From :func:`mdsim.check.fit.fit_parameters` (``theta``, ``covariance``).
    bounds : (ndarray, ndarray)
        Lower and upper parameter bounds, shape=(k,) each.
    n_walkers : int
        Walkers (raised to at least 2 k + 2, emcee's minimum with margin).
    n_steps, burn : int
        Steps per walker, of which the first ``burn`` are discarded.
    seed : int
        Seeds the start and emcee's own random state (repeatable chains).

    Returns
    -------
    dict
        ``names``-free arrays: ``chain`` (ndarray, shape=(n_kept, k)),
        ``mean``, ``std``, ``quantiles`` (16, 50, 84 %), ``acceptance``,
        ``n_walkers``, ``n_steps``, ``burn``, ``seed``.
    """
    try:
        import emcee
    except ImportError:
        raise SettingError("posterior", None, "needs the emcee package: install the 'fit' "
                           "extra (python -m pip install -e '.[fit]')") from None
    if n_steps <= burn:
        raise SettingError("posterior.steps", n_steps, f"must exceed the {burn} burn-in steps")
    lo, hi = bounds
    theta0 = fit["theta"]
    k = theta0.size
    n_walkers = max(n_walkers, 2 * k + 2)

    def log_prob(theta):
        if np.any(theta <= lo) or np.any(theta >= hi):
            return -np.inf
        return -0.5 * objective.chi2(theta)

    rng = np.random.default_rng(seed)
    start = rng.multivariate_normal(theta0, fit["covariance"], size=n_walkers)
    start = np.clip(start, lo + 1e-6 * np.abs(lo), hi - 1e-6 * np.abs(hi))
    sampler = emcee.EnsembleSampler(n_walkers, k, log_prob)
    # emcee draws from its own RandomState; seed it so that a posterior can be repeated
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(start, n_steps, progress=False)
    chain = sampler.get_chain(discard=burn, flat=True)
    return {"chain": chain, "mean": chain.mean(axis=0), "std": chain.std(axis=0, ddof=1),
            "quantiles": np.percentile(chain, [16, 50, 84], axis=0),
            "acceptance": float(np.mean(sampler.acceptance_fraction)),
            "n_walkers": n_walkers, "n_steps": n_steps, "burn": burn, "seed": seed}
