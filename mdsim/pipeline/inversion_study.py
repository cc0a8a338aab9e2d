"""The Joule inversion of a study's gas: the virial curve, optionally checked by simulation.

Two different things, labelled apart: the Joule (free-expansion,
constant-energy) inversion curve T (dp/dT)_rho = p with its zero-density
end (the maximum of B2), and the zero-pressure Joule-Thomson (throttling,
constant-enthalpy) inversion temperature (T dB2/dT = B2).  The virial
curve runs from zero density to where the B2 + B3 series stops converging
(the third-virial term above ``VirialGas.check_converged``'s limit of Z)
unless a largest density is given.  With ``simulate`` it adds points from
NVT Monte Carlo samples on a small (T, rho) grid around the virial curve,
by the canonical fluctuation formula
(:func:`analysis.inversion.fluctuation_estimate`).
"""
import numpy as np

from mdsim.checks import count, positive
from mdsim.errors import SettingError

__all__ = ["DEFAULT_CURVE_POINTS", "SIMULATION_DEFAULTS", "default_max_density_mol_m3",
           "initial_state_record",
           "virial_inversion_curve", "simulation_grid", "sample_inversion_grid",
           "inversion_summary"]

#: Virial inversion curve: points on (0, rho_max].
DEFAULT_CURVE_POINTS = 8
#: The simulation grid by default: a small grid, a modest system (the test suite runs it).
SIMULATION_DEFAULTS = {"density_count": 2, "temperature_count": 3, "particles": 128,
                       "samples": 3000, "equilibration": 300, "spread": 0.3}

LABELS = {
    "joule_inversion_zero_density_K": "free expansion into vacuum (constant internal "
    "energy): zero-density end of the Joule inversion curve, the maximum of B2(T); "
    "above it a free expansion warms the gas",
    "joule_thomson_inversion_zero_pressure_K": "throttling through a valve (constant "
    "enthalpy), a DIFFERENT process: zero-pressure Joule-Thomson inversion, "
    "T dB2/dT = B2",
    "joule_inversion_curve": "free-expansion inversion T (dp/dT)_rho = p; below a "
    "point's temperature a free expansion at that density cools the gas",
}


def default_max_density_mol_m3(gas, temperature_K, rho_cap_mol_m3):
    """Density where the B2 + B3 series stops converging at a temperature.

    The root of z_ratio(T, rho) = limit (|C rho^2| / |1 + B rho|, the
    criterion of ``VirialGas.check_converged``) on (0, rho_cap]; rho_cap
    when the series converges all the way.

    Parameters
    ----------
    gas : analysis.virial_eos.VirialGas
    temperature_K : float
    rho_cap_mol_m3 : float
        The largest density to consider, mol/m^3.

    Returns
    -------
    float
        mol/m^3.
    """
    from analysis.virial_eos import DEFAULT_CONVERGENCE_LIMIT
    from scipy.optimize import brentq

    def excess(rho):
        return float(np.max(gas.series_convergence(temperature_K, rho)["z_ratio"])) \
            - DEFAULT_CONVERGENCE_LIMIT
    if excess(rho_cap_mol_m3) <= 0.0:
        return float(rho_cap_mol_m3)
    return float(brentq(excess, 1e-9 * rho_cap_mol_m3, rho_cap_mol_m3, xtol=1e-9 * rho_cap_mol_m3))


def _converged_max_density(gas, rho_cp):
    """The default largest density: where the series stops converging on the curve itself."""
    from analysis.inversion import joule_inversion_curve_virial, zero_density_joule_inversion_K
    # the inversion temperature falls with density, and the series converges less well
    # there: move the limit to the curve's own temperature (a fixed point, a few steps)
    T = zero_density_joule_inversion_K(gas)
    for _ in range(4):
        rho = default_max_density_mol_m3(gas, T, 0.5 * rho_cp)
        pts, _ = joule_inversion_curve_virial(gas, [rho], order=3)
        if len(pts) < 2:
            break
        T = pts[-1]["temperature_K"]
    return rho * (1.0 - 1e-6)


def virial_inversion_curve(study, max_density_mol_m3=None, points=DEFAULT_CURVE_POINTS):
    """The Joule inversion of a study's gas from its virial series.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    max_density_mol_m3 : float, optional
        The curve's largest density (default: where the B2 + B3 series
        stops converging); above 0 and at most close packing.
    points : int
        Curve points above zero density.

    Returns
    -------
    inversion : analysis.inversion.JouleInversion
        B2 + B3 curve on ``points`` densities up to ``max_density_mol_m3``,
        points where the series does not converge at their own (T, rho)
        dropped (and listed in ``notes``).
    densities_mol_m3 : ndarray, shape (points,)
    """
    from analysis.inversion import joule_inversion
    from analysis.virial_eos import DEFAULT_CONVERGENCE_LIMIT
    from mdsim.study.statepoints import virial_gas
    from mdsim.study.reader import close_packed_density_mol_m3

    points = count("points", points)
    gas = virial_gas(study)
    rho_cp = close_packed_density_mol_m3(study.gas)
    if max_density_mol_m3 is None:
        max_density_mol_m3 = _converged_max_density(gas, rho_cp)
    elif not (0.0 < max_density_mol_m3 <= rho_cp):
        raise SettingError("max_density_mol_m3", float(max_density_mol_m3),
                           f"in mol/m^3, allowed above 0 and at most close packing, "
                           f"{rho_cp:.6g} mol/m^3 for this gas")
    densities = np.linspace(max_density_mol_m3 / points, max_density_mol_m3, points)
    inv = joule_inversion(gas, densities, order=3)
    kept, dropped = [], []
    for pt in inv.joule_inversion_curve:
        if pt["density_mol_m3"] > 0.0:
            z = float(np.max(gas.series_convergence(pt["temperature_K"],
                                                    pt["density_mol_m3"])["z_ratio"]))
            if z > DEFAULT_CONVERGENCE_LIMIT * (1.0 + 1e-6):
                dropped.append(pt["density_mol_m3"])
                continue
        kept.append(pt)
    inv.joule_inversion_curve[:] = kept
    if dropped:
        inv.notes.append("virial points dropped where the B2 + B3 series does not converge at "
                         "the inversion temperature: densities "
                         + ", ".join(f"{d:.6g}" for d in dropped) + " mol/m^3")
    return inv, densities


def simulation_grid(curve, density_count, temperature_count, spread):
    """(T_K, rho_mol_m3) pairs around the virial curve to sample.

    The densities are ``density_count`` of the virial points, spread evenly
    over the curve from its densest point down (the dilute end has the
    weakest signal, T dp/dT - p ~ rho^2); at each, ``temperature_count``
    temperatures evenly from (1 - spread) to (1 + spread) times the virial
    inversion temperature.

    Returns
    -------
    list of (float, float)
        (K, mol/m^3) pairs, densities in the curve's order, temperatures rising.
    """
    pts = [p for p in curve if p["density_mol_m3"] > 0.0 and p["source"] == "virial"]
    if not pts:
        raise SettingError("max_density_mol_m3", None, "the virial curve has no point above "
                           "zero density to sample around; give a largest density")
    if temperature_count < 2:
        raise SettingError("temperature_count", temperature_count, "at least 2 are needed to "
                           "bracket the inversion")
    picks = np.unique(np.round(np.linspace(len(pts) - 1, 0, min(density_count, len(pts))
                                           + 1)[:-1]).astype(int)) if density_count < len(pts) \
        else np.arange(len(pts))
    grid = []
    for k in sorted(picks):
        T0, rho = pts[k]["temperature_K"], pts[k]["density_mol_m3"]
        for f in np.linspace(1.0 - spread, 1.0 + spread, temperature_count):
            grid.append((float(T0 * f), float(rho)))
    return grid


def sample_inversion_grid(study, grid, particles, samples, equilibration, seed, progress=None):
    """Fluctuation estimates from NVT Monte Carlo at each (T_K, rho_mol_m3).

    The energy series is ``u_trunc``, the truncated energy whose Boltzmann
    factor the Monte Carlo sampler uses; ``pressure_conf`` is the virial
    pressure of the same truncated pairs plus the analytic tail (a constant
    at fixed density, so it shifts <P_conf> and leaves the covariance).

    Parameters
    ----------
    progress : callable, optional
        ``progress(k, n, T_K, rho_mol_m3)`` before grid point k of n.

    Returns
    -------
    list of analysis.inversion.FluctuationEstimate
    """
    from analysis.inversion import fluctuation_estimate
    from mdsim.sampling.state_point import sample_state_point
    from mdsim.study.statepoints import ideal_heat_capacity
    from mdsim.units import R_GAS

    units = study.units
    cv_ig = ideal_heat_capacity(study)
    out = []
    for k, (T_K, rho) in enumerate(grid):
        if progress:
            progress(k, len(grid), T_K, rho)
        system = study.system(particles, rho, seed=seed + k)
        T_red = units.temperature_to_reduced(T_K)
        res = sample_state_point(system, "mc-nvt", T_red, n_equilibration=equilibration,
                                 n_samples=samples, interval=1, seed=[seed, k])
        est = fluctuation_estimate(res.samples["u_trunc"], res.samples["pressure_conf"],
                                   system.n_particles, T_red, system.density,
                                   cv_ig_red=float(cv_ig.cv(T_K)) / R_GAS)
        out.append(est)
    return out


def _simulated_points(study, curve, s, progress):
    """Sample the grid around the curve; return (points, densities without inversion, info)."""
    from analysis.inversion import joule_inversion_curve_samples
    seed = study.simulation.get("seed", 1) if s["seed"] is None else s["seed"]
    grid = simulation_grid(curve, s["density_count"], s["temperature_count"], s["spread"])
    estimates = sample_inversion_grid(study, grid, s["particles"], s["samples"],
                                      s["equilibration"], seed, progress)
    u = study.units
    pts, missing = joule_inversion_curve_samples(estimates, u.epsilon_K, u.sigma_m * 1e10)
    info = {"method": "mc-nvt", "particles": s["particles"], "samples": s["samples"],
            "equilibration_sweeps": s["equilibration"], "seed": seed,
            "grid": [{"temperature_K": T, "density_mol_m3": rho,
                      "joule_sign_red": est.joule_sign_red,
                      "joule_sign_stderr_red": est.joule_sign_stderr_red}
                     for (T, rho), est in zip(grid, estimates)]}
    return pts, missing, info


def _simulation_settings(simulation):
    """The grid settings: defaults, then the caller's, checked."""
    s = dict(SIMULATION_DEFAULTS, seed=None)
    unknown = set(simulation or {}) - set(s)
    if unknown:
        raise SettingError("simulation", sorted(unknown), f"unknown keys; allowed {', '.join(s)}")
    s.update(simulation or {})
    for key in ("density_count", "temperature_count", "particles", "samples"):
        s[key] = count(key, s[key])
    s["equilibration"] = count("equilibration", s["equilibration"], minimum=0)
    s["spread"] = positive("spread", s["spread"])
    if s["seed"] is not None:
        s["seed"] = count("seed", s["seed"], minimum=0)
    return s


def initial_state_record(study):
    """Whether a free expansion from the study's initial state warms or cools (B2 + B3).

    Parameters
    ----------
    study : mdsim.study.reader.Study
        With ``[initial]`` temperature and pressure or density.

    Returns
    -------
    dict
        ``temperature_K``, ``density_mol_m3``, ``pressure_Pa`` (the series'
        value when a density was given), ``joule_coefficient_K_mol_m3``
        ((dT/dV)_U, B2 + B3 virial series), ``free_expansion`` ("cools" or
        "warms").
    """
    from analysis.inversion.virial_series import joule_coefficient_virial
    from mdsim.study.statepoints import ideal_heat_capacity, state_points, virial_gas
    sp = state_points(study)[0]
    gas = virial_gas(study)
    T = sp.temperature_K
    if sp.density_mol_m3 is None:
        rho, p = gas.density_from_pressure(T, sp.pressure_Pa, order=3), sp.pressure_Pa
    else:
        rho = sp.density_mol_m3
        p = gas.pressure_Pa(T, rho, order=3)
    mu = joule_coefficient_virial(gas, ideal_heat_capacity(study), T, rho, order=3)
    return {"temperature_K": T, "density_mol_m3": float(rho), "pressure_Pa": float(p),
            "joule_coefficient_K_mol_m3": float(mu),
            "free_expansion": "cools" if mu < 0.0 else "warms"}


def inversion_summary(study, max_density_mol_m3=None, points=DEFAULT_CURVE_POINTS,
                      simulate=False, simulation=None, progress=None, initial_state=False):
    """The Joule inversion of a study, virial and (optionally) simulated, JSON-ready.

    Parameters
    ----------
    study : mdsim.study.reader.Study
        Only its gas and potential are used (and its seed, by default).
    max_density_mol_m3 : float, optional
        The virial curve's largest density (see :func:`virial_inversion_curve`).
    points : int
        Virial curve points above zero density.
    simulate : bool
        Add points from NVT Monte Carlo on a grid around the virial curve.
    simulation : dict, optional
        The grid's settings, over :data:`SIMULATION_DEFAULTS`: ``density_count``,
        ``temperature_count`` (at least 2), ``particles``, ``samples``,
        ``equilibration`` (sweeps), ``spread`` (relative), ``seed`` (None:
        the study's ``[simulation]`` seed).
    progress : callable, optional
        ``progress(k, n, T_K, rho_mol_m3)`` before each grid point.
    initial_state : bool
        Add ``initial_state`` (:func:`initial_state_record`).

    Returns
    -------
    dict
        ``study``; ``joule_inversion_zero_density_K`` (free expansion,
        maximum of B2); ``joule_thomson_inversion_zero_pressure_K``
        (throttling, T dB2/dT = B2: a different process);
        ``joule_inversion_curve``: list of ``{temperature_K,
        density_mol_m3, pressure_Pa, source}`` (source "virial" or
        "simulation", the latter with ``stderr_K``);
        ``densities_without_inversion_mol_m3``; ``virial_order``;
        ``labels`` (what each number means); ``notes``; ``simulation``
        (the grid settings and estimates, or None); ``warnings`` (inversion
        temperatures far outside the potential's ``fitted_range``).
    """
    from analysis.results import to_plain
    from mdsim.study.fitted_range import inversion_warnings
    s = _simulation_settings(simulation) if simulate else None
    inv, _ = virial_inversion_curve(study, max_density_mol_m3, points)
    curve = list(inv.joule_inversion_curve)
    missing = list(inv.densities_without_inversion_mol_m3)
    notes = list(inv.notes)
    sim_info = None
    if simulate:
        pts, miss, sim_info = _simulated_points(study, curve, s, progress)
        curve.extend(pts)
        if miss:
            notes.append("simulation: no sign change bracketed at densities "
                         + ", ".join(f"{m:.6g}" for m in miss)
                         + " mol/m^3 (sample a wider temperature range or longer)")
            missing.extend(miss)
    out = {
        "study": study.name,
        "joule_inversion_zero_density_K": inv.joule_inversion_zero_density_K,
        "joule_thomson_inversion_zero_pressure_K": inv.joule_thomson_inversion_zero_pressure_K,
        "joule_inversion_curve": curve,
        "densities_without_inversion_mol_m3": missing,
        "virial_order": inv.virial_order,
        "labels": dict(LABELS),
        "notes": notes,
        "simulation": sim_info,
        **({"initial_state": initial_state_record(study)} if initial_state else {}),
    }
    out["warnings"] = inversion_warnings(study.gas.fitted_range_K, out)
    return to_plain(out)
