"""The Axilrod-Teller three-body energy of a configuration of atoms.

Reduced units (``docs/units.md``): C9 in epsilon sigma^9, so
C9* = (C9/k) / (epsilon_K sigma^9) with C9/k in K angstrom^9 and sigma in
angstrom.  The formula is :func:`mdsim.engine.potentials.axilrod_teller_sq`
(Axilrod and Teller, J. Chem. Phys. 11, 299 (1943)).

Which triangles count: every triplet of atoms of which at least two sides
are shorter than the cut-off rc (minimum image, all sides measured from the
images nearest the shared vertex).  The kernel visits, for each atom i, the
pairs (j, k) of its partners closer than rc; a triangle with all three sides
inside rc is met from each of its vertices and weighted 1/3, one with
exactly two sides inside once, with weight 1.  rc <= L/4 keeps the third
side inside half the box, so the images are those of the minimum image
from every vertex.  The triangles left out (two sides beyond rc) carry an
energy per atom of order C9 rho^2 / rc^3: measured for argon at rho* = 0.1,
rc = 3 sigma gives 4 % less than rc = 4 sigma (docs/physics.md section
7b.3).  The partner lists are built over all pairs, O(N^2) per
configuration, for fewer than :data:`CELL_LIST_MIN_ATOMS` atoms, and from
linked cells, O(N), from there on (:func:`build_partner_lists`); both give
the same lists, entry for entry.

Array suffixes: ``_n`` atom, ``_i`` coordinate, ``_k`` slot of a partner list.
"""
import numpy as np
from numba import njit

from mdsim.checks import positive
from mdsim.engine.mc_cells import cell_grid, cells_around, wrap_coordinate
from mdsim.engine.neighbours import cell_sort
from mdsim.engine.potentials import axilrod_teller_sq
from mdsim.errors import SettingError

__all__ = ["three_body_energy", "partner_lists", "partner_lists_cells", "build_partner_lists",
           "triplet_energy", "CELL_LIST_MIN_ATOMS"]

#: Atoms from which :func:`build_partner_lists` uses the linked cells.  Measured
#: (``python -m mdsim.bench.threebody``, rho* = 0.5, rc = min(3, L/4) sigma): the two
#: builds take about as long at 700-800 atoms; at 8000 the cells are 6-8 times faster.
CELL_LIST_MIN_ATOMS = 800


@njit(cache=True)
def partner_lists(r_ni, box, rc2):
    """Full partner lists within rc (all pairs, minimum image).

    Returns (partner_nk, count_n, d_nki): partner indices, their counts and
    the minimum-image vectors r_j - r_i.
    """
    n = r_ni.shape[0]
    inv_box = 1.0 / box
    count_n = np.zeros(n, dtype=np.int64)
    for i in range(n - 1):
        for j in range(i + 1, n):
            d2 = 0.0
            for a in range(3):
                d = r_ni[j, a] - r_ni[i, a]
                d -= box * np.rint(d * inv_box)
                d2 += d * d
            if d2 < rc2:
                count_n[i] += 1
                count_n[j] += 1
    width = max(1, count_n.max())
    partner_nk = np.empty((n, width), dtype=np.int64)
    d_nki = np.empty((n, width, 3))
    count_n[:] = 0
    for i in range(n - 1):
        for j in range(i + 1, n):
            dx = r_ni[j, 0] - r_ni[i, 0]
            dy = r_ni[j, 1] - r_ni[i, 1]
            dz = r_ni[j, 2] - r_ni[i, 2]
            dx -= box * np.rint(dx * inv_box)
            dy -= box * np.rint(dy * inv_box)
            dz -= box * np.rint(dz * inv_box)
            if dx * dx + dy * dy + dz * dz < rc2:
                ki, kj = count_n[i], count_n[j]
                partner_nk[i, ki] = j
                partner_nk[j, kj] = i
                d_nki[i, ki, 0], d_nki[i, ki, 1], d_nki[i, ki, 2] = dx, dy, dz
                d_nki[j, kj, 0], d_nki[j, kj, 1], d_nki[j, kj, 2] = -dx, -dy, -dz
                count_n[i] = ki + 1
                count_n[j] = kj + 1
    return partner_nk, count_n, d_nki


@njit(cache=True)
def _fill_from_cells(s_ni, order_n, cell_start_c, box, rc2, ncell_i, partner_nk, d_nki,
                     count_n):
    """Partners of every atom from the cells within reach of its own (atoms sorted by cell,
    ``s_ni`` their positions as given); rows of ``partner_nk`` by atom, in cell order.

    Branch-free: every candidate is written to the slot after the partners
    so far (the last slot once the row is full) and counted if inside rc.
    Returns the largest count; when it reaches the width, rows were cut
    short and the caller grows them and calls again.
    """
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    box_i = np.full(3, box)
    inv_box = 1.0 / box
    last = partner_nk.shape[1] - 1
    around_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    count_n[:] = 0
    for ix in range(nx):
        for iy in range(ny):
            for iz in range(nz):  # the cells within reach of the cell's centre
                m = cells_around((ix + 0.5) * box / nx, (iy + 0.5) * box / ny,
                                 (iz + 0.5) * box / nz, box_i, ncell_i, around_c)
                c = (ix * ny + iy) * nz + iz
                for p in range(cell_start_c[c], cell_start_c[c + 1]):
                    i = order_n[p]
                    xi, yi, zi = s_ni[p, 0], s_ni[p, 1], s_ni[p, 2]
                    cnt = 0
                    for t in range(m):
                        ct = around_c[t]
                        for q in range(cell_start_c[ct], cell_start_c[ct + 1]):
                            dx = s_ni[q, 0] - xi
                            dy = s_ni[q, 1] - yi
                            dz = s_ni[q, 2] - zi
                            dx -= box * np.rint(dx * inv_box)
                            dy -= box * np.rint(dy * inv_box)
                            dz -= box * np.rint(dz * inv_box)
                            k = min(cnt, last)
                            partner_nk[i, k] = order_n[q]
                            d_nki[i, k, 0], d_nki[i, k, 1], d_nki[i, k, 2] = dx, dy, dz
                            cnt += (dx * dx + dy * dy + dz * dz < rc2) and q != p
                    count_n[i] = cnt
    return count_n.max()


@njit(cache=True)
def _sort_rows(partner_nk, count_n, d_nki):
    """Each atom's partners (and their vectors) in increasing index order, insertion sort."""
    for i in range(count_n.shape[0]):
        for a in range(1, count_n[i]):
            j = partner_nk[i, a]
            dx, dy, dz = d_nki[i, a, 0], d_nki[i, a, 1], d_nki[i, a, 2]
            b = a - 1
            while b >= 0 and partner_nk[i, b] > j:
                partner_nk[i, b + 1] = partner_nk[i, b]
                d_nki[i, b + 1, 0], d_nki[i, b + 1, 1] = d_nki[i, b, 0], d_nki[i, b, 1]
                d_nki[i, b + 1, 2] = d_nki[i, b, 2]
                b -= 1
            partner_nk[i, b + 1] = j
            d_nki[i, b + 1, 0], d_nki[i, b + 1, 1], d_nki[i, b + 1, 2] = dx, dy, dz


@njit(cache=True)
def partner_lists_cells(r_ni, box, rc2, ncell_i):
    """:func:`partner_lists` from linked cells, O(N): the same partners, order and vectors.

    ``ncell_i`` is the grid of :func:`mdsim.engine.mc_cells.cell_grid` for
    the cut-off (cells per edge and reach).  The atoms are sorted by cell
    (:func:`mdsim.engine.neighbours.cell_sort`), each atom's partners found
    in the cells within reach of its own and then sorted by index, so the
    lists equal the all-pairs ones entry for entry (each vector the same
    minimum-image difference of the positions given, bit for bit).
    """
    n = r_ni.shape[0]
    box_i = np.full(3, box)
    w_ni = np.empty((n, 3))
    for j in range(n):
        for a in range(3):
            w_ni[j, a] = wrap_coordinate(r_ni[j, a], box)
    order_n = np.empty(n, dtype=np.int64)
    cell_start_c = np.empty(ncell_i[0] * ncell_i[1] * ncell_i[2] + 1, dtype=np.int64)
    cell_sort(w_ni, box_i, ncell_i, order_n, cell_start_c)
    s_ni = np.empty((n, 3))
    for p in range(n):
        s_ni[p, 0], s_ni[p, 1], s_ni[p, 2] = r_ni[order_n[p], 0], r_ni[order_n[p], 1], \
            r_ni[order_n[p], 2]
    # room for 1.5 times the mean number of partners, plus 16; grown once if short
    width = int(1.5 * 4.0 / 3.0 * np.pi * rc2 ** 1.5 * n / box ** 3) + 16
    count_n = np.empty(n, dtype=np.int64)
    while True:
        partner_nk = np.empty((n, width), dtype=np.int64)
        d_nki = np.empty((n, width, 3))
        most = _fill_from_cells(s_ni, order_n, cell_start_c, box, rc2, ncell_i, partner_nk,
                                d_nki, count_n)
        if most < width:
            break
        width = most + 1
    _sort_rows(partner_nk, count_n, d_nki)
    return partner_nk, count_n, d_nki


@njit(cache=True)
def triplet_energy(count_n, d_nki, rc2, c9):
    """Total Axilrod-Teller energy over the partner lists (weights in the module notes)."""
    total = 0.0
    for i in range(count_n.shape[0]):
        m = count_n[i]
        for a in range(m - 1):
            ax, ay, az = d_nki[i, a, 0], d_nki[i, a, 1], d_nki[i, a, 2]
            a2 = ax * ax + ay * ay + az * az
            for b in range(a + 1, m):
                bx, by, bz = d_nki[i, b, 0], d_nki[i, b, 1], d_nki[i, b, 2]
                b2 = bx * bx + by * by + bz * bz
                cx, cy, cz = bx - ax, by - ay, bz - az
                c2 = cx * cx + cy * cy + cz * cz
                u = axilrod_teller_sq(c9, a2, b2, c2)
                total += u / 3.0 if c2 < rc2 else u
    return total


def three_body_energy(r_ni, box_length, c9, cutoff):
    """Axilrod-Teller energy of atoms in a cubic periodic box.

    Parameters
    ----------
    r_ni : array_like, shape=(n, 3), sigma
    box_length : float, sigma
    c9 : float, epsilon sigma^9
    cutoff : float, sigma
        rc: triangles with at least two sides shorter than rc count; at
        most a quarter of the box.

    Returns
    -------
    float
        Total three-body energy, epsilon.

    Notes
    -----
    u3 = C9 (1 + 3 cos g1 cos g2 cos g3) / (r12 r13 r23)^3 summed over the
    triangles of the module notes (Axilrod and Teller 1943).

    Examples
    --------
    An equilateral triangle of side 1 in a large box: (11/8) C9.

    >>> triangle = [[0, 0, 0], [1, 0, 0], [0.5, 3 ** 0.5 / 2, 0]]
    >>> round(three_body_energy(triangle, 10.0, 8.0, 2.0), 9)
    11.0
    """
    box = positive("box_length", box_length, "the cubic box edge, sigma")
    rc = positive("cutoff", cutoff, "sigma, typically 2.5 to 3.5")
    if rc > 0.25 * box * (1.0 + 1e-12):
        raise SettingError("cutoff", rc, f"must not exceed a quarter of the box ({0.25 * box:.6g} "
                           "sigma) for the three-body sum; use more atoms or a smaller cut-off")
    r = np.ascontiguousarray(np.asarray(r_ni, dtype=float))
    if r.ndim != 2 or r.shape[1] != 3 or r.shape[0] < 3 or not np.all(np.isfinite(r)):
        raise SettingError("r_ni", f"shape {r.shape}", "need finite positions of shape (n, 3), "
                           "n >= 3")
    _, count_n, d_nki = build_partner_lists(r, box, rc)
    return float(triplet_energy(count_n, d_nki, rc * rc, float(c9)))


def build_partner_lists(r_ni, box, rc):
    """Full partner lists within rc: all pairs for few atoms, linked cells from
    :data:`CELL_LIST_MIN_ATOMS` on (the same lists either way).

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64, sigma
        Positions (any periodic image).
    box : float, sigma
    rc : float, sigma
        At most a quarter of the box (not checked here).

    Returns
    -------
    partner_nk : ndarray, shape=(n, width), int64
        Partner indices of each atom, in increasing order.
    count_n : ndarray, shape=(n,), int64
    d_nki : ndarray, shape=(n, width, 3), float64
        Minimum-image vectors r_j - r_i, sigma.

    Examples
    --------
    >>> r = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [9.0, 0.0, 0.0]])
    >>> partner_nk, count_n, _ = build_partner_lists(r, 10.0, 2.0)
    >>> count_n.tolist(), partner_nk[0, :2].tolist()
    ([2, 1, 1], [1, 2])
    """
    if r_ni.shape[0] < CELL_LIST_MIN_ATOMS:
        return partner_lists(r_ni, box, rc * rc)
    ncell_i = cell_grid(np.full(3, box), rc, r_ni.shape[0])
    return partner_lists_cells(r_ni, box, rc * rc, ncell_i)
