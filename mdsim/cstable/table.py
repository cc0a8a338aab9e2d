"""Corresponding-states tables: u_res*(T*, rho*) of one potential shape, read and interpolated.

For a pair potential whose shape is fixed (Lennard-Jones; Mie with fixed
exponents), u(r) = epsilon phi(r / sigma): every (epsilon, sigma) maps onto
one reduced problem, so the reduced residual properties
u_res*(T*, rho*), Z(T*, rho*) and c_v,res*(T*, rho*) computed once on a grid
serve every parameter set.  A check or a fit then evaluates thousands of
expansions in milliseconds instead of running simulations.

Reduced units throughout: T* = kT / epsilon, rho* = rho sigma^3, u* per
particle in epsilon, c_v* per particle in k, Z = p / (rho k T).  Array
suffixes: ``_t`` grid temperatures, ``_d`` grid densities (the first is 0),
``_td`` a value per grid point, ``_q`` query points.

Notes
-----
The table holds q(T, rho) = q_vir(T, rho) + w(rho) D_q(T, rho), where
q_vir is the B2 + B3 virial series of the same potential
(:class:`mdsim.cstable.series.VirialSeries`), D_q is a tensor-product
interpolating spline (cubic where four or more nodes allow; in ln T* and
rho*) of the simulated departures from the series (exactly 0 at rho* = 0),
and w(rho) is a smooth step from 0 below ``virial_below`` to 1 above
``simulation_above`` (:func:`mdsim.cstable.series.blend`).  Below
``virial_below`` the table is therefore the exact low-density series.  The
spline is linear in its data, so the standard error of any interpolated
value (and the covariance of two) follows exactly from the per-point
standard errors, which are independent.
"""
import json
import math
from pathlib import Path

import numpy as np

from mdsim.cstable.series import VirialSeries, blend, cardinal_basis
from mdsim.errors import SettingError, StudyError

__all__ = ["CorrespondingStatesTable", "FORMAT_NAME", "FORMAT_VERSION", "QUANTITIES"]

FORMAT_NAME = "mdsim-corresponding-states-table"
FORMAT_VERSION = 1
QUANTITIES = ("u_res", "Z", "cv_res")


class CorrespondingStatesTable:
    """Reduced residual properties of one potential shape on a (T*, rho*) grid.

    Use :meth:`load` to read a table file.  All methods take reduced
    temperatures and densities (scalars or arrays of one shape) and return
    ``(value, stderr)`` with that shape.

    Attributes
    ----------
    temperature_red : ndarray, shape=(n_t,)
    density_red : ndarray, shape=(n_d,), the first 0
    form : str
    shape : dict
        Mie exponents (empty for LJ).
    cutoff_red : float
    interpolation_error : dict
        Hold-out summary per quantity: ``rms_abs``, ``max_abs`` (reduced),
        ``rms_z`` (error over the combined standard error), ``n``.
    provenance : dict
        The file's attributes.
    coexistence_T_red : ndarray
        Temperatures of the file's coexistence grid (empty without one;
        :mod:`mdsim.sampling.coexistence_grid` reads the points).
    """

    def __init__(self, temperature_red, density_red, data, stderr, virial_nodes, form, shape,
                 cutoff_red, virial_below, simulation_above, provenance):
        self.temperature_red = np.asarray(temperature_red, dtype=float)
        self.density_red = np.asarray(density_red, dtype=float)
        self.form = form
        self.shape = dict(shape)
        self.cutoff_red = float(cutoff_red)
        self.virial_below = float(virial_below)
        self.simulation_above = float(simulation_above)
        self.provenance = dict(provenance)
        self.coexistence_T_red = np.zeros(0)
        self.interpolation_error = json.loads(provenance["interpolation_error"]) \
            if "interpolation_error" in provenance else {}
        self._series = VirialSeries(virial_nodes)
        self._x_t = np.log(self.temperature_red)
        self._bx = cardinal_basis(self._x_t)
        self._bxd = self._bx.derivative()
        self._by = cardinal_basis(self.density_red)
        self.data = {q: np.asarray(data[q], dtype=float) for q in QUANTITIES}
        self.stderr = {q: np.asarray(stderr[q], dtype=float) for q in QUANTITIES}
        self._dep = {}
        for q in QUANTITIES:
            vir = self._series(q, self.temperature_red[:, None], self.density_red[None, :])
            self._dep[q] = self.data[q] - vir
        self._var = {q: self.stderr[q] ** 2 for q in QUANTITIES}

    # -- reading ----------------------------------------------------------------------
    @classmethod
    def load(cls, path):
        """Read a table file written by :func:`assemble_table`."""
        import h5py
        path = Path(path)
        if not path.is_file():
            raise StudyError(f"table file '{path}' does not exist; build one with "
                             "'mdsim table build STUDY'")
        try:
            f = h5py.File(path, "r")
        except OSError as exc:
            raise StudyError(f"table file '{path}' is not an HDF5 file ({exc})") from None
        with f:
            attrs = {k: (v.decode() if isinstance(v, bytes) else v) for k, v in f.attrs.items()}
            if attrs.get("format") != FORMAT_NAME:
                raise StudyError(f"table file '{path}' is not a corresponding-states table "
                                 f"(format {attrs.get('format')!r}); build one with "
                                 "'mdsim table build'")
            if int(attrs.get("format_version", -1)) > FORMAT_VERSION:
                raise StudyError(f"table file '{path}' has format version "
                                 f"{attrs['format_version']}, newer than this tool reads "
                                 f"({FORMAT_VERSION}); update the tool")
            data = {q: f[q][()] for q in QUANTITIES}
            err = {q: f[f"{q}_stderr"][()] for q in QUANTITIES}
            vir = {k: f["virial"][k][()] for k in f["virial"]}
            table = cls(f["temperature_red"][()], f["density_red"][()], data, err, vir,
                        attrs["form"], json.loads(attrs["shape"]), attrs["cutoff_sigma"],
                        attrs["virial_below"], attrs["simulation_above"], attrs)
            table.path = path
            table.coexistence_T_red = (f["coexistence"]["T_red"][()] if "coexistence" in f
                                       else np.zeros(0))
        return table

    # -- ranges -------------------------------------------------------------------------
    @property
    def T_range(self):
        return float(self.temperature_red[0]), float(self.temperature_red[-1])

    @property
    def rho_range(self):
        return float(self.density_red[0]), float(self.density_red[-1])

    def covers(self, T_red, rho_red):
        """True where (T*, rho*) lies inside the grid (bool or bool array)."""
        T = np.asarray(T_red, dtype=float)
        rho = np.asarray(rho_red, dtype=float)
        lo, hi = self.T_range
        out = (T >= lo) & (T <= hi) & (rho >= 0.0) & (rho <= self.rho_range[1])
        return bool(out) if out.ndim == 0 else out

    def require_inside(self, T, rho):
        """Raise StudyError unless every (T*, rho*) lies inside the grid."""
        inside = np.asarray(self.covers(T, rho))
        if not np.all(inside):
            k = np.flatnonzero(~inside.ravel())[0]
            t, r = np.broadcast_to(T, inside.shape).ravel()[k], np.broadcast_to(rho, inside.shape).ravel()[k]
            raise StudyError(
                f"state T* = {t:.6g}, rho* = {r:.6g} is outside the corresponding-states table "
                f"(T* {self.T_range[0]:g} to {self.T_range[1]:g}, rho* 0 to "
                f"{self.rho_range[1]:g}); build a table with a wider [table] grid or use a "
                "simulation route")

    # -- weights ------------------------------------------------------------------------
    def weights(self, T_red, rho_red, derivative=0):
        """Interpolation weights of the grid data, shape=(n_q, n_t, n_d).

        The table value of a quantity q at the query points is
        q_vir + sum_td W_qtd (q_td - q_vir_td); ``derivative=1`` gives the
        weights of d/dT*.
        """
        T = np.atleast_1d(np.asarray(T_red, dtype=float)).ravel()
        rho = np.atleast_1d(np.asarray(rho_red, dtype=float)).ravel()
        x = np.log(T)
        if derivative == 1:
            Lx = self._bxd(x) / T[:, None]
        else:
            Lx = self._bx(x)
        My = self._by(rho) * blend(rho, self.virial_below, self.simulation_above)[:, None]
        return Lx[:, :, None] * My[:, None, :]

    def _evaluate(self, q, T_red, rho_red, derivative=0):
        T = np.asarray(T_red, dtype=float)
        rho = np.asarray(rho_red, dtype=float)
        T, rho = np.broadcast_arrays(T, rho)
        self.require_inside(T, rho)
        W = self.weights(T, rho, derivative)
        value = self._series(q, T.ravel(), rho.ravel(), derivative) \
            + np.einsum("qtd,td->q", W, self._dep[q])
        se = np.sqrt(np.einsum("qtd,td->q", W * W, self._var[q]))
        if T.ndim == 0:
            return float(value[0]), float(se[0])
        return value.reshape(T.shape), se.reshape(T.shape)

    def u_res(self, T_red, rho_red, derivative=0):
        """Residual energy per particle / epsilon (full potential), and its standard error.

        ``derivative=1``: d u_res*/dT* (the residual heat capacity per
        particle in k implied by the energies) and its standard error.
        """
        if derivative not in (0, 1):
            raise SettingError("derivative", derivative, "allowed 0 or 1")
        return self._evaluate("u_res", T_red, rho_red, derivative)

    def cv_res(self, T_red, rho_red):
        """Residual heat capacity per particle / k from the energy fluctuations."""
        return self._evaluate("cv_res", T_red, rho_red)

    def compressibility(self, T_red, rho_red):
        """Z = p / (rho k T) and its standard error."""
        return self._evaluate("Z", T_red, rho_red)

    def u_res_difference(self, T1, rho1, T2, rho2):
        """u_res*(T2, rho2) - u_res*(T1, rho1) and its standard error (covariance included)."""
        self.require_inside(np.asarray([T1, T2]), np.asarray([rho1, rho2]))
        W = self.weights([T1, T2], [rho1, rho2])
        v = self._series("u_res", np.array([T1, T2]), np.array([rho1, rho2]))
        u = v + np.einsum("qtd,td->q", W, self._dep["u_res"])
        dW = W[1] - W[0]
        return float(u[1] - u[0]), float(np.sqrt(np.sum(dW * dW * self._var["u_res"])))

    def density_from_pressure(self, T_red, p_red):
        """The gas-branch rho* with rho T Z(T, rho) = p* (reduced), and its standard error."""
        from scipy.optimize import brentq
        T = float(T_red)
        p = float(p_red)
        self.require_inside(T, 0.0)
        rho_grid = np.linspace(0.0, self.rho_range[1], 8 * len(self.density_red))
        Z, _ = self.compressibility(np.full_like(rho_grid, T), rho_grid)
        f = rho_grid * T * Z - p
        k = np.flatnonzero((f[:-1] <= 0.0) & (f[1:] > 0.0))
        if p <= 0.0 or not len(k):
            raise StudyError(
                f"initial pressure p* = {p:.6g} at T* = {T:.6g} is not reached inside the "
                f"corresponding-states table (rho* up to {self.rho_range[1]:g} gives p* up to "
                f"{np.nanmax(rho_grid * T * Z):.4g}); give the initial density instead or "
                "build a table reaching higher densities")
        a, b = rho_grid[k[0]], rho_grid[k[0] + 1]
        rho = brentq(lambda r: r * T * self.compressibility(T, r)[0] - p, a, b, xtol=1e-14,
                     rtol=1e-13)
        Z0, sZ = self.compressibility(T, rho)
        # d rho / d Z at fixed p: rho_i = p / (T Z) to first order.
        return float(rho), float(rho * sZ / Z0)

    # -- hold-out ---------------------------------------------------------------------------
    def hold_out(self):
        """Leave each interior grid node out along each axis and predict it from the rest.

        Returns
        -------
        dict
            ``points``: arrays ``quantity`` (index into QUANTITIES), ``axis`` (0 T, 1 rho),
            ``i_t``, ``i_d``, ``predicted``, ``actual``, ``stderr`` (combined);
            ``summary``: per quantity {rms_abs, max_abs, rms_z, n}.  Holding a node out
            doubles the local spacing, so these overstate the error of the full table.
        """
        from scipy.interpolate import make_interp_spline
        rows = []
        n_t, n_d = len(self.temperature_red), len(self.density_red)
        for qi, q in enumerate(QUANTITIES):
            D, V = self._dep[q], self._var[q]
            for axis, coords, n in ((0, self._x_t, n_t), (1, self.density_red, n_d)):
                if n < 3:
                    continue
                for k in range(1, n - 1):
                    keep = np.array([m for m in range(n) if m != k])
                    basis = make_interp_spline(coords[keep], np.eye(len(keep)),
                                               k=min(3, len(keep) - 1))(coords[k])
                    others = range(1, n_d) if axis == 0 else range(n_t)
                    for o in others:
                        i, j = (k, o) if axis == 0 else (o, k)
                        if j == 0:
                            continue
                        line = D[keep, j] if axis == 0 else D[i, keep]
                        lvar = V[keep, j] if axis == 0 else V[i, keep]
                        pred = float(basis @ line)
                        se = math.sqrt(float(basis ** 2 @ lvar) + V[i, j])
                        rows.append((qi, axis, i, j, pred, D[i, j], se))
        arr = np.array(rows, dtype=float).reshape(-1, 7)
        points = {name: arr[:, c] for c, name in enumerate(
            ("quantity", "axis", "i_t", "i_d", "predicted", "actual", "stderr"))}
        summary = {}
        for qi, q in enumerate(QUANTITIES):
            sel = arr[:, 0] == qi
            if not np.any(sel):
                summary[q] = {"n": 0}
                continue
            d = arr[sel, 4] - arr[sel, 5]
            z = d / np.where(arr[sel, 6] > 0, arr[sel, 6], np.inf)
            summary[q] = {"n": int(sel.sum()), "rms_abs": float(np.sqrt(np.mean(d * d))),
                          "max_abs": float(np.max(np.abs(d))),
                          "rms_z": float(np.sqrt(np.mean(z * z)))}
        return {"points": points, "summary": summary}

    def describe(self):
        """A few lines for `mdsim table show`."""
        lines = [f"corresponding-states table: {self.form} {self.shape or ''}".rstrip(),
                 f"  cut-off {self.cutoff_red:g} sigma (analytic tail beyond)",
                 f"  T* {len(self.temperature_red)} nodes: "
                 + ", ".join(f"{t:g}" for t in self.temperature_red),
                 f"  rho* {len(self.density_red)} nodes: "
                 + ", ".join(f"{r:g}" for r in self.density_red),
                 f"  exact B2 + B3 series below rho* = {self.virial_below:g}, simulation above "
                 f"{self.simulation_above:g}"]
        grid = self.coexistence_T_red
        if grid.size:
            lines.append(f"  coexistence grid (Gibbs ensemble): {len(grid)} temperatures, T* "
                         + ", ".join(f"{t:g}" for t in grid))
        p = self.provenance
        if p:
            lines.append(f"  built {p.get('created', '?')} from study {p.get('study_name', '?')}: "
                         f"{p.get('method')}, N >= {p.get('particles_requested')}, "
                         f"{p.get('equilibration_sweeps')} + {p.get('samples')} sweeps, "
                         f"seed {p.get('seed')}")
        for q, s in self.interpolation_error.items():
            if s.get("n"):
                lines.append(f"  hold-out error {q}: rms {s['rms_abs']:.2g}, max {s['max_abs']:.2g}"
                             f" (reduced), rms z {s['rms_z']:.2g} over {s['n']} held-out nodes")
        return "\n".join(lines)
