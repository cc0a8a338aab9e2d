"""A pair potential given as a table of points (r, u), and the reader of such files.

The points are smoothed by a cubic spline resampled on uniform knots, so the
kernels find a distance's interval by one division (:func:`mdsim.engine.forms.pair_eval`).
"""
import numpy as np

from mdsim.engine.forms import EPS, FORM_TABLE, RCORE, SIG, T_DR, T_N, T_R0
from mdsim.engine.pair_potential import PairPotential
from mdsim.errors import StudyError

__all__ = ["Tabulated", "read_table"]


class Tabulated(PairPotential):
    """A potential given as points (r, u), smoothed by a cubic spline.

    The points are interpolated by a not-a-knot cubic spline, resampled on
    ``n_knots`` uniform knots (so kernels find the interval by one division)
    and splined again.  Below the first point u = +inf (a hard wall: the
    table should start well inside the repulsive wall); beyond the last
    point u = 0 (the table should reach where u is negligible).

    Parameters
    ----------
    r, u : array_like, shape=(n_points,)
        Distances (strictly increasing, positive) and energies.
    source : str, optional
        Where the table came from (kept for reports).
    """

    form = FORM_TABLE
    name = "table"
    MIN_POINTS = 8

    def __init__(self, r, u, source="", n_knots=4001):
        super().__init__()
        from scipy.interpolate import CubicSpline
        r = np.asarray(r, dtype=float).ravel()
        u = np.asarray(u, dtype=float).ravel()
        where = f" ({source})" if source else ""
        if r.size != u.size:
            raise StudyError(f"potential table{where}: {r.size} distances but {u.size} energies")
        if r.size < self.MIN_POINTS:
            raise StudyError(f"potential table{where}: {r.size} points; need at least "
                             f"{self.MIN_POINTS} to define a smooth spline")
        if not (np.all(np.isfinite(r)) and np.all(np.isfinite(u))):
            bad = int(np.flatnonzero(~(np.isfinite(r) & np.isfinite(u)))[0])
            raise StudyError(f"potential table{where}: row {bad + 1} is not a finite number")
        if r[0] <= 0.0:
            raise StudyError(f"potential table{where}: first distance {r[0]!r} must be positive")
        steps = np.diff(r)
        if np.any(steps <= 0.0):
            bad = int(np.flatnonzero(steps <= 0.0)[0])
            raise StudyError(f"potential table{where}: distances must increase strictly; row {bad + 2} "
                             f"(r = {r[bad + 1]!r}) does not exceed row {bad + 1} (r = {r[bad]!r})")
        self.source = source
        self.r_points = r
        self.u_points = u
        fine = CubicSpline(r, u)
        knots = np.linspace(r[0], r[-1], n_knots)
        spline = CubicSpline(knots, fine(knots))
        # CubicSpline.c has shape (4, n_intervals): c[0] t^3 + c[1] t^2 + c[2] t + c[3]
        self.table = np.ascontiguousarray(spline.c.T)
        p = self.params
        p[T_R0] = knots[0]
        p[T_DR] = knots[1] - knots[0]
        p[T_N] = n_knots - 1
        p[RCORE] = knots[0]
        grid = np.linspace(r[0], r[-1], 20 * n_knots)
        ug = self.energy(grid)
        kmin = int(np.argmin(ug))
        if ug[kmin] >= 0.0:
            raise StudyError(f"potential table{where}: u(r) is never negative; a table needs an "
                             "attractive well (its depth defines epsilon)")
        p[EPS] = -ug[kmin]
        if ug[0] <= 0.0:
            raise StudyError(f"potential table{where}: u at the first distance r = {r[0]!r} is "
                             f"{u[0]!r}; the table must start inside the repulsive wall (u > 0)")
        above = np.flatnonzero(ug[:kmin] > 0.0)
        from scipy.optimize import brentq
        k0 = int(above[-1])
        p[SIG] = brentq(lambda x: float(self.energy(x)), grid[k0], grid[k0 + 1], xtol=1e-13)

    @property
    def r_max(self):
        return float(self.r_points[-1])

    def tail_integrals(self, rc):
        """int_rc^r_max u r^2 dr and int_rc^r_max u' r^3 dr, exactly for the spline.

        Between knots u is a cubic, so both integrands are polynomials of
        degree 5: four-point Gauss-Legendre on every knot interval (and on
        the part interval from rc) is exact up to round-off.
        """
        if rc >= self.r_max:
            return 0.0, 0.0
        p = self.params
        knots = p[T_R0] + p[T_DR] * np.arange(int(p[T_N]) + 1)
        edges = np.concatenate(([rc], knots[knots > rc]))
        x, w = np.polynomial.legendre.leggauss(4)
        mid, half = 0.5 * (edges[1:] + edges[:-1]), 0.5 * np.diff(edges)
        r = (mid[:, None] + half[:, None] * x[None, :]).ravel()
        wr = (half[:, None] * w[None, :]).ravel()
        return (float(np.sum(wr * self.energy(r) * r * r)),
                float(np.sum(wr * self.dudr(r) * r ** 3)))

    def scaled(self, energy_unit, length_unit):
        return Tabulated(self.r_points / length_unit, self.u_points / energy_unit,
                         source=self.source, n_knots=int(self.params[T_N]) + 1)

    def describe(self):
        return {"form": self.name, "epsilon": self.epsilon, "sigma": self.sigma,
                "source": self.source, "points": int(self.r_points.size)}


def read_table(path, energy_scale=1.0, length_scale=1.0):
    """Read a two-column (r, u) text file as numbers only and build a table.

    Lines starting with '#' and a non-numeric header line are skipped;
    columns may be separated by commas or white space.  ``r`` is multiplied
    by ``length_scale`` and ``u`` by ``energy_scale`` (unit conversion).
    """
    import os
    path = os.fspath(path)
    if not os.path.exists(path):
        raise StudyError(f"potential table file '{path}' does not exist")
    if os.path.isdir(path):
        raise StudyError(f"potential table file '{path}' is a directory, not a file")
    if not os.path.isfile(path):  # a device or pipe (/dev/zero) would never end
        raise StudyError(f"potential table file '{path}' is not a regular file; give a CSV file")
    if os.path.getsize(path) > 50_000_000:
        raise StudyError(f"potential table file '{path}' is larger than 50 MB; a pair-potential "
                         "table needs a few thousand lines at most")
    rows = []
    try:
        with open(path, encoding="utf-8") as fh:
            for lineno, line in enumerate(fh, 1):
                text = line.split("#", 1)[0].strip()
                if not text:
                    continue
                fields = text.replace(",", " ").split()
                try:
                    values = [float(f) for f in fields]
                except ValueError:
                    if not rows:
                        continue  # a header line
                    raise StudyError(f"potential table file '{path}', line {lineno}: "
                                     f"'{text}' is not two numbers") from None
                if len(values) != 2:
                    raise StudyError(f"potential table file '{path}', line {lineno}: expected two "
                                     f"columns (r, u), found {len(values)}")
                rows.append(values)
    except UnicodeDecodeError:
        raise StudyError(f"potential table file '{path}' is not UTF-8 text") from None
    if not rows:
        raise StudyError(f"potential table file '{path}' holds no numbers")
    data = np.array(rows)
    return Tabulated(data[:, 0] * length_scale, data[:, 1] * energy_scale, source=path)
