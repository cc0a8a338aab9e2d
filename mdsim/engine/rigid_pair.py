"""Rigid linear molecules: pair energy, force, torques and virial (numba kernels).

A linear rigid molecule is its centre (the body origin: the centre of mass,
where the point multipoles sit) and a unit vector along its axis.  Its
interaction sites lie on the axis at signed offsets ``z`` from the centre;
each pair of sites of two molecules interacts through a Lennard-Jones or
Mie pair potential (the one scalar kernel
:func:`mdsim.engine.forms.pair_eval`) plus, for two charged sites, their
Coulomb energy, plain or damped shifted-force (the one scalar kernel
:func:`mdsim.engine.damped_coulomb.dsf_term`, whose constants are 0 for
plain Coulomb); two molecules with axial
point dipoles or quadrupoles add the dipole-dipole, dipole-quadrupole and
quadrupole-quadrupole energies.  Reduced units throughout: energies in
epsilon, lengths in sigma, charges q* = q / sqrt(4 pi epsilon_0 epsilon
sigma), the dipole mu* = mu / sqrt(4 pi epsilon_0 epsilon sigma^3) and the
quadrupole Q* = Q / sqrt(4 pi epsilon_0 epsilon sigma^5).

Cut-off and its treatment
-------------------------
One molecular cut-off on the centre-centre distance: a pair of molecules
whose centres are closer than ``rc`` contributes all its site-site and
multipole terms, a pair beyond contributes nothing (a neutral molecule is
never cut apart, docs/physics.md section 7b.2).  Two treatments:

* plain cut (``shifted = 0``): the Monte Carlo energy; the missing site-site
  Lennard-Jones tail is added as an isotropic long-range correction by the
  caller (common practice, no source); the charge, dipole and quadrupole
  energies of neutral molecules average to zero over orientations, so they
  have no first-order tail.
* shifted energy (``shifted = 1``): the energy of each pair minus its value
  with the same axes and the centres at distance ``rc`` along the same
  direction, u(d) - u(rc d/|d|), so the pair energy goes continuously to
  zero at the cut-off (for molecular dynamics); the forces and torques are
  the exact derivatives of that shifted energy.  The shift term is constant
  along d, so it adds nothing to the virial.

The site charges' damped shifted-force energy, when chosen, takes Rc =
``rc``; for a site pair of two molecules inside the cut-off it is the same
function at any site distance (beyond Rc too), so the plain and shifted
treatments above apply to it unchanged.

Model arrays (built by :class:`mdsim.engine.rigid_model.LinearPairModel`)
------------------------------------------------
``site_start_t`` int64 (n_types + 1,): the sites of molecule type t are
``site_start_t[t]:site_start_t[t + 1]``; ``site_z_k`` float64 (n_sites,):
their axial offsets, sigma; ``params_kk`` float64 (n_sites, n_sites,
N_PAIR_PARAM): the parameter row of each site pair (like sites their own
potential, unlike sites Lorentz-Berthelot) followed by its Coulomb columns
(:data:`CHARGES` ...); ``form``: FORM_LJ or FORM_MIE; ``elec_tm``
float64 (n_types, 3): the reduced axial dipole and quadrupole of each type
and 1 if its sites carry charges (else 0).

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate, ``_t``
molecule type, ``_k`` site, ``_j`` slot in a neighbour row.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine.damped_coulomb import dsf_term
from mdsim.engine.forms import FORM_LJ, FORM_MIE, N_PARAM, pair_eval
from mdsim.engine.pair_potential import NO_TABLE

__all__ = ["CHARGES", "DAMPING", "DSF_OFFSET", "DSF_SLOPE", "N_PAIR_PARAM", "multipole_terms",
           "axial_term", "add_terms", "site_terms", "coulomb_terms", "pair_terms", "pair_forces", "forces_half"]

#: The Coulomb columns of a site-pair row of ``params_kk``, after the pair potential's
#: N_PARAM: the product of the two site charges (reduced), the damping alpha (1/sigma) and
#: the two constants of :func:`mdsim.engine.damped_coulomb.dsf_constants` at the cut-off
#: (all three 0 for plain Coulomb).
CHARGES, DAMPING, DSF_OFFSET, DSF_SLOPE = range(N_PARAM, N_PARAM + 4)
N_PAIR_PARAM = N_PARAM + 4


# axial_term and multipole_terms are plain calls, not inlined in numba's IR: inlining them
# into every kernel made the rigid kernels' first compile 2 to 3 times slower (79 s against 28 s
# for tests/analysis/molecules/test_rigid_pair_kernel.py with an empty cache) and the kernels
# no faster (mdsim.bench.rigid: 47-50 ns per site pair either way)
@njit(cache=True)
def axial_term(with_force, power, pre, ang, d_ca, d_cb, d_ab, inv_r, nx, ny, nz, ca, cb, ax, ay,
               az, bx, by, bz):
    """One multipole term u = pre ang(c_a, c_b, e_a.e_b), pre proportional to r^-power, with
    its force on b and torques; ``d_ca``, ``d_cb``, ``d_ab``: d ang / d(c_a, c_b, e_a.e_b).

    The force is -du/dd with dc/dd = (e - c n)/r, the torque on a molecule -e x du/de.
    """
    u = pre * ang
    if not with_force:
        return u, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0
    gn = pre * inv_r * (-power * ang - d_ca * ca - d_cb * cb)
    fx = -(gn * nx + pre * inv_r * (d_ca * ax + d_cb * bx))
    fy = -(gn * ny + pre * inv_r * (d_ca * ay + d_cb * by))
    fz = -(gn * nz + pre * inv_r * (d_ca * az + d_cb * bz))
    gax = pre * (d_ca * nx + d_ab * bx)  # du / de_a
    gay = pre * (d_ca * ny + d_ab * by)
    gaz = pre * (d_ca * nz + d_ab * bz)
    gbx = pre * (d_cb * nx + d_ab * ax)
    gby = pre * (d_cb * ny + d_ab * ay)
    gbz = pre * (d_cb * nz + d_ab * az)
    return (u, fx, fy, fz, -(ay * gaz - az * gay), -(az * gax - ax * gaz), -(ax * gay - ay * gax),
            -(by * gbz - bz * gby), -(bz * gbx - bx * gbz), -(bx * gby - by * gbx))


@njit(cache=True)
def multipole_terms(with_force, dx, dy, dz, ax, ay, az, bx, by, bz, mu_a, th_a, mu_b, th_b):
    """Energy, force on b and torques of the axial point dipoles and quadrupoles of two molecules.

    ``mu_a``, ``th_a``, ``mu_b``, ``th_b``: reduced dipoles and quadrupoles
    (0 where absent); the other arguments and the results as in
    :func:`pair_terms` (whose Notes give the formulas).
    """
    r = math.sqrt(dx * dx + dy * dy + dz * dz)
    inv_r = 1.0 / r
    nx, ny, nz = dx * inv_r, dy * inv_r, dz * inv_r
    ca = ax * nx + ay * ny + az * nz
    cb = bx * nx + by * ny + bz * nz
    cab = ax * bx + ay * by + az * bz
    out = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)
    if mu_a != 0.0 and mu_b != 0.0:
        out = add_terms(out, axial_term(
            with_force, 3.0, mu_a * mu_b * inv_r ** 3, cab - 3.0 * ca * cb, -3.0 * cb,
            -3.0 * ca, 1.0, inv_r, nx, ny, nz, ca, cb, ax, ay, az, bx, by, bz))
    if mu_a != 0.0 and th_b != 0.0:
        out = add_terms(out, axial_term(
            with_force, 4.0, 1.5 * mu_a * th_b * inv_r ** 4,
            ca * (5.0 * cb * cb - 1.0) - 2.0 * cb * cab, 5.0 * cb * cb - 1.0,
            10.0 * ca * cb - 2.0 * cab, -2.0 * cb, inv_r, nx, ny, nz, ca, cb, ax, ay, az, bx,
            by, bz))
    if th_a != 0.0 and mu_b != 0.0:
        out = add_terms(out, axial_term(
            with_force, 4.0, 1.5 * th_a * mu_b * inv_r ** 4,
            2.0 * ca * cab - cb * (5.0 * ca * ca - 1.0), 2.0 * cab - 10.0 * ca * cb,
            -(5.0 * ca * ca - 1.0), 2.0 * ca, inv_r, nx, ny, nz, ca, cb, ax, ay, az, bx, by,
            bz))
    if th_a != 0.0 and th_b != 0.0:
        g = cab - 5.0 * ca * cb
        out = add_terms(out, axial_term(
            with_force, 5.0, 0.75 * th_a * th_b * inv_r ** 5,
            1.0 - 5.0 * ca * ca - 5.0 * cb * cb - 15.0 * ca * ca * cb * cb + 2.0 * g * g,
            -10.0 * ca - 30.0 * ca * cb * cb - 20.0 * g * cb,
            -10.0 * cb - 30.0 * ca * ca * cb - 20.0 * g * ca, 4.0 * g, inv_r, nx, ny, nz, ca,
            cb, ax, ay, az, bx, by, bz))
    return out


@njit(cache=True, inline="always")
def add_terms(a, b):
    """The sum of two (u, force on b, torques on a and b) 10-tuples."""
    return (a[0] + b[0], a[1] + b[1], a[2] + b[2], a[3] + b[3], a[4] + b[4], a[5] + b[5],
            a[6] + b[6], a[7] + b[7], a[8] + b[8], a[9] + b[9])


@njit(cache=True, inline="always")
def site_terms(form, coulomb, with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb,
               site_start_t, site_z_k, params_kk):
    """The site-site part of :func:`pair_terms`: the pair potentials (``coulomb`` False) or
    the site charges' Coulomb energies (``coulomb`` True), each a constant at its call site,
    so that the uncharged loop carries no Coulomb code.  Arguments and results as there."""
    u = 0.0
    fx = fy = fz = 0.0
    tax = tay = taz = 0.0
    tbx = tby = tbz = 0.0
    for k in range(site_start_t[ta], site_start_t[ta + 1]):
        zk = site_z_k[k]
        for m in range(site_start_t[tb], site_start_t[tb + 1]):
            zm = site_z_k[m]
            p = params_kk[k, m]
            if coulomb and p[CHARGES] == 0.0:
                continue
            sx = dx + zm * bx - zk * ax
            sy = dy + zm * by - zk * ay
            sz = dz + zm * bz - zk * az
            s2 = sx * sx + sy * sy + sz * sz
            if coulomb:
                e, fr = dsf_term(p[CHARGES], s2, p[DAMPING], p[DSF_OFFSET], p[DSF_SLOPE])
            else:
                e, fr = pair_eval(form, p, NO_TABLE, s2)
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
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True)
def coulomb_terms(with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
                  site_z_k, params_kk):
    """:func:`site_terms` of the site charges alone, a call of its own (not inlined) so that
    the kernels of uncharged molecules keep their size and speed."""
    return site_terms(FORM_LJ, True, with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb,
                      site_start_t, site_z_k, params_kk)


@njit(cache=True, inline="always")
def pair_terms(form, with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
               site_z_k, params_kk, elec_tm):
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
    site_start_t, site_z_k, params_kk, elec_tm : ndarray
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
    force F on a site gives the torque z_k e x F.  Two charged sites add
    the energy of :func:`mdsim.engine.damped_coulomb.dsf_term`: plain
    Coulomb q q / r (its constants 0) or the damped shifted force
    (Fennell and Gezelter, J. Chem. Phys. 124, 234104 (2006), eqs. 19-20,
    with Rc the molecular cut-off).  Point multipoles at the centres, with n = d/r, c_a = e_a.n,
    c_b = e_b.n, g = e_a.e_b - 5 c_a c_b (Gray and Gubbins, Theory of
    Molecular Fluids, vol. 1, 1984, section 2.4; the dipole-quadrupole
    term as -mu.E in the field of the quadrupole, Buckingham, Q. Rev. Chem.
    Soc. 13, 183 (1959)):

    u_dd = (mu_a mu_b / r^3) [e_a.e_b - 3 c_a c_b]
    u_dQ = (3 mu_a Q_b / (2 r^4)) [c_a (5 c_b^2 - 1) - 2 c_b e_a.e_b]
    u_Qd = (3 Q_a mu_b / (2 r^4)) [2 c_a e_a.e_b - c_b (5 c_a^2 - 1)]
    u_QQ = (3 Q_a Q_b / (4 r^5)) [1 - 5 c_a^2 - 5 c_b^2 - 15 c_a^2 c_b^2 + 2 g^2];

    the force is -du/dd with dc/dd = (e - c n)/r, the torque on a
    molecule -e x du/de.
    """
    u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = site_terms(
        form, False, with_force, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
        site_z_k, params_kk)
    mu_a, th_a = elec_tm[ta, 0], elec_tm[ta, 1]
    mu_b, th_b = elec_tm[tb, 0], elec_tm[tb, 1]
    if mu_a == 0.0 and mu_b == 0.0:  # quadrupoles alone: the dipole terms pruned (constant 0)
        if th_a != 0.0 and th_b != 0.0:
            return add_terms((u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz), multipole_terms(
                with_force, dx, dy, dz, ax, ay, az, bx, by, bz, 0.0, th_a, 0.0, th_b))
    elif (mu_a != 0.0 or th_a != 0.0) and (mu_b != 0.0 or th_b != 0.0):
        return add_terms((u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz), multipole_terms(
            with_force, dx, dy, dz, ax, ay, az, bx, by, bz, mu_a, th_a, mu_b, th_b))
    return u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz


@njit(cache=True)
def pair_forces(form, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k,
                params_kk, elec_tm, rc, shifted):
    """:func:`pair_terms` with the energy shifted at the cut-off when ``shifted``.

    Same arguments and results as :func:`pair_terms` (forces and torques
    always), plus ``rc`` (sigma) and ``shifted`` (0 or 1); the caller
    applies the cut-off test.  With ``shifted`` the results are those of
    u(d) - u(rc n): the force loses (rc / r) (1 - n n) F(rc n), the torques
    lose the torques at rc n.
    """
    u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = pair_terms(
        form, True, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k,
        params_kk, elec_tm)
    if elec_tm[ta, 2] != 0.0 and elec_tm[tb, 2] != 0.0:  # both carry site charges
        u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz = add_terms(
            (u, fx, fy, fz, tax, tay, taz, tbx, tby, tbz), coulomb_terms(
                True, dx, dy, dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t, site_z_k,
                params_kk))
    if shifted:
        r = math.sqrt(dx * dx + dy * dy + dz * dz)
        s = rc / r
        uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz = pair_terms(
            form, True, s * dx, s * dy, s * dz, ax, ay, az, bx, by, bz, ta, tb, site_start_t,
            site_z_k, params_kk, elec_tm)
        if elec_tm[ta, 2] != 0.0 and elec_tm[tb, 2] != 0.0:
            uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz = add_terms(
                (uc, gx, gy, gz, cax, cay, caz, cbx, cby, cbz), coulomb_terms(
                    True, s * dx, s * dy, s * dz, ax, ay, az, bx, by, bz, ta, tb,
                    site_start_t, site_z_k, params_kk))
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
def _rows(form, centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k, params_kk, elec_tm,
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
                type_n[i], type_n[j], site_start_t, site_z_k, params_kk, elec_tm, rc, shifted)
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
                elec_tm, rc, shifted, nb_nj, count_n, force_ni, torque_ni):
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
    site_start_t, site_z_k, params_kk, form, elec_tm
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
                     params_kk, elec_tm, rc, shifted, nb_nj, count_n, force_ni, torque_ni)
    return _rows(FORM_MIE, centre_ni, axis_ni, type_n, box_i, site_start_t, site_z_k,
                 params_kk, elec_tm, rc, shifted, nb_nj, count_n, force_ni, torque_ni)
