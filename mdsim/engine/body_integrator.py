"""Symplectic splitting for rigid bodies of any shape: the numba kernels and the start momenta.

State of body n: centre of mass ``r_ni``, velocity ``v_ni``, orientation
``quat_nq`` (body to lab, :mod:`mdsim.engine.body_rotation`), its lab-frame
site offsets ``offset_nsi``, and its angular momentum in the body
(principal-axes) frame ``pb_ni``; mass ``mass_n`` and principal moments of
inertia ``inertia_ni``.  Reduced units throughout.

One step of length dt splits H = K_trans + K_rot + U into exactly solved
parts, in the symmetric (Strang) order

1. half kick: v += (dt/2) F / m, p_b += (dt/2) R^T tau (U's flow);
2. drift r += dt v, and free rotation by the symmetric sequence of
   rotations about the principal axes 1, 2, 3, 2, 1 for dt/2, dt/2, dt,
   dt/2, dt/2 (each the exact flow of p_k^2 / (2 I_k): about body axis k
   through the angle phi = p_k t / I_k, p_b turns by -phi and q by +phi);
3. forces and torques at the new configuration, half kick again.

Each piece is the exact flow of a part of H, so the step is symplectic and
time reversible (the rotation splitting of Dullweber, Leimkuhler and
McLachlan, J. Chem. Phys. 107, 5840, 1997; the same sequence as the NO_SQUISH
integrator of Miller et al., J. Chem. Phys. 116, 8649, 2002, here with
quaternions updated by their exact body-axis rotations).

Bodies of a mixture.  An atom (all three moments 0) never turns.  A linear
body (its sites on principal axis 1, so I_1 = 0 and I_2 = I_3 = I) has no
rotation about that axis: its body momentum p_1 is started at 0 and kept
there, the axial component of the torque (zero but for round-off, the
sites being on the axis) is projected out at each kick, and its free
rotation is solved exactly at once: with p_1 = 0 and I_2 = I_3 the angular
velocity p_b / I is parallel to p_b, which therefore stays fixed in the
body frame, and the body turns about it through |p_b| t / I (the free
linear rotor, Goldstein, Classical Mechanics, chapter 5).  Its kinetic
energy is (p_2^2 + p_3^2) / (2 I).

Thermostat (equilibration, "md-nvt"): stochastic velocity rescaling of the
translations (3N - 3) and rotations (3 per non-linear body, 2 per linear
one) separately, :func:`mdsim.engine.rigid_integrator.thermostat_groups`.

Array suffixes: ``_n`` body, ``_i`` Cartesian (lab or body) component,
``_q`` quaternion component, ``_s`` site of one body.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.body_pair import body_forces_half
from mdsim.engine.body_rotation import quaternion_matrix, rotate_sites
from mdsim.engine.integrator import maxwell_boltzmann
from mdsim.engine.rigid_integrator import thermostat_groups

__all__ = ["body_rotational_dof", "body_kick", "body_drift_rotate", "body_kinetic_parts",
           "body_start_momenta", "body_block"]


def body_rotational_dof(inertia_ni):
    """Rotational degrees of freedom of the bodies: one per positive principal moment (3 for a
    non-linear body, 2 for a linear one, 0 for an atom).

    >>> body_rotational_dof(np.array([[0.1, 0.2, 0.3], [0.0, 0.5, 0.5], [0.0, 0.0, 0.0]]))
    5
    """
    return int(np.count_nonzero(np.asarray(inertia_ni) > 0.0))


@njit(cache=True)
def body_kick(half_dt, v_ni, pb_ni, f_ni, torque_ni, quat_nq, mass_n, inertia_ni):
    """Half kick: v += h F / m and p_b += h R(q)^T tau (the lab torque in the body frame),
    only about the axes of positive moment (a linear body's axial torque projected out)."""
    for n in range(v_ni.shape[0]):
        r00, r01, r02, r10, r11, r12, r20, r21, r22 = quaternion_matrix(
            quat_nq[n, 0], quat_nq[n, 1], quat_nq[n, 2], quat_nq[n, 3])
        tx, ty, tz = torque_ni[n, 0], torque_ni[n, 1], torque_ni[n, 2]
        if inertia_ni[n, 0] > 0.0:
            pb_ni[n, 0] += half_dt * (r00 * tx + r10 * ty + r20 * tz)
        if inertia_ni[n, 1] > 0.0:
            pb_ni[n, 1] += half_dt * (r01 * tx + r11 * ty + r21 * tz)
        if inertia_ni[n, 2] > 0.0:
            pb_ni[n, 2] += half_dt * (r02 * tx + r12 * ty + r22 * tz)
        for d in range(3):
            v_ni[n, d] += half_dt * f_ni[n, d] / mass_n[n]


@njit(cache=True, inline="always")
def _axis_rotation(k, t, n, pb_ni, quat_nq, inertia_ni):
    """The exact flow of p_k^2 / (2 I_k) over time t for body n (module docstring)."""
    phi = pb_ni[n, k] * t / inertia_ni[n, k]
    c, s = math.cos(phi), math.sin(phi)
    a, b = (k + 1) % 3, (k + 2) % 3
    pa, pbb = pb_ni[n, a], pb_ni[n, b]
    pb_ni[n, a] = c * pa + s * pbb  # p_b turned by -phi about body axis k
    pb_ni[n, b] = -s * pa + c * pbb
    ch, sh = math.cos(0.5 * phi), math.sin(0.5 * phi)
    e1, e2, e3 = (sh, 0.0, 0.0) if k == 0 else ((0.0, sh, 0.0) if k == 1 else (0.0, 0.0, sh))
    _turn(n, quat_nq, ch, e1, e2, e3)


@njit(cache=True, inline="always")
def _linear_rotation(t, n, pb_ni, quat_nq, inertia_ni):
    """The exact free rotation of linear body n over time t (module docstring): about its
    body momentum (0, p_2, p_3), which stays, through |p_b| t / I."""
    p2, p3 = pb_ni[n, 1], pb_ni[n, 2]
    p = math.sqrt(p2 * p2 + p3 * p3)
    if p == 0.0:
        return
    half_phi = 0.5 * p * t / inertia_ni[n, 1]
    sh = math.sin(half_phi) / p
    _turn(n, quat_nq, math.cos(half_phi), 0.0, p2 * sh, p3 * sh)


@njit(cache=True, inline="always")
def _turn(n, quat_nq, ch, e1, e2, e3):
    """q of body n times the unit quaternion (ch, e1, e2, e3): the body turned about its own
    axis (e1, e2, e3) / sin(phi/2) through phi, renormalised."""
    q0, q1, q2, q3 = quat_nq[n, 0], quat_nq[n, 1], quat_nq[n, 2], quat_nq[n, 3]
    p0 = q0 * ch - q1 * e1 - q2 * e2 - q3 * e3
    p1 = q0 * e1 + q1 * ch + q2 * e3 - q3 * e2
    p2 = q0 * e2 - q1 * e3 + q2 * ch + q3 * e1
    p3 = q0 * e3 + q1 * e2 - q2 * e1 + q3 * ch
    norm = 1.0 / math.sqrt(p0 * p0 + p1 * p1 + p2 * p2 + p3 * p3)
    quat_nq[n, 0], quat_nq[n, 1], quat_nq[n, 2], quat_nq[n, 3] = (
        p0 * norm, p1 * norm, p2 * norm, p3 * norm)


@njit(cache=True)
def body_drift_rotate(dt, r_ni, v_ni, quat_nq, pb_ni, inertia_ni, offset_nsi, type_n,
                      site_start_t, site_body_ki, r_ref_ni):
    """Drift of the centres and the split free rotation over dt; the site offsets follow.

    Returns
    -------
    float
        Largest squared displacement of a centre since the list build.
    """
    moved = 0.0
    half = 0.5 * dt
    for n in range(r_ni.shape[0]):
        d2 = 0.0
        for d in range(3):
            r_ni[n, d] += dt * v_ni[n, d]
            x = r_ni[n, d] - r_ref_ni[n, d]
            d2 += x * x
        moved = max(moved, d2)
        if inertia_ni[n, 2] == 0.0:  # an atom does not turn
            continue
        if inertia_ni[n, 0] == 0.0:  # a linear body: no rotation about its axis
            _linear_rotation(dt, n, pb_ni, quat_nq, inertia_ni)
        else:
            _axis_rotation(0, half, n, pb_ni, quat_nq, inertia_ni)
            _axis_rotation(1, half, n, pb_ni, quat_nq, inertia_ni)
            _axis_rotation(2, dt, n, pb_ni, quat_nq, inertia_ni)
            _axis_rotation(1, half, n, pb_ni, quat_nq, inertia_ni)
            _axis_rotation(0, half, n, pb_ni, quat_nq, inertia_ni)
        t = type_n[n]
        rotate_sites(quat_nq[n, 0], quat_nq[n, 1], quat_nq[n, 2], quat_nq[n, 3], site_body_ki,
                     site_start_t[t], site_start_t[t + 1], offset_nsi[n])
    return moved


@njit(cache=True)
def body_kinetic_parts(v_ni, pb_ni, mass_n, inertia_ni):
    """K_trans = sum m |v|^2 / 2 and K_rot = sum_k p_k^2 / (2 I_k) over the axes of positive
    moment (the whole system)."""
    kt = kr = 0.0
    for n in range(mass_n.size):
        kt += 0.5 * mass_n[n] * (v_ni[n, 0] ** 2 + v_ni[n, 1] ** 2 + v_ni[n, 2] ** 2)
        for k in range(3):
            if inertia_ni[n, k] > 0.0:
                kr += 0.5 * pb_ni[n, k] ** 2 / inertia_ni[n, k]
    return kt, kr


def body_start_momenta(s, mass_n, inertia_ni, kT):
    """Velocities and body angular momenta at kT: K_trans = (3N - 3) kT/2, K_rot = F_rot kT/2
    (F_rot = :func:`body_rotational_dof`).

    Parameters
    ----------
    s : ndarray, shape=(4,), uint64
        Random state, advanced.
    mass_n : ndarray, shape=(n,), float64
    inertia_ni : ndarray, shape=(n, 3), float64
        Principal moments (0 about an axis without rotation: p_k = 0 there).
    kT : float

    Returns
    -------
    v_ni, pb_ni : ndarray, shape=(n, 3), float64

    Examples
    --------
    >>> from mdsim.engine.rng import make_state
    >>> inertia = np.tile([0.05, 0.1, 0.15], (4, 1))
    >>> v, p = body_start_momenta(make_state(1), np.ones(4), inertia, 1.5)
    >>> [round(k, 12) for k in body_kinetic_parts(v, p, np.ones(4), inertia)]
    [6.75, 9.0]

    Notes
    -----
    Each p_k is normal with variance I_k kT (the canonical distribution of
    a free rigid rotor's body-frame momenta), then all are scaled so that
    K_rot is exactly its mean.
    """
    n = mass_n.size
    v_ni = np.zeros((n, 3))
    maxwell_boltzmann(s, mass_n, kT, v_ni)
    pb_ni = np.zeros((n, 3))
    _rng.fill_normal(s, pb_ni)
    pb_ni *= np.sqrt(inertia_ni * kT)
    _, kr = body_kinetic_parts(v_ni, pb_ni, mass_n, inertia_ni)
    if kr > 0.0:
        pb_ni *= math.sqrt(0.5 * body_rotational_dof(inertia_ni) * kT / kr)
    return v_ni, pb_ni


@njit(cache=True)
def body_block(n_steps, resume, dt, r_ni, v_ni, quat_nq, pb_ni, offset_nsi, f_ni, tau_ni, mass_n,
               inertia_ni, r_ref_ni, half_skin2, type_n, box_i, site_start_t, site_body_ki,
               params_kk, form, rc, shifted, nb_nj, count_n, thermostat, kT, nf_trans, nf_rot, c,
               s, obs):
    """Up to ``n_steps`` rigid-body steps; stop early when the list is stale.

    Arguments as :func:`mdsim.engine.rigid_integrator.rigid_block`, with the
    orientations ``quat_nq``, body-frame momenta ``pb_ni``, site offsets
    ``offset_nsi``, principal moments ``inertia_ni`` and the model arrays of
    :class:`mdsim.engine.body_model.BodyPairModel`.  ``obs`` (5,): model
    energy and virial of the latest force evaluation, minus the energy the
    thermostat added, K_trans, K_rot.

    Returns
    -------
    done, status : int
        Completed steps; 0 all done, 1 rebuild the list and resume, 2 the
        energy is not finite.
    """
    half = 0.5 * dt
    done = 0
    while done < n_steps:
        if not resume:
            body_kick(half, v_ni, pb_ni, f_ni, tau_ni, quat_nq, mass_n, inertia_ni)
            if body_drift_rotate(dt, r_ni, v_ni, quat_nq, pb_ni, inertia_ni, offset_nsi, type_n,
                                 site_start_t, site_body_ki, r_ref_ni) > half_skin2:
                return done, 1
        resume = False
        u, w = body_forces_half(r_ni, offset_nsi, type_n, box_i, site_start_t, params_kk, form,
                                rc, shifted, nb_nj, count_n, f_ni, tau_ni)
        obs[0], obs[1] = u, w
        if not np.isfinite(u):
            return done, 2
        body_kick(half, v_ni, pb_ni, f_ni, tau_ni, quat_nq, mass_n, inertia_ni)
        kt, kr = body_kinetic_parts(v_ni, pb_ni, mass_n, inertia_ni)
        if thermostat:
            kt_new, kr_new = thermostat_groups(v_ni, pb_ni, kt, kr, kT, nf_trans, nf_rot, c, s)
            obs[2] -= kt_new + kr_new - kt - kr
            kt, kr = kt_new, kr_new
        obs[3], obs[4] = kt, kr
        done += 1
    return done, 0
