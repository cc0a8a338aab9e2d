"""Rigid bodies of any shape: pair energy, force, torques and virial (numba kernels).

A rigid body (a non-linear molecule, or any rigid set of sites) is its
centre (the centre of mass) and its orientation; its interaction sites sit
at fixed body-frame positions (principal-axes frame, centre of mass at the
origin), which the orientation turns into lab-frame offsets from the centre
(:mod:`mdsim.engine.body_rotation`).  The kernels take those lab-frame
offsets, kept per body in ``offset_nsi`` and updated when a body turns.
Each pair of sites of two bodies interacts through a Lennard-Jones or Mie
pair potential (the one scalar kernel :func:`mdsim.engine.forms.pair_eval`)
plus, for two charged sites, their Coulomb energy, plain or damped
shifted-force (the one scalar kernel
:func:`mdsim.engine.damped_coulomb.dsf_term`, as for linear molecules,
:mod:`mdsim.engine.rigid_pair`).  Reduced units: energies in epsilon,
lengths in sigma, charges q* = q / sqrt(4 pi epsilon_0 epsilon sigma).

The cut-off is molecular, as for linear molecules
(:mod:`mdsim.engine.rigid_pair`): a pair whose centres are closer than
``rc`` contributes all its site-site terms.  Plain cut (``shifted = 0``,
Monte Carlo, with the isotropic site-site tail added by the caller) or
shifted energy (``shifted = 1``, molecular dynamics): u(d) - u(rc d/|d|)
at the same orientations, whose forces and torques are its exact
derivatives and whose shift adds nothing to the virial.  The site charges
take the same treatment as the site potentials (docs/physics.md section
7b.4): no tail, since the Coulomb energy of two neutral molecules averages
to zero over orientations.

Model arrays (built by :class:`mdsim.engine.body_model.BodyPairModel`):
``site_start_t`` int64 (n_types + 1,): the sites of body type t are
``site_start_t[t]:site_start_t[t + 1]``; ``params_kk`` float64 (n_sites,
n_sites, N_PARAM) without charges, (n_sites, n_sites, N_PAIR_PARAM) with
them: the parameter row of each site pair, followed by its Coulomb columns
(:data:`mdsim.engine.rigid_pair.CHARGES` ..., the layout of the linear
molecules); ``form``: FORM_LJ or FORM_MIE.

Array suffixes: ``_n`` body, ``_s`` site of one body, ``_i`` Cartesian
coordinate, ``_t`` body type, ``_k`` site (of all types), ``_j`` slot in a
neighbour row.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine.damped_coulomb import dsf_term
from mdsim.engine.forms import FORM_LJ, FORM_MIE, pair_eval
from mdsim.engine.pair_potential import NO_TABLE
from mdsim.engine.rigid_pair import CHARGES, DAMPING, DSF_OFFSET, DSF_SLOPE, add_terms

__all__ = ["body_site_terms", "body_pair_terms", "body_coulomb_terms", "body_pair_forces",
           "body_forces_half"]


@njit(cache=True, inline="always")
def body_site_terms(form, coulomb, with_force, dx, dy, dz, off_a_si, off_b_si, ta, tb,
                    site_start_t, params_kk):
    """The site-site sum of :func:`body_pair_terms`: the pair potentials (``coulomb`` False)
    or the site charges' Coulomb energies (``coulomb`` True), each a constant at its call
    site, so that the loop of uncharged bodies carries no Coulomb code.  Arguments and
    results as there."""
    u = fx = fy = fz = 0.0
    tax = tay = taz = tbx = tby = tbz = 0.0
    ka0 = site_start_t[ta]
    kb0 = site_start_t[tb]
    for s in range(site_start_t[ta + 1] - ka0):
        sx, sy, sz = off_a_si[s, 0], off_a_si[s, 1], off_a_si[s, 2]
        for m in range(site_start_t[tb + 1] - kb0):
            p = params_kk[ka0 + s, kb0 + m]
            if coulomb and p[CHARGES] == 0.0:
                continue
            mx, my, mz = off_b_si[m, 0], off_b_si[m, 1], off_b_si[m, 2]
            rx, ry, rz = dx + mx - sx, dy + my - sy, dz + mz - sz
            r2 = rx * rx + ry * ry + rz * rz
            if coulomb:
                e, f = dsf_term(p[CHARGES], r2, p[DAMPING], p[DSF_OFFSET], p[DSF_SLOPE])
            else:
                e, f = pair_eval(form, p, NO_TABLE, r2)
            u += e
            if with_force:
                gx, gy, gz = f * rx, f * ry, f * rz
                fx += gx
                fy += gy
                fz += gz
                tbx += my * gz - mz * gy
                tby += mz * gx - mx * gz
                tbz += mx * gy - my * gx
                tax -= sy * gz - sz * gy
                tay -= sz * gx - sx * gz
                taz -= sx * gy - sy * gx
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True)
def body_coulomb_terms(with_force, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t,
                       params_kk):
    """The site charges' Coulomb part of :func:`body_pair_terms` alone (a call of its own, not
    inlined, so that the kernels of uncharged bodies keep their size and speed).

    ``params_kk`` must carry the Coulomb columns (module docstring); the
    other arguments and the results as in :func:`body_pair_terms`.
    """
    return body_site_terms(FORM_LJ, True, with_force, dx, dy, dz, off_a_si, off_b_si, ta, tb,
                           site_start_t, params_kk)


@njit(cache=True, inline="always")
def body_pair_terms(form, with_force, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t,
                    params_kk):
    """Energy, force on b and torques of one pair of rigid bodies (no cut-off).

    Parameters
    ----------
    form : int
        FORM_LJ or FORM_MIE (a constant at the call site prunes the other).
    with_force : bool
        False: only the energy (the other results are 0).
    dx, dy, dz : float, sigma
        From the centre of body a to the centre of b (minimum image).
    off_a_si, off_b_si : ndarray, shape=(>= n_sites, 3), float64, sigma
        Lab-frame site offsets of a and b from their centres.
    ta, tb : int
        Body types.
    site_start_t, params_kk : ndarray
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
    Site k of a sits at c_a + s_k, site m of b at c_b + s_m; with
    r_km = d + s_m - s_k the site force on m is g = -u'(r) r_km / r, the
    torque on b gains s_m x g and that on a loses s_k x g (Allen and
    Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, section 3.3).
    Two charged sites add the energy of
    :func:`mdsim.engine.damped_coulomb.dsf_term`: plain Coulomb q q / r
    (its constants 0) or the damped shifted force (Fennell and Gezelter,
    J. Chem. Phys. 124, 234104 (2006), eqs. 19-20, with Rc the molecular
    cut-off), with the same force and torque rule.
    """
    out = body_site_terms(form, False, with_force, dx, dy, dz, off_a_si, off_b_si, ta, tb,
                          site_start_t, params_kk)
    if params_kk.shape[2] > CHARGES:  # the model carries site charges
        return add_terms(out, body_coulomb_terms(with_force, dx, dy, dz, off_a_si, off_b_si,
                                                 ta, tb, site_start_t, params_kk))
    return out


@njit(cache=True)
def body_pair_forces(form, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t, params_kk, rc,
                     shifted):
    """:func:`body_pair_terms` with forces, the energy shifted at the cut-off when ``shifted``.

    Same arguments and results as :func:`body_pair_terms`, plus ``rc``
    (sigma) and ``shifted`` (0 or 1); the caller applies the cut-off test.
    With ``shifted`` the results are those of u(d) - u(rc n), n = d / |d|:
    the force loses (rc / r) (1 - n n) F(rc n), the torques lose the
    torques at rc n.
    """
    if form == FORM_LJ:
        u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = body_pair_terms(
            FORM_LJ, True, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t, params_kk)
    else:
        u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = body_pair_terms(
            FORM_MIE, True, dx, dy, dz, off_a_si, off_b_si, ta, tb, site_start_t, params_kk)
    if shifted:
        r = math.sqrt(dx * dx + dy * dy + dz * dz)
        s = rc / r
        if form == FORM_LJ:
            uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz = body_pair_terms(
                FORM_LJ, True, s * dx, s * dy, s * dz, off_a_si, off_b_si, ta, tb,
                site_start_t, params_kk)
        else:
            uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz = body_pair_terms(
                FORM_MIE, True, s * dx, s * dy, s * dz, off_a_si, off_b_si, ta, tb,
                site_start_t, params_kk)
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
def body_forces_half(centre_ni, offset_nsi, type_n, box_i, site_start_t, params_kk, form, rc,
                     shifted, nb_nj, count_n, force_ni, torque_ni):
    """Forces, torques, energy and virial of rigid bodies over a half neighbour list.

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, sigma
    offset_nsi : ndarray, shape=(n, max_sites, 3), float64, sigma
        Lab-frame site offsets of each body (:func:`mdsim.engine.body_rotation.rotate_sites`).
    type_n : ndarray, shape=(n,), int64
    box_i : ndarray, shape=(3,), float64, sigma
    site_start_t, params_kk, form
        The model (module docstring; :class:`BodyPairModel` holds them).
    rc : float, sigma
        Molecular (centre-centre) cut-off.
    shifted : int
        1: the shifted-energy model, 0: plain cut.
    nb_nj : ndarray, shape=(n, width), integer
        Half neighbour list (each pair once).
    count_n : ndarray, shape=(n,), integer
    force_ni, torque_ni : ndarray, shape=(n, 3), float64 (output)
        Overwritten with the forces on the centres and the torques about them.

    Returns
    -------
    u : float, epsilon
    virial : float, epsilon
        W = sum over pairs of d_ab . F_b; the configurational pressure is W / (3 V).
    """
    force_ni[:] = 0.0
    torque_ni[:] = 0.0
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    rc2 = rc * rc
    u_sum = w_sum = 0.0
    for i in range(centre_ni.shape[0]):
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
            u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = body_pair_forces(
                form, dx, dy, dz, offset_nsi[i], offset_nsi[j], type_n[i], type_n[j],
                site_start_t, params_kk, rc, shifted)
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
