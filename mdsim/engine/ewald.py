"""Ewald summation for point charges in a cubic periodic box.

The Coulomb energy of a neutral periodic system (reduced units of
:mod:`mdsim.engine.charges`: q_i q_j / r in epsilon) is split with a
Gaussian screening of width 1/alpha into

    E_real  = sum_{i<j, r<rc} q_i q_j erfc(alpha r) / r       (minimum image)
    E_recip = (2 pi / V) sum_{k != 0, |n| <= k_max} exp(-k^2 / 4 alpha^2) / k^2 |S(k)|^2,
              S(k) = sum_j q_j exp(i k . r_j),  k = 2 pi n / L
    E_self  = -(alpha / sqrt(pi)) sum_i q_i^2
    E_intra = -sum_{i<j same molecule} q_i q_j erf(alpha r) / r

(Ewald, Ann. Phys. 369, 253 (1921); Allen and Tildesley, Computer
Simulation of Liquids, 2nd ed. 2017, section 6.2).  The boundary at infinity
is a conductor ("tin-foil"): the surface term 2 pi |sum q_i r_i|^2 / (3 V)
of a sphere of images in vacuum is not included.  The reciprocal sum runs
over the half space of n (k and -k give the same term) inside the sphere
|n| <= k_max.

Forces are the exact gradients of these truncated sums, and the virial
W = sum r . f is W_real + sum_k E_k (1 - k^2 / (2 alpha^2)) + W_intra
(E_k the term of k), which equals the energy for converged sums (Coulomb's
law is homogeneous of degree -1), so the pressure is W / (3 V).

Parameters from a requested accuracy (:func:`ewald_parameters`), with
Q = sum q_i^2:

    dE_real  ~ Q sqrt(rc / (2 V)) exp(-alpha^2 rc^2) / (alpha rc)^2
    dE_recip ~ Q alpha^2 L / (pi^2 k_max) exp(-(pi k_max / (alpha L))^2)

The first is the root-mean-square real-space error of Kolafa and Perram,
Mol. Simul. 9, 351 (1992) (from memory).  The second is the energy of the
k-vectors left out when |S(k)|^2 is about Q there (the large-k limit of the
charge structure factor): (Q / pi) int_K^inf exp(-k^2 / 4 alpha^2) dk with
K = 2 pi k_max / L, to leading order; the left-out terms are positive, so
the truncated sum is too low by about this much.  (The form
Q alpha / (pi^2 k_max^(3/2)) exp(...) remembered for Kolafa and Perram's
reciprocal estimate came out 10 to 25 times below the measured errors of
random systems, so it is not used.)  alpha is chosen so that the first
estimate equals the target and k_max is the smallest integer for which the
second does; the tests measure the actual errors.

Array suffixes: ``_n`` charge, ``_i`` coordinate, ``_m`` wave number index
0..k_max (cosine and sine tables).
"""
import math

import numpy as np
from numba import njit
from scipy.optimize import brentq

from mdsim.checks import positive
from mdsim.engine.charges import ChargeBox, CoulombResult, add_pair_force
from mdsim.errors import SettingError

__all__ = ["Ewald", "ewald_parameters", "ewald_error_estimates", "real_space", "reciprocal_space"]

_TWO_OVER_SQRT_PI = 2.0 / math.sqrt(math.pi)


@njit(cache=True)
def real_space(r_ni, q_n, mol_n, box, alpha, rc, f_ni):
    """Real-space and intramolecular terms; adds forces to ``f_ni``.

    Returns (E_real, E_intra, W_real + W_intra).  Minimum image, so
    rc <= box / 2; pairs of one molecule take -q q erf(alpha r) / r at any r.
    """
    n = r_ni.shape[0]
    rc2 = rc * rc
    inv_box = 1.0 / box
    e_real = e_intra = w = 0.0
    for i in range(n - 1):
        qi = q_n[i]
        for j in range(i + 1, n):
            dx = r_ni[i, 0] - r_ni[j, 0]
            dy = r_ni[i, 1] - r_ni[j, 1]
            dz = r_ni[i, 2] - r_ni[j, 2]
            dx -= box * np.rint(dx * inv_box)
            dy -= box * np.rint(dy * inv_box)
            dz -= box * np.rint(dz * inv_box)
            r2 = dx * dx + dy * dy + dz * dz
            same = mol_n[i] == mol_n[j]
            if not same and r2 >= rc2:
                continue
            r = math.sqrt(r2)
            qq = qi * q_n[j]
            gauss = _TWO_OVER_SQRT_PI * alpha * math.exp(-alpha * alpha * r2)
            if same:
                u = -qq * math.erf(alpha * r) / r
                e_intra += u
                rf = qq * gauss + u           # -r du/dr
            else:
                u = qq * math.erfc(alpha * r) / r
                e_real += u
                rf = u + qq * gauss
            w += rf
            add_pair_force(f_ni, i, j, rf / r2, dx, dy, dz)
    return e_real, e_intra, w


@njit(cache=True)
def reciprocal_space(r_ni, q_n, box, alpha, k_max, f_ni):
    """Reciprocal-space sum over the half space |n| <= k_max; adds forces to ``f_ni``.

    Returns (E_recip, W_recip).  exp(i k . r) is built from per-axis tables
    of exp(i 2 pi m x / L), m = 0..k_max (negative m by conjugation).
    """
    n = r_ni.shape[0]
    two_pi_l = 2.0 * math.pi / box
    vol = box * box * box
    e_m = np.empty((3, k_max + 1, n), dtype=np.complex128)
    for d in range(3):
        for j in range(n):
            step = complex(math.cos(two_pi_l * r_ni[j, d]), math.sin(two_pi_l * r_ni[j, d]))
            e_m[d, 0, j] = 1.0
            for m in range(1, k_max + 1):
                e_m[d, m, j] = e_m[d, m - 1, j] * step
    phase_n = np.empty(n, dtype=np.complex128)
    energy = virial = 0.0
    k_max2 = k_max * k_max
    for nx in range(0, k_max + 1):
        for ny in range(-k_max, k_max + 1):
            for nz in range(-k_max, k_max + 1):
                n2 = nx * nx + ny * ny + nz * nz
                if n2 == 0 or n2 > k_max2:
                    continue
                # half space: nx > 0, or nx = 0 and ny > 0, or nx = ny = 0 and nz > 0
                if nx == 0 and (ny < 0 or (ny == 0 and nz < 0)):
                    continue
                s = 0.0 + 0.0j
                for j in range(n):
                    ey = e_m[1, abs(ny), j]
                    ez = e_m[2, abs(nz), j]
                    if ny < 0:
                        ey = ey.conjugate()
                    if nz < 0:
                        ez = ez.conjugate()
                    p = e_m[0, nx, j] * ey * ez
                    phase_n[j] = p
                    s += q_n[j] * p
                k2 = two_pi_l * two_pi_l * n2
                # factor 2: the term of -k
                c = 2.0 * (2.0 * math.pi / vol) * math.exp(-k2 / (4.0 * alpha * alpha)) / k2
                e_k = c * (s.real * s.real + s.imag * s.imag)
                energy += e_k
                virial += e_k * (1.0 - k2 / (2.0 * alpha * alpha))
                kx, ky, kz = two_pi_l * nx, two_pi_l * ny, two_pi_l * nz
                sc = s.conjugate()
                for j in range(n):
                    # F_j = -dE/dr_j = 2 c q_j k Im(conj(S) exp(i k . r_j))
                    g = 2.0 * c * q_n[j] * (sc * phase_n[j]).imag
                    f_ni[j, 0] += g * kx
                    f_ni[j, 1] += g * ky
                    f_ni[j, 2] += g * kz
    return energy, virial


def ewald_error_estimates(sum_q2, box_length, alpha, cutoff, k_max):
    """Estimated RMS errors (real, reciprocal) of the Ewald energy, epsilon.

    Parameters
    ----------
    sum_q2 : float, reduced charge^2
    box_length, cutoff : float, sigma
    alpha : float, 1/sigma
    k_max : int

    Notes
    -----
    Real space: Kolafa and Perram, Mol. Simul. 9, 351 (1992) (from memory);
    reciprocal space: the left-out k-vectors with |S(k)|^2 = Q (module notes).

    Examples
    --------
    >>> real, recip = ewald_error_estimates(64.0, 4.0, 2.0, 2.0, 10)
    >>> real < 1e-5 and recip < 1e-5
    True
    """
    vol = box_length ** 3
    real = sum_q2 * math.sqrt(cutoff / (2.0 * vol)) * math.exp(-(alpha * cutoff) ** 2) \
        / (alpha * cutoff) ** 2
    recip = sum_q2 * alpha ** 2 * box_length / (math.pi ** 2 * k_max) \
        * math.exp(-(math.pi * k_max / (alpha * box_length)) ** 2)
    return real, recip


def ewald_parameters(sum_q2, box_length, accuracy, cutoff=None):
    """alpha, rc and k_max for a requested accuracy of the total energy.

    Parameters
    ----------
    sum_q2 : float
        Sum of the squared reduced charges.
    box_length : float, sigma
    accuracy : float, epsilon
        Target RMS error of each of the real and reciprocal parts of the total energy.
    cutoff : float, sigma, optional
        Real-space cut-off (default and maximum: half the box).

    Returns
    -------
    alpha : float, 1/sigma
    cutoff : float, sigma
    k_max : int

    Examples
    --------
    >>> alpha, rc, k_max = ewald_parameters(64.0, 4.0, 1e-6)
    >>> round(rc, 3), k_max
    (2.0, 10)
    """
    box_length = positive("box_length", box_length, "sigma")
    accuracy = positive("accuracy", accuracy, "RMS error of the energy in epsilon, e.g. 1e-5")
    half = 0.5 * box_length
    rc = half if cutoff is None else positive("cutoff", cutoff, "sigma")
    if rc > half * (1.0 + 1e-12):
        raise SettingError("cutoff", rc, f"must not exceed half the box ({half:.6g} sigma) "
                           "(minimum image); use a larger box or a smaller cut-off")
    if accuracy >= sum_q2:
        raise SettingError("accuracy", accuracy, f"is not below the energy scale sum q^2 = "
                           f"{sum_q2:.6g}; ask for a smaller error")

    vol = box_length ** 3

    def real_excess(a):  # log of the real-space estimate over the target
        x = a * rc
        return math.log(sum_q2 * math.sqrt(rc / (2.0 * vol)) / accuracy) - x * x \
            - 2.0 * math.log(x)

    alpha = brentq(real_excess, 1e-3 / rc, 50.0 / rc, xtol=1e-12)
    k_max = 1
    while ewald_error_estimates(sum_q2, box_length, alpha, rc, k_max)[1] > accuracy:
        k_max += 1
    return alpha, rc, k_max


class Ewald:
    """Ewald summation of a neutral set of point charges in a cubic box.

    Parameters
    ----------
    charges_n : array_like, shape=(n,), reduced charge
    box_length : float, sigma
    accuracy : float, epsilon, optional
        Target RMS error of the energy (default 1e-5), used when ``alpha``
        is not given (:func:`ewald_parameters`).
    cutoff : float, sigma, optional
        Real-space cut-off (default half the box).
    molecule_n : array_like of int, optional
        Molecule label per charge (:mod:`mdsim.engine.charges`).
    alpha, k_max : float and int, optional
        Give both to fix the parameters instead of choosing them.

    Examples
    --------
    Two opposite charges at distance 1 in a large box: the energy is -1
    plus the interaction with the images, which is small.

    >>> ew = Ewald([1.0, -1.0], 20.0, accuracy=1e-7)
    >>> res = ew.compute([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0]])
    >>> round(res.energy, 3)
    -1.0
    """

    def __init__(self, charges_n, box_length, accuracy=1e-5, cutoff=None, molecule_n=None,
                 alpha=None, k_max=None):
        self.charges = ChargeBox(charges_n, box_length, molecule_n)
        if (alpha is None) != (k_max is None):
            raise SettingError("alpha", alpha, "give both 'alpha' and 'k_max', or neither")
        if alpha is None:
            alpha, cutoff, k_max = ewald_parameters(self.charges.sum_q2, box_length, accuracy,
                                                    cutoff)
        elif cutoff is None:
            cutoff = 0.5 * self.charges.box_length
        self.alpha = positive("alpha", alpha, "1/sigma")
        self.cutoff = float(cutoff)
        self.k_max = int(k_max)
        if self.k_max < 1:
            raise SettingError("k_max", k_max, "must be at least 1")

    def compute(self, r_ni):
        """Energy, forces and virial of the charges at ``r_ni`` (:class:`CoulombResult`)."""
        cb = self.charges
        r = cb.positions(r_ni)
        f_ni = np.zeros_like(r)
        e_real, e_intra, w_real = real_space(r, cb.charges_n, cb.molecule_n, cb.box_length,
                                             self.alpha, self.cutoff, f_ni)
        e_recip, w_recip = reciprocal_space(r, cb.charges_n, cb.box_length, self.alpha,
                                            self.k_max, f_ni)
        e_self = -self.alpha / math.sqrt(math.pi) * cb.sum_q2
        parts = {"real": e_real, "reciprocal": e_recip, "self": e_self, "intramolecular": e_intra}
        return CoulombResult(e_real + e_recip + e_self + e_intra, f_ni, w_real + w_recip, parts)
