"""The figures of a run report, drawn with matplotlib and saved as PNG and PDF.

Every function takes plain numbers and arrays (prepared by
:mod:`mdsim.pipeline.plot_data`), draws one figure and writes ``STEM.png`` and
``STEM.pdf``; it returns the two paths.  Figures are built on
:class:`matplotlib.figure.Figure` with an explicit Agg canvas, so nothing
here touches pyplot or the global matplotlib backend (no side effects on
import or on call).

Array suffixes: ``_t`` one value per recorded time, ``_z`` one value per
bin along the expanded axis, ``_tz`` time by bin, ``_g`` a grid of curve
points.
"""
from pathlib import Path

import numpy as np

from mdsim.numbers import value_with_error

__all__ = ["figure", "save", "plot_delta_T", "plot_energy_route", "plot_direct", "plot_series",
           "plot_inversion", "ROUTE_STYLE"]

# route -> (legend label, colour, marker); the one place a route gets its looks
ROUTE_STYLE = {
    "virial_b2": ("virial, B2 only", "tab:gray", "s"),
    "virial_b2b3": ("virial, B2 + B3", "tab:blue", "D"),
    "energy": ("energy route (NVT + Newton steps)", "tab:red", "o"),
    "microcanonical": ("microcanonical MC at V_f", "tab:green", "^"),
    "direct": ("direct route (NVE MD)", "tab:purple", "v"),
}

DPI = 130


def figure(width_in=6.4, height_in=4.4, nrows=1, ncols=1, **kw):
    """A Figure on its own Agg canvas (pyplot's global state is never used).

    Parameters
    ----------
    width_in, height_in : float
        Size, inches.
    nrows, ncols : int
        The grid of axes.
    **kw
        Passed to :meth:`matplotlib.figure.Figure.subplots` (``sharex``, ...).

    Returns
    -------
    fig : matplotlib.figure.Figure
    axes : ndarray of Axes, shape=(nrows, ncols)
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(nrows, ncols, squeeze=False, **kw)
    return fig, axes


def save(fig, stem):
    """Write ``STEM.png`` and ``STEM.pdf`` (making the folder); returns the two paths."""
    stem = Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    paths = []
    for ext in ("png", "pdf"):
        path = stem.with_suffix(f".{ext}")
        fig.savefig(path, dpi=DPI, metadata=None if ext == "png" else {"Creator": "mdsim"})
        paths.append(path)
    return paths


def plot_delta_T(panels, stem):
    """Delta T against the initial pressure (or density), one panel per (T_i, r).

    Parameters
    ----------
    panels : list of dict
        Each with ``title`` (str), ``x_label`` (str), ``points``: {route:
        (x, value_K, stderr_K)} with arrays of equal length (stderr NaN or 0
        where there is none), ``curves``: {"virial_b2" | "virial_b2b3":
        (x_g, delta_T_g_K)} (NaN where the series does not hold), and
        optionally ``residuals``: {"virial_b2" | "virial_b2b3": (x, diff_K,
        stderr_K)}, the virial Delta T minus the simulation's, with the
        simulation's standard error, drawn in a panel below.
    stem : str or Path
        Output path without suffix.

    Returns
    -------
    list of Path
        The PNG and the PDF.
    """
    n = max(1, len(panels))
    ncols = min(n, 2)
    nrows = (n + ncols - 1) // ncols
    fig, axes = figure(6.4 * ncols if ncols > 1 else 6.8, 6.0 * nrows, 2 * nrows, ncols,
                        height_ratios=[3.0, 1.5] * nrows)
    for k in range(nrows * ncols):
        ax, ax_res = axes[2 * (k // ncols), k % ncols], axes[2 * (k // ncols) + 1, k % ncols]
        if k >= len(panels):
            ax.set_visible(False)
            ax_res.set_visible(False)
            continue
        panel = panels[k]
        x_max = 0.0
        for route, (x_g, y_g) in panel.get("curves", {}).items():
            label, colour, _ = ROUTE_STYLE[route]
            ls = "--" if route == "virial_b2" else "-"
            ax.plot(x_g, y_g, ls, color=colour, lw=1.4, label=f"{label} (curve)")
            x_max = max(x_max, float(np.max(x_g)))
        for route, (x, y, yerr) in panel.get("points", {}).items():
            label, colour, marker = ROUTE_STYLE[route]
            x, y = np.asarray(x, float), np.asarray(y, float)
            x_max = max(x_max, float(np.max(x)))
            if route.startswith("virial"):
                ax.plot(x, y, marker, color=colour, mfc="none", ms=6, ls="none")
                continue
            err = np.nan_to_num(np.asarray(yerr, float), nan=0.0)
            ax.errorbar(x, y, yerr=err, fmt=marker, color=colour, ms=6, capsize=4, lw=1.4,
                        label=label)
        ax.axhline(0.0, color="k", lw=0.6)
        ax.set_ylabel("ΔT = T_f − T_i  (K)")
        ax.set_title(panel["title"], fontsize=10)
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, loc="best")
        residuals = panel.get("residuals") or {}
        for route, (x, d, err) in residuals.items():
            label, colour, marker = ROUTE_STYLE[route]
            ax_res.errorbar(x, d, yerr=np.nan_to_num(np.asarray(err, float), nan=0.0),
                            fmt=marker + ("--" if route == "virial_b2" else "-"), color=colour,
                            ms=5, capsize=3, lw=1.0, label=label)
        ax_res.axhline(0.0, color="k", lw=0.6)
        if residuals:
            ax_res.set_ylabel("virial − simulation (K)", fontsize=8)
            ax_res.legend(fontsize=7, loc="best")
        else:
            ax_res.text(0.5, 0.5, "no simulation route finished: no comparison",
                        transform=ax_res.transAxes, ha="center", va="center", fontsize=8)
        ax_res.grid(alpha=0.3)
        ax_res.set_xlabel(panel["x_label"])
        for a in (ax, ax_res):
            a.set_xlim(0.0, 1.03 * x_max if x_max > 0 else None)
    fig.suptitle("Free-expansion temperature change (error bars: one standard error)",
                 fontsize=11)
    return save(fig, stem)


def plot_energy_route(data, stem):
    """Residual energy against temperature at both densities, with the constant-U line.

    Parameters
    ----------
    data : dict
        ``title``; ``initial_T_K``, ``initial_u_res_J_mol``,
        ``initial_u_res_stderr_J_mol`` (arrays, the samples at rho_i);
        ``newton_T_K``, ``newton_u_res_J_mol``, ``newton_u_res_stderr_J_mol``
        (the samples at rho_f); ``T_g_K`` with ``u_res_initial_g_J_mol`` and
        ``u_res_final_g_J_mol`` (virial B2 + B3 curves, optional, NaN where
        unavailable) and ``u_res_required_g_J_mol`` (the constant-U line:
        u_res that rho_f needs at T for U_f = U_i); ``final_T_K`` and
        ``final_T_stderr_K``; ``rho_i_mol_m3``, ``rho_f_mol_m3``.
    stem : str or Path

    Returns
    -------
    list of Path
    """
    fig, axes = figure(6.8, 4.8)
    ax = axes[0, 0]
    T_g = np.asarray(data["T_g_K"], float)
    rho_i, rho_f = data["rho_i_mol_m3"], data["rho_f_mol_m3"]
    if "u_res_initial_g_J_mol" in data:
        ax.plot(T_g, data["u_res_initial_g_J_mol"], ":", color="tab:orange", lw=1.2,
                label=f"virial B2+B3 at rho_i = {rho_i:.4g} mol/m^3")
    if "u_res_final_g_J_mol" in data:
        ax.plot(T_g, data["u_res_final_g_J_mol"], ":", color="tab:red", lw=1.2,
                label=f"virial B2+B3 at rho_f = {rho_f:.4g} mol/m^3")
    ax.plot(T_g, data["u_res_required_g_J_mol"], "-", color="k", lw=1.2,
            label="constant U: u_res(T, rho_f) needed for U_f = U_i")
    ax.errorbar(data["initial_T_K"], data["initial_u_res_J_mol"],
                yerr=data["initial_u_res_stderr_J_mol"], fmt="s", color="tab:orange", ms=6,
                capsize=4, label="sampled at the initial state (T_i, rho_i)")
    ax.errorbar(data["newton_T_K"], data["newton_u_res_J_mol"],
                yerr=data["newton_u_res_stderr_J_mol"], fmt="o", color="tab:red", ms=6,
                capsize=4, label="sampled at rho_f (Newton steps)")
    T_f, s_f = data["final_T_K"], data["final_T_stderr_K"]
    if T_f is not None and np.isfinite(T_f):
        width = s_f if (s_f is not None and np.isfinite(s_f)) else 0.0
        ax.axvspan(T_f - width, T_f + width, color="tab:red", alpha=0.15, lw=0)
        ax.axvline(T_f, color="tab:red", lw=1.0,
                   label=f"T_f = {value_with_error(T_f, s_f, 'K')}")
    ax.set_xlabel("temperature T (K)")
    ax.set_ylabel("residual energy u_res (J/mol)")
    ax.set_title(data["title"], fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5, loc="best")
    return save(fig, stem)


def plot_direct(data, stem):
    """Direct route: temperature and density profile against time.

    Parameters
    ----------
    data : dict
        ``title``; ``time_s`` (shape (n_t,)); ``temperature_K_t`` (shape
        (n_t,)); ``profile_z_fraction`` (shape (n_z,), bin centres 0..1
        along the expanded axis); ``density_profile_tz`` (shape (n_p, n_z),
        mol/m^3) at the times ``profile_time_s`` (shape (n_p,); default
        ``time_s``); ``final_T_K``, ``final_T_stderr_K``, ``T_i_K``.
    stem : str or Path

    Returns
    -------
    list of Path
    """
    fig, axes = figure(6.8, 6.6, 2, 1, sharex=True)
    t_ps = np.asarray(data["time_s"], float) * 1e12
    ax = axes[0, 0]
    ax.plot(t_ps, data["temperature_K_t"], color="tab:purple", lw=1.0, label="kinetic temperature")
    ax.axhline(data["T_i_K"], color="k", ls=":", lw=1.0, label=f"T_i = {data['T_i_K']:.2f} K")
    T_f = data.get("final_T_K")
    if T_f is not None and np.isfinite(T_f):
        ax.axhline(T_f, color="tab:purple", ls="--", lw=1.0,
                   label=f"T_f = {value_with_error(T_f, data.get('final_T_stderr_K'), 'K')} "
                         "(corrected to the full potential)")
    ax.set_ylabel("temperature (K)")
    ax.set_title(data["title"], fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    ax = axes[1, 0]
    z = np.asarray(data["profile_z_fraction"], float)
    rho_tz = np.asarray(data["density_profile_tz"], float)
    tp_ps = np.asarray(data.get("profile_time_s", data["time_s"]), float) * 1e12
    mesh = ax.pcolormesh(tp_ps, z, rho_tz.T, shading="nearest", cmap="viridis")
    fig.colorbar(mesh, ax=ax, label="density (mol/m^3)")
    # each snapshot's cell is drawn around its time: keep the axis to the times sampled
    ax.set_xlim(0.0, max(float(np.max(t_ps)), float(np.max(tp_ps))))
    ax.set_xlabel("time after the box was enlarged (ps)")
    ax.set_ylabel("position along the expanded axis (fraction of the box)")
    return save(fig, stem)


def plot_series(series, title, stem, x_label="sample", x=None, final_T_K=None,
                final_T_stderr_K=None):
    """Convergence series of a route (for example the microcanonical kinetic temperature).

    Parameters
    ----------
    series : dict of str -> ndarray, shape=(n_t,)
        Name (with its unit at the end, as stored) to values; one panel each.
    title : str
    stem : str or Path
    x_label : str
    x : ndarray, shape=(n_t,), optional
        The abscissa (default 0, 1, 2, ...).
    final_T_K : float, optional
        The route's T_f, drawn on the panels whose name holds "temperature".
    final_T_stderr_K : float, optional
        Its standard error, written in the label.

    Returns
    -------
    list of Path
    """
    names = list(series)
    fig, axes = figure(6.8, 2.6 * max(1, len(names)), max(1, len(names)), 1, sharex=True)
    for ax, name in zip(axes[:, 0], names):
        y = np.asarray(series[name], float)
        xs = np.arange(y.size) if x is None or np.size(x) != y.size else np.asarray(x, float)
        ax.plot(xs, y, lw=0.8, color="tab:green")
        if final_T_K is not None and np.isfinite(final_T_K) and "temperature" in name:
            ax.axhline(final_T_K, color="k", ls="--", lw=0.9,
                       label=f"T_f = {value_with_error(final_T_K, final_T_stderr_K, 'K')}")
            ax.legend(fontsize=8, loc="best")
        ax.set_ylabel(name, fontsize=8)
        ax.grid(alpha=0.3)
    axes[0, 0].set_title(title, fontsize=10)
    axes[-1, 0].set_xlabel(x_label)
    return save(fig, stem)


def plot_inversion(data, stem):
    """The Joule (free-expansion) inversion curve with the run's states.

    Parameters
    ----------
    data : dict
        ``joule_inversion_curve``: list of {temperature_K, density_mol_m3, source} (virial
        and simulation points); ``joule_inversion_zero_density_K``;
        ``joule_thomson_inversion_zero_pressure_K``; ``states``: list of
        (rho_i, T_i, rho_f, T_f) in mol/m^3 and K (T_f may be NaN);
        ``title``.
    stem : str or Path

    Returns
    -------
    list of Path
    """
    fig, axes = figure(6.8, 4.8)
    ax = axes[0, 0]
    for source, colour, marker in (("virial", "tab:blue", "-"), ("simulation", "tab:red", "o")):
        pts = sorted((p["density_mol_m3"], p["temperature_K"])
                     for p in data["joule_inversion_curve"] if p.get("source") == source)
        if pts:
            rho, T = np.array(pts).T
            ax.plot(rho, T, marker, color=colour, lw=1.5,
                    label=f"Joule inversion curve ({source})")
    ax.plot([0.0], [data["joule_inversion_zero_density_K"]], "*", color="tab:blue", ms=11,
            clip_on=False,
            label=f"zero-density Joule inversion (max of B2): "
                  f"{value_with_error(data['joule_inversion_zero_density_K'], None, 'K')}")
    ax.plot([0.0], [data["joule_thomson_inversion_zero_pressure_K"]], "x", color="tab:gray",
            ms=9, mew=2, clip_on=False, label="Joule-Thomson (throttling) inversion at p -> 0: "
            f"{value_with_error(data['joule_thomson_inversion_zero_pressure_K'], None, 'K')} "
            "(a different process)")
    for k, (rho_i, T_i, rho_f, T_f) in enumerate(data["states"]):
        ax.plot([rho_i], [T_i], "o", color="k", ms=5, label="initial states" if k == 0 else None)
        if np.isfinite(T_f):
            ax.annotate("", xy=(rho_f, T_f), xytext=(rho_i, T_i),
                        arrowprops={"arrowstyle": "->", "color": "k", "lw": 0.8})
    ax.set_xlabel("density (mol/m^3)")
    ax.set_ylabel("temperature (K)")
    ax.set_xlim(left=0.0)
    ax.set_ylim(bottom=0.0)
    ax.set_title(data["title"], fontsize=10)
    ax.text(0.98, 0.62, "a free expansion cools the gas below the Joule curve\nand warms it above",
            transform=ax.transAxes, ha="right", fontsize=8)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7.5, loc="center right")
    return save(fig, stem)
