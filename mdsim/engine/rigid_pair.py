"""Rigid linear molecules: pair energy, force, torques and virial (numba kernels).

A linear rigid molecule is its centre (the body origin: the centre of mass,
where the point quadrupole sits) and a unit vector along its axis.  Its
interaction sites lie on the axis at signed offsets ``z`` from the centre;
each pair of sites of two molecules interacts through a Lennard-Jones or
Mie pair potential (the one scalar kernel
:func:`mdsim.engine.forms.pair_eval`), and two molecules with axial point
quadrupoles add the quadrupole-quadrupole energy.  Reduced units
throughout: energies in epsilon, lengths in sigma, the quadrupole reduced
as Q* = Q / sqrt(4 pi epsilon_0 epsilon sigma^5).

Cut-off and its treatment
-------------------------
One molecular cut-off on the centre-centre distance: a pair of molecules
whose centres are closer than ``rc`` contributes all its site-site and
quadrupole terms, a pair beyond contributes nothing.  Two treatments:

* plain cut (``shifted = 0``): the Monte Carlo energy; the missing site-site
  Lennard-Jones tail is added as an isotropic long-range correction by the
  caller (common practice, no source); the quadrupole-quadrupole energy
  averages to zero over orientations, so it has no first-order tail.
* shifted energy (``shifted = 1``): the energy of each pair minus its value
  with the same axes and the centres at distance ``rc`` along the same
  direction, u(d) - u(rc d/|d|), so the pair energy goes continuously to
  zero at the cut-off (for molecular dynamics); the forces and torques are
  the exact derivatives of that shifted energy.  The shift term is constant
  along d, so it adds nothing to the virial.

Model arrays (built by :class:`mdsim.engine.rigid_model.LinearPairModel`)
------------------------------------------------
``site_start_t`` int64 (n_types + 1,): the sites of molecule type t are
``site_start_t[t]:site_start_t[t + 1]``; ``site_z_k`` float64 (n_sites,):
their axial offsets, sigma; ``params_kk`` float64 (n_sites, n_sites,
N_PARAM): the parameter row of each site pair (like sites their own
potential, unlike sites Lorentz-Berthelot); ``form``: FORM_LJ or FORM_MIE;
``quad_t`` float64 (n_types,): reduced quadrupoles.

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate, ``_t``
molecule type, ``_k`` site, ``_j`` slot in a neighbour row.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine.forms import FORM_LJ, FORM_MIE, pair_eval
from mdsim.engine.pair_potential import NO_TABLE

__all__ = ["quadrupole_terms", "pair_terms", "pair_forces", "forces_half"]


@njit(cache=True, inline="always")
def quadrupole_terms(with_force, dx, dy, dz, ax, ay, az, bx, by, bz, qq):
    """Quadrupole-quadrupole energy, force on b and torques of two linear molecules.

    ``qq`` = (3/4) Qa* Qb*; the other arguments and the results as in
    :func:`pair_terms` (whose Notes give the formula).
    """
    fx = fy = fz = 0.0
    tax = tay = taz = 0.0
    tbx = tby = tbz = 0.0
    r = math.sqrt(dx * dx + dy * dy + dz * dz)
    inv_r = 1.0 / r
    nx, ny, nz = dx * inv_r, dy * inv_r, dz * inv_r
    ca = ax * nx + ay * ny + az * nz
    cb = bx * nx + by * ny + bz * nz
    g = ax * bx + ay * by + az * bz - 5.0 * ca * cb
    pre = qq * inv_r ** 5
    ang = 1.0 - 5.0 * ca * ca - 5.0 * cb * cb - 15.0 * ca * ca * cb * cb + 2.0 * g * g
    u = pre * ang
    if with_force:
        d_ca = -10.0 * ca - 30.0 * ca * cb * cb - 20.0 * g * cb  # d ang / d c_a
        d_cb = -10.0 * cb - 30.0 * ca * ca * cb - 20.0 * g * ca
        d_ab = 4.0 * g  # d ang / d (e_a . e_b)
        gn = pre * inv_r * (-5.0 * ang - d_ca * ca - d_cb * cb)
        fx -= gn * nx + pre * inv_r * (d_ca * ax + d_cb * bx)
        fy -= gn * ny + pre * inv_r * (d_ca * ay + d_cb * by)
        fz -= gn * nz + pre * inv_r * (d_ca * az + d_cb * bz)
        gax = pre * (d_ca * nx + d_ab * bx)  # du / de_a
        gay = pre * (d_ca * ny + d_ab * by)
        gaz = pre * (d_ca * nz + d_ab * bz)
        gbx = pre * (d_cb * nx + d_ab * ax)
        gby = pre * (d_cb * ny + d_ab * ay)
        gbz = pre * (d_cb * nz + d_ab * az)
        tax -= ay * gaz - az * gay
        tay -= az * gax - ax * gaz
        taz -= ax * gay - ay * gax
        tbx -= by * gbz - bz * gby
        tby -= bz * gbx - bx * gbz
        tbz -= bx * gby - by * gbx
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True, inline="always")
def pair_terms(form, with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
               site_z_k, params_kk, quad_t):
    """Energy, force on b and torques of one pair of linear molecules (no cut-off).

    Parameters
    ----------
    form : int
        FORM_LJ or FORM_MIE (a constant at the call site prunes the other).
    with_force : bool
        False: only the energy (the other results are 0).
    dx, dy, dz : float, sigma
        From the centre of molecule a to the centre of b (minimum image).
    ax, ay, az, bx, by, bz : float
        Unit axes of a and b.
    ta, tb : int
        Molecule types.
    site_start_t, site_z_k, params_kk, quad_t : ndarray
        The model arrays (module docstring).

    Returns
    -------
    u : float, epsilon
    fx, fy, fz : float, epsilon/sigma
        Force on b (the force on a is its negative).
    tax, tay, taz, tbx, tby, tbz : float, epsilon
        Torques on a and on b about their centres.

    Notes
    -----
    Site-site: a site at offset z_k on axis e sits at centre + z_k e; the
    force F on a site gives the torque z_k e x F.  Quadrupoles, with n = d/r,
    c_a = e_a.n, c_b = e_b.n, g = e_a.e_b - 5 c_a c_b:
    u = (3 Qa Qb / (4 r^5)) [1 - 5 c_a^2 - 5 c_b^2 - 15 c_a^2 c_b^2 + 2 g^2]
    (Gray and Gubbins, Theory of Molecular Fluids, vol. 1, 1984, section
    2.4); the force is -du/dd with dc/dd = (e - c n)/r, the torque on a
    molecule -e x du/de.
    """
    u = 0.0
    fx = fy = fz = 0.0
    tax = tay = taz = 0.0
    tbx = tby = tbz = 0.0
    for k in range(site_start_t[ta], site_start_t[ta + 1]):
        zk = site_z_k[k]
        for m in range(site_start_t[tb], site_start_t[tb + 1]):
            zm = site_z_k[m]
            sx = dx + zm * bx - zk * ax
            sy = dy + zm * by - zk * ay
            sz = dz + zm * bz - zk * az
            e, fr = pair_eval(form, params_kk[k, m], NO_TABLE, sx * sx + sy * sy + sz * sz)
            u += e
            if with_force:
                gx, gy, gz = fr * sx, fr * sy, fr * sz  # force on site m of b
                fx += gx
                fy += gy
                fz += gz
                tbx += zm * (by * gz - bz * gy)
                tby += zm * (bz * gx - bx * gz)
                tbz += zm * (bx * gy - by * gx)
                tax -= zk * (ay * gz - az * gy)
                tay -= zk * (az * gx - ax * gz)
                taz -= zk * (ax * gy - ay * gx)
    qq = 0.75 * quad_t[ta] * quad_t[tb]
    if qq != 0.0:
        qu, qfx, qfy, qfz, qax, qay, qaz, qbx, qby, qbz = quadrupole_terms(
            with_force, dx, dy, dz, ax, ay, az, bx, by, bz, qq)
        u += qu
        fx += qfx
        fy += qfy
        fz += qfz
        tax += qax
        tay += qay
        taz += qaz
        tbx += qbx
        tby += qby
        tbz += qbz
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True)
def pair_forces(form, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k,
                params_kk, quad_t, rc, shifted):
    """:func:`pair_terms` with the energy shifted at the cut-off when ``shifted``.

    Same arguments and results as :func:`pair_terms` (forces and torques
    always), plus ``rc`` (sigma) and ``shifted`` (0 or 1); the caller
    applies the cut-off test.  With ``shifted`` the results are those of
    u(d) - u(rc n): the force loses (rc / r) (1 - n n) F(rc n), the torques
    lose the torques at rc n.
    """
    u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = pair_terms(
        form, True, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k,
        params_kk, quad_t)
    if shifted:
        r = math.sqrt(dx * dx + dy * dy + dz * dz)
        s = rc / r
        uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz = pair_terms(
            form, True, s * dx, s * dy, s * dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
            site_z_k, params_kk, quad_t)
        nx, ny, nz = dx / r, dy / r, dz / r
        gn = gx * nx + gy * ny + gz * nz
        u -= uc
        fx -= s * (gx - gn * nx)
        fy -= s * (gy - gn * ny)
        fz -= s * (gz - gn * nz)
        tax -= cax
        tay -= cay
        taz -= caz
        tbx -= cbx
        tby -= cby
        tbz -= cbz
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True)
def _rows(form, centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k, params_kk, quad_t,
          rc, shifted, nb_nj, count_n, force_ni, torque_ni):
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    rc2 = rc * rc
    u_sum = w_sum = 0.0
    for i in range(centre_ni.shape[0]):
        ax, ay, az = axis_ni[i, 0], axis_ni[i, 1], axis_ni[i, 2]
        for k in range(count_n[i]):
            j = nb_nj[i, k]
            dx = centre_ni[j, 0] - centre_ni[i, 0]
            dy = centre_ni[j, 1] - centre_ni[i, 1]
            dz = centre_ni[j, 2] - centre_ni[i, 2]
            dx -= lx * np.rint(dx / lx)
            dy -= ly * np.rint(dy / ly)
            dz -= lz * np.rint(dz / lz)
            if dx * dx + dy * dy + dz * dz >= rc2:
                continue
            u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = pair_forces(
                form, dx, dy, dz, ax, ay, az, axis_ni[j, 0], axis_ni[j, 1], axis_ni[j, 2],
                type_n[i], type_n[j], site_start_t, site_z_k, params_kk, quad_t, rc, shifted)
            u_sum += u
            w_sum += dx * fx + dy * fy + dz * fz
            force_ni[j, 0] += fx
            force_ni[j, 1] += fy
            force_ni[j, 2] += fz
            force_ni[i, 0] -= fx
            force_ni[i, 1] -= fy
            force_ni[i, 2] -= fz
            torque_ni[i, 0] += tax
            torque_ni[i, 1] += tay
            torque_ni[i, 2] += taz
            torque_ni[j, 0] += tbx
            torque_ni[j, 1] += tby
            torque_ni[j, 2] += tbz
    return u_sum, w_sum


@njit(cache=True)
def forces_half(centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k, params_kk, form,
                quad_t, rc, shifted, nb_nj, count_n, force_ni, torque_ni):
    """Forces, torques, energy and virial of linear molecules over a half neighbour list.

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, sigma
        Centres (within one box length of each other's minimum image).
    axis_ni : ndarray, shape=(n, 3), float64
        Unit axes.
    type_n : ndarray, shape=(n,), int64
        Molecule types.
    box_i : ndarray, shape=(3,), float64, sigma
    site_start_t, site_z_k, params_kk, form, quad_t
        The model (module docstring; :class:`LinearPairModel` holds them).
    rc : float, sigma
        Molecular (centre-centre) cut-off.
    shifted : int
        1: the shifted-energy model, 0: plain cut (module docstring).
    nb_nj : ndarray, shape=(n, width), integer
        Half neighbour list: row i lists partners j of i, each pair once
        (:class:`mdsim.engine.neighbours.NeighbourList`).
    count_n : ndarray, shape=(n,), integer
    force_ni, torque_ni : ndarray, shape=(n, 3), float64 (output)
        Overwritten with the forces on the centres (epsilon/sigma) and the
        torques about them (epsilon).

    Returns
    -------
    u : float, epsilon
        Energy of the pairs inside the cut-off.
    virial : float, epsilon
        W = sum over pairs of d_ab . F_b (centre-centre vector times the
        force on b); the configurational pressure is W / (3 V).
    """
    force_ni[:] = 0.0
    torque_ni[:] = 0.0
    if form == FORM_LJ:
        return _rows(FORM_LJ, centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k,
                     params_kk, quad_t, rc, shifted, nb_nj, count_n, force_ni, torque_ni)
    return _rows(FORM_MIE, centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k,
                 params_kk, quad_t, rc, shifted, nb_nj, count_n, force_ni, torque_ni)
