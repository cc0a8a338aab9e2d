"""The quadratic Feynman-Hibbs effective pair potential, tabulated at one temperature.

Light gases (neon, hydrogen, helium) at moderate density: the pair
potential u(r) is replaced by the temperature-dependent effective potential

    u_FH(r; T) = u(r) + (q / kT) (u''(r) + 2 u'(r) / r),    q = hbar^2 / (24 mu),

mu the reduced mass of the pair (m/2 for a like pair).  :class:`FeynmanHibbs`
tabulates it on a fine uniform grid (the engine's table form,
:mod:`mdsim.engine.tabulated`), so every kernel runs it unchanged; its
long-range tail is exact (closed forms from the underlying potential).
:func:`feynman_hibbs_pairs` builds a pure gas's pair matrix with it and
:func:`classical_reference` gives back the matrix of the underlying u(r)
with the same cut-off radius, which the samplers need for the thermodynamic
energy estimator (``docs/physics.md``, "Quantum-corrected simulation").

Units are whatever the caller chooses, used consistently: ``q`` in
(energy unit) x (length unit)^2, the temperature kT in the energy unit.
"""
import math

import numpy as np

from mdsim.checks import positive
from mdsim.engine.forms import RC
from mdsim.engine.pair_potential import PairPotential
from mdsim.engine.potentials import PairMatrix
from mdsim.engine.tabulated import Tabulated
from mdsim.errors import StudyError

__all__ = ["FeynmanHibbs", "laplacian", "feynman_hibbs_pairs", "classical_reference",
           "sampling_reference", "next_order_ratio", "NEXT_ORDER_LIMIT",
           "DEFAULT_KNOTS", "WALL_ENERGY_KT"]

#: uniform knots of the table (spacing about 1e-3 sigma for a 5 sigma cut-off)
DEFAULT_KNOTS = 6001
#: the table starts where both u and u_FH exceed this many kT (Boltzmann factor < 1e-35)
WALL_ENERGY_KT = 80.0
# relative step of the five-point derivative in :func:`laplacian`
_REL_STEP = 2e-4
#: above this :func:`next_order_ratio` the quadratic Feynman-Hibbs potential is not enough
NEXT_ORDER_LIMIT = 0.5


def laplacian(pot, r):
    """u''(r) + 2 u'(r) / r of a pair potential, by a five-point derivative.

    Parameters
    ----------
    pot : PairPotential
    r : float or ndarray, length unit of ``pot``, > 0

    Returns
    -------
    float or ndarray shaped like r, energy / length^2

    Notes
    -----
    u'' + 2u'/r = (1/r^2) d(r^2 u')/dr, the radial Laplacian; the derivative
    of r^2 u'(r) by the fourth-order central difference with step
    2e-4 r (truncation and round-off both below 1e-9 relative for the
    forms of the engine; common practice, no source).

    Examples
    --------
    >>> from mdsim.engine import LennardJones
    >>> round(float(laplacian(LennardJones(1.0, 1.0), 1.0)), 6)  # 4 (132 - 30)
    408.0
    """
    r_r = np.asarray(r, dtype=float)
    h = _REL_STEP * r_r

    def g(x):
        return x * x * pot.dudr(x)

    d = (g(r_r - 2 * h) - 8 * g(r_r - h) + 8 * g(r_r + h) - g(r_r + 2 * h)) / (12 * h)
    return d / (r_r * r_r)


def next_order_ratio(base, q, temperature):
    """How far the quadratic Feynman-Hibbs term can be trusted at a temperature.

    Parameters
    ----------
    base : PairPotential
    q : float
        hbar^2 / (24 mu), energy x length^2.
    temperature : float
        kT, energy unit.

    Returns
    -------
    float
        The quartic term of the Gaussian-smeared potential over the
        quadratic one, (s^2 / 4) |lap lap u| / |lap u|, at the distance of
        closest thermal approach r_T (u(r_T) = kT on the repulsive wall).

    Notes
    -----
    The Feynman-Hibbs effective potential is u smeared by a Gaussian of
    variance s^2 = beta hbar^2 / (12 mu) per coordinate:
    u + (s^2/2) lap u + (s^4/8) lap lap u + ... (Feynman and Hibbs,
    Quantum Mechanics and Path Integrals, 1965, section 10-3); the
    quadratic form keeps the first correction.  For r^-n walls the ratio is
    (s^2/4)(n+1)(n+2)/r^2.  For Lennard-Jones gases (de Boer parameters
    0.59, 1.73, 2.68): neon at 50 K 0.06; hydrogen at 300 K 0.10, at 77 K
    0.35; helium at 300 K 0.07, at 20 K 0.89.  Above ``NEXT_ORDER_LIMIT``
    (0.5) the quadratic potential is not enough (the quartic term is half
    the quadratic one; common practice, no source for the exact limit).

    Examples
    --------
    >>> from mdsim.engine import LennardJones
    >>> round(next_order_ratio(LennardJones(1.0, 1.0), 7.45e-4, 1.404), 3)
    0.06
    """
    from scipy.optimize import brentq
    s2 = 2.0 * positive("q", q, "hbar^2 / (24 mu)") / positive("temperature", temperature, "kT")
    sig = base.sigma
    r_t = brentq(lambda r: float(base.energy(r)) - temperature, _wall_start(base, q, temperature),
                 sig, xtol=1e-12 * sig)
    h = 1e-3 * r_t
    r = r_t + h * np.arange(-2, 3)
    g = r * r * np.gradient(laplacian(base, r), h)  # r^2 d(lap u)/dr at five points
    lap2 = (g[3] - g[1]) / (2 * h) / (r_t * r_t)
    return float(0.25 * s2 * abs(lap2 / laplacian(base, r_t)))


def _wall_start(base, q, temperature):
    """The first distance of the table: u and u_FH above WALL_ENERGY_KT kT up to it."""
    lo = max(base.core_radius * 1.001, 0.2 * base.sigma)
    grid = np.linspace(lo, base.sigma, 4001)
    with np.errstate(over="ignore", invalid="ignore"):
        u = base.energy(grid)
        u_fh = u + q / temperature * laplacian(base, grid)
    wall = WALL_ENERGY_KT * temperature
    good = np.isfinite(u_fh) & (u > wall) & (u_fh > wall)
    if not good.any():
        raise StudyError(f"Feynman-Hibbs: the potential {base!r} does not rise above "
                         f"{WALL_ENERGY_KT:g} kT inside sigma at kT = {temperature:.6g}; the "
                         "effective potential needs a steep repulsive wall")
    first = int(np.argmax(good))
    k = first + int(np.argmin(good[first:]))  # good up to k - 1 (u(sigma) = 0 is never good)
    return float(grid[k - 1])


class FeynmanHibbs(Tabulated):
    """u_FH(r; T) = u + (q/kT)(u'' + 2u'/r), tabulated at one temperature.

    Parameters
    ----------
    base : PairPotential
        The pair potential u(r) (any form except a table).
    q : float
        hbar^2 / (24 mu), energy x length^2 (reduced: hbar*^2 / 12 for a
        like pair, hbar* = hbar / (sigma sqrt(m epsilon))).
    temperature : float
        kT, energy unit.
    r_end : float
        Last distance of the table, length unit; at least the cut-off.
    n_knots : int
        Uniform knots of the table.

    Notes
    -----
    Quadratic Feynman-Hibbs effective potential (R. P. Feynman and A. R.
    Hibbs, Quantum Mechanics and Path Integrals, 1965; L. M. Sese,
    Mol. Phys. 78, 1167, 1993).  The table starts where u and u_FH are both
    above ``WALL_ENERGY_KT`` kT.  The tail integrals beyond a cut-off rc are
    those of u plus, exactly (integration by parts),
    int_rc^inf (u'' + 2u'/r) r^2 dr = -rc^2 u'(rc) and
    int_rc^inf r (u'' + 2u'/r)' r^2 dr = 3 rc^2 u'(rc) - rc^3 (u'' + 2u'/r)(rc),
    each times q/kT.

    Examples
    --------
    >>> from mdsim.engine import LennardJones
    >>> fh = FeynmanHibbs(LennardJones(1.0, 1.0), q=1e-3, temperature=1.5, r_end=3.0)
    >>> round(float(fh.energy(1.0)), 4)   # u(1) = 0 plus (1e-3 / 1.5) * 408
    0.272
    """

    def __init__(self, base, q, temperature, r_end, n_knots=DEFAULT_KNOTS):
        if not isinstance(base, PairPotential) or isinstance(base, FeynmanHibbs):
            raise StudyError(f"Feynman-Hibbs: the underlying potential must be a classical "
                             f"pair potential (a form or a table), not {base!r}")
        self.base = base
        self.q = positive("q", q, "hbar^2 / (24 mu) in energy x length^2")
        self.temperature = positive("temperature", temperature, "kT in the energy unit")
        r_end = positive("r_end", r_end, "the last distance of the table (the cut-off or more)")
        r0 = _wall_start(base, self.q, self.temperature)
        r = np.linspace(r0, r_end, int(n_knots))
        super().__init__(r, base.energy(r) + self.q / self.temperature * laplacian(base, r),
                         source=f"Feynman-Hibbs {base.name} at kT = {self.temperature:.6g}",
                         n_knots=int(n_knots))

    def correction(self, r):
        """(q/kT)(u'' + 2u'/r) at distances r: u_FH - u, energy unit."""
        return self.q / self.temperature * laplacian(self.base, r)

    def tail_integrals(self, rc):
        i_u, i_w = self.base.tail_integrals(rc)
        c = self.q / self.temperature
        du = float(self.base.dudr(rc))
        lap = float(laplacian(self.base, rc))
        return i_u - c * rc * rc * du, i_w + c * (3.0 * rc * rc * du - rc ** 3 * lap)

    def scaled(self, energy_unit, length_unit):
        return FeynmanHibbs(self.base.scaled(energy_unit, length_unit),
                            self.q / (energy_unit * length_unit ** 2),
                            self.temperature / energy_unit, self.r_max / length_unit,
                            n_knots=int(self.r_points.size))

    def describe(self):
        return {"form": "feynman-hibbs", "base": self.base.describe(), "q": self.q,
                "temperature": self.temperature}


def feynman_hibbs_pairs(pairs, q, temperature, n_knots=DEFAULT_KNOTS):
    """The pair matrix of a pure gas with u replaced by the Feynman-Hibbs u_FH(r; T).

    Parameters
    ----------
    pairs : PairMatrix
        One species, an analytic potential.
    q : float
        hbar^2 / (24 mu) of the like pair, in the units of ``pairs``.
    temperature : float
        kT, energy unit of ``pairs``.

    Returns
    -------
    PairMatrix
        Same cut-off radius as ``pairs`` (the cut-off factor refers to the
        zero crossing of u_FH, which lies further out than sigma).

    Examples
    --------
    >>> from mdsim.engine import LennardJones, PairMatrix
    >>> fh = feynman_hibbs_pairs(PairMatrix([LennardJones(1.0, 1.0)], 3.0), 1e-3, 1.5)
    >>> round(float(fh.params_ab[0, 0, RC]), 6), fh.pots[0][0].sigma > 1.0
    (3.0, True)
    """
    if not isinstance(pairs, PairMatrix):
        raise TypeError("pairs must be an mdsim.engine.potentials.PairMatrix")
    if pairs.n_species != 1:
        raise StudyError(f"Feynman-Hibbs: the gas has {pairs.n_species} species; the "
                         "quantum-corrected simulation supports pure gases only")
    rc = float(pairs.params_ab[0, 0, RC])
    fh = FeynmanHibbs(pairs.pots[0][0], q, temperature, rc * 1.01, n_knots)
    return PairMatrix([fh], cutoff=rc / fh.sigma)


def classical_reference(pairs):
    """The pair matrix of the underlying u(r) with the same cut-off, or None.

    None when ``pairs`` holds no :class:`FeynmanHibbs` potential.

    Examples
    --------
    >>> from mdsim.engine import LennardJones, PairMatrix
    >>> lj = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    >>> classical_reference(lj) is None
    True
    >>> ref = classical_reference(feynman_hibbs_pairs(lj, 1e-3, 1.5))
    >>> ref.pots[0][0].name, round(float(ref.params_ab[0, 0, RC]), 6)
    ('lennard-jones', 3.0)
    """
    pot = pairs.pots[0][0]
    if not isinstance(pot, FeynmanHibbs):
        return None
    rc = float(pairs.params_ab[0, 0, RC])
    ref = PairMatrix([pot.base], cutoff=rc / pot.base.sigma)
    if not math.isclose(float(ref.params_ab[0, 0, RC]), rc, rel_tol=1e-12):
        raise StudyError("Feynman-Hibbs: the classical reference lost the cut-off radius")
    return ref


def sampling_reference(system, method, temperature):
    """What a sampler needs for the thermodynamic energy under Feynman-Hibbs, or None.

    Parameters
    ----------
    system : mdsim.engine.system.System
    method : str
        The sampler's method; only "mc-nvt" may run a Feynman-Hibbs system.
    temperature : float
        The sampler's kT; must be the temperature the potential was built for.

    Returns
    -------
    tuple or None
        (params_ab, table, form, u_tail) of :func:`classical_reference`
        (u_tail per particle at the system's density), or None when the
        system's potential is not Feynman-Hibbs.
    """
    ref = classical_reference(system.pairs)
    if ref is None:
        return None
    kT_fh = system.pairs.pots[0][0].temperature
    if method != "mc-nvt":
        raise StudyError(f"sampler {method!r}: a Feynman-Hibbs system can only be sampled "
                         "canonically by Monte Carlo (mc-nvt), whose sampler computes the "
                         "thermodynamic energy estimator of the temperature-dependent potential")
    if not math.isclose(kT_fh, float(temperature), rel_tol=1e-9):
        raise StudyError(f"sampler {method!r} at kT = {temperature!r}: the system's "
                         f"Feynman-Hibbs potential is built for kT = {kT_fh!r}; build the "
                         "system at the temperature it is sampled at")
    u_tail, _ = ref.tail_corrections(system.density, system.fractions_a)
    return (np.ascontiguousarray(ref.params_ab), np.ascontiguousarray(ref.table), int(ref.form),
            float(u_tail))
