"""Spherical pair potentials, defined once for numba kernels and for NumPy.

Every potential is a small Python object (``LennardJones``, ``Mie``,
``Exp6``, ``Tabulated``) that packs itself into a flat float64 parameter row
(``params``, length ``N_PARAM``, layout below) and, for tables, a spline
coefficient array (``table``).  The one scalar function :func:`pair_eval`
evaluates any form from ``(form, params, table, r2)``; numba kernels call it
in their inner loops, and the vectorised NumPy methods of the objects
(``energy``, ``dudr``) loop over it too, so each formula lives in exactly one
place.

Units are whatever the caller chooses, used consistently: energies in one
unit (for example epsilon/k in kelvin, or 1 in reduced units), lengths in
another (angstrom, or sigma).  ``scaled`` returns the same potential in
other units, which is how the engine obtains reduced Lennard-Jones units.

Array suffixes: ``_r`` a grid of distances.

Parameter row layout (indices are module constants):
    EPS     well depth (exp-6, table: depth of the minimum)
    SIG     distance of the zero crossing, u(SIG) = 0
    REP     repulsive exponent n (Mie; 12 for LJ)
    ATT     attractive exponent m (Mie; 6 for LJ)
    PREF    Mie prefactor C(n, m) (4 for LJ)
    ALPHA   exp-6 steepness
    RMIN    exp-6 position of the minimum
    RCORE   hard-core radius: below it u = +inf (exp-6 guard, table start)
    RC      cut-off radius (set by the pair matrix; 0 here means none)
    RC2     RC squared
    SHIFT   u(RC), subtracted by the truncated-and-shifted model of MD
    T_R0    table: first knot
    T_DR    table: knot spacing
    T_N     table: number of intervals
    EXPA    exp-6: repulsive amplitude A of A exp(-B r)
    EXPB    exp-6: B
    EXPC    exp-6: dispersion coefficient C of -C / r^6
"""
import abc
import math

import numpy as np
from numba import njit

from mdsim.errors import StudyError

FORM_LJ, FORM_MIE, FORM_EXP6, FORM_TABLE = 0, 1, 2, 3
FORM_NAMES = {FORM_LJ: "lennard-jones", FORM_MIE: "mie", FORM_EXP6: "exp-6", FORM_TABLE: "table"}

(EPS, SIG, REP, ATT, PREF, ALPHA, RMIN, RCORE, RC, RC2, SHIFT,
 T_R0, T_DR, T_N, EXPA, EXPB, EXPC) = range(17)
N_PARAM = 17

_NO_TABLE = np.zeros((1, 4))


@njit(cache=True, inline="always")
def pair_eval(form, p, table, r2):
    """Energy and scaled force of one pair at squared distance ``r2``.

    Parameters
    ----------
    form : int
        One of FORM_LJ, FORM_MIE, FORM_EXP6, FORM_TABLE.
    p : ndarray, shape=(N_PARAM,), float64
        Parameter row of the pair.
    table : ndarray, shape=(n_intervals, 4), float64
        Cubic spline coefficients (tables only; any array otherwise).
    r2 : float
        Squared distance, > 0.

    Returns
    -------
    u : float
        Pair energy (no cut-off applied; +inf inside a hard core).
    f_over_r : float
        -(du/dr) / r, so that the force on particle i is ``f_over_r * (r_i - r_j)``
        and the pair virial is ``f_over_r * r2``.

    Notes
    -----
    LJ: u = 4 eps [(s/r)^12 - (s/r)^6].
    Mie: u = C eps [(s/r)^n - (s/r)^m], C = n/(n-m) (n/m)^(m/(n-m)).
    exp-6 (modified Buckingham): u = A exp(-B r) - C6 / r^6 with
    A = eps 6/(alpha-6) e^alpha, B = alpha / r_min, C6 = eps alpha r_min^6/(alpha-6);
    below the spurious maximum (RCORE) u = +inf, the usual guard against
    its collapse.  Table: cubic spline in r on uniform knots; below the
    first knot u = +inf, beyond the last knot u = 0.
    """
    if form == FORM_LJ:
        inv2 = 1.0 / r2
        s2 = p[SIG] * p[SIG] * inv2
        s6 = s2 * s2 * s2
        u = 4.0 * p[EPS] * (s6 * s6 - s6)
        f = 24.0 * p[EPS] * (2.0 * s6 * s6 - s6) * inv2
        return u, f
    elif form == FORM_MIE:
        inv2 = 1.0 / r2
        lg = math.log(p[SIG] * p[SIG] * inv2)
        sn = math.exp(0.5 * p[REP] * lg)
        sm = math.exp(0.5 * p[ATT] * lg)
        ce = p[PREF] * p[EPS]
        return ce * (sn - sm), ce * (p[REP] * sn - p[ATT] * sm) * inv2
    elif form == FORM_EXP6:
        if r2 < p[RCORE] * p[RCORE]:
            return np.inf, np.inf
        r = math.sqrt(r2)
        inv2 = 1.0 / r2
        rep = p[EXPA] * math.exp(-p[EXPB] * r)
        disp = p[EXPC] * inv2 * inv2 * inv2
        return rep - disp, (p[EXPB] * r * rep - 6.0 * disp) * inv2
    else:
        r = math.sqrt(r2)
        x = (r - p[T_R0]) / p[T_DR]
        if x < 0.0:
            return np.inf, np.inf
        k = int(x)
        if k >= int(p[T_N]):
            return 0.0, 0.0
        t = (x - k) * p[T_DR]
        c0 = table[k, 0]
        c1 = table[k, 1]
        c2 = table[k, 2]
        c3 = table[k, 3]
        u = ((c0 * t + c1) * t + c2) * t + c3
        du = (3.0 * c0 * t + 2.0 * c1) * t + c2
        return u, -du / r


@njit(cache=True)
def _eval_many(form, p, table, r_r, out_u, out_dudr):
    for k in range(r_r.size):
        u, f = pair_eval(form, p, table, r_r[k] * r_r[k])
        out_u[k] = u
        out_dudr[k] = -f * r_r[k]


class PairPotential(abc.ABC):
    """Base class: a spherical pair potential u(r) in the caller's units.

    Subclasses set ``form`` and fill ``params`` (and ``table``).  The
    attributes ``epsilon`` (well depth) and ``sigma`` (zero crossing) exist
    for every form; they define reduced units.
    """

    form = -1
    name = ""

    def __init__(self):
        self.params = np.zeros(N_PARAM)
        self.table = _NO_TABLE

    # -- NumPy views of the one formula -------------------------------------
    def _eval(self, r):
        r_r = np.ascontiguousarray(np.atleast_1d(np.asarray(r, dtype=float)).ravel())
        if np.any(r_r <= 0.0):
            raise ValueError("pair distances must be positive")
        u = np.empty_like(r_r)
        du = np.empty_like(r_r)
        _eval_many(self.form, self.params, self.table, r_r, u, du)
        shape = np.shape(r)
        return u.reshape(shape), du.reshape(shape)

    def energy(self, r):
        """u(r), vectorised; +inf inside a hard core."""
        return self._eval(r)[0]

    def dudr(self, r):
        """du/dr, vectorised (+inf inside a hard core is returned as -inf)."""
        return self._eval(r)[1]

    @property
    def epsilon(self):
        return float(self.params[EPS])

    @property
    def sigma(self):
        return float(self.params[SIG])

    @property
    def core_radius(self):
        """Below this distance u = +inf (0 when the form has no hard core)."""
        return float(self.params[RCORE])

    # -- long-range tail ------------------------------------------------------
    @abc.abstractmethod
    def tail_integrals(self, rc):
        """Integrals for the long-range corrections beyond a cut-off.

        Returns
        -------
        I_u : float
            int_rc^inf u(r) r^2 dr
        I_w : float
            int_rc^inf r u'(r) r^2 dr

        Notes
        -----
        With mole fractions x_a, number density rho:
        U_tail / N = 2 pi rho sum_ab x_a x_b I_u,ab and
        P_tail = -(2 pi / 3) rho^2 sum_ab x_a x_b I_w,ab
        (Allen and Tildesley, Computer Simulation of Liquids, section 2.8).
        """

    @abc.abstractmethod
    def scaled(self, energy_unit, length_unit):
        """The same potential with energies divided by ``energy_unit`` and
        lengths by ``length_unit`` (for example reduced LJ units)."""

    def describe(self):
        """Plain-words dictionary of the parameters (for files and reports)."""
        return {"form": self.name, "epsilon": self.epsilon, "sigma": self.sigma}

    def __repr__(self):
        args = ", ".join(f"{k}={v!r}" for k, v in self.describe().items() if k != "form")
        return f"{type(self).__name__}({args})"


def _positive(name, value):
    value = float(value)
    if not np.isfinite(value) or value <= 0.0:
        raise StudyError(f"potential setting '{name}' = {value!r}: must be a positive finite number")
    return value


class Mie(PairPotential):
    """Mie n-m potential u = C eps [(s/r)^n - (s/r)^m], n > m > 3."""

    form = FORM_MIE
    name = "mie"

    def __init__(self, epsilon, sigma, repulsive=12.0, attractive=6.0):
        super().__init__()
        eps = _positive("epsilon", epsilon)
        sig = _positive("sigma", sigma)
        n = float(repulsive)
        m = float(attractive)
        if not (np.isfinite(n) and np.isfinite(m)) or m <= 3.0 or n <= m:
            raise StudyError(
                f"Mie exponents repulsive={n!r}, attractive={m!r}: need repulsive > attractive > 3 "
                "(the tail integral diverges for attractive <= 3)")
        p = self.params
        p[EPS], p[SIG], p[REP], p[ATT] = eps, sig, n, m
        p[PREF] = n / (n - m) * (n / m) ** (m / (n - m))

    @property
    def repulsive(self):
        return float(self.params[REP])

    @property
    def attractive(self):
        return float(self.params[ATT])

    def tail_integrals(self, rc):
        p = self.params
        ce, s, n, m = p[PREF] * p[EPS], p[SIG], p[REP], p[ATT]
        a = s ** n * rc ** (3.0 - n) / (n - 3.0)
        b = s ** m * rc ** (3.0 - m) / (m - 3.0)
        return ce * (a - b), ce * (-n * a + m * b)

    def scaled(self, energy_unit, length_unit):
        return type(self)._rebuild(self, self.epsilon / energy_unit, self.sigma / length_unit)

    @staticmethod
    def _rebuild(old, eps, sig):
        return Mie(eps, sig, old.repulsive, old.attractive)

    def describe(self):
        return {"form": self.name, "epsilon": self.epsilon, "sigma": self.sigma,
                "repulsive": self.repulsive, "attractive": self.attractive}


class LennardJones(Mie):
    """Lennard-Jones 12-6: u = 4 eps [(s/r)^12 - (s/r)^6]."""

    form = FORM_LJ
    name = "lennard-jones"

    def __init__(self, epsilon, sigma):
        super().__init__(epsilon, sigma, 12.0, 6.0)
        self.params[PREF] = 4.0

    @staticmethod
    def _rebuild(old, eps, sig):
        return LennardJones(eps, sig)

    def describe(self):
        return {"form": self.name, "epsilon": self.epsilon, "sigma": self.sigma}


class Exp6(PairPotential):
    """Modified Buckingham exp-6 potential with a hard-core guard.

    u = eps/(1 - 6/alpha) [ (6/alpha) exp(alpha (1 - r/r_min)) - (r_min/r)^6 ]
    for r above the spurious maximum, +inf below it.

    Parameters
    ----------
    epsilon : float
        Well depth.
    r_min : float
        Position of the minimum.
    alpha : float
        Steepness, > 6 (typically 12 to 16).
    """

    form = FORM_EXP6
    name = "exp-6"

    def __init__(self, epsilon, r_min, alpha):
        super().__init__()
        eps = _positive("epsilon", epsilon)
        rm = _positive("r_min", r_min)
        a = float(alpha)
        if not np.isfinite(a) or a <= 6.0:
            raise StudyError(f"exp-6 setting 'alpha' = {alpha!r}: must be > 6 (typically 12 to 16)")
        p = self.params
        p[EPS], p[RMIN], p[ALPHA] = eps, rm, a
        p[EXPA] = eps * 6.0 / (a - 6.0) * math.exp(a)
        p[EXPB] = a / rm
        p[EXPC] = eps * a * rm ** 6 / (a - 6.0)
        p[RCORE] = self._spurious_maximum()
        p[SIG] = self._zero_crossing()

    def _du(self, r):
        p = self.params
        return -p[EXPB] * p[EXPA] * math.exp(-p[EXPB] * r) + 6.0 * p[EXPC] / r ** 7

    def _spurious_maximum(self):
        from scipy.optimize import brentq
        rm = self.params[RMIN]
        # Left of the minimum du/dr < 0; below the spurious maximum du/dr > 0
        # (u falls to -inf as r -> 0).  Walk down from r_min to bracket it.
        hi = 0.999 * rm
        lo = 0.9 * hi
        while self._du(lo) < 0.0:
            hi, lo = lo, 0.9 * lo
            if lo < 1e-6 * rm:
                raise StudyError("exp-6: could not locate the short-range maximum; check alpha")
        return brentq(self._du, lo, hi, xtol=1e-14 * rm)

    def _zero_crossing(self):
        from scipy.optimize import brentq
        p = self.params

        def u(r):
            return p[EXPA] * math.exp(-p[EXPB] * r) - p[EXPC] / r ** 6
        return brentq(u, p[RCORE] * (1 + 1e-12), p[RMIN], xtol=1e-14 * p[RMIN])

    @property
    def r_min(self):
        return float(self.params[RMIN])

    @property
    def alpha(self):
        return float(self.params[ALPHA])

    def tail_integrals(self, rc):
        p = self.params
        A, B, C = p[EXPA], p[EXPB], p[EXPC]
        e = A * math.exp(-B * rc)
        i_u = e * (rc ** 2 / B + 2 * rc / B ** 2 + 2 / B ** 3) - C / (3 * rc ** 3)
        i_w = -B * e * (rc ** 3 / B + 3 * rc ** 2 / B ** 2 + 6 * rc / B ** 3 + 6 / B ** 4) \
            + 2 * C / rc ** 3
        return i_u, i_w

    def scaled(self, energy_unit, length_unit):
        return Exp6(self.epsilon / energy_unit, self.r_min / length_unit, self.alpha)

    def describe(self):
        return {"form": self.name, "epsilon": self.epsilon, "r_min": self.r_min,
                "alpha": self.alpha, "sigma": self.sigma}


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
        from scipy.integrate import quad
        if rc >= self.r_max:
            return 0.0, 0.0
        pts = np.linspace(rc, self.r_max, 64)
        i_u = i_w = 0.0
        for a, b in zip(pts[:-1], pts[1:]):
            i_u += quad(lambda r: float(self.energy(r)) * r * r, a, b, epsabs=1e-13, epsrel=1e-11)[0]
            i_w += quad(lambda r: float(self.dudr(r)) * r ** 3, a, b, epsabs=1e-13, epsrel=1e-11)[0]
        return i_u, i_w

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


# --- mixtures ------------------------------------------------------------------

def combine(a, b, k_ij=0.0):
    """Cross potential of two like-form potentials by Lorentz-Berthelot rules.

    sigma_ab = (sigma_a + sigma_b)/2, eps_ab = (1 - k_ij) sqrt(eps_a eps_b);
    for Mie the exponents combine as n_ab - 3 = sqrt((n_a - 3)(n_b - 3))
    (Lafitte et al., J. Chem. Phys. 139, 154504, 2013); for exp-6, r_min
    arithmetic and alpha geometric.  Tables cannot be combined.
    """
    if type(a) is not type(b):
        raise StudyError(f"mixture: species use different potential forms ({a.name}, {b.name}); "
                         "all species of a mixture must use the same form")
    eps = (1.0 - k_ij) * math.sqrt(a.epsilon * b.epsilon)
    if isinstance(a, LennardJones):
        return LennardJones(eps, 0.5 * (a.sigma + b.sigma))
    if isinstance(a, Mie):
        n = 3.0 + math.sqrt((a.repulsive - 3.0) * (b.repulsive - 3.0))
        m = 3.0 + math.sqrt((a.attractive - 3.0) * (b.attractive - 3.0))
        return Mie(eps, 0.5 * (a.sigma + b.sigma), n, m)
    if isinstance(a, Exp6):
        return Exp6(eps, 0.5 * (a.r_min + b.r_min), math.sqrt(a.alpha * b.alpha))
    raise StudyError("mixture: tabulated potentials cannot be combined by Lorentz-Berthelot "
                     "rules; give a single-species table")


class PairMatrix:
    """All pair interactions of a system with its cut-off.

    Parameters
    ----------
    species_potentials : list of PairPotential, length n_species
        Like-pair potential of each species (same form for all).
    cutoff : float
        Cut-off in units of each pair's sigma: rc_ab = cutoff * sigma_ab.
    k_ij : ndarray, shape=(n_species, n_species), optional
        Binary interaction parameters (symmetric, zero diagonal).
    cross : dict, optional
        Explicit cross potentials {(a, b): PairPotential} overriding the rules.

    Attributes
    ----------
    form : int
    params_ab : ndarray, shape=(n_species, n_species, N_PARAM), float64
        Parameter rows with RC, RC2 and SHIFT filled in.
    table : ndarray, shape=(n_intervals, 4)
    pots : list of list of PairPotential
    rc_max : float
    """

    def __init__(self, species_potentials, cutoff, k_ij=None, cross=None):
        pots = list(species_potentials)
        if not pots:
            raise StudyError("a system needs at least one species")
        cutoff = float(cutoff)
        if not np.isfinite(cutoff) or cutoff <= 0.0:
            raise StudyError(f"setting 'cutoff' = {cutoff!r}: must be a positive number of sigmas "
                             "(typically 2.5 to 5)")
        ns = len(pots)
        k = np.zeros((ns, ns)) if k_ij is None else np.asarray(k_ij, dtype=float)
        if k.shape != (ns, ns) or not np.allclose(k, k.T):
            raise StudyError(f"k_ij must be a symmetric {ns}x{ns} matrix")
        cross = dict(cross or {})
        self.form = pots[0].form
        self.cutoff = cutoff
        self.pots = [[None] * ns for _ in range(ns)]
        for a in range(ns):
            for b in range(a, ns):
                if (a, b) in cross or (b, a) in cross:
                    pot = cross.get((a, b), cross.get((b, a)))
                elif a == b:
                    pot = pots[a]
                else:
                    pot = combine(pots[a], pots[b], k[a, b])
                if pot.form != self.form:
                    raise StudyError("all pair potentials of a system must use the same form")
                self.pots[a][b] = self.pots[b][a] = pot
        tables = {id(p.table) for row in self.pots for p in row if p.form == FORM_TABLE}
        if len(tables) > 1:
            raise StudyError("only one tabulated potential per system is supported")
        self.table = self.pots[0][0].table
        self.params_ab = np.zeros((ns, ns, N_PARAM))
        for a in range(ns):
            for b in range(ns):
                pot = self.pots[a][b]
                row = pot.params.copy()
                rc = cutoff * pot.sigma
                if pot.form == FORM_TABLE and rc > pot.r_max:
                    rc = pot.r_max
                row[RC] = rc
                row[RC2] = rc * rc
                row[SHIFT] = float(pot.energy(rc))
                self.params_ab[a, b] = row
        self.rc_max = float(self.params_ab[:, :, RC].max())

    @property
    def n_species(self):
        return self.params_ab.shape[0]

    def tail_corrections(self, number_density, fractions_a):
        """Long-range energy per particle and pressure beyond the cut-offs.

        Parameters
        ----------
        number_density : float
        fractions_a : array_like, shape=(n_species,)
            Mole (number) fractions.

        Returns
        -------
        u_tail : float  (energy per particle)
        p_tail : float  (pressure, energy / length^3)
        """
        x = np.asarray(fractions_a, dtype=float)
        su = sw = 0.0
        for a in range(self.n_species):
            for b in range(self.n_species):
                i_u, i_w = self.pots[a][b].tail_integrals(self.params_ab[a, b, RC])
                su += x[a] * x[b] * i_u
                sw += x[a] * x[b] * i_w
        rho = float(number_density)
        return 2.0 * math.pi * rho * su, -2.0 * math.pi / 3.0 * rho * rho * sw

    def scaled(self, energy_unit, length_unit):
        """The same matrix with all potentials rescaled (cut-off factor kept)."""
        new = PairMatrix.__new__(PairMatrix)
        ns = self.n_species
        new.form = self.form
        new.cutoff = self.cutoff
        new.pots = [[self.pots[a][b].scaled(energy_unit, length_unit) if a <= b else None
                     for b in range(ns)] for a in range(ns)]
        for a in range(ns):
            for b in range(a):
                new.pots[a][b] = new.pots[b][a]
        new.table = new.pots[0][0].table
        new.params_ab = np.zeros_like(self.params_ab)
        for a in range(ns):
            for b in range(ns):
                row = new.pots[a][b].params.copy()
                rc = self.params_ab[a, b, RC] / length_unit
                row[RC], row[RC2] = rc, rc * rc
                row[SHIFT] = float(new.pots[a][b].energy(rc))
                new.params_ab[a, b] = row
        new.rc_max = float(new.params_ab[:, :, RC].max())
        return new
