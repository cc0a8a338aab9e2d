"""Spherical pair potentials: the analytic forms, mixing rules and a system's pair matrix.

Every potential is a small Python object (``LennardJones``, ``Mie``,
``Exp6`` here, ``Tabulated`` in :mod:`mdsim.engine.tabulated`) that packs
itself into a flat float64 parameter row and evaluates through the one
scalar kernel :func:`mdsim.engine.forms.pair_eval` (parameter layout and
form codes there).  :class:`PairMatrix` holds all pair interactions of a
system with their cut-offs.  This module is the home of the potential
definitions: it also offers the form constants, :class:`PairPotential`,
:class:`Tabulated` and :func:`read_table` under their usual names.

Units are whatever the caller chooses, used consistently (see
:mod:`mdsim.engine.pair_potential`).

Array suffixes: ``_r`` a grid of distances.
"""
import math

import numpy as np
from numba import njit

from mdsim.checks import positive
from mdsim.engine.forms import (ALPHA, ATT, EPS, EXPA, EXPB, EXPC, FORM_EXP6, FORM_LJ,
                                FORM_MIE, FORM_NAMES, FORM_TABLE, N_PARAM, PREF, RC, RC2, RCORE,
                                REP, RMIN, SHIFT, SIG, T_DR, T_N, T_R0)
from mdsim.engine.pair_potential import PairPotential
from mdsim.engine.tabulated import Tabulated, read_table
from mdsim.errors import StudyError

__all__ = ["PairPotential", "Mie", "LennardJones", "Exp6", "Tabulated", "read_table", "combine",
           "PairMatrix", "axilrod_teller_sq", "FORM_LJ", "FORM_MIE", "FORM_EXP6", "FORM_TABLE",
           "FORM_NAMES", "N_PARAM", "EPS", "SIG", "REP", "ATT", "PREF", "ALPHA", "RMIN", "RCORE",
           "RC", "RC2", "SHIFT", "T_R0", "T_DR", "T_N", "EXPA", "EXPB", "EXPC"]


class Mie(PairPotential):
    """Mie n-m potential u = C eps [(s/r)^n - (s/r)^m], n > m > 3."""

    form = FORM_MIE
    name = "mie"

    def __init__(self, epsilon, sigma, repulsive=12.0, attractive=6.0):
        super().__init__()
        eps = positive("epsilon", epsilon)
        sig = positive("sigma", sigma)
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
    """Lennard-Jones 12-6: u = 4 eps [(s/r)^12 - (s/r)^6].

    Parameters
    ----------
    epsilon : float
        Well depth (energy unit of the caller, for example K or 1).
    sigma : float
        Zero crossing, u(sigma) = 0 (length unit of the caller).

    Examples
    --------
    The well bottom lies at r = 2^(1/6) sigma, where u = -epsilon and the
    force vanishes (argon-like numbers: epsilon/k = 119.8 K, sigma = 3.405 angstrom):

    >>> lj = LennardJones(119.8, 3.405)
    >>> r_min = 2 ** (1 / 6) * lj.sigma
    >>> round(float(lj.energy(r_min)), 9)
    -119.8
    >>> abs(float(lj.dudr(r_min))) < 1e-9
    True
    >>> abs(float(lj.energy(lj.sigma))) < 1e-9   # the zero crossing
    True
    """

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
        eps = positive("epsilon", epsilon)
        rm = positive("r_min", r_min)
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


@njit(cache=True)
def axilrod_teller_sq(c9, a2, b2, c2):
    """Axilrod-Teller triple-dipole energy of a triangle from its squared sides.

    The one home of the three-body formula: the engine's kernels call it on
    scalars, ``analysis.virial.threebody`` on equal-shaped 1-d arrays.

    Parameters
    ----------
    c9 : float, energy * length^9
    a2, b2, c2 : float or ndarray, shape=(n,), length^2
        Squares of the three sides r12, r13, r23.

    Returns
    -------
    float or ndarray, energy

    Notes
    -----
    u3 = C9 (1 + 3 cos g1 cos g2 cos g3) / (r12 r13 r23)^3 (Axilrod and
    Teller, J. Chem. Phys. 11, 299 (1943)), the cosines by the law of
    cosines, cos g1 = (r12^2 + r13^2 - r23^2) / (2 r12 r13) and so on.

    Examples
    --------
    An equilateral triangle of side 1: u3 = (11/8) C9.

    >>> float(axilrod_teller_sq(8.0, 1.0, 1.0, 1.0))
    11.0
    """
    cos_prod = (a2 + b2 - c2) * (a2 + c2 - b2) * (b2 + c2 - a2) / (8.0 * a2 * b2 * c2)
    p = a2 * b2 * c2
    return c9 * (1.0 + 3.0 * cos_prod) / (p * np.sqrt(p))


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
