"""Monte Carlo kernels: single-particle trial moves, and the total energy and virial.

One kernel, :func:`mc_moves`, serves both ensembles of
:mod:`mdsim.engine.montecarlo`: the Metropolis acceptance
min(1, exp(-dU / kT)) (``MODE_NVT``) and the microcanonical acceptance
min(1, ((E - U_new) / (E - U_old))^(F/2 - 1)), a move to U_new >= E
rejected (``MODE_NVE``).  The energy is the truncated (not shifted) pair
potential inside each pair's cut-off; the neighbours come from the linked
cells of :mod:`mdsim.engine.mc_cells`.

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate, ``_c`` cell.

Speed
-----
A move that leaves the particle in its cell (most moves in a liquid) gets
its old and new energies from one pass over the neighbours, inlined into
the move kernel; the other moves make two passes.  In the inner loops the
Lennard-Jones form calls ``pair_eval`` with the form as a constant, so the
compiler drops the other forms' branches (about a third faster); every
form still evaluates through the one ``pair_eval``.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.forms import FORM_LJ, RC2, pair_eval
from mdsim.engine.mc_cells import (cell_coord, cell_insert, cell_neighbour, cell_remove,
                                   min_image, wrap_coordinate)

__all__ = ["MODE_NVT", "MODE_NVE", "mc_moves", "energy_virial", "particle_energy",
           "species_energy"]

MODE_NVT, MODE_NVE = 0, 1


@njit(cache=True, inline="always")
def particle_energy(i, x, y, z, r_ni, species_n, params_ab, form, table, box_i, ncell_i,
                    head_c, next_n):
    """Truncated pair energy of particle i placed at (x, y, z) with all others.

    Particle i itself (at its stored position) is skipped; an ``i`` that is
    in no cell list (a test particle, for example the next free slot) gives
    the energy of an insertion at (x, y, z).  Returns +inf as soon as one
    pair is inside a hard core.
    """
    return species_energy(i, species_n[i], x, y, z, r_ni, species_n, params_ab, form, table,
                          box_i, ncell_i, head_c, next_n)


@njit(cache=True, inline="always")
def species_energy(skip, si, x, y, z, r_ni, species_n, params_ab, form, table, box_i, ncell_i,
                   head_c, next_n):
    """Truncated pair energy of a particle of species ``si`` at (x, y, z) with the others.

    The one cell loop of :func:`particle_energy` and of test-particle
    insertion (:func:`mdsim.engine.insertion.inserted_particle_energy`):
    particle ``skip`` is left out (-1 leaves none out).  Returns +inf as
    soon as one pair is inside a hard core.
    """
    rc2_ab = params_ab[:, :, RC2]
    mixture = params_ab.shape[0] > 1  # one species: skip reading species_n[j]
    p_row = params_ab[si]
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    hx, hy, hz = 0.5 * lx, 0.5 * ly, 0.5 * lz
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    cx = cell_coord(x, lx, nx)
    cy = cell_coord(y, ly, ny)
    cz = cell_coord(z, lz, nz)
    reach = ncell_i[3]
    width = 2 * reach + 1
    mx, my, mz = min(nx, width), min(ny, width), min(nz, width)
    u = 0.0
    for a in range(mx):
        ax = cell_neighbour(cx, a, nx, reach)
        for b in range(my):
            by = cell_neighbour(cy, b, ny, reach)
            for d in range(mz):
                c = (ax * ny + by) * nz + cell_neighbour(cz, d, nz, reach)
                j = head_c[c]
                while j >= 0:
                    if j != skip:
                        dx = min_image(x - r_ni[j, 0], lx, hx)
                        dy = min_image(y - r_ni[j, 1], ly, hy)
                        dz = min_image(z - r_ni[j, 2], lz, hz)
                        r2 = dx * dx + dy * dy + dz * dz
                        sj = species_n[j] if mixture else 0
                        if r2 < rc2_ab[si, sj]:
                            if form == FORM_LJ:  # a constant form prunes pair_eval
                                e, _ = pair_eval(FORM_LJ, p_row[sj], table, r2)
                            else:
                                e, _ = pair_eval(form, p_row[sj], table, r2)
                            if e == np.inf:
                                return np.inf
                            u += e
                    j = next_n[j]
    return u


@njit(cache=True, inline="always")
def _particle_energy_moved(i, c0, xo, yo, zo, xn, yn, zn, r_ni, species_n, params_ab, form, table,
                          box_i, ncell_i, head_c, next_n):
    """Truncated energies of particle i at its old and at a new position.

    Both positions must lie in the same cell ``c0``: one pass over the
    neighbouring cells then serves both.  Returns (u_old, u_new); u_new is
    +inf (and u_old then meaningless) as soon as the new position is
    inside a hard core.
    """
    si = species_n[i]
    rc2_ab = params_ab[:, :, RC2]
    mixture = params_ab.shape[0] > 1
    p_row = params_ab[si]
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    hx, hy, hz = 0.5 * lx, 0.5 * ly, 0.5 * lz
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    cz = c0 % nz
    cy = (c0 // nz) % ny
    cx = c0 // (nz * ny)
    reach = ncell_i[3]
    width = 2 * reach + 1
    mx, my, mz = min(nx, width), min(ny, width), min(nz, width)
    u_old = 0.0
    u_new = 0.0
    for a in range(mx):
        ax = cell_neighbour(cx, a, nx, reach)
        for b in range(my):
            by = cell_neighbour(cy, b, ny, reach)
            for d in range(mz):
                c = (ax * ny + by) * nz + cell_neighbour(cz, d, nz, reach)
                j = head_c[c]
                while j >= 0:
                    if j != i:
                        rjx, rjy, rjz = r_ni[j, 0], r_ni[j, 1], r_ni[j, 2]
                        sj = species_n[j] if mixture else 0
                        rc2 = rc2_ab[si, sj]
                        dx = min_image(xn - rjx, lx, hx)
                        dy = min_image(yn - rjy, ly, hy)
                        dz = min_image(zn - rjz, lz, hz)
                        r2 = dx * dx + dy * dy + dz * dz
                        if r2 < rc2:
                            if form == FORM_LJ:  # a constant form prunes pair_eval
                                e, _ = pair_eval(FORM_LJ, p_row[sj], table, r2)
                            else:
                                e, _ = pair_eval(form, p_row[sj], table, r2)
                            if e == np.inf:
                                return 0.0, np.inf
                            u_new += e
                        dx = min_image(xo - rjx, lx, hx)
                        dy = min_image(yo - rjy, ly, hy)
                        dz = min_image(zo - rjz, lz, hz)
                        r2 = dx * dx + dy * dy + dz * dz
                        if r2 < rc2:
                            if form == FORM_LJ:  # a constant form prunes pair_eval
                                e, _ = pair_eval(FORM_LJ, p_row[sj], table, r2)
                            else:
                                e, _ = pair_eval(form, p_row[sj], table, r2)
                            u_old += e
                    j = next_n[j]
    return u_old, u_new


@njit(cache=True, inline="always")
def _energy_change(i, c, x, y, z, r_ni, species_n, params_ab, form, table, box_i, ncell_i,
                   head_c, next_n, cell_n):
    """Change of the truncated energy when particle i moves to (x, y, z) in cell ``c``.

    Returns +inf when the new position is inside a hard core (the move is
    then rejected).  A move within the particle's cell takes one pass over
    the neighbours, any other two.
    """
    if c == cell_n[i]:
        u_old, u_new = _particle_energy_moved(
            i, c, r_ni[i, 0], r_ni[i, 1], r_ni[i, 2], x, y, z, r_ni, species_n, params_ab,
            form, table, box_i, ncell_i, head_c, next_n)
        if u_new == np.inf:
            return np.inf
    else:
        # new position first (a move into a core stops there); one call site,
        # so the inlined pass is compiled once
        u_new = 0.0
        u_old = 0.0
        for which in range(2):
            if which == 0:
                px, py, pz = x, y, z
            else:
                px, py, pz = r_ni[i, 0], r_ni[i, 1], r_ni[i, 2]
            e = particle_energy(i, px, py, pz, r_ni, species_n, params_ab, form, table,
                                 box_i, ncell_i, head_c, next_n)
            if which == 0:
                u_new = e
                if e == np.inf:
                    break
            else:
                u_old = e
        if u_new == np.inf:
            return np.inf
    return u_new - u_old


@njit(cache=True, inline="always")
def _accepted(mode, du, u_trunc, beta, u_budget, exponent, state):
    """Accept a trial move with energy change ``du``?  Draws a random number only if needed.

    MODE_NVT: min(1, exp(-beta du)).  MODE_NVE: rejected when the new
    kinetic energy u_budget - (u_trunc + du) is not positive, else
    min(1, (k_new / k_old)^exponent).
    """
    if mode == MODE_NVT:
        if du > 0.0 and _rng.uniform(state) >= math.exp(-beta * du):
            return False
        return True
    k_new = u_budget - (u_trunc + du)
    if k_new <= 0.0:
        return False
    if du > 0.0:
        k_old = u_budget - u_trunc
        if _rng.uniform(state) >= math.exp(exponent * math.log(k_new / k_old)):
            return False
    return True


@njit(cache=True, error_model="numpy")
def mc_moves(r_ni, species_n, params_ab, form, table, box_i, ncell_i, head_c, next_n, cell_n,
             state, n_moves, max_displacement, mode, beta, u_budget, exponent, u_trunc):
    """Perform ``n_moves`` single-particle trial moves in place.

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64
        Positions, updated in place (kept inside the box).
    species_n : ndarray, shape=(n,), int64
    params_ab : ndarray, shape=(n_species, n_species, N_PARAM), float64
    form : int
    table : ndarray, shape=(n_intervals, 4), float64
    box_i : ndarray, shape=(3,), float64
    ncell_i, head_c, next_n, cell_n : int64 arrays
        Cell structure (see the module docstring), updated in place.
    state : ndarray, shape=(4,), uint64
        Random stream, advanced in place.
    n_moves : int
    max_displacement : float
        Half-width of the cube of displacements.
    mode : int
        MODE_NVT or MODE_NVE.
    beta : float
        1/kT (NVT only).
    u_budget : float
        NVE only: total energy minus the tail energy, the bound on the
        truncated energy (E - U = u_budget - u_trunc).
    exponent : float
        NVE only: F/2 - 1.
    u_trunc : float
        Current total truncated energy.

    Returns
    -------
    n_accepted : int
    u_trunc : float
        Total truncated energy after the moves (updated incrementally).
    """
    n = r_ni.shape[0]
    n_acc = 0
    for _ in range(n_moves):
        i = int(_rng.uniform(state) * n)
        if i >= n:
            i = n - 1
        x = wrap_coordinate(r_ni[i, 0] + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                            box_i[0])
        y = wrap_coordinate(r_ni[i, 1] + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                            box_i[1])
        z = wrap_coordinate(r_ni[i, 2] + (2.0 * _rng.uniform(state) - 1.0) * max_displacement,
                            box_i[2])
        c = (cell_coord(x, box_i[0], ncell_i[0]) * ncell_i[1]
             + cell_coord(y, box_i[1], ncell_i[1])) * ncell_i[2] \
            + cell_coord(z, box_i[2], ncell_i[2])
        du = _energy_change(i, c, x, y, z, r_ni, species_n, params_ab, form, table, box_i,
                            ncell_i, head_c, next_n, cell_n)
        if du == np.inf or not _accepted(mode, du, u_trunc, beta, u_budget, exponent, state):
            continue
        n_acc += 1
        u_trunc += du
        r_ni[i, 0] = x
        r_ni[i, 1] = y
        r_ni[i, 2] = z
        if c != cell_n[i]:
            cell_remove(i, head_c, next_n, cell_n)
            cell_insert(i, c, head_c, next_n, cell_n)
    return n_acc, u_trunc


@njit(cache=True, error_model="numpy")
def energy_virial(r_ni, species_n, params_ab, form, table, box_i, ncell_i, head_c, next_n,
                  cell_n):
    """Total truncated energy and pair virial, recomputed over the cells.

    Returns
    -------
    u_trunc : float
        sum over pairs within their cut-off of u(r_ij) (+inf in a core).
    virial : float
        sum over the same pairs of -r u'(r) (pressure_conf = virial / (3 V)).
    """
    n = r_ni.shape[0]
    rc2_ab = params_ab[:, :, RC2]
    mixture = params_ab.shape[0] > 1
    lx, ly, lz = box_i[0], box_i[1], box_i[2]
    hx, hy, hz = 0.5 * lx, 0.5 * ly, 0.5 * lz
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    reach = ncell_i[3]
    width = 2 * reach + 1
    mx, my, mz = min(nx, width), min(ny, width), min(nz, width)
    u = 0.0
    w = 0.0
    for i in range(n):
        si = species_n[i]
        p_row = params_ab[si]
        c0 = cell_n[i]
        cz = c0 % nz
        cy = (c0 // nz) % ny
        cx = c0 // (nz * ny)
        x, y, z = r_ni[i, 0], r_ni[i, 1], r_ni[i, 2]
        for a in range(mx):
            ax = cell_neighbour(cx, a, nx, reach)
            for b in range(my):
                by = cell_neighbour(cy, b, ny, reach)
                for d in range(mz):
                    c = (ax * ny + by) * nz + cell_neighbour(cz, d, nz, reach)
                    j = head_c[c]
                    while j >= 0:
                        if j > i:
                            dx = min_image(x - r_ni[j, 0], lx, hx)
                            dy = min_image(y - r_ni[j, 1], ly, hy)
                            dz = min_image(z - r_ni[j, 2], lz, hz)
                            r2 = dx * dx + dy * dy + dz * dz
                            sj = species_n[j] if mixture else 0
                            if r2 < rc2_ab[si, sj]:
                                if form == FORM_LJ:  # a constant form prunes pair_eval
                                    e, f = pair_eval(FORM_LJ, p_row[sj], table, r2)
                                else:
                                    e, f = pair_eval(form, p_row[sj], table, r2)
                                u += e
                                w += f * r2
                        j = next_n[j]
    return u, w
