"""Checking pair-potential parameters against free-expansion data, and fitting them.

Given a study (its gas, potential and ideal-gas heat capacity) and measured
free expansions (:mod:`mdsim.check.measurements`), :func:`run_check` predicts
every measurement, compares, and optionally fits the parameters, maps the
sensitivity of each measurement to them, samples their posterior and ranks
candidate next experiments.

Predictions, per row, from the first of these that applies:

1. ``--runs``: a finished simulation of exactly this state point in a run
   directory of the same gas and potential (its best simulation route,
   with its standard error);
2. ``--table``: the corresponding-states table of :mod:`mdsim.cstable.table`
   (Delta T with the table's standard error);
3. the B2 + B3 virial route (:func:`analysis.expansion.virial_expansion`;
   no statistical error, so the prediction uncertainty is 0).  Rows where
   the series does not converge are left out of chi-square and listed.

Statistics.  Per row the residual is measured minus predicted, the z-score
residual / sqrt(u_meas^2 + u_pred^2), and chi-square the sum of z^2 with as
many degrees of freedom as rows used (no parameter is adjusted by a check;
a fit subtracts its parameter count).  The p-value is the chi-square
survival function (scipy.stats.chi2.sf).

Fast model.  Fits, sensitivities, posteriors and suggestions call the
model thousands of times, so for a pure gas with a Lennard-Jones or Mie
potential they use :class:`ExpansionModel`: the reduced B2*(T*) and
B3*(T*) (and two T-derivatives each) of the potential's shape, computed
once by :mod:`analysis.virial` on a log grid of T* and interpolated by
cubic splines (corresponding states: B2 = sigma^3 B2*(T / epsilon),
B3 = sigma^6 B3*(T / epsilon)), and the constant-energy balance solved by a
vectorised Newton iteration.  Its Delta T agrees with
:func:`analysis.expansion.virial_expansion` to about 1e-5 K (the splines
reproduce B3 to about 1e-5 relative; tests).

Array suffixes: ``_n`` measurement rows, ``_p`` parameters, ``_np`` a
Jacobian (row by parameter), ``_c`` candidate experiments.
"""
import functools
import json
import math
from pathlib import Path

import numpy as np
from scipy.constants import N_A, R as R_GAS

from mdsim.study.routes import SIMULATION_ROUTES
from mdsim.errors import ConvergenceError, StudyError

# Reduced-temperature range of the spline tables of B2* and B3*.
T_RED_RANGE = (0.2, 400.0)
T_RED_NODES = 200
# Shape fits: the repulsive exponent's lattice (tables are built on it and
# interpolated between by cubic Lagrange weights in the exponent).
SHAPE_STEP = 0.5
SHAPE_RANGE = (7.0, 40.0)
# The B2 + B3 series is trusted up to this third-term fraction of Z
# (the limit of analysis.virial_eos.VirialGas.check_converged).
SERIES_LIMIT = 0.05
DEFAULT_LEVEL = 0.05
A3_TO_M3_MOL = 1e-30 * N_A
A6_TO_M6_MOL2 = 1e-60 * N_A * N_A
# Relative step of the central differences for sensitivities and Jacobians.
FD_STEP = 1e-5
FIT_FORMS = ("lennard-jones", "mie")
PARAM_UNITS = {"epsilon_K": "K", "sigma_angstrom": "angstrom", "repulsive_exponent": ""}


# -- the reduced virial coefficients of one shape ------------------------------------------

class ReducedVirial:
    """Splines of B2*(T*), B3*(T*) and their T*-derivatives for one Mie shape.

    Parameters
    ----------
    repulsive, attractive : float
        Mie exponents (12, 6 for Lennard-Jones).

    Notes
    -----
    Values per molecule in sigma^3 and sigma^6 at T* = kT / epsilon, computed
    by :func:`analysis.virial.b2` and :func:`analysis.virial.b3` of
    ``Mie(1, 1, n, m)`` at ``T_RED_NODES`` temperatures spaced evenly in
    ln T* over ``T_RED_RANGE``; each of the six functions is a cubic spline
    in ln T*.  The spacing (0.035 in ln T*) keeps the interpolation error
    near 1e-7 relative for B2 and 1e-5 for B3.
    """

    def __init__(self, repulsive, attractive):
        from scipy.interpolate import CubicSpline

        from analysis import virial
        from mdsim.engine.potentials import LennardJones, Mie
        self.repulsive, self.attractive = float(repulsive), float(attractive)
        pot = (LennardJones(1.0, 1.0) if (self.repulsive, self.attractive) == (12.0, 6.0)
               else Mie(1.0, 1.0, self.repulsive, self.attractive))
        T = np.geomspace(*T_RED_RANGE, T_RED_NODES)
        x = np.log(T)
        vals = list(virial.b2(pot, T)) + list(virial.b3(pot, T))
        self._splines = [CubicSpline(x, np.asarray(v, dtype=float)) for v in vals]

    def coefficients(self, T_red):
        """(B2, dB2, d2B2, B3, dB3, d2B3) reduced, at T_red (array), derivatives in T*."""
        T_red = np.asarray(T_red, dtype=float)
        lo, hi = T_RED_RANGE
        if np.any(~np.isfinite(T_red)) or np.any(T_red < lo) or np.any(T_red > hi):
            bad = T_red[~((T_red >= lo) & (T_red <= hi))].ravel()[0]
            raise StudyError(f"reduced temperature kT/epsilon = {bad:.4g} is outside the range "
                             f"{lo:g} to {hi:g} of the fast virial tables; the measurement "
                             "temperatures and epsilon are too far apart for this potential "
                             "(check the units of epsilon and of the temperatures)")
        return tuple(s(np.log(T_red)) for s in self._splines)


@functools.lru_cache(maxsize=48)
def reduced_virial(repulsive, attractive):
    """The :class:`ReducedVirial` of a shape, built once per process (cached)."""
    return ReducedVirial(repulsive, attractive)


def _lagrange_weights(n, nodes):
    w = np.ones(len(nodes))
    for i, xi in enumerate(nodes):
        for j, xj in enumerate(nodes):
            if i != j:
                w[i] *= (n - xj) / (xi - xj)
    return w


def reduced_coefficients(T_red, repulsive, attractive, interpolate_shape=False):
    """Reduced B2, B3 and derivatives; with ``interpolate_shape`` the repulsive
    exponent may be any number (cubic Lagrange interpolation between tables on
    a lattice of step ``SHAPE_STEP``), so that a shape fit sees a smooth model."""
    if not interpolate_shape:
        return reduced_virial(float(repulsive), float(attractive)).coefficients(T_red)
    lo, hi = SHAPE_RANGE
    if not (lo <= repulsive <= hi):
        raise StudyError(f"repulsive exponent {repulsive:.4g}: the shape fit allows {lo:g} to "
                         f"{hi:g}; start from a value inside that range")
    k = math.floor((repulsive - lo) / SHAPE_STEP)
    k = min(max(k, 1), int(round((hi - lo) / SHAPE_STEP)) - 2)
    nodes = [lo + (k + j) * SHAPE_STEP for j in (-1, 0, 1, 2)]
    w = _lagrange_weights(repulsive, nodes)
    out = None
    for wj, nj in zip(w, nodes):
        c = reduced_virial(round(nj, 6), float(attractive)).coefficients(T_red)
        out = [wj * v for v in c] if out is None else [o + wj * v for o, v in zip(out, c)]
    return tuple(out)


# -- the fast model --------------------------------------------------------------------

class ExpansionModel:
    """Delta T of free expansions and B2 for parameter vectors (B2 + B3 virial route).

    Parameters
    ----------
    form : {"lennard-jones", "mie"}
    cv_ig : IdealGasHeatCapacity
    repulsive, attractive : float
        Mie exponents (ignored for Lennard-Jones, which is 12-6).
    fit_shape : bool
        When true, the parameter vector carries the repulsive exponent
        third (a Lennard-Jones model becomes Mie n-6).

    Attributes
    ----------
    names : tuple of str
        ``("epsilon_K", "sigma_angstrom")`` and ``"repulsive_exponent"``
        when ``fit_shape``.
    """

    def __init__(self, form, cv_ig, repulsive=12.0, attractive=6.0, fit_shape=False):
        if form not in FIT_FORMS:
            raise StudyError(f"potential form {form!r}: fits, sensitivities, posteriors and "
                             f"suggestions need a form with a fixed shape, {' or '.join(FIT_FORMS)}")
        self.form = form
        self.cv_ig = cv_ig
        self.repulsive = 12.0 if form == "lennard-jones" else float(repulsive)
        self.attractive = 6.0 if form == "lennard-jones" else float(attractive)
        self.fit_shape = bool(fit_shape)
        self.names = ("epsilon_K", "sigma_angstrom") + (("repulsive_exponent",)
                                                       if fit_shape else ())

    def start(self, epsilon_K, sigma_angstrom):
        """The parameter vector of a study's potential."""
        x = [float(epsilon_K), float(sigma_angstrom)]
        if self.fit_shape:
            x.append(self.repulsive)
        return np.array(x)

    def bounds(self, data_T_K):
        """(lower, upper) of the parameters, keeping every T* inside the spline range."""
        T = np.asarray(data_T_K, dtype=float)
        eps_lo = 1.5 * T.max() / T_RED_RANGE[1]
        eps_hi = 0.5 * T.min() / T_RED_RANGE[0]
        lo, hi = [eps_lo, 0.5], [eps_hi, 50.0]
        if self.fit_shape:
            lo.append(SHAPE_RANGE[0] + 2 * SHAPE_STEP)
            hi.append(SHAPE_RANGE[1] - 3 * SHAPE_STEP)
        return np.array(lo), np.array(hi)

    def coefficients(self, theta, T_K):
        """SI (B, dB/dT, d2B/dT2, C, dC/dT, d2C/dT2) at temperatures T_K."""
        eps, sig = float(theta[0]), float(theta[1])
        n = float(theta[2]) if self.fit_shape else self.repulsive
        T_red = np.asarray(T_K, dtype=float) / eps
        b, db, d2b, c, dc, d2c = reduced_coefficients(T_red, n, self.attractive,
                                                      interpolate_shape=self.fit_shape)
        s3 = A3_TO_M3_MOL * sig ** 3
        s6 = A6_TO_M6_MOL2 * sig ** 6
        return (s3 * b, s3 * db / eps, s3 * d2b / eps ** 2,
                s6 * c, s6 * dc / eps, s6 * d2c / eps ** 2)

    def B2(self, theta, T_K):
        """Second virial coefficient, m^3/mol."""
        return self.coefficients(theta, T_K)[0]

    def delta_T(self, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None):
        """Delta T (K) of free expansions by the B2 + B3 series, vectorised over rows.

        Parameters
        ----------
        theta : array_like, shape=(n_params,)
        T_K, volume_ratio : ndarray, shape=(n,)
        p_Pa, rho_mol_m3 : ndarray, shape=(n,), one of them

        Returns
        -------
        delta_T_K : ndarray, shape=(n,)
            NaN where the density or the final temperature cannot be solved.
        converged : ndarray, shape=(n,), bool
            The B2 + B3 series holds (third term <= ``SERIES_LIMIT`` of Z) at
            the initial and the final state.

        Notes
        -----
        rho_i solves rho (1 + B rho + C rho^2) = p / (R T) by Newton steps
        from the ideal gas (the branch :meth:`VirialGas.density_from_pressure`
        takes); T_f solves u_ig(T_f) + u_res(T_f, rho_i / r) = u_ig(T_i) +
        u_res(T_i, rho_i), u_res = -R T^2 (B' rho + C' rho^2 / 2), by Newton
        steps with c_v = c_v_ig + c_v_res.
        """
        T_i = np.asarray(T_K, dtype=float)
        r = np.asarray(volume_ratio, dtype=float)
        B, dB, _, C, dC, _ = self.coefficients(theta, T_i)
        if rho_mol_m3 is not None:
            rho = np.asarray(rho_mol_m3, dtype=float).copy()
            ok = np.ones(T_i.shape, dtype=bool)
        else:
            target = np.asarray(p_Pa, dtype=float) / (R_GAS * T_i)
            rho = target.copy()
            for _ in range(60):
                g = rho * (1.0 + B * rho + C * rho * rho) - target
                dg = 1.0 + 2.0 * B * rho + 3.0 * C * rho * rho
                step = g / np.where(dg > 0.0, dg, np.nan)
                rho = rho - step
                if np.all(~np.isfinite(step) | (np.abs(step) <= 1e-14 * np.abs(rho))):
                    break
            dg = 1.0 + 2.0 * B * rho + 3.0 * C * rho * rho
            ok = np.isfinite(rho) & (rho > 0.0) & (dg > 0.0)
        rho = np.where(ok, rho, np.nan)
        z_i = np.abs(C * rho * rho) / np.abs(1.0 + B * rho)
        u_res_i = -R_GAS * T_i ** 2 * (dB * rho + 0.5 * dC * rho * rho)
        cv = self.cv_ig
        u_target = cv.u(T_i) + u_res_i
        rho_f = rho / r
        T = T_i.copy()
        converged_newton = False
        for _ in range(60):
            B, dB, d2B, C, dC, d2C = self.coefficients(theta, np.where(np.isfinite(T), T, T_i))
            u_res = -R_GAS * T ** 2 * (dB * rho_f + 0.5 * dC * rho_f ** 2)
            cv_res = -R_GAS * ((2.0 * T * dB + T * T * d2B) * rho_f
                               + 0.5 * (2.0 * T * dC + T * T * d2C) * rho_f ** 2)
            Tsafe = np.where(np.isfinite(T), T, T_i)
            f = cv.u(Tsafe) + u_res - u_target
            c_tot = cv.cv(Tsafe) + cv_res
            step = f / np.where(c_tot > 0.0, c_tot, np.nan)
            # keep the iterate positive: at most halve T per step
            step = np.where(step > 0.5 * T, 0.5 * T, step)
            T = T - step
            if np.all(~np.isfinite(step) | (np.abs(step) <= 1e-12 * T_i)):
                converged_newton = True
                break
        if not converged_newton:
            raise ConvergenceError("the constant-energy balance did not converge in 60 Newton "
                                   "steps (fast virial model)", partial=T - T_i)
        B, _, _, C, _, _ = self.coefficients(theta, np.where(np.isfinite(T), T, T_i))
        z_f = np.abs(C * rho_f ** 2) / np.abs(1.0 + B * rho_f)
        delta = np.where(ok & np.isfinite(T), T - T_i, np.nan)
        converged = ok & (z_i <= SERIES_LIMIT) & (z_f <= SERIES_LIMIT) & np.isfinite(delta)
        return delta, converged


def study_potential(study):
    """(form, epsilon_K, sigma_angstrom, repulsive, attractive) of a pure-gas study.

    Raises StudyError for mixtures and forms without a fixed shape.
    """
    g = study.gas
    if g.n_species != 1:
        raise StudyError(f"study '{study.path}': a fit, sensitivities, a posterior and "
                         f"suggestions need a pure gas; this one has {g.n_species} species")
    pot = g.pairs_K_angstrom.pots[0][0]
    if pot.name not in FIT_FORMS:
        raise StudyError(f"study '{study.path}', [potential] form = {pot.name!r}: a fit, "
                         f"sensitivities, a posterior and suggestions need "
                         f"{' or '.join(FIT_FORMS)} (a fixed shape scaled by epsilon and sigma)")
    return pot.name, pot.epsilon, pot.sigma, pot.repulsive, pot.attractive


def model_for_study(study, fit_shape=False):
    """(ExpansionModel, start parameter vector) of a study's potential."""
    from mdsim.study.statepoints import ideal_heat_capacity
    form, eps, sig, n, m = study_potential(study)
    model = ExpansionModel(form, ideal_heat_capacity(study), n, m, fit_shape=fit_shape)
    return model, model.start(eps, sig)


# -- predictions through the table ------------------------------------------------------

class TablePredictor:
    """Delta T and its standard error from a corresponding-states table (mdsim.cstable.table)."""

    def __init__(self, table, model, molar_mass_kg_mol):
        if model.fit_shape:
            raise StudyError("option --fit-shape cannot be used with --table: a "
                             "corresponding-states table holds one fixed shape")
        form = getattr(table, "form", None)
        if form is not None and form != model.form:
            raise StudyError(f"option --table: the table is for the {form!r} form, the study's "
                             f"potential is {model.form!r}; build a table for this form "
                             "(mdsim table build)")
        shape = getattr(table, "shape", None) or {}
        for key, mine in (("repulsive_exponent", model.repulsive),
                          ("attractive_exponent", model.attractive)):
            if key in shape and abs(float(shape[key]) - mine) > 1e-9:
                raise StudyError(f"option --table: the table's {key} is {shape[key]}, the "
                                 f"study's {mine}; build a table for this shape")
        self.table, self.model, self.molar_mass = table, model, float(molar_mass_kg_mol)

    def delta_T(self, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None):
        """(delta_T_K, stderr_K, ok) arrays; ``ok`` false where the table does not apply."""
        from mdsim.cstable.table import table_delta_T
        n = len(T_K)
        out = np.full(n, np.nan)
        err = np.full(n, np.nan)
        ok = np.zeros(n, dtype=bool)
        for k in range(n):
            try:
                v, s = table_delta_T(self.table, float(theta[0]), float(theta[1]),
                                     self.molar_mass, self.model.cv_ig, float(T_K[k]),
                                     float(volume_ratio[k]),
                                     p_i_Pa=None if p_Pa is None else float(p_Pa[k]),
                                     rho_i_mol_m3=None if rho_mol_m3 is None
                                     else float(rho_mol_m3[k]))
            except StudyError:
                continue
            out[k], err[k], ok[k] = v, s, True
        return out, err, ok


def load_table(path):
    """The corresponding-states table at ``path`` (``mdsim.cstable.table``)."""
    try:
        from mdsim.cstable.table import CorrespondingStatesTable
    except ImportError as exc:
        raise StudyError(f"option --table {path}: the corresponding-states table module is not "
                         f"available ({exc})") from None
    return CorrespondingStatesTable.load(path)


# -- predictions from run directories ----------------------------------------------------



def _same(a, b, rel=1e-6):
    if a is None or b is None:
        return False
    return abs(a - b) <= rel * max(abs(a), abs(b))


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
    root = Path(runs_dir)
    if not root.is_dir():
        raise StudyError(f"option --runs = '{runs_dir}': not a directory; give a run directory "
                         "made by 'mdsim run' (or a directory holding several)")
    dirs = [root] if (root / "results.json").is_file() else sorted(
        p.parent for p in root.glob("*/results.json"))
    if not dirs:
        raise StudyError(f"option --runs = '{runs_dir}': no results.json in it or in its "
                         "subdirectories; run 'mdsim run STUDY --out DIR' first")
    mine = [p.describe() for p in study.gas.pairs_K_angstrom.pots[0]]
    out = []
    for d in dirs:
        try:
            other = read_study(d / "study.toml")
            summary = json.loads((d / "results.json").read_text(encoding="utf-8"))
        except (OSError, ValueError, StudyError):
            continue
        theirs = [p.describe() for p in other.gas.pairs_K_angstrom.pots[0]]
        if theirs != mine or other.gas.ideal_heat_capacity != study.gas.ideal_heat_capacity \
                or list(other.gas.fractions) != list(study.gas.fractions):
            continue
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
                                "source": str(d)})
                    break
    return out


def _match_run(runs, T, p, rho, r):
    for run in runs:
        if not (_same(run["temperature_K"], T) and _same(run["volume_ratio"], r)):
            continue
        if (p is not None and _same(run["pressure_Pa"], p)) or \
                (rho is not None and _same(run["density_mol_m3"], rho)):
            return run
    return None


# -- statistics ----------------------------------------------------------------------------

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
    """
    from scipy.stats import chi2 as chi2_dist
    if not (0.0 < level < 1.0):
        raise StudyError(f"option --level = {level!r}: must lie between 0 and 1 (for example "
                         "0.05 for the 5 % level)")
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
    """One sentence a researcher can paste."""
    word = "consistent" if stats["consistent"] else "inconsistent"
    return (f"{what} {'is' if what.endswith('fit') else 'are'} {word} with the {n_rows} "
            f"free-expansion measurements of {data_name} at the {stats['level']:.0%} level: "
            f"chi-square = {stats['chi2']:.4g} for {stats['dof']} degrees of freedom "
            f"(chi-square per degree of freedom {stats['chi2_per_dof']:.3g}, "
            f"p = {stats['p_value']:.2g}), with predictions from {route_text}.")


# -- residual vectors for fits -------------------------------------------------------------

class Objective:
    """Weighted residuals of expansion (and second-virial) data for a model.

    Parameters
    ----------
    model : ExpansionModel
    data : ExpansionData
    rows : ndarray of int
        The expansion rows used.
    virial_data : VirialData or None
    predictor : TablePredictor or None
        Through the table when given, else the model's virial route.
    pred_stderr_n : ndarray, shape=(len(rows),), optional
        Prediction standard errors held fixed in the weights (table route).
    """

    def __init__(self, model, data, rows, virial_data=None, predictor=None, pred_stderr_n=None):
        self.model, self.data, self.rows = model, data, np.asarray(rows, dtype=int)
        self.virial, self.predictor = virial_data, predictor
        k = self.rows
        self.T = data.temperature_K[k]
        self.r = data.volume_ratio[k]
        self.p = None if data.pressure_Pa is None else data.pressure_Pa[k]
        self.rho = None if data.density_mol_m3 is None else data.density_mol_m3[k]
        self.y = data.delta_T_K[k]
        u_pred = np.zeros(k.size) if pred_stderr_n is None else np.asarray(pred_stderr_n)
        self.sigma = np.sqrt(data.delta_T_uncertainty_K[k] ** 2 + u_pred ** 2)

    @property
    def n_points(self):
        return int(self.rows.size + (len(self.virial) if self.virial is not None else 0))

    def predict(self, theta):
        if self.predictor is not None:
            return self.predictor.delta_T(theta, self.T, self.r, self.p, self.rho)[0]
        return self.model.delta_T(theta, self.T, self.r, self.p, self.rho)[0]

    def residuals(self, theta):
        """(predicted - measured) / sigma, expansion rows then second-virial rows."""
        res = (self.predict(theta) - self.y) / self.sigma
        if self.virial is not None:
            v = self.virial
            res = np.concatenate([res, (self.model.B2(theta, v.temperature_K) - v.B_m3_mol)
                                  / v.B_uncertainty_m3_mol])
        # a row that leaves the model's domain during a fit weighs heavily, not NaN
        return np.where(np.isfinite(res), res, 1e6)

    def chi2(self, theta):
        r = self.residuals(theta)
        return float(r @ r)

    def jacobian(self, theta):
        """d residuals / d theta by central differences, shape=(n_points, n_params)."""
        theta = np.asarray(theta, dtype=float)
        cols = []
        for j in range(theta.size):
            h = FD_STEP * abs(theta[j])
            tp, tm = theta.copy(), theta.copy()
            tp[j] += h
            tm[j] -= h
            cols.append((self.residuals(tp) - self.residuals(tm)) / (2.0 * h))
        return np.column_stack(cols)


def sensitivities(model, theta, T_K, volume_ratio, p_Pa=None, rho_mol_m3=None, predictor=None):
    """d(Delta T)/d(parameter) per state by central differences.

    Returns
    -------
    ndarray, shape=(n, n_params)
        K per K (epsilon), K per angstrom (sigma), K per unit exponent.
    """
    theta = np.asarray(theta, dtype=float)
    f = (predictor.delta_T if predictor is not None else model.delta_T)
    cols = []
    for j in range(theta.size):
        h = FD_STEP * abs(theta[j])
        tp, tm = theta.copy(), theta.copy()
        tp[j] += h
        tm[j] -= h
        cols.append((f(tp, T_K, volume_ratio, p_Pa, rho_mol_m3)[0]
                     - f(tm, T_K, volume_ratio, p_Pa, rho_mol_m3)[0]) / (2.0 * h))
    return np.column_stack(cols)


# -- the fit ----------------------------------------------------------------------------------

def fit_parameters(objective, start, bounds=None, level=DEFAULT_LEVEL):
    """Weighted least squares of the parameters (scipy.optimize.least_squares).

    Parameters
    ----------
    objective : Objective
    start : ndarray, shape=(n_params,)
    bounds : (lower, upper), optional

    Returns
    -------
    dict
        ``theta`` (ndarray), ``covariance`` (ndarray, (J^T J)^-1 of the
        weighted residuals: the measurement uncertainties taken as stated),
        ``stderr``, ``stderr_scaled`` (times sqrt(chi2/dof)), ``correlation``
        (matrix), ``stats`` (:func:`chi2_test` with the parameters
        subtracted), ``jacobian`` (weighted), ``optimizer`` (status text),
        ``n_evaluations``.

    Raises
    ------
    ConvergenceError
        When the optimiser fails.
    """
    from scipy.optimize import least_squares
    start = np.asarray(start, dtype=float)
    k = start.size
    if objective.n_points <= k:
        raise StudyError(f"a fit of {k} parameters needs more than {k} usable measurements; "
                         f"{objective.n_points} are usable; add measurements (or second-virial "
                         "data with --virial-data)")
    lo, hi = bounds if bounds is not None else (np.full(k, -np.inf), np.full(k, np.inf))
    x0 = np.clip(start, lo + 1e-9 * np.abs(lo), hi - 1e-9 * np.abs(hi))
    res = least_squares(objective.residuals, x0, jac=lambda t: objective.jacobian(t),
                        bounds=(lo, hi), x_scale="jac", method="trf", xtol=1e-12, ftol=1e-12,
                        gtol=1e-12, max_nfev=200)
    if res.status <= 0:
        raise ConvergenceError(f"the fit did not converge: {res.message}", partial=res.x)
    theta = res.x
    J = objective.jacobian(theta)
    JTJ = J.T @ J
    try:
        cov = np.linalg.inv(JTJ)
    except np.linalg.LinAlgError:
        raise ConvergenceError("the fit's parameters are not determined by the data (singular "
                               "J^T J); add measurements at other temperatures", partial=theta) \
            from None
    stats = chi2_test(objective.residuals(theta), n_params=k, level=level)
    stderr = np.sqrt(np.diag(cov))
    corr = cov / np.outer(stderr, stderr)
    return {"theta": theta, "covariance": cov, "stderr": stderr,
            "stderr_scaled": stderr * math.sqrt(stats["chi2_per_dof"]), "correlation": corr,
            "stats": stats, "jacobian": J, "optimizer": res.message,
            "n_evaluations": int(res.nfev)}


def inside_region(theta_true, theta_fit, covariance, delta_chi2):
    """True when theta_true lies inside (theta - theta_fit)^T C^-1 (theta - theta_fit) <= delta_chi2."""
    d = np.asarray(theta_true, dtype=float) - np.asarray(theta_fit, dtype=float)
    return bool(d @ np.linalg.solve(covariance, d) <= delta_chi2)


def delta_chi2_for(probability, n_params):
    """The chi-square increase bounding a joint confidence region (2.30, 6.18 for 2 params)."""
    from scipy.stats import chi2 as chi2_dist
    return float(chi2_dist.ppf(probability, n_params))


# Joint probabilities of the 1- and 2-sigma regions (those of a 1-D Gaussian).
ONE_SIGMA = 0.682689492137086
TWO_SIGMA = 0.954499736103642


# -- next experiment ---------------------------------------------------------------------

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
    raise StudyError(f"option --suggest-criterion = {criterion!r}: allowed 'det' (area of the "
                     "confidence region) or 'trace' (sum of the parameter variances)")


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
    for name, (lo, hi), low in (("--suggest-temperature", temperature_K, 0.0),
                                ("--suggest-pressure", pressure_Pa, 0.0),
                                ("--suggest-ratio", volume_ratio, 1.0)):
        if not (lo > low and hi >= lo):
            raise StudyError(f"option {name} = ({lo:g}, {hi:g}): need {low:g} < low <= high")
    if not (uncertainty_K > 0.0):
        raise StudyError(f"option --suggest-uncertainty = {uncertainty_K!r} K: must be positive")
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
        raise StudyError("option --suggest: no candidate state in the given ranges can be "
                         "predicted (the B2 + B3 series does not hold at any); lower the "
                         "pressure range or give --table")
    T, p, r, dT, sig = T[keep], p[keep], r[keep], dT[keep], sig[keep]
    J = sensitivities(model, theta, T, r, p_Pa=p, predictor=predictor)
    Jd = objective.jacobian(theta)
    shrink = rank_candidates(Jd.T @ Jd, J, sig, criterion)
    order = np.argsort(shrink)[:count]
    cands = []
    for c in order:
        row = {"temperature_K": float(T[c]), "pressure_Pa": float(p[c]),
               "volume_ratio": float(r[c]), "predicted_delta_T_K": float(dT[c]),
               "d_delta_T_d_epsilon_K_per_K": float(J[c, 0]),
               "d_delta_T_d_sigma_K_per_angstrom": float(J[c, 1]), "shrink": float(shrink[c])}
        cands.append(row)
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


# -- posterior ---------------------------------------------------------------------------------

def sample_posterior(objective, fit, bounds, n_walkers=16, n_steps=600, burn=200, seed=1):
    """MCMC posterior of the parameters with emcee (flat priors inside ``bounds``).

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
        raise StudyError("option --posterior needs the emcee package: install the 'fit' extra "
                         "(python -m pip install -e '.[fit]')") from None
    if n_steps <= burn:
        raise StudyError(f"option --posterior-steps = {n_steps}: must exceed the {burn} "
                         "burn-in steps")
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


# -- invented data ------------------------------------------------------------------------------

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


# -- the whole check ------------------------------------------------------------------------------

def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


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
    runs_dir : str or Path, optional
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
        JSON-ready apart from the key ``_posterior_chain`` (ndarray), see
        :mod:`mdsim.cli.cmd_check` for the layout.
    """
    from analysis.expansion import virial_expansion
    from mdsim.study.statepoints import ideal_heat_capacity, virial_gas

    if posterior and not fit:
        raise StudyError("option --posterior needs --fit (the posterior starts from the fit)")
    if fit_shape and not fit:
        raise StudyError("option --fit-shape needs --fit")
    cv_ig = ideal_heat_capacity(study)
    gas = virial_gas(study)
    notes = []
    model = theta0 = None
    model_error = None
    try:
        model, theta0 = model_for_study(study, fit_shape=fit_shape)
    except StudyError as exc:
        model_error = " ".join(str(exc).split())
        if fit or suggest or table is not None:
            raise
        notes.append(f"sensitivities not computed: {model_error}")
    predictor = None
    if table is not None:
        predictor = TablePredictor(table, model, float(study.gas.molar_masses_kg_mol[0]))
    if runs_dir is None:
        runs_dirs = []
    elif isinstance(runs_dir, (list, tuple)):
        runs_dirs = list(runs_dir)
    else:
        runs_dirs = [runs_dir]
    runs = [run for d in runs_dirs for run in run_predictions(d, study)]

    n = len(data)
    pred = np.full(n, np.nan)
    pred_err = np.zeros(n)
    pred_b2 = np.full(n, np.nan)
    route = [""] * n
    row_notes = [[] for _ in range(n)]
    tab = None
    if predictor is not None:
        tab = predictor.delta_T(theta0, data.temperature_K, data.volume_ratio,
                                data.pressure_Pa, data.density_mol_m3)
    for k in range(n):
        T, p, rho, r = data.state(k)
        try:
            res = virial_expansion(gas, cv_ig, T, r, p_i=p, rho_i=rho, order=3)
            virial_ok = True
            pred_b2[k] = res.delta_T_B2_K
        except (StudyError, ConvergenceError) as exc:
            virial_ok = False
            virial_why = " ".join(str(exc).split())
        run = _match_run(runs, T, p, rho, r)
        if run is not None:
            pred[k], pred_err[k] = run["delta_T_K"], run["stderr_K"]
            route[k] = f"simulation ({run['route']} route, {run['source']})"
        elif tab is not None:
            if tab[2][k]:
                pred[k], pred_err[k], route[k] = tab[0][k], tab[1][k], "table"
            elif virial_ok:
                pred[k], route[k] = res.delta_T_K, "virial B2+B3"
                row_notes[k].append("outside the corresponding-states table: predicted by the "
                                    "virial B2+B3 route (a fit through the table leaves it out)")
            else:
                row_notes[k].append(f"outside the corresponding-states table, and the virial "
                                    f"route fails ({virial_why}); give --runs with a simulation "
                                    "of this state")
        elif virial_ok:
            pred[k], route[k] = res.delta_T_K, "virial B2+B3"
        else:
            row_notes[k].append(f"not predicted: {virial_why}; give --table, or --runs with a "
                                "simulation of this state")
    used = np.isfinite(pred)
    sigma = np.sqrt(data.delta_T_uncertainty_K ** 2 + pred_err ** 2)
    resid = data.delta_T_K - pred
    z = resid / sigma

    sens = None
    if model is not None:
        sens = sensitivities(model, theta0, data.temperature_K, data.volume_ratio,
                             data.pressure_Pa, data.density_mol_m3, predictor=predictor)
    routes_used = sorted({route[k] for k in range(n) if used[k]})
    route_text = "; ".join(routes_used) if routes_used else "no route"
    pot = study.gas.pairs_K_angstrom.pots[0][0]
    desc = pot.describe()
    what = (f"The {desc['form']} parameters epsilon/k = {pot.epsilon:.5g} K, sigma = "
            f"{pot.sigma:.5g} angstrom" + (f" ({study.gas.name})" if study.gas.name else ""))
    stats = None
    verdict = None
    if used.any():
        stats = chi2_test(z[used], 0, level)
        verdict = verdict_sentence(stats, what, int(used.sum()), f"'{data.path.name}'", route_text)
    else:
        verdict = ("No measurement could be predicted (the B2 + B3 series does not hold at any "
                   "of them): give --table or --runs.")
    if (~used).any():
        notes.append(f"{int((~used).sum())} row(s) not predicted and left out of chi-square: "
                     "lines " + ", ".join(str(int(data.line_n[k])) for k in range(n) if not used[k]))
    notes.append("prediction uncertainty: 0 for the virial route (it has no statistical error; "
                 "its truncation shows in the B2-only column), the standard error for table and "
                 "simulation routes; z combines it with the measurement's in quadrature")

    rows = []
    for k in range(n):
        T, p, rho, r = data.state(k)
        row = {"line": int(data.line_n[k]), "label": data.labels[k],
               "initial_temperature_K": T, "initial_pressure_Pa": p,
               "initial_density_mol_m3": rho, "volume_ratio": r,
               "measured_delta_T_K": float(data.delta_T_K[k]),
               "measured_uncertainty_K": float(data.delta_T_uncertainty_K[k]),
               "predicted_delta_T_K": _num(pred[k]),
               "prediction_stderr_K": _num(pred_err[k]) if used[k] else None,
               "route": route[k] or None, "predicted_delta_T_B2_only_K": _num(pred_b2[k]),
               "residual_K": _num(resid[k]), "z": _num(z[k]), "used": bool(used[k]),
               "d_delta_T_d_epsilon_K_per_K": _num(sens[k, 0]) if sens is not None else None,
               "d_delta_T_d_sigma_K_per_angstrom": _num(sens[k, 1]) if sens is not None
               else None,
               "notes": row_notes[k]}
        rows.append(row)

    out = {"study": study.name, "study_file": str(study.path), "data_file": str(data.path),
           "virial_data_file": str(virial_data.path) if virial_data is not None else None,
           "table_file": str(getattr(table, "path", "")) or None if table is not None else None,
           "runs_dir": ([str(d) for d in runs_dirs] if runs_dirs else None),
           "potential": dict(desc, epsilon_K=pot.epsilon, sigma_angstrom=pot.sigma),
           "potential_source": study.raw.get("potential", {}).get("source", ""),
           "level": level, "rows": rows, "check": stats, "verdict": verdict,
           "notes": notes}
    out["check_points_used"] = int(used.sum())

    if virial_data is not None:
        B = np.asarray(gas.B(virial_data.temperature_K), dtype=float)
        zb = (virial_data.B_m3_mol - B) / virial_data.B_uncertainty_m3_mol
        sb = chi2_test(zb, 0, level)
        out["second_virial"] = {
            "rows": [{"line": int(virial_data.line_n[k]), "temperature_K":
                      float(virial_data.temperature_K[k]),
                      "measured_B_m3_mol": float(virial_data.B_m3_mol[k]),
                      "uncertainty_m3_mol": float(virial_data.B_uncertainty_m3_mol[k]),
                      "predicted_B_m3_mol": float(B[k]), "z": float(zb[k])}
                     for k in range(len(virial_data))],
            "check": sb,
            "verdict": verdict_sentence(sb, what, len(virial_data),
                                        f"'{virial_data.path.name}'", "B2 of the potential")
            .replace("free-expansion", "second-virial")}

    fit_result = None
    if fit:
        T, r = data.temperature_K, data.volume_ratio
        if predictor is not None:
            ok = tab[2]
            use_rows = np.flatnonzero(ok)
            objective = Objective(model, data, use_rows, virial_data, predictor, tab[1][ok])
        else:
            _, conv = model.delta_T(theta0, T, r, data.pressure_Pa, data.density_mol_m3)
            use_rows = np.flatnonzero(conv)
            objective = Objective(model, data, use_rows, virial_data)
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
        if predictor is None:
            _, conv_best = model.delta_T(th, objective.T, objective.r, objective.p, objective.rho)
        else:
            conv_best = np.ones(use_rows.size, dtype=bool)
        for j, k in enumerate(use_rows):
            rows[k]["fit_predicted_delta_T_K"] = _num(pred_fit[j])
            rows[k]["fit_z"] = _num((data.delta_T_K[k] - pred_fit[j]) / objective.sigma[j])
        st = fit_result["stats"]
        names = model.names
        fit_json = {}
        for j, name in enumerate(names):
            fit_json[name] = {"value": float(th[j]), "stderr": float(fit_result["stderr"][j]),
                              "stderr_scaled": float(fit_result["stderr_scaled"][j])}
        fit_json.update({
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
            "stderr_basis": ("stderr: from (J^T W J)^-1 with the stated measurement "
                             "uncertainties taken as correct (not rescaled), so a poor fit "
                             "shows in chi2/dof instead of being absorbed; stderr_scaled "
                             "multiplies by sqrt(chi2/dof) for readers who prefer that"),
            "form": model.form if not model.fit_shape else "mie (n-6, n fitted)",
            "rows_where_series_fails_at_best_fit": [int(data.line_n[k]) for j, k in
                                                    enumerate(use_rows) if not conv_best[j]],
            "verdict": verdict_sentence(
                st, "The fitted " + _potential_text(model.form, th, names), objective.n_points,
                f"'{data.path.name}'" + (f" and '{virial_data.path.name}'" if virial_data
                                         else ""),
                "virial B2+B3" if predictor is None else "the table")
            .replace(" free-expansion measurements", " measurements")})
        out["fit"] = fit_json
        out["_fit"] = {"theta": th, "covariance": fit_result["covariance"],
                       "start": theta0, "names": names}
        if posterior:
            post = sample_posterior(objective, fit_result, bounds,
                                    n_walkers=posterior.get("walkers", 16),
                                    n_steps=posterior.get("steps", 600),
                                    burn=posterior.get("burn", 200),
                                    seed=posterior.get("seed", 1))
            out["posterior"] = {
                "parameters": list(names), "mean": post["mean"].tolist(),
                "std": post["std"].tolist(),
                "quantiles_16_50_84": post["quantiles"].tolist(),
                "acceptance": post["acceptance"], "walkers": post["n_walkers"],
                "steps": post["n_steps"], "burn_in": post["burn"], "seed": post["seed"],
                "prior": "flat inside the fit bounds", "sampler": "emcee EnsembleSampler"}
            out["_posterior_chain"] = post["chain"]
    if suggest is not None:
        theta_s = fit_result["theta"] if fit_result is not None else theta0
        if fit_result is not None:
            objective_s = objective
        else:
            _, conv = model.delta_T(theta0, data.temperature_K, data.volume_ratio,
                                    data.pressure_Pa, data.density_mol_m3)
            objective_s = Objective(model, data, np.flatnonzero(conv if predictor is None
                                                                else tab[2]),
                                    virial_data, predictor,
                                    None if predictor is None else tab[1][tab[2]])
        T_rng = suggest.get("temperature_K") or (float(data.temperature_K.min()),
                                                 float(data.temperature_K.max()))
        if suggest.get("pressure_Pa"):
            p_rng = suggest["pressure_Pa"]
        elif data.pressure_Pa is not None:
            p_rng = (float(data.pressure_Pa.min()), float(data.pressure_Pa.max()))
        else:
            raise StudyError("option --suggest: the data give densities, so give the candidate "
                             'pressures with --suggest-pressure LOW HIGH (for example "5 bar" '
                             '"50 bar")')
        r_rng = suggest.get("volume_ratio") or (float(data.volume_ratio.min()),
                                                float(data.volume_ratio.max()))
        u_new = suggest.get("uncertainty_K") or float(np.median(data.delta_T_uncertainty_K))
        out["suggestions"] = suggest_experiments(
            model, theta_s, objective_s, T_rng, p_rng, r_rng, u_new,
            criterion=suggest.get("criterion", "det"), count=suggest.get("count", 5),
            predictor=predictor)
        out["suggestions"]["at"] = "fitted parameters" if fit_result is not None \
            else "the study's parameters"
    return out
