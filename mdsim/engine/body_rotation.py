"""Orientations of rigid bodies as unit quaternions: rotation matrices, turns, site offsets.

A body's orientation is the unit quaternion q = (q0, q1, q2, q3) (scalar
first) of the rotation that takes body-frame vectors to the lab frame,
p_lab = R(q) p_body.  Turning a body by a lab-frame rotation dq gives
q' = dq q (quaternion product), R(q') = R(dq) R(q).  q and -q are the same
orientation.  The kernels renormalise q after each turn, so |q| does not
drift.

Array suffixes: ``_n`` body, ``_q`` the four quaternion components, ``_k``
site (of all types), ``_s`` site of one body, ``_i`` Cartesian coordinate.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng

__all__ = ["quaternion_matrix", "rotate_sites", "random_turn", "turn_about", "rotation_matrices",
           "random_orientations"]


@njit(cache=True, inline="always")
def quaternion_matrix(q0, q1, q2, q3):
    """The rotation matrix R(q) of a unit quaternion, row by row (nine floats).

    Notes
    -----
    R = [[q0^2+q1^2-q2^2-q3^2, 2(q1q2-q0q3), 2(q1q3+q0q2)],
         [2(q1q2+q0q3), q0^2-q1^2+q2^2-q3^2, 2(q2q3-q0q1)],
         [2(q1q3-q0q2), 2(q2q3+q0q1), q0^2-q1^2-q2^2+q3^2]]
    (Goldstein, Poole and Safko, Classical Mechanics, 3rd ed. 2002, section 4.5).
    """
    return (q0 * q0 + q1 * q1 - q2 * q2 - q3 * q3, 2.0 * (q1 * q2 - q0 * q3),
            2.0 * (q1 * q3 + q0 * q2),
            2.0 * (q1 * q2 + q0 * q3), q0 * q0 - q1 * q1 + q2 * q2 - q3 * q3,
            2.0 * (q2 * q3 - q0 * q1),
            2.0 * (q1 * q3 - q0 * q2), 2.0 * (q2 * q3 + q0 * q1),
            q0 * q0 - q1 * q1 - q2 * q2 + q3 * q3)


@njit(cache=True)
def rotate_sites(q0, q1, q2, q3, body_ki, start, stop, out_si):
    """Lab-frame offsets ``out_si[s] = R(q) body_ki[start + s]`` of one body's sites."""
    r00, r01, r02, r10, r11, r12, r20, r21, r22 = quaternion_matrix(q0, q1, q2, q3)
    for s in range(stop - start):
        x, y, z = body_ki[start + s, 0], body_ki[start + s, 1], body_ki[start + s, 2]
        out_si[s, 0] = r00 * x + r01 * y + r02 * z
        out_si[s, 1] = r10 * x + r11 * y + r12 * z
        out_si[s, 2] = r20 * x + r21 * y + r22 * z


@njit(cache=True, inline="always")
def turn_about(q0, q1, q2, q3, kx, ky, kz, angle):
    """q turned by ``angle`` (radian) about the lab-frame unit axis k, renormalised: dq q."""
    c, s = math.cos(0.5 * angle), math.sin(0.5 * angle)
    d0, d1, d2, d3 = c, s * kx, s * ky, s * kz
    p0 = d0 * q0 - d1 * q1 - d2 * q2 - d3 * q3
    p1 = d0 * q1 + d1 * q0 + d2 * q3 - d3 * q2
    p2 = d0 * q2 - d1 * q3 + d2 * q0 + d3 * q1
    p3 = d0 * q3 + d1 * q2 - d2 * q1 + d3 * q0
    norm = 1.0 / math.sqrt(p0 * p0 + p1 * p1 + p2 * p2 + p3 * p3)
    return p0 * norm, p1 * norm, p2 * norm, p3 * norm


@njit(cache=True)
def random_turn(state, q0, q1, q2, q3, max_angle):
    """q turned by an angle uniform in [-max_angle, max_angle] about a uniformly random axis.

    The proposal is symmetric: the reverse turn (same axis, opposite angle)
    has the same probability density (Allen and Tildesley, Computer
    Simulation of Liquids, 2nd ed. 2017, section 4.7).
    """
    kz = 2.0 * _rng.uniform(state) - 1.0
    phi = 2.0 * math.pi * _rng.uniform(state)
    s = math.sqrt(max(0.0, 1.0 - kz * kz))
    angle = (2.0 * _rng.uniform(state) - 1.0) * max_angle
    return turn_about(q0, q1, q2, q3, s * math.cos(phi), s * math.sin(phi), kz, angle)


def rotation_matrices(quat_nq):
    """R(q) of each quaternion (NumPy, for checks and set-up).

    Parameters
    ----------
    quat_nq : array_like, shape=(..., 4)
        Unit quaternions, scalar first.

    Returns
    -------
    ndarray, shape=(..., 3, 3)

    Examples
    --------
    A quarter turn about z takes x to y:

    >>> q = np.array([np.cos(np.pi / 4), 0.0, 0.0, np.sin(np.pi / 4)])
    >>> np.round(rotation_matrices(q) @ [1.0, 0.0, 0.0], 12).tolist()
    [0.0, 1.0, 0.0]
    """
    q = np.asarray(quat_nq, dtype=float)
    q0, q1, q2, q3 = q[..., 0], q[..., 1], q[..., 2], q[..., 3]
    rows = quaternion_matrix.py_func(q0, q1, q2, q3)  # the one formula, on arrays
    return np.stack([np.stack(rows[0:3], axis=-1), np.stack(rows[3:6], axis=-1),
                     np.stack(rows[6:9], axis=-1)], axis=-2)


def random_orientations(n, seed):
    """``n`` orientations uniform over the rotations (normalised 4-D normal deviates).

    Returns
    -------
    ndarray, shape=(n, 4), float64
        Unit quaternions with q0 >= 0.

    Notes
    -----
    A 4-D standard normal vector, normalised, is uniform on the unit 3-sphere,
    which is the uniform (Haar) measure on the rotations (Shoemake, Graphics
    Gems III, 1992, "Uniform random rotations").

    >>> q = random_orientations(5, seed=1)
    >>> q.shape, bool(np.allclose(np.linalg.norm(q, axis=1), 1.0))
    ((5, 4), True)
    """
    q = np.random.default_rng(seed).normal(size=(int(n), 4))
    q /= np.linalg.norm(q, axis=1)[:, None]
    q[q[:, 0] < 0] *= -1.0
    return q
