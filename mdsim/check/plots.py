"""Figures of ``mdsim check``: parity, residuals, the fit's confidence region, the posterior.

Each function takes the result of :func:`mdsim.check.run.run_check` (or parts of
it), draws one figure on its own Agg canvas (the helpers of
:mod:`mdsim.pipeline.plots`; pyplot is never used) and writes ``STEM.png`` and
``STEM.pdf``, returning the paths.
"""
import numpy as np

from mdsim.pipeline.plots import figure as _figure, save as _save


def _used_rows(result):
    rows = [r for r in result["rows"] if r["used"]]
    m = np.array([r["measured_delta_T_K"] for r in rows])
    u = np.array([r["measured_uncertainty_K"] for r in rows])
    p = np.array([r["predicted_delta_T_K"] for r in rows])
    s = np.array([r["prediction_stderr_K"] or 0.0 for r in rows])
    return rows, m, u, p, s


def plot_parity(result, stem):
    """Predicted against measured Delta T, with the 1:1 line (and the fit's predictions)."""
    rows, m, u, p, s = _used_rows(result)
    fig, ax = _figure(5.6, 5.0)
    ax = ax[0, 0]
    ax.errorbar(m, p, xerr=u, yerr=np.where(s > 0, s, np.nan), fmt="o", color="tab:red",
                ms=4, capsize=2, label="study parameters")
    pf = [r.get("fit_predicted_delta_T_K") for r in rows]
    if any(v is not None for v in pf):
        pf = np.array([np.nan if v is None else v for v in pf])
        ax.plot(m, pf, "s", mfc="none", color="tab:blue", ms=6, label="fitted parameters")
    lo = float(np.nanmin(np.concatenate([m, p]))) if m.size else -1.0
    hi = float(np.nanmax(np.concatenate([m, p]))) if m.size else 0.0
    pad = 0.05 * (hi - lo or 1.0)
    ax.plot([lo - pad, hi + pad], [lo - pad, hi + pad], "k-", lw=0.8, label="predicted = measured")
    ax.set_xlabel("measured Delta T [K]")
    ax.set_ylabel("predicted Delta T [K]")
    ax.set_title(f"{result['study']}: parity ({len(rows)} measurements)", fontsize=10)
    ax.legend(fontsize=8)
    return _save(fig, stem)


def plot_residuals(result, stem):
    """z-scores against the initial pressure (or density) and the initial temperature."""
    rows, m, u, p, s = _used_rows(result)
    z = np.array([r["z"] for r in rows])
    by_p = all(r["initial_pressure_Pa"] is not None for r in rows)
    x1 = np.array([r["initial_pressure_Pa"] / 1e5 if by_p else r["initial_density_mol_m3"]
                   for r in rows])
    x2 = np.array([r["initial_temperature_K"] for r in rows])
    zf = [r.get("fit_z") for r in rows]
    fig, axes = _figure(9.0, 3.8, 1, 2, sharey=True)
    for ax, x, label in ((axes[0, 0], x1, "initial pressure [bar]" if by_p
                          else "initial density [mol/m^3]"),
                         (axes[0, 1], x2, "initial temperature [K]")):
        ax.axhspan(-2, 2, color="0.9", label="|z| < 2")
        ax.axhline(0.0, color="k", lw=0.8)
        ax.plot(x, z, "o", color="tab:red", ms=4, label="study parameters")
        if any(v is not None for v in zf):
            ax.plot(x, [np.nan if v is None else v for v in zf], "s", mfc="none",
                    color="tab:blue", ms=6, label="fitted parameters")
        ax.set_xlabel(label)
    axes[0, 0].set_ylabel("z = (measured - predicted) / combined uncertainty")
    axes[0, 0].legend(fontsize=8)
    fig.suptitle(f"{result['study']}: residuals", fontsize=10)
    return _save(fig, stem)


def _ellipse(center, cov2, delta_chi2, n=200):
    w, v = np.linalg.eigh(cov2)
    t = np.linspace(0.0, 2.0 * np.pi, n)
    circle = np.stack([np.cos(t), np.sin(t)])
    pts = v @ (np.sqrt(np.maximum(w, 0.0) * delta_chi2)[:, None] * circle)
    return center[0] + pts[0], center[1] + pts[1]


def plot_confidence_region(fit, stem, delta_chi2=(2.30, 6.18), posterior_chain=None):
    """1- and 2-sigma joint regions in the (epsilon, sigma) plane, start marked.

    Parameters
    ----------
    fit : dict
        ``theta``, ``covariance``, ``start`` (arrays; the first two
        parameters are epsilon/k in K and sigma in angstrom).
    delta_chi2 : (float, float)
        Chi-square increases of the 68.3 % and 95.4 % joint regions of two
        parameters (linearised: ellipses of the covariance).
    posterior_chain : ndarray, shape=(n, k), optional
        Drawn as faint points.
    """
    th, cov, start = fit["theta"], np.asarray(fit["covariance"]), fit["start"]
    fig, ax = _figure(5.8, 4.8)
    ax = ax[0, 0]
    if posterior_chain is not None:
        ax.plot(posterior_chain[:, 0], posterior_chain[:, 1], ".", color="0.75", ms=1,
                label="posterior samples")
    for d, ls, lab in ((delta_chi2[0], "-", "1 sigma (68.3 %)"),
                       (delta_chi2[1], "--", "2 sigma (95.4 %)")):
        x, y = _ellipse(th[:2], cov[:2, :2], d)
        ax.plot(x, y, ls, color="tab:blue", label=lab)
    ax.plot(th[0], th[1], "o", color="tab:blue", label="best fit")
    ax.plot(start[0], start[1], "*", color="tab:red", ms=12, label="start (study parameters)")
    ax.set_xlabel("epsilon/k [K]")
    ax.set_ylabel("sigma [angstrom]")
    ax.set_title("joint confidence region (linearised)", fontsize=10)
    ax.legend(fontsize=8)
    return _save(fig, stem)


def plot_corner(chain, names, stem, truths=None):
    """A corner plot: histograms on the diagonal, sample clouds below it."""
    chain = np.asarray(chain)
    k = chain.shape[1]
    fig, axes = _figure(2.4 * k + 0.6, 2.4 * k + 0.6, k, k)
    for i in range(k):
        for j in range(k):
            ax = axes[i, j]
            if j > i:
                ax.set_visible(False)
                continue
            if i == j:
                ax.hist(chain[:, i], bins=40, color="tab:blue", histtype="step")
                q = np.percentile(chain[:, i], [16, 50, 84])
                for v in q:
                    ax.axvline(v, color="k", ls=":", lw=0.8)
                ax.set_yticks([])
                ax.set_title(f"{names[i]} = {q[1]:.4g} +{q[2] - q[1]:.2g} -{q[1] - q[0]:.2g}",
                             fontsize=7)
            else:
                ax.hist2d(chain[:, j], chain[:, i], bins=40, cmap="Blues")
            if truths is not None:
                ax.axvline(truths[j], color="tab:red", lw=0.8)
                if i != j:
                    ax.axhline(truths[i], color="tab:red", lw=0.8)
            if i == k - 1:
                ax.set_xlabel(names[j], fontsize=8)
            if j == 0 and i > 0:
                ax.set_ylabel(names[i], fontsize=8)
    return _save(fig, stem)
