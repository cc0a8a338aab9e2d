"""Canonical Monte Carlo kernels for rigid bodies of any shape: trial moves, energy and virial.

A trial move picks a body at random and, with probability 1/2 each,
either displaces its centre uniformly inside a cube of half-width
``max_displacement`` or turns it by an angle drawn uniformly from
[-max_angle, max_angle] about an axis drawn uniformly on the sphere
(:func:`mdsim.engine.body_rotation.random_turn`); an atom (a type that does
not rotate) is always displaced.  Both proposals are symmetric, so the
Metropolis acceptance min(1, exp(-dU / kT)) keeps detailed balance (Allen
and Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, section 4.7).

The energy is the site-site pair energy of :mod:`mdsim.engine.body_pair`
(site potentials and, when the model carries them, the site charges'
Coulomb energies) with the plain molecular cut-off; the neighbours come from the linked cells
on the centres of :mod:`mdsim.engine.mc_cells`.

Array suffixes: ``_n`` body, ``_q`` quaternion component, ``_s`` site of
one body, ``_i`` Cartesian coordinate, ``_c`` cell, ``_m`` move kind (0
translation, 1 rotation).
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.body_pair import body_pair_forces, body_pair_terms
from mdsim.engine.body_rotation import random_turn, rotate_sites
from mdsim.engine.forms import FORM_LJ, FORM_MIE
from mdsim.engine.mc_cells import (cell_coord, cell_insert, cell_remove, cells_around, min_image,
                                   wrap_coordinate)

__all__ = ["body_energy", "body_moves", "body_energy_virial"]


@njit(cache=True)
def _pair_u(form, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t, params_kk):
    if form == FORM_LJ:  # a constant form prunes pair_eval's other branches
        return body_pair_terms(FORM_LJ, False, dx, dy, dz, off_a_si, off_b_si, ta, tb,
                               site_start_t, params_kk)[0]
    return body_pair_terms(FORM_MIE, False, dx, dy, dz, off_a_si, off_b_si, ta, tb,
                           site_start_t, params_kk)[0]


@njit(cache=True)
def body_energy(i, x, y, z, off_si, centre_ni, offset_nsi, type_n, box_i, ncell_i, head_c,
                next_n, site_start_t, params_kk, form, rc, cells_c):
    """Energy of body i placed at centre (x, y, z) with site offsets ``off_si`` with all others.

    Body i itself (at its stored place) is skipped; pairs whose centres are
    at least ``rc`` apart contribute nothing (plain cut).  ``cells_c`` is
    scratch space of (2 reach + 1)^3 int64.
    """
    ti = type_n[i]
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    hx, hy, hz = 0.5 * lx, 0.5 * ly, 0.5 * lz
    rc2 = rc * rc
    u = 0.0
    for q in range(cells_around(x, y, z, box_i, ncell_i, cells_c)):
        j = head_c[cells_c[q]]
        while j >= 0:
            if j != i:
                dx = min_image(centre_ni[j, 0] - x, lx, hx)
                dy = min_image(centre_ni[j, 1] - y, ly, hy)
                dz = min_image(centre_ni[j, 2] - z, lz, hz)
                if dx * dx + dy * dy + dz * dz < rc2:
                    u += _pair_u(form, dx, dy, dz, off_si, offset_nsi[j], ti, type_n[j],
                                 site_start_t, params_kk)
            j = next_n[j]
    return u


@njit(cache=True)
def body_moves(centre_ni, quat_nq, offset_nsi, type_n, box_i, ncell_i, head_c, next_n, cell_n,
               site_start_t, site_body_ki, params_kk, form, rc, rotates_t, state, n_moves,
               max_displacement, max_angle, beta, u_total, tried_m, accepted_m):
    """``n_moves`` Metropolis trial moves (translation or rotation, 1/2 each).

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, in [0, box), sigma (updated)
    quat_nq : ndarray, shape=(n, 4), float64, unit quaternions (updated)
    offset_nsi : ndarray, shape=(n, max_sites, 3), float64, sigma (updated)
        Lab-frame site offsets, kept equal to R(q) times the body positions.
    type_n : ndarray, shape=(n,), int64
    box_i : ndarray, shape=(3,), float64, sigma (each edge > 2 rc)
    ncell_i, head_c, next_n, cell_n
        The linked cells of :mod:`mdsim.engine.mc_cells` (updated).
    site_start_t, site_body_ki, params_kk, form, rc
        The model of :class:`mdsim.engine.body_model.BodyPairModel`.
    rotates_t : ndarray, shape=(n_types,), int64
        0 for a type that is never turned (an atom).
    state : ndarray, shape=(4,), uint64
        The random stream (advanced).
    n_moves : int
    max_displacement : float, sigma
    max_angle : float, radian
    beta : float
        1 / kT, reduced.
    u_total : float, epsilon
        Running total energy (truncated).
    tried_m, accepted_m : ndarray, shape=(2,), int64 (updated)

    Returns
    -------
    float
        The running total energy after the moves.
    """
    n = centre_ni.shape[0]
    cells_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    trial_si = np.zeros((offset_nsi.shape[1], 3))
    for _ in range(n_moves):
        i = min(int(_rng.uniform(state) * n), n - 1)
        t = type_n[i]
        kind = 0 if _rng.uniform(state) < 0.5 or rotates_t[t] == 0 else 1
        xo, yo, zo = centre_ni[i, 0], centre_ni[i, 1], centre_ni[i, 2]
        q0, q1, q2, q3 = quat_nq[i, 0], quat_nq[i, 1], quat_nq[i, 2], quat_nq[i, 3]
        if kind == 0:
            xn = wrap_coordinate(xo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[0])
            yn = wrap_coordinate(yo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[1])
            zn = wrap_coordinate(zo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[2])
            trial_si[:, :] = offset_nsi[i]
        else:
            xn, yn, zn = xo, yo, zo
            q0, q1, q2, q3 = random_turn(state, q0, q1, q2, q3, max_angle)
            rotate_sites(q0, q1, q2, q3, site_body_ki, site_start_t[t], site_start_t[t + 1],
                         trial_si)
        tried_m[kind] += 1
        u_new = body_energy(i, xn, yn, zn, trial_si, centre_ni, offset_nsi, type_n, box_i,
                            ncell_i, head_c, next_n, site_start_t, params_kk, form, rc, cells_c)
        u_old = body_energy(i, xo, yo, zo, offset_nsi[i], centre_ni, offset_nsi, type_n, box_i,
                            ncell_i, head_c, next_n, site_start_t, params_kk, form, rc, cells_c)
        du = u_new - u_old
        if du > 0.0 and _rng.uniform(state) >= math.exp(-beta * du):
            continue
        accepted_m[kind] += 1
        u_total += du
        if kind == 1:
            quat_nq[i, 0], quat_nq[i, 1], quat_nq[i, 2], quat_nq[i, 3] = q0, q1, q2, q3
            offset_nsi[i, :, :] = trial_si
        else:
            centre_ni[i, 0], centre_ni[i, 1], centre_ni[i, 2] = xn, yn, zn
            c = ((cell_coord(xn, box_i[0], ncell_i[0]) * ncell_i[1]
                  + cell_coord(yn, box_i[1], ncell_i[1])) * ncell_i[2]
                 + cell_coord(zn, box_i[2], ncell_i[2]))
            if c != cell_n[i]:
                cell_remove(i, head_c, next_n, cell_n)
                cell_insert(i, c, head_c, next_n, cell_n)
    return u_total


@njit(cache=True)
def body_energy_virial(centre_ni, offset_nsi, type_n, box_i, ncell_i, head_c, next_n,
                       site_start_t, params_kk, form, rc):
    """Total energy and virial W = sum_pairs d_ab . F_b over the cells (plain cut).

    Returns
    -------
    u, virial : float, epsilon
        The configurational pressure is W / (3 V) (plus the tail).
    """
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    hx, hy, hz = 0.5 * lx, 0.5 * ly, 0.5 * lz
    rc2 = rc * rc
    cells_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    u = w = 0.0
    for i in range(centre_ni.shape[0]):
        x, y, z = centre_ni[i, 0], centre_ni[i, 1], centre_ni[i, 2]
        for q in range(cells_around(x, y, z, box_i, ncell_i, cells_c)):
            j = head_c[cells_c[q]]
            while j >= 0:
                if j > i:  # each pair once
                    dx = min_image(centre_ni[j, 0] - x, lx, hx)
                    dy = min_image(centre_ni[j, 1] - y, ly, hy)
                    dz = min_image(centre_ni[j, 2] - z, lz, hz)
                    if dx * dx + dy * dy + dz * dz < rc2:
                        e, fx, fy, fz, _, _, _, _, _, _ = body_pair_forces(
                            form, dx, dy, dz, offset_nsi[i], offset_nsi[j], type_n[i], type_n[j],
                            site_start_t, params_kk, rc, 0)
                        u += e
                        w += dx * fx + dy * fy + dz * fz
                j = next_n[j]
    return u, w
