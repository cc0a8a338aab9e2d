"""Gibbs-ensemble Monte Carlo kernels: particle transfers between two boxes.

The two boxes of :class:`mdsim.engine.gibbs.GibbsSampler` keep their
particles in one array ``r_bni`` (box, particle slot, coordinate): box b
holds its ``n_b[b]`` particles in slots ``0 .. n_b[b] - 1``, each box with
its own linked cells (:mod:`mdsim.engine.mc_cells`).  Displacements reuse
:func:`mdsim.engine.mc_kernels.mc_moves` box by box; the volume exchange
recomputes both boxes' energies with
:func:`mdsim.engine.mc_kernels.energy_virial`.  Here is the one move
peculiar to the ensemble, the transfer of a particle from one box to the
other.

Array suffixes: ``_b`` box (2), ``_n`` particle slot, ``_i`` Cartesian
coordinate, ``_c`` cell.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.mc_cells import cell_coord, cell_insert, cell_remove
from mdsim.engine.mc_kernels import particle_energy

__all__ = ["gibbs_transfers", "tail_energy_total", "propose_transfer", "transfer_tail_change",
           "insert_in_box", "remove_from_box"]


@njit(cache=True, inline="always")
def tail_energy_total(n, volume, tail_a):
    """Long-range tail energy of ``n`` particles in ``volume``: N u_tail(rho) = tail_a N^2 / V.

    ``tail_a`` is u_tail / rho, the tail energy per particle at unit
    density (``PairMatrix.tail_corrections(1.0, [1.0])[0]``).
    """
    if n == 0:
        return 0.0
    return tail_a * n * n / volume


@njit(cache=True, error_model="numpy")
def gibbs_transfers(r_bni, species_n, params_ab, form, table, box_bi, ncell_bi, head_bc, next_bn,
                    cell_bn, n_b, u_b, state, n_attempts, beta, tail_a):
    """Attempt ``n_attempts`` particle transfers between the two boxes, in place.

    Parameters
    ----------
    r_bni : ndarray, shape=(2, capacity, 3), float64
        Positions; box b uses slots 0 .. n_b[b] - 1.
    species_n : ndarray, shape=(capacity,), int64
        All zero (one species).
    params_ab, form, table
        The pair interaction (:mod:`mdsim.engine.forms`).
    box_bi : ndarray, shape=(2, 3), float64
        Edge lengths of each box.
    ncell_bi : ndarray, shape=(2, 4), int64
    head_bc : ndarray, shape=(2, max_cells), int64
    next_bn, cell_bn : ndarray, shape=(2, capacity), int64
        Each box's linked cells, updated in place.
    n_b : ndarray, shape=(2,), int64
        Particles in each box, updated in place.
    u_b : ndarray, shape=(2,), float64
        Total truncated energy of each box, updated in place.
    state : ndarray, shape=(4,), uint64
        Random stream, advanced in place.
    n_attempts : int
    beta : float
        1 / kT.
    tail_a : float
        Tail energy per particle at unit density (see :func:`tail_energy_total`).

    Returns
    -------
    int
        Transfers accepted.

    Notes
    -----
    The donor box d is chosen with probability 1/2, a random particle of it
    is removed and a particle inserted at a uniformly random point of the
    other box r.  Acceptance (Panagiotopoulos, Quirke, Stapleton and
    Tildesley, Mol. Phys. 63, 527, 1988; Frenkel and Smit, Understanding
    Molecular Simulation, 2nd ed., section 8.3):

        min(1, n_d V_r / ((n_r + 1) V_d) exp(-beta dU)),

    dU the change of the total energy of both boxes, truncated pairs plus
    the long-range tails (which change with each box's density).
    """
    n_acc = 0
    for _ in range(n_attempts):
        d, j, x, y, z = propose_transfer(state, box_bi, n_b)
        if j < 0:
            continue
        r = 1 - d
        nd = n_b[d]
        nr = n_b[r]
        # slot nr is in no cell list of box r: the energy of an insertion
        u_ins = particle_energy(nr, x, y, z, r_bni[r], species_n, params_ab, form, table,
                                box_bi[r], ncell_bi[r], head_bc[r], next_bn[r])
        if u_ins == np.inf:
            continue
        u_rem = particle_energy(j, r_bni[d, j, 0], r_bni[d, j, 1], r_bni[d, j, 2], r_bni[d],
                                species_n, params_ab, form, table, box_bi[d], ncell_bi[d],
                                head_bc[d], next_bn[d])
        v_r = box_bi[r, 0] * box_bi[r, 1] * box_bi[r, 2]
        v_d = box_bi[d, 0] * box_bi[d, 1] * box_bi[d, 2]
        du = u_ins - u_rem + transfer_tail_change(nd, v_d, nr, v_r, tail_a)
        arg = -beta * du + math.log(nd * v_r / ((nr + 1) * v_d))
        if arg < 0.0 and _rng.uniform(state) >= math.exp(arg):
            continue
        n_acc += 1
        insert_in_box(x, y, z, r_bni[r], box_bi[r], ncell_bi[r], head_bc[r], next_bn[r],
                      cell_bn[r], nr)
        n_b[r] = nr + 1
        u_b[r] += u_ins
        remove_from_box(j, r_bni[d], head_bc[d], next_bn[d], cell_bn[d], nd)
        n_b[d] = nd - 1
        u_b[d] -= u_rem
    return n_acc


@njit(cache=True)
def propose_transfer(state, box_bi, n_b):
    """Draw a transfer: the donor box d (each with probability 1/2), its particle j
    and the point (x, y, z) in the other box; j = -1 when box d is empty.

    Returns ``(d, j, x, y, z)``; the random stream ``state`` is advanced in place.
    """
    d = 0 if _rng.uniform(state) < 0.5 else 1
    nd = n_b[d]
    if nd == 0:
        return d, -1, 0.0, 0.0, 0.0
    r = 1 - d
    x = _rng.uniform(state) * box_bi[r, 0]
    y = _rng.uniform(state) * box_bi[r, 1]
    z = _rng.uniform(state) * box_bi[r, 2]
    j = int(_rng.uniform(state) * nd)
    if j >= nd:
        j = nd - 1
    return d, j, x, y, z


@njit(cache=True)
def transfer_tail_change(nd, v_d, nr, v_r, tail_a):
    """Change of the two boxes' tail energies when one particle goes from box d to box r."""
    return (tail_energy_total(nr + 1, v_r, tail_a) - tail_energy_total(nr, v_r, tail_a)
            + tail_energy_total(nd - 1, v_d, tail_a) - tail_energy_total(nd, v_d, tail_a))


@njit(cache=True)
def insert_in_box(x, y, z, r_ni, box_i, ncell_i, head_c, next_n, cell_n, slot):
    """Put a particle at (x, y, z) into the free ``slot`` of one box and its linked cells.

    ``r_ni``, ``head_c``, ``next_n``, ``cell_n`` are one box's rows of the
    arrays of :func:`gibbs_transfers`, changed in place; the caller counts
    the particle in.
    """
    r_ni[slot, 0] = x
    r_ni[slot, 1] = y
    r_ni[slot, 2] = z
    c = (cell_coord(x, box_i[0], ncell_i[0]) * ncell_i[1]
         + cell_coord(y, box_i[1], ncell_i[1])) * ncell_i[2] \
        + cell_coord(z, box_i[2], ncell_i[2])
    cell_insert(slot, c, head_c, next_n, cell_n)


@njit(cache=True)
def remove_from_box(j, r_ni, head_c, next_n, cell_n, n):
    """Take particle ``j`` out of a box of ``n`` particles: the last particle takes its slot.

    One box's rows as in :func:`insert_in_box`, changed in place; the
    caller counts the particle out.
    """
    last = n - 1
    cell_remove(j, head_c, next_n, cell_n)
    if j != last:
        c_last = cell_n[last]
        cell_remove(last, head_c, next_n, cell_n)
        r_ni[j, 0] = r_ni[last, 0]
        r_ni[j, 1] = r_ni[last, 1]
        r_ni[j, 2] = r_ni[last, 2]
        cell_insert(j, c_last, head_c, next_n, cell_n)
