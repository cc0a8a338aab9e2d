"""Point charges in a cubic periodic box: the shared input checks and result.

Reduced units (``docs/units.md``): lengths in sigma, energies in epsilon and
charges as q* = q / sqrt(4 pi eps0 sigma epsilon), so that two charges at
distance r interact with q_i* q_j* / r* epsilon.  A charge q in e of a
species with epsilon/k in K and sigma in angstrom is
q* = q sqrt(C / (epsilon_K sigma_angstrom)), C = e^2 / (4 pi eps0 k angstrom)
= 167101 K (``analysis.molecules.electrostatics.COULOMB_K_ANGSTROM``).

Both Coulomb methods of the engine (:mod:`mdsim.engine.ewald`,
:mod:`mdsim.engine.damped_coulomb`) compute the energy of all pairs of
charges in different molecules, with all periodic images: charges with the
same ``molecule_n`` label (the sites of one rigid molecule) do not interact
directly, but each interacts with the periodic images of the others (an
image of a molecule is another molecule).

Array suffixes: ``_n`` charge, ``_i`` Cartesian coordinate.
"""
from collections import namedtuple

import numpy as np
from numba import njit

from mdsim.checks import positive
from mdsim.errors import SettingError

__all__ = ["CoulombResult", "ChargeBox", "add_pair_force", "linear_quadrupole_charges",
           "NEUTRAL_TOLERANCE"]

#: A total charge below this fraction of sqrt(sum q^2) counts as neutral (round-off).
NEUTRAL_TOLERANCE = 1e-10

CoulombResult = namedtuple("CoulombResult", "energy forces_ni virial parts")
CoulombResult.__doc__ = """The electrostatic energy of a configuration.

energy : float
    Total energy, epsilon (not per particle).
forces_ni : ndarray, shape=(n, 3), float64
    Force on each charge, epsilon / sigma.
virial : float
    W = sum over pairs of r . f (with the images and the reciprocal part),
    epsilon; the configurational pressure of these charges is W / (3 V).
parts : dict of float
    The method's terms (for example "real", "reciprocal", "self", "intramolecular").
"""


@njit(cache=True, inline="always")
def add_pair_force(f_ni, i, j, f_over_r, dx, dy, dz):
    """Add the pair force f_over_r * (dx, dy, dz) to charge i and its opposite to j."""
    f_ni[i, 0] += f_over_r * dx
    f_ni[i, 1] += f_over_r * dy
    f_ni[i, 2] += f_over_r * dz
    f_ni[j, 0] -= f_over_r * dx
    f_ni[j, 1] -= f_over_r * dy
    f_ni[j, 2] -= f_over_r * dz


class ChargeBox:
    """Charges, their molecule labels and a cubic box, checked once.

    Parameters
    ----------
    charges_n : array_like, shape=(n,), reduced charge
    box_length : float, sigma
    molecule_n : array_like of int, shape=(n,), optional
        Molecule label of each charge (default: every charge its own molecule).

    Raises
    ------
    SettingError
        Charges not finite, no two charges, a box that is not positive, a
        system that is not neutral, labels of the wrong length.
    """

    def __init__(self, charges_n, box_length, molecule_n=None):
        q = np.ascontiguousarray(np.ravel(np.asarray(charges_n, dtype=float)))
        if q.size < 2 or not np.all(np.isfinite(q)):
            raise SettingError("charges_n", f"{q.size} values", "need at least two finite charges")
        q_rms = float(np.sqrt(np.sum(q * q)))
        if abs(q.sum()) > NEUTRAL_TOLERANCE * max(q_rms, 1e-300) or q_rms == 0.0:
            raise SettingError("charges_n", f"total {q.sum():.6g}",
                               "the periodic sums need a neutral system with some charge; "
                               "add counter-charges so that the charges sum to zero")
        self.charges_n = q
        self.box_length = positive("box_length", box_length, "the cubic box edge, sigma")
        if molecule_n is None:
            mol = np.arange(q.size, dtype=np.int64)
        else:
            mol = np.ascontiguousarray(np.ravel(np.asarray(molecule_n)), dtype=np.int64)
            if mol.size != q.size:
                raise SettingError("molecule_n", f"{mol.size} labels",
                                   f"give one molecule label per charge ({q.size})")
        self.molecule_n = mol
        #: sum of q^2, the scale of the errors of every method
        self.sum_q2 = float(np.sum(q * q))

    @property
    def volume(self):
        return self.box_length ** 3

    def positions(self, r_ni):
        """``r_ni`` as a contiguous float64 (n, 3) array, checked."""
        r = np.ascontiguousarray(np.asarray(r_ni, dtype=float))
        if r.shape != (self.charges_n.size, 3) or not np.all(np.isfinite(r)):
            raise SettingError("r_ni", f"shape {r.shape}",
                               f"need finite positions of shape ({self.charges_n.size}, 3)")
        return r


def linear_quadrupole_charges(theta, half_length):
    """Three charges on an axis with the Buckingham quadrupole ``theta``.

    Parameters
    ----------
    theta : float
        Quadrupole moment (reduced, q* sigma^2).
    half_length : float, sigma
        d, the distance of the outer charges from the centre.

    Returns
    -------
    charges : ndarray, shape=(3,)
        (q, -2 q, q) at z = (-d, 0, +d), q = theta / (2 d^2).

    Notes
    -----
    Theta = (1/2) sum q_i (3 z_i^2 - r_i^2) = 2 q d^2 (Buckingham, Q. Rev.
    Chem. Soc. 13, 183 (1959)), the convention of
    ``analysis.molecules.electrostatics``.

    Examples
    --------
    >>> linear_quadrupole_charges(1.0, 0.5).tolist()
    [2.0, -4.0, 2.0]
    """
    d = positive("half_length", half_length, "sigma, small against the molecule spacing")
    q = float(theta) / (2.0 * d * d)
    return np.array([q, -2.0 * q, q])
