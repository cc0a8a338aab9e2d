"""Canonical Monte Carlo kernels for rigid linear molecules: trial moves, energy and virial.

A trial move picks a molecule at random and, with probability 1/2 each,
either displaces its centre uniformly inside a cube of half-width
``max_displacement`` or turns its axis by an angle drawn uniformly from
[-max_angle, max_angle] about an axis drawn uniformly on the sphere
(Rodrigues' rotation formula); an atom (a type that does not rotate) is
always displaced, its rotation being no move at all.  Both proposals are symmetric (the reverse
move has the same probability), so the Metropolis acceptance
min(1, exp(-dU / kT)) keeps detailed balance (Allen and Tildesley, Computer
Simulation of Liquids, 2nd ed. 2017, section 4.7).

The energy is the pair energy of :mod:`mdsim.engine.rigid_pair` with the
plain molecular cut-off (no shift); the neighbours come from the linked
cells on the centres of :mod:`mdsim.engine.mc_cells` (cells of edge >=
rc / reach).

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate, ``_c`` cell,
``_m`` move kind (0 translation, 1 rotation).
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.forms import FORM_LJ, FORM_MIE
from mdsim.engine.mc_cells import (cell_coord, cell_insert, cell_remove, cells_around, min_image,
                                   wrap_coordinate)
from mdsim.engine.rigid_pair import coulomb_terms, pair_forces, pair_terms

__all__ = ["molecule_energy", "rigid_moves", "rigid_energy_virial"]


@njit(cache=True)
def _pair_u(form, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k, params_kk,
            elec_tm):
    if form == FORM_LJ:  # a constant form prunes pair_eval's other branches
        return pair_terms(FORM_LJ, False, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb,
                          site_start_t, site_z_k, params_kk, elec_tm)[0]
    return pair_terms(FORM_MIE, False, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb,
                      site_start_t, site_z_k, params_kk, elec_tm)[0]


@njit(cache=True)
def _coulomb_u(dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k, params_kk):
    return coulomb_terms(False, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
                         site_z_k, params_kk)[0]


@njit(cache=True)
def molecule_energy(i, ti, x, y, z, ex, ey, ez, centre_ni, axis_ni, type_n, box_i, ncell_i,
                    head_c, next_n, site_start_t, site_z_k, params_kk, form, elec_tm, rc, core2,
                    cells_c):
    """Energy of a molecule of type ti placed at centre (x, y, z) with axis (ex, ey, ez) with
    all molecules but i.

    Molecule i itself (at its stored place) is skipped: i is the molecule moved
    (``ti = type_n[i]``), or -1 for a test molecule that is none of them
    (:mod:`mdsim.engine.rigid_insertion`).  Pairs whose
    centres are at least ``rc`` apart contribute nothing (plain cut); a
    pair whose centres are closer than sqrt(``core2``) overlaps (+inf: the
    hard core at the centre, :attr:`LinearPairModel.core`).
    ``cells_c`` is scratch space of (2 reach + 1)^3 int64.
    """
    charged_i = elec_tm[ti, 2] != 0.0
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
                d2 = dx * dx + dy * dy + dz * dz
                if d2 < core2:
                    return math.inf
                if d2 < rc2:
                    tj = type_n[j]
                    u += _pair_u(form, dx, dy, dz, ex, ey, ez, axis_ni[j, 0], axis_ni[j, 1],
                                 axis_ni[j, 2], ti, tj, site_start_t, site_z_k,
                                 params_kk, elec_tm)
                    if charged_i and elec_tm[tj, 2] != 0.0:  # both carry site charges
                        u += _coulomb_u(dx, dy, dz, ex, ey, ez, axis_ni[j, 0], axis_ni[j, 1],
                                        axis_ni[j, 2], ti, tj, site_start_t, site_z_k,
                                        params_kk)
            j = next_n[j]
    return u


@njit(cache=True)
def _turn(state, ex, ey, ez, max_angle):
    """The axis e turned by a uniform angle in [-max_angle, max_angle] about a random axis."""
    kx, ky, kz = _rng.unit_vector(state)
    theta = (2.0 * _rng.uniform(state) - 1.0) * max_angle
    c, sn = math.cos(theta), math.sin(theta)
    kdot = kx * ex + ky * ey + kz * ez
    # Rodrigues: e c + (k x e) s + k (k.e)(1 - c)
    nx = ex * c + (ky * ez - kz * ey) * sn + kx * kdot * (1.0 - c)
    ny = ey * c + (kz * ex - kx * ez) * sn + ky * kdot * (1.0 - c)
    nz = ez * c + (kx * ey - ky * ex) * sn + kz * kdot * (1.0 - c)
    norm = 1.0 / math.sqrt(nx * nx + ny * ny + nz * nz)  # no drift of |e| over many turns
    return nx * norm, ny * norm, nz * norm


@njit(cache=True)
def rigid_moves(centre_ni, axis_ni, type_n, box_i, ncell_i, head_c, next_n, cell_n,
                site_start_t, site_z_k, params_kk, form, elec_tm, rc, core2, rotates_t, state,
                n_moves, max_displacement, max_angle, beta, u_total, tried_m, accepted_m):
    """``n_moves`` Metropolis trial moves (translation or rotation, 1/2 each).

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, in [0, box), sigma (updated)
    axis_ni : ndarray, shape=(n, 3), float64, unit axes (updated)
    type_n : ndarray, shape=(n,), int64
    box_i : ndarray, shape=(3,), float64, sigma (each edge > 2 rc)
    ncell_i, head_c, next_n, cell_n
        The linked cells of :mod:`mdsim.engine.mc_cells` (updated).
    site_start_t, site_z_k, params_kk, form, elec_tm, rc
        The model of :class:`mdsim.engine.rigid_model.LinearPairModel`.
    core2 : float, sigma^2
        The square of its hard core at the centre (0: none); a move into it is rejected.
    rotates_t : ndarray, shape=(n_types,), int64
        0 for a type that is never turned (an atom): its moves are all translations.
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
        Trial and accepted moves of each kind (0 translation, 1 rotation).

    Returns
    -------
    float
        The running total energy after the moves.
    """
    n = centre_ni.shape[0]
    cells_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    for _ in range(n_moves):
        i = min(int(_rng.uniform(state) * n), n - 1)
        kind = 0 if _rng.uniform(state) < 0.5 or rotates_t[type_n[i]] == 0 else 1
        xo, yo, zo = centre_ni[i, 0], centre_ni[i, 1], centre_ni[i, 2]
        eo_x, eo_y, eo_z = axis_ni[i, 0], axis_ni[i, 1], axis_ni[i, 2]
        if kind == 0:
            xn = wrap_coordinate(xo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[0])
            yn = wrap_coordinate(yo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[1])
            zn = wrap_coordinate(zo + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                                 box_i[2])
            en_x, en_y, en_z = eo_x, eo_y, eo_z
        else:
            xn, yn, zn = xo, yo, zo
            en_x, en_y, en_z = _turn(state, eo_x, eo_y, eo_z, max_angle)
        tried_m[kind] += 1
        ti = type_n[i]
        u_new = molecule_energy(i, ti, xn, yn, zn, en_x, en_y, en_z, centre_ni, axis_ni,
                                type_n, box_i, ncell_i, head_c, next_n, site_start_t, site_z_k,
                                params_kk, form, elec_tm, rc, core2, cells_c)
        u_old = molecule_energy(i, ti, xo, yo, zo, eo_x, eo_y, eo_z, centre_ni, axis_ni,
                                type_n, box_i, ncell_i, head_c, next_n, site_start_t, site_z_k,
                                params_kk, form, elec_tm, rc, core2, cells_c)
        du = u_new - u_old
        if du > 0.0 and _rng.uniform(state) >= math.exp(-beta * du):
            continue
        accepted_m[kind] += 1
        u_total += du
        axis_ni[i, 0], axis_ni[i, 1], axis_ni[i, 2] = en_x, en_y, en_z
        if kind == 0:
            centre_ni[i, 0], centre_ni[i, 1], centre_ni[i, 2] = xn, yn, zn
            c = ((cell_coord(xn, box_i[0], ncell_i[0]) * ncell_i[1]
                  + cell_coord(yn, box_i[1], ncell_i[1])) * ncell_i[2]
                 + cell_coord(zn, box_i[2], ncell_i[2]))
            if c != cell_n[i]:
                cell_remove(i, head_c, next_n, cell_n)
                cell_insert(i, c, head_c, next_n, cell_n)
    return u_total


@njit(cache=True)
def rigid_energy_virial(centre_ni, axis_ni, type_n, box_i, ncell_i, head_c, next_n,
                        site_start_t, site_z_k, params_kk, form, elec_tm, rc):
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
                        e, fx, fy, fz, _, _, _, _, _, _ = pair_forces(
                            form, dx, dy, dz, axis_ni[i, 0], axis_ni[i, 1], axis_ni[i, 2],
                            axis_ni[j, 0], axis_ni[j, 1], axis_ni[j, 2], type_n[i], type_n[j],
                            site_start_t, site_z_k, params_kk, elec_tm, rc, 0)
                        u += e
                        w += dx * fx + dy * fy + dz * fz
                j = next_n[j]
    return u, w
