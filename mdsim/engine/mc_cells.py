"""Linked cells of the Monte Carlo samplers: numba kernels and the grid choice.

The neighbours of a particle within the largest cut-off are found from a
small linked-cell structure, so a trial move costs O(1) at fixed density,
from a dilute gas to a dense liquid.

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate, ``_c`` cell.

Cell structure
--------------
``ncell_i`` (int64, length 4) holds the cells per box edge and the reach
k: cells have edge >= rc_max / k, and the neighbours of a particle lie in
the (2k + 1)^3 cells around its own (k = 2 in dense fluids, where it halves
the volume searched; k = 1 in gases, where most cells are empty).  When an
edge has fewer than 2k + 1 cells every cell along it is searched once.
Cell (cx, cy, cz) has the flat index
(cx * ncell_y + cy) * ncell_z + cz.  ``head_c[c]`` is the first particle
of cell c (-1 if empty), ``next_n[j]`` the particle after j in its cell
(-1 at the end), ``cell_n[j]`` the cell of particle j.  Each cell's list
is kept in increasing particle order, so that a list rebuilt from the
positions alone is identical to one updated move by move: sums over
neighbours then run in the same order after a checkpoint is reloaded,
which makes a resumed run identical bit for bit.
"""
import math

import numpy as np
from numba import njit

__all__ = ["cell_coord", "wrap_coordinate", "min_image", "cell_neighbour", "cells_around",
           "cell_insert", "cell_remove", "build_cells", "cell_grid"]

# Upper bound on the number of cells, relative to the number of particles:
# in a very dilute gas, cells of edge rc would far outnumber the particles.
_MAX_CELLS_PER_PARTICLE = 4


@njit(cache=True, inline="always")
def cell_coord(x, box, ncell):
    c = int(x * ncell / box)
    if c >= ncell:
        c = ncell - 1
    elif c < 0:
        c = 0
    return c


@njit(cache=True, inline="always")
def wrap_coordinate(x, box):
    x -= box * math.floor(x / box)
    if x >= box:  # rounding of a tiny negative x + box
        x -= box
    return x


@njit(cache=True, inline="always")
def min_image(d, box, half):
    """Nearest periodic image of a coordinate difference ``d`` (|d| < 1.5 box)."""
    if d > half:
        return d - box
    if d < -half:
        return d + box
    return d


@njit(cache=True, inline="always")
def cell_neighbour(c, k, n, reach):
    # k-th of the min(n, 2 reach + 1) distinct cell coordinates within reach of c
    if n >= 2 * reach + 1:
        return (c - reach + k + n) % n
    return k


@njit(cache=True)
def cells_around(x, y, z, box_i, ncell_i, out_c):
    """Flat indices of the cells within reach of the cell of the point (x, y, z).

    Parameters
    ----------
    x, y, z : float, in [0, box)
    box_i : ndarray, shape=(3,), float64
    ncell_i : ndarray, shape=(4,), int64, cells per edge and reach
    out_c : ndarray, shape=(>= (2 reach + 1)^3,), int64 (output)

    Returns
    -------
    int
        How many entries of ``out_c`` were filled (each cell once).
    """
    nx, ny, nz, reach = ncell_i[0], ncell_i[1], ncell_i[2], ncell_i[3]
    cx = cell_coord(x, box_i[0], nx)
    cy = cell_coord(y, box_i[1], ny)
    cz = cell_coord(z, box_i[2], nz)
    width = 2 * reach + 1
    k = 0
    for a in range(min(nx, width)):
        ax = cell_neighbour(cx, a, nx, reach)
        for b in range(min(ny, width)):
            by = cell_neighbour(cy, b, ny, reach)
            for d in range(min(nz, width)):
                out_c[k] = (ax * ny + by) * nz + cell_neighbour(cz, d, nz, reach)
                k += 1
    return k


@njit(cache=True)
def cell_insert(j, c, head_c, next_n, cell_n):
    """Insert particle j into cell c, keeping the list in increasing order."""
    cell_n[j] = c
    k = head_c[c]
    if k < 0 or k > j:
        next_n[j] = k
        head_c[c] = j
        return
    while next_n[k] >= 0 and next_n[k] < j:
        k = next_n[k]
    next_n[j] = next_n[k]
    next_n[k] = j


@njit(cache=True)
def cell_remove(j, head_c, next_n, cell_n):
    """Remove particle j from its cell."""
    c = cell_n[j]
    k = head_c[c]
    if k == j:
        head_c[c] = next_n[j]
    else:
        while next_n[k] != j:
            k = next_n[k]
        next_n[k] = next_n[j]
    next_n[j] = -1


@njit(cache=True)
def build_cells(r_ni, box_i, ncell_i, head_c, next_n, cell_n):
    """Fill the cell lists from the positions (in increasing particle order).

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64, positions in [0, box)
    box_i : ndarray, shape=(3,), float64
    ncell_i : ndarray, shape=(4,), int64, cells per edge and reach
    head_c : ndarray, shape=(n_cells,), int64 (output)
    next_n, cell_n : ndarray, shape=(n,), int64 (output)
    """
    head_c[:] = -1
    last_c = np.full(head_c.size, -1, dtype=np.int64)
    for j in range(r_ni.shape[0]):
        cx = cell_coord(r_ni[j, 0], box_i[0], ncell_i[0])
        cy = cell_coord(r_ni[j, 1], box_i[1], ncell_i[1])
        cz = cell_coord(r_ni[j, 2], box_i[2], ncell_i[2])
        c = (cx * ncell_i[1] + cy) * ncell_i[2] + cz
        cell_n[j] = c
        next_n[j] = -1
        if last_c[c] < 0:
            head_c[c] = j
        else:
            next_n[last_c[c]] = j
        last_c[c] = j


def cell_grid(box_i, rc_max, n_particles):
    """Cells per edge and reach (see the module docstring).

    The reach is 2 when a cell of edge rc_max / 2 holds on average at least
    half a particle, else 1; cells have edge >= rc_max / reach, and there
    are at most about 4 cells per particle (a dilute gas gets larger cells).

    Returns
    -------
    ndarray, shape=(4,), int64
        (n_x, n_y, n_z, reach).
    """
    box = np.asarray(box_i, dtype=float)
    rho = n_particles / float(np.prod(box))
    reach = 2 if rho * (0.5 * rc_max) ** 3 >= 0.5 else 1
    ncell = np.maximum(1, np.floor(box * reach / rc_max).astype(np.int64))
    limit = max(27, _MAX_CELLS_PER_PARTICLE * int(n_particles))
    while int(np.prod(ncell)) > limit:
        k = int(np.argmax(ncell))
        ncell[k] = max(1, (ncell[k] * 4) // 5)
    return np.append(ncell, reach).astype(np.int64)
