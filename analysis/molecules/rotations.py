"""Rotations of rigid molecules: quadrature rules on the sphere and on SO(3), random rotations.

A rotation is a 3 x 3 matrix taking body-frame vectors to the lab frame.
The sphere rule is Lebedev's (nodes with octahedral symmetry, exact for
the spherical harmonics up to its degree); the rotation rule puts the
rotated body z axis on the sphere rule's nodes and turns the body about
it by ``degree + 1`` equally spaced angles, which integrates every Wigner
function D^l_mk with l <= degree exactly.  Weights sum to 1 (averages).

Array suffixes: ``_n`` nodes or draws, ``_v`` Cartesian components.
"""
import math

import numpy as np
from scipy.integrate import lebedev_rule

from mdsim.checks import count
from mdsim.errors import SettingError

__all__ = ["SPHERE_DEGREES", "sphere_rule", "axis_frames", "rotation_rule", "random_rotations"]

#: The degrees of the Lebedev sphere rules offered (scipy.integrate.lebedev_rule).
SPHERE_DEGREES = (3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 23, 25, 27, 29, 31, 35)


def sphere_rule(degree, name="degree"):
    """Lebedev nodes on the unit sphere and their weights (sum 1).

    Parameters
    ----------
    degree : int
        One of :data:`SPHERE_DEGREES`; the rule integrates every spherical
        harmonic of that degree or less exactly.
    name : str, optional
        The setting's name for an error message.

    Returns
    -------
    u_nv : ndarray, shape=(n, 3)
    w_n : ndarray, shape=(n,)

    Notes
    -----
    Lebedev and Laikov, Doklady Mathematics 59, 477 (1999), as tabulated
    by ``scipy.integrate.lebedev_rule``.

    Examples
    --------
    The average of z^2 over the sphere is 1/3:

    >>> u_nv, w_n = sphere_rule(7)
    >>> len(w_n), round(float(w_n @ u_nv[:, 2] ** 2), 12)
    (26, 0.333333333333)
    """
    degree = count(name, degree, 3, "a Lebedev degree such as 11")
    if degree not in SPHERE_DEGREES:
        raise SettingError(name, degree, "must be one of the Lebedev degrees "
                           f"{', '.join(map(str, SPHERE_DEGREES))}")
    x, w = lebedev_rule(degree)
    return np.ascontiguousarray(x.T), w / w.sum()


def axis_frames(u_nv):
    """Rotations R_z(phi) R_y(theta) that take the z axis to each unit vector ``u_nv``, (n, 3, 3)."""
    u_nv = np.asarray(u_nv, dtype=float)
    theta = np.arccos(np.clip(u_nv[:, 2], -1.0, 1.0))
    phi = np.arctan2(u_nv[:, 1], u_nv[:, 0])
    ct, st, cp, sp = np.cos(theta), np.sin(theta), np.cos(phi), np.sin(phi)
    zero = np.zeros_like(ct)
    return np.stack([np.stack([cp * ct, -sp, cp * st], axis=-1),
                     np.stack([sp * ct, cp, sp * st], axis=-1),
                     np.stack([-st, zero, ct], axis=-1)], axis=-2)


def rotation_rule(degree, name="degree"):
    """Nodes and weights (sum 1) of a rule for averages over all rotations.

    Parameters
    ----------
    degree : int
        The Lebedev degree of the body z axis's directions; the angle about
        that axis takes ``degree + 1`` equally spaced values.
    name : str, optional

    Returns
    -------
    rot_nvv : ndarray, shape=(n, 3, 3)
    w_n : ndarray, shape=(n,)

    Notes
    -----
    With Euler angles R = R_z(alpha) R_y(beta) R_z(gamma), the invariant
    average is (1 / 8 pi^2) int dalpha dcos(beta) dgamma; (alpha, beta) is
    the direction of the body z axis (uniform on the sphere) and gamma the
    turn about it.  A Wigner function D^l_mk = exp(-i m alpha) d^l_mk(beta)
    exp(-i k gamma) is averaged exactly: the gamma sum kills k != 0 for
    |k| <= l <= degree, and D^l_m0 is a spherical harmonic of the axis,
    exact on the sphere rule (Varshalovich, Moskalev and Khersonskii,
    Quantum Theory of Angular Momentum, 1988, chapter 4).

    Examples
    --------
    The average of a rotation matrix over all rotations is zero:

    >>> rot_nvv, w_n = rotation_rule(5)
    >>> len(w_n), bool(np.allclose(np.einsum("n,nij->ij", w_n, rot_nvv), 0.0, atol=1e-14))
    (84, True)
    """
    u_nv, w_n = sphere_rule(degree, name)
    n_turn = int(degree) + 1
    gamma = 2.0 * math.pi * np.arange(n_turn) / n_turn
    c, s = np.cos(gamma), np.sin(gamma)
    turn_gvv = np.zeros((n_turn, 3, 3))
    turn_gvv[:, 0, 0], turn_gvv[:, 0, 1], turn_gvv[:, 1, 0], turn_gvv[:, 1, 1] = c, -s, s, c
    turn_gvv[:, 2, 2] = 1.0
    rot = axis_frames(u_nv)[:, None] @ turn_gvv[None]
    return rot.reshape(-1, 3, 3), np.repeat(w_n / n_turn, n_turn)


def random_rotations(rng, n):
    """``n`` rotations drawn uniformly (Haar measure) from a NumPy generator, (n, 3, 3).

    Notes
    -----
    A unit quaternion from four independent normal numbers is uniform on
    the 3-sphere, and its rotation uniform on SO(3) (Shoemake, Graphics
    Gems III, 1992, p. 124).

    Examples
    --------
    >>> rot = random_rotations(np.random.default_rng(1), 4)
    >>> bool(np.allclose(rot @ rot.transpose(0, 2, 1), np.eye(3))), bool(np.allclose(
    ...     np.linalg.det(rot), 1.0))
    (True, True)
    """
    q = rng.normal(size=(n, 4))
    w, x, y, z = (q / np.linalg.norm(q, axis=1)[:, None]).T
    return np.stack([
        np.stack([1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y)], axis=-1),
        np.stack([2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x)], axis=-1),
        np.stack([2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y)], axis=-1),
    ], axis=-2)
