"""The exact quantum second virial coefficient (Beth-Uhlenbeck) with its T-derivatives.

B2 = B_ideal + B_bound + B_scattering from the phase shifts of
:mod:`analysis.virial.phase_shifts`, for Boltzmann statistics or for
identical bosons or fermions with g internal (nuclear-spin) states, and
for the spin-isomer mixtures of hydrogen.  The phase shifts are computed
once per potential, mass and energy range and reused at every
temperature (the T-derivatives are integrals of the same phase shifts
with extra powers of E).

Unit-agnostic like :mod:`analysis.virial.second`: the potential in kelvin
and a length unit, ``h2_over_mu`` = h^2/(mu k) in K x length^2 (see
:func:`analysis.virial.quantum.h2_over_mu_K_A2`), B2 per molecule in
length^3.
"""
import dataclasses
import functools
import math

import numpy as np

from analysis.virial.phase_shifts import phase_shift_table
from analysis.virial.quadrature import (check_pot, check_temperature, mayer, register,
                                        registered, shape_out)
from mdsim.checks import positive
from mdsim.engine.potentials import FORM_TABLE
from mdsim.errors import StudyError

__all__ = ["SpinComponent", "STATISTICS", "spin_components", "b2_exact", "exact_energy_bucket"]

STATISTICS = ("boltzmann", "bose", "fermi")
# The energy range of the phase shifts: E_max = _E_OVER_T x the highest T
# (the phase-shift sums grow as E^(3/2); E^(3/2) exp(-E/kT) is then negligible),
# rounded up to a power of sqrt(2) so that a scan reuses one table.
_E_OVER_T = 32.0


@dataclasses.dataclass(frozen=True)
class SpinComponent:
    """One pair type of a gas of identical molecules, with its share of the pairs.

    Attributes
    ----------
    weight : float
        Share of the pairs (x_a x_b, twice for unlike pairs); the shares sum to 1.
    w_even, w_odd : float
        Weights of the even and odd partial waves (1/2 each for
        distinguishable pairs, the classical limit).
    ideal : float
        Coefficient of the ideal-gas exchange term, B_ideal = ideal x lambda^3
        (lambda = h / sqrt(2 pi m k T)).
    """

    weight: float
    w_even: float
    w_odd: float
    ideal: float


def _identical(weight, statistics, g):
    sym = (g + 1.0) / (2.0 * g)
    anti = (g - 1.0) / (2.0 * g)
    ideal = 1.0 / (2.0 ** 2.5 * g)
    if statistics == "bose":
        return SpinComponent(weight, sym, anti, -ideal)
    return SpinComponent(weight, anti, sym, ideal)


def spin_components(statistics, internal_states=1, ortho_fraction=None):
    """The pair types of a gas: Boltzmann, identical bosons or fermions, or two spin isomers.

    Parameters
    ----------
    statistics : {"boltzmann", "bose", "fermi"}
    internal_states : int, optional
        g = 2 I + 1 nuclear-spin states (helium-4: 1, helium-3: 2).
    ortho_fraction : float, optional
        Hydrogen (bosons): the share of ortho molecules (9 internal states:
        nuclear spin 1 times rotation J = 1) beside para (1 state).  0.75
        is normal hydrogen, 0 para-hydrogen.  Ortho-para pairs are
        distinguishable.

    Returns
    -------
    tuple of SpinComponent

    Examples
    --------
    >>> [c.w_even for c in spin_components("bose")]
    [1.0]
    """
    if statistics not in STATISTICS:
        raise StudyError(f"statistics = {statistics!r}: choose one of {', '.join(STATISTICS)}")
    if statistics == "boltzmann":
        return (SpinComponent(1.0, 0.5, 0.5, 0.0),)
    if ortho_fraction is None:
        g = int(internal_states)
        if g < 1 or g != internal_states:
            raise StudyError(f"internal_states = {internal_states!r}: the number of nuclear-spin "
                             "states 2I + 1 is a whole number >= 1")
        return (_identical(1.0, statistics, g),)
    xo = float(ortho_fraction)
    if statistics != "bose" or not 0.0 <= xo <= 1.0:
        raise StudyError(f"ortho_fraction = {ortho_fraction!r}: hydrogen's ortho share is in "
                         "[0, 1] and its molecules are bosons")
    xp = 1.0 - xo
    out = [_identical(xp * xp, "bose", 1), _identical(xo * xo, "bose", 9)]
    out.append(SpinComponent(2.0 * xo * xp, 0.5, 0.5, 0.0))
    return tuple(c for c in out if c.weight > 0.0)


def exact_energy_bucket(T_max):
    """E_max (K) of the phase-shift table used for temperatures up to T_max (K)."""
    return 2.0 ** (0.5 * math.ceil(2.0 * math.log2(_E_OVER_T * T_max)))


# (potential key, c) -> the largest E_max built.
_LARGEST = {}


@functools.lru_cache(maxsize=16)
def _table(key, c, E_max):
    return phase_shift_table(registered(key), c, E_max)


def _tail(pot, r_match, T_t, n=24):
    """-2 pi int_R^inf f r^2 dr and its T-derivatives: the potential beyond the matching radius."""
    x, w = np.polynomial.legendre.leggauss(n)
    if pot.form == FORM_TABLE:
        if pot.r_max <= r_match:
            return [np.zeros_like(T_t)] * 3
        edges = np.linspace(r_match, pot.r_max, 8)
        half = 0.5 * np.diff(edges)
        r = (edges[:-1, None] + half[:, None] * (x[None, :] + 1.0)).ravel()
        wr = (half[:, None] * w[None, :]).ravel()
    else:
        y = 0.5 * (x + 1.0)
        r = r_match / y
        wr = 0.5 * w * r_match / y ** 2
    f = mayer(pot.energy(r)[None, :], T_t[:, None])
    g = -2.0 * math.pi * wr * r * r
    return [fk @ g for fk in f]


def _scattering(ps, T_t):
    """sum over l of the bound and scattering terms, S_even, S_odd, with two T-derivatives.

    S_l = sum_b (exp(-E_b/T) - 1) + (1/(pi T)) int delta_l(E) exp(-E/T) dE
    (the Beth-Uhlenbeck sum integrated by parts; delta_l(0) = n_b pi).
    """
    E = ps.c * ps.k_k ** 2
    dE = 2.0 * ps.c * ps.k_k * ps.w_k
    T = T_t[:, None]
    e = np.exp(-E[None, :] / T)
    kern = [e / T, e * (E / T ** 3 - 1.0 / T ** 2), e * (E ** 2 / T ** 5 - 4.0 * E / T ** 4
                                                          + 2.0 / T ** 3)]
    out = {}
    for name, sums, parity in (("even", ps.even_k, 0), ("odd", ps.odd_k, 1)):
        vals = [(kk * (sums * dE)[None, :]).sum(axis=1) / math.pi for kk in kern]
        for l, Eb in ps.bound:
            if l % 2 != parity:
                continue
            eb = np.exp(-Eb / T_t)
            deg = 2 * l + 1
            vals[0] = vals[0] + deg * (eb - 1.0)
            vals[1] = vals[1] + deg * eb * Eb / T_t ** 2
            vals[2] = vals[2] + deg * eb * (Eb ** 2 / T_t ** 4 - 2.0 * Eb / T_t ** 3)
        out[name] = vals
    return out["even"], out["odd"]


def b2_exact(pot, T, h2_over_mu, components=None, E_max=None):
    """Exact quantum B2 (Beth-Uhlenbeck) and its first two T-derivatives.

    Parameters
    ----------
    pot : PairPotential
        Energies as u/k in K, lengths in any unit.
    T : float or ndarray, K
    h2_over_mu : float
        h^2 / (mu k), K x length^2, mu the reduced mass of the pair (m/2).
    components : tuple of SpinComponent, optional
        From :func:`spin_components`; default Boltzmann statistics.
    E_max : float, optional
        Highest energy of the phase-shift table (K); default from the
        highest T (:func:`exact_energy_bucket`).

    Returns
    -------
    B2, dB2_dT, d2B2_dT2 : float or ndarray shaped like T
        Per molecule, length^3 (/K, /K^2).

    Notes
    -----
    With lambda = h / sqrt(2 pi m k T) (m = 2 mu the molecular mass),

        B2 = sum_c weight_c [ ideal_c lambda^3 - 2^(3/2) lambda^3 sum_l w_l (2l+1) S_l(T) ]
        S_l = sum_b (e^{-E_b/kT} - 1) + (1 / (pi kT)) int_0^inf delta_l(E) e^{-E/kT} dE,

    the Beth-Uhlenbeck formula (Beth and Uhlenbeck, Physica 4, 915 (1937);
    Hirschfelder, Curtiss and Bird 1954, section 6.4) written with the
    phase-shift integral by parts.  w_l = 1/2 for every l with Boltzmann
    statistics (then B2 tends to the classical value as h -> 0); identical
    bosons with g spin states weight even l by (g+1)/(2g) and odd l by
    (g-1)/(2g), fermions the other way round; ideal = -/+ 1/(2^(5/2) g).
    The potential beyond the matching radius (3.5 sigma) adds its
    classical part -2 pi int_R^inf f(r) r^2 dr.

    Examples
    --------
    A Lennard-Jones gas with Lambda*^2 = 0.25 (h2_over_mu = 2 Lambda*^2) at
    T* = 2: B2* = -1.263, between the classical -1.314 and the classical plus
    first-order Wigner-Kirkwood -1.262:

    >>> from mdsim.engine.potentials import LennardJones
    >>> B, _, _ = b2_exact(LennardJones(1.0, 1.0), 2.0, 0.5, E_max=40.0)
    >>> round(B, 3)
    -1.263
    """
    check_pot(pot)
    T_t = check_temperature(T).ravel()
    q = positive("h2_over_mu", h2_over_mu, "h^2 / (mu k) in K x length^2")
    comps = components if components is not None else spin_components("boltzmann")
    c = q / (8.0 * math.pi ** 2)
    key = register(pot)
    if E_max is None:
        # A table built for a wider range serves lower temperatures too (a scan from low
        # to high T builds a few, each larger; a later scan reuses the largest).
        E_top = max(exact_energy_bucket(float(T_t.max())), _LARGEST.get((key, c), 0.0))
        _LARGEST[(key, c)] = E_top
    else:
        E_top = float(E_max)
    ps = _table(key, c, E_top)
    # lambda^3 = (h^2 / (2 pi m k T))^(3/2) with m = 2 mu: h^2/(m k) = q / 2.
    lam3 = (0.5 * q / (2.0 * math.pi * T_t)) ** 1.5
    even, odd = _scattering(ps, T_t)
    F = [np.zeros_like(T_t) for _ in range(3)]
    for comp in comps:
        for kk in range(3):
            F[kk] += comp.weight * (-2.0 ** 1.5 * (comp.w_even * even[kk] + comp.w_odd * odd[kk]))
        F[0] += comp.weight * comp.ideal
    # B = lambda^3 F with lambda^3 ~ T^(-3/2).
    B = lam3 * F[0]
    dB = lam3 * (F[1] - 1.5 * F[0] / T_t)
    d2B = lam3 * (F[2] - 3.0 * F[1] / T_t + 3.75 * F[0] / T_t ** 2)
    tail = _tail(pot, ps.r_match, T_t)
    return shape_out((B + tail[0], dB + tail[1], d2B + tail[2]), T)
