"""Damped shifted-force (DSF) Coulomb sum: a pairwise cut-off method for charges.

Reduced units and molecule labels as in :mod:`mdsim.engine.charges`.  Two
charges of different molecules interact when the centres of their molecules
(the mean position of each molecule's charges; a lone charge is its own
centre) are closer than Rc, minimum image, through

    u(r) = q_i q_j [ erfc(a r)/r - erfc(a Rc)/Rc
                     + (erfc(a Rc)/Rc^2 + (2a/sqrt(pi)) exp(-a^2 Rc^2)/Rc) (r - Rc) ]

(Fennell and Gezelter, J. Chem. Phys. 124, 234104 (2006), eqs. 19-20),
whose value and force go to zero at r = Rc; a = 0 is the undamped
shifted-force sum.  The constant terms are those of the damped Wolf sum
(Wolf et al., J. Chem. Phys. 110, 8254 (1999)): the neutralising self term
-(erfc(a Rc)/(2 Rc)) sum_i q_i Q_mol(i) (Q_mol(i) the charge of i's molecule;
zero for neutral molecules, whose own shifts cancel it) and
-(a/sqrt(pi)) sum_i q_i^2 together with -q_i q_j erf(a r)/r for each pair
of one molecule, the damped self-interaction that Ewald's reciprocal sum
also carries (:mod:`mdsim.engine.ewald`).

The molecule-centre cut-off keeps neutral molecules whole: cutting
between the charges of a molecule that carries only a quadrupole leaves
spurious monopoles at the sphere's edge, whose error (measured) exceeds the
quadrupole energy itself.  For such molecules the undamped sum (a = 0) is
the accurate choice; damping helps ions.  The energy of a pair of molecules
jumps where their centres cross Rc (by the small shifted-force energy of a
neutral pair there), so this is an energy method for Monte Carlo and for
checks; its measured error against Ewald is in docs/physics.md section 7b.

Array suffixes: ``_n`` charge, ``_i`` coordinate.
"""
import math

import numpy as np
from numba import njit

from mdsim.checks import non_negative, positive
from mdsim.engine.charges import ChargeBox, CoulombResult, add_pair_force
from mdsim.errors import SettingError

__all__ = ["DampedShiftedForce", "dsf_constants", "dsf_term", "dsf_pairs", "molecule_centres"]

_TWO_OVER_SQRT_PI = 2.0 / math.sqrt(math.pi)


def dsf_constants(alpha, rc):
    """The two constants of :func:`dsf_term` for damping ``alpha`` (1/sigma) and cut-off ``rc``.

    Returns
    -------
    offset : float, 1/sigma
        erfc(a Rc)/Rc + slope Rc.
    slope : float, 1/sigma^2
        erfc(a Rc)/Rc^2 + (2a/sqrt(pi)) exp(-a^2 Rc^2)/Rc, minus the force of
        a unit pair at Rc.

    Examples
    --------
    Undamped, Rc = 2: slope 1/4, offset 1/2 + 1/2.

    >>> dsf_constants(0.0, 2.0)
    (1.0, 0.25)
    """
    a, rc = float(alpha), float(rc)
    gauss = _TWO_OVER_SQRT_PI * a * math.exp(-a * a * rc * rc)
    slope = math.erfc(a * rc) / (rc * rc) + gauss / rc
    return math.erfc(a * rc) / rc + slope * rc, slope


@njit(cache=True, inline="always")
def dsf_term(qq, r2, alpha, offset, slope):
    """The damped shifted-force energy of two charges and -(du/dr)/r (module docstring).

    Parameters
    ----------
    qq : float
        Product of the two charges, reduced.
    r2 : float, sigma^2
        Their squared distance.
    alpha : float, 1/sigma
        Damping (0: the undamped shifted force, no erfc evaluated).
    offset, slope : float
        :func:`dsf_constants` of alpha and the cut-off.

    Returns
    -------
    u : float, epsilon
        qq [erfc(a r)/r - offset + slope r].
    f_over_r : float, epsilon/sigma^2
        -(du/dr)/r: the force on the second charge is f_over_r times the
        vector from the first to it (the convention of
        :func:`mdsim.engine.forms.pair_eval`).
    """
    r = math.sqrt(r2)
    if alpha == 0.0:
        erfc_r = 1.0 / r
        gauss = 0.0
    else:
        erfc_r = math.erfc(alpha * r) / r
        gauss = _TWO_OVER_SQRT_PI * alpha * math.exp(-alpha * alpha * r2)
    return qq * (erfc_r - offset + slope * r), qq * (erfc_r + gauss - slope * r) / r2


@njit(cache=True)
def dsf_pairs(r_ni, c_ni, q_n, mol_n, box, alpha, rc, offset, slope, f_ni):
    """All pairs: returns (E_pairs, E_intra, W); adds forces to ``f_ni``.

    A pair of charges of different molecules is included when the centres
    ``c_ni`` of their molecules are closer than ``rc`` (minimum image of the
    centres; the charges keep their offsets from the centres), with the
    energy of :func:`dsf_term` (``offset``, ``slope``: :func:`dsf_constants`).
    Pairs of one molecule give -q q erf(alpha r) / r (E_intra).
    """
    n = r_ni.shape[0]
    rc2 = rc * rc
    inv_box = 1.0 / box
    e_pairs = e_intra = w = 0.0
    for i in range(n - 1):
        qi = q_n[i]
        for j in range(i + 1, n):
            cx = c_ni[i, 0] - c_ni[j, 0]
            cy = c_ni[i, 1] - c_ni[j, 1]
            cz = c_ni[i, 2] - c_ni[j, 2]
            sx = box * np.rint(cx * inv_box)
            sy = box * np.rint(cy * inv_box)
            sz = box * np.rint(cz * inv_box)
            cx -= sx
            cy -= sy
            cz -= sz
            same = mol_n[i] == mol_n[j]
            if not same and cx * cx + cy * cy + cz * cz >= rc2:
                continue
            dx = r_ni[i, 0] - r_ni[j, 0] - sx
            dy = r_ni[i, 1] - r_ni[j, 1] - sy
            dz = r_ni[i, 2] - r_ni[j, 2] - sz
            r2 = dx * dx + dy * dy + dz * dz
            qq = qi * q_n[j]
            if same:
                r = math.sqrt(r2)
                u = -qq * math.erf(alpha * r) / r
                f_over_r = (qq * _TWO_OVER_SQRT_PI * alpha * math.exp(-alpha * alpha * r2)
                            + u) / r2
                e_intra += u
            else:
                u, f_over_r = dsf_term(qq, r2, alpha, offset, slope)
                e_pairs += u
            w += f_over_r * r2
            add_pair_force(f_ni, i, j, f_over_r, dx, dy, dz)
    return e_pairs, e_intra, w


def molecule_centres(r_ni, mol_n, box):
    """Per charge, the mean position of its molecule's charges (made whole by minimum image)."""
    c_ni = np.empty_like(r_ni)
    for m in np.unique(mol_n):
        idx = np.flatnonzero(mol_n == m)
        d = r_ni[idx] - r_ni[idx[0]]
        d -= box * np.rint(d / box)
        c_ni[idx] = r_ni[idx[0]] + d.mean(axis=0)
    return c_ni


class DampedShiftedForce:
    """The damped shifted-force Coulomb sum of a neutral set of charges in a cubic box.

    Parameters
    ----------
    charges_n : array_like, shape=(n,), reduced charge
    box_length : float, sigma
    cutoff : float, sigma
        Rc, at most half the box.
    damping : float, 1/sigma
        a (0 for the undamped shifted force).
    molecule_n : array_like of int, optional
        Molecule label per charge.

    Examples
    --------
    Two opposite unit charges at distance 1 with a long cut-off and no
    damping: -1/r shifted and tilted to zero at Rc = 10, plus the self terms.

    >>> dsf = DampedShiftedForce([1.0, -1.0], 20.0, cutoff=10.0, damping=0.0)
    >>> res = dsf.compute([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0]])
    >>> round(res.energy, 6)   # -(1 - 0.1 - 0.01 * 9) - 2 * 0.05
    -0.91
    """

    def __init__(self, charges_n, box_length, cutoff, damping, molecule_n=None):
        self.charges = ChargeBox(charges_n, box_length, molecule_n)
        self.cutoff = positive("cutoff", cutoff, "sigma")
        half = 0.5 * self.charges.box_length
        if self.cutoff > half * (1.0 + 1e-12):
            raise SettingError("cutoff", cutoff, f"must not exceed half the box ({half:.6g} "
                               "sigma) (minimum image); use a larger box or a smaller cut-off")
        self.damping = non_negative("damping", damping, "1/sigma, typically 0.2 to 0.7")
        q, mol = self.charges.charges_n, self.charges.molecule_n
        self.single_sites = np.unique(mol).size == mol.size
        _, inverse = np.unique(mol, return_inverse=True)
        #: sum_i q_i Q_mol(i), Q_mol(i) the total charge of i's molecule
        self.q_times_molecule_charge = float(q @ np.bincount(inverse, weights=q)[inverse])

    def centres(self, r_ni):
        """Per charge, the centre of its molecule (the charge itself for single charges)."""
        if self.single_sites:
            return r_ni
        return molecule_centres(r_ni, self.charges.molecule_n, self.charges.box_length)

    def compute(self, r_ni):
        """Energy, forces and virial of the charges at ``r_ni`` (:class:`CoulombResult`)."""
        cb = self.charges
        r = cb.positions(r_ni)
        f_ni = np.zeros_like(r)
        a, rc = self.damping, self.cutoff
        e_pairs, e_intra, w = dsf_pairs(r, self.centres(r), cb.charges_n, cb.molecule_n,
                                        cb.box_length, a, rc, *dsf_constants(a, rc), f_ni)
        e_self = -math.erfc(a * rc) / (2.0 * rc) * self.q_times_molecule_charge \
            - a / math.sqrt(math.pi) * cb.sum_q2
        parts = {"pairs": e_pairs, "self": e_self, "intramolecular": e_intra}
        return CoulombResult(e_pairs + e_self + e_intra, f_ni, w, parts)
