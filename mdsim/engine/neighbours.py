"""Neighbour search: cell lists and Verlet lists with a skin.

A Verlet list holds, for every particle, the partners closer than
``r_list = rc_max + skin`` at the time of the last build.  It stays valid
while no particle has moved more than ``skin / 2`` since then (two
particles approaching each other can close at most ``skin`` between them),
after which it is rebuilt.  The build uses a cell grid with cells at least
``r_list`` wide, so it is O(N) at fixed density.

What makes it fast (all of it measured on an earlier prototype):

* At every rebuild the particles are sorted by cell (a stable counting
  sort); the caller permutes positions, velocities, species and masses by
  the returned order, so that the partners of a particle lie close to it in
  memory.
* Half lists (each pair once) built from a half stencil of 13 neighbour
  cells plus the own cell; the periodic image shift is worked out once per
  (cell, neighbour cell), not once per pair.
* Fixed-width rows ``nb_nk`` of shape (n, width) with ``count_n``; the
  build writes without a branch and counts past the width, so an overflow
  is detected and the list is grown and rebuilt once.
* A branch-free distance test in the build loop.

Boxes too small for three cells per direction (fewer than a few hundred
particles in a liquid) use an all-pairs minimum-image build instead; it
gives the same pairs.

Array suffixes: ``_n`` particle, ``_i`` Cartesian coordinate, ``_k`` slot
in a neighbour row, ``_c`` cell.
"""
import math

import numpy as np
from numba import njit

from mdsim.checks import positive

#: Smallest and largest skins chosen automatically (in sigma).
SKIN_MIN, SKIN_MAX = 0.3, 1.0


@njit(cache=True)
def wrap_positions(r_ni, box_i):
    """Put positions into [0, L) in place (particles are never more than one
    box length outside between rebuilds)."""
    for n in range(r_ni.shape[0]):
        for d in range(3):
            x = r_ni[n, d]
            L = box_i[d]
            if x < 0.0:
                x += L
            if x >= L:
                x -= L
            r_ni[n, d] = x


@njit(cache=True)
def cell_sort(r_ni, box_i, ncell_i, order_n, cell_start_c):
    """Stable counting sort of (wrapped) particles by cell index.

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64
        Positions inside [0, L).
    box_i : ndarray, shape=(3,), float64
    ncell_i : ndarray, shape=(3,), int64
        Cells per direction.
    order_n : ndarray, shape=(n,), int64, out
        ``r_ni[order_n]`` is sorted by cell.
    cell_start_c : ndarray, shape=(n_cells + 1,), int64, out
        Particles of cell c (in sorted order) are
        ``cell_start_c[c]:cell_start_c[c + 1]``.
    """
    n = r_ni.shape[0]
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    sx, sy, sz = nx / box_i[0], ny / box_i[1], nz / box_i[2]
    cell_n = np.empty(n, dtype=np.int64)
    cell_start_c[:] = 0
    for k in range(n):
        ix = min(int(r_ni[k, 0] * sx), nx - 1)
        iy = min(int(r_ni[k, 1] * sy), ny - 1)
        iz = min(int(r_ni[k, 2] * sz), nz - 1)
        c = (ix * ny + iy) * nz + iz
        cell_n[k] = c
        cell_start_c[c + 1] += 1
    for c in range(cell_start_c.size - 1):
        cell_start_c[c + 1] += cell_start_c[c]
    fill = cell_start_c[:-1].copy()
    for k in range(n):
        c = cell_n[k]
        order_n[fill[c]] = k
        fill[c] += 1


@njit(cache=True, inline="always")
def _wrap_cell(j, n, box):
    """Cell coordinate j (one cell out of range at most) wrapped into 0..n-1, and the
    shift (0, box or -box) that takes a position in the wrapped cell to its near image."""
    if j >= n:
        return j - n, box
    if j < 0:
        return j + n, -box
    return j, 0.0


@njit(cache=True)
def build_half_list_cells(r_ni, box_i, ncell_i, cell_start_c, r_list2, nb_nk, count_n):
    """Half Verlet list from a cell grid (needs >= 3 cells per direction).

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64
        Wrapped positions, already sorted by cell (see :func:`cell_sort`).
    r_list2 : float
        Squared list radius (rc_max + skin)^2.
    nb_nk : ndarray, shape=(n, width), int32, out
    count_n : ndarray, shape=(n,), int32, out
        Number of partners of each particle; may exceed ``width`` (overflow).

    Returns
    -------
    max_count : int
        Largest partner count; if above ``width`` the list is incomplete.
    """
    n = r_ni.shape[0]
    width = nb_nk.shape[1]
    nx, ny, nz = ncell_i[0], ncell_i[1], ncell_i[2]
    Lx, Ly, Lz = box_i[0], box_i[1], box_i[2]
    count_n[:] = 0
    for ix in range(nx):
        for iy in range(ny):
            for iz in range(nz):
                c = (ix * ny + iy) * nz + iz
                a0, a1 = cell_start_c[c], cell_start_c[c + 1]
                # half stencil: the own cell (j > i) and 13 neighbours with
                # (dx, dy, dz) lexicographically after (0, 0, 0)
                for s in range(14):
                    if s == 0:
                        dx, dy, dz = 0, 0, 0
                    else:
                        t = s + 13  # offsets 14..26 of the 27-cell block
                        dx, dy, dz = t // 9 - 1, (t // 3) % 3 - 1, t % 3 - 1
                    jx, jy, jz = ix + dx, iy + dy, iz + dz
                    # shifts added to r_j to get the near image
                    jx, shx = _wrap_cell(jx, nx, Lx)
                    jy, shy = _wrap_cell(jy, ny, Ly)
                    jz, shz = _wrap_cell(jz, nz, Lz)
                    cj = (jx * ny + jy) * nz + jz
                    b0, b1 = cell_start_c[cj], cell_start_c[cj + 1]
                    for i in range(a0, a1):
                        xi = r_ni[i, 0] - shx
                        yi = r_ni[i, 1] - shy
                        zi = r_ni[i, 2] - shz
                        cnt = count_n[i]
                        start = i + 1 if s == 0 else b0
                        for j in range(start, b1):
                            ddx = xi - r_ni[j, 0]
                            ddy = yi - r_ni[j, 1]
                            ddz = zi - r_ni[j, 2]
                            r2 = ddx * ddx + ddy * ddy + ddz * ddz
                            nb_nk[i, min(cnt, width - 1)] = j
                            cnt += r2 < r_list2
                        count_n[i] = cnt
    max_count = 0
    for i in range(n):
        max_count = max(max_count, count_n[i])
    return max_count


@njit(cache=True)
def build_half_list_allpairs(r_ni, box_i, r_list2, nb_nk, count_n):
    """Half Verlet list by testing all pairs with the minimum image (small boxes)."""
    n = r_ni.shape[0]
    width = nb_nk.shape[1]
    inv0, inv1, inv2 = 1.0 / box_i[0], 1.0 / box_i[1], 1.0 / box_i[2]
    count_n[:] = 0
    max_count = 0
    for i in range(n):
        cnt = 0
        for j in range(i + 1, n):
            dx = r_ni[i, 0] - r_ni[j, 0]
            dy = r_ni[i, 1] - r_ni[j, 1]
            dz = r_ni[i, 2] - r_ni[j, 2]
            dx -= box_i[0] * np.rint(dx * inv0)
            dy -= box_i[1] * np.rint(dy * inv1)
            dz -= box_i[2] * np.rint(dz * inv2)
            r2 = dx * dx + dy * dy + dz * dz
            nb_nk[i, min(cnt, width - 1)] = j
            cnt += r2 < r_list2
        count_n[i] = cnt
        max_count = max(max_count, cnt)
    return max_count


@njit(cache=True)
def max_displacement2(r_ni, r_ref_ni, box_i):
    """Largest squared displacement since the last build (minimum image)."""
    m = 0.0
    for n in range(r_ni.shape[0]):
        d2 = 0.0
        for d in range(3):
            x = r_ni[n, d] - r_ref_ni[n, d]
            x -= box_i[d] * np.rint(x / box_i[d])
            d2 += x * x
        m = max(m, d2)
    return m


def choose_skin(density, temperature, rc_max):
    """Verlet skin for a state point (in sigma).

    A dense liquid has many partners per unit volume and slow, caged
    particles: a thin skin (0.3) keeps the list short.  A dilute hot gas has
    few partners and fast, ballistic particles: a thick skin (about 1) keeps
    rebuilds rare at little cost in listed pairs.  Between the two the skin
    is interpolated in log density and raised with the thermal speed.

    Parameters
    ----------
    density : float
        Number density, reduced.
    temperature : float or None
        kT/epsilon; None (unknown) is treated as 1.
    rc_max : float
        Largest cut-off, sigma (only used to cap the skin at rc_max / 2).
    """
    t = 1.0 if temperature is None else max(float(temperature), 1e-3)
    rho = max(float(density), 1e-8)
    # x = 0 at rho >= 0.7 (liquid), 1 at rho <= 0.03 (dilute gas)
    x = (math.log(0.7) - math.log(rho)) / (math.log(0.7) - math.log(0.03))
    x = min(max(x, 0.0), 1.0)
    base = SKIN_MIN + (SKIN_MAX - SKIN_MIN) * x
    t_ref = 0.7 + 1.3 * x  # the temperatures at which the two end values were tuned
    speed = min(max((t / t_ref) ** 0.25, 0.8), 1.25)
    return float(min(max(base * speed, 0.25), 1.25, 0.5 * rc_max))


class NeighbourList:
    """A half Verlet list over an orthorhombic periodic box.

    Parameters
    ----------
    n_particles : int
    box_i : array_like, shape=(3,)
        Box edges, sigma.
    rc_max : float
        Largest pair cut-off, sigma.
    skin : float
        Verlet skin, sigma (> 0).

    Attributes
    ----------
    nb_nk : ndarray, shape=(n, width), int32
        Partners of each particle (indices into the sorted arrays).
    count_n : ndarray, shape=(n,), int32
    r_ref_ni : ndarray, shape=(n, 3)
        Positions at the last build (sorted, wrapped).
    n_builds : int
    """

    def __init__(self, n_particles, box_i, rc_max, skin):
        skin = positive("skin", skin, "a length in sigma, typically 0.3 for a liquid to 1.0 "
                        "for a dilute gas")
        self.n = int(n_particles)
        self.rc_max = float(rc_max)
        self.skin = skin
        self.r_list = self.rc_max + skin
        self.set_box(box_i)
        self.count_n = np.zeros(self.n, dtype=np.int32)
        self.nb_nk = np.zeros((self.n, 8), dtype=np.int32)
        self.r_ref_ni = np.zeros((self.n, 3))
        self.n_builds = 0

    def set_box(self, box_i):
        """Use a new box (the next :meth:`build` uses its cell grid)."""
        self.box_i = np.ascontiguousarray(box_i, dtype=float).copy()
        self.ncell_i = np.maximum(1, np.floor(self.box_i / self.r_list)).astype(np.int64)
        self.use_cells = bool(np.all(self.ncell_i >= 3))
        n_cells = int(np.prod(self.ncell_i)) if self.use_cells else 1
        self.cell_start_c = np.zeros(n_cells + 1, dtype=np.int64)
        if self.use_cells:
            self.expected_partners = 0.5 * self.n / np.prod(self.box_i) * 4.0 / 3.0 * math.pi \
                * self.r_list ** 3
        else:
            self.expected_partners = 0.5 * self.n

    def sort_order(self, r_ni):
        """Wrap ``r_ni`` in place and return the cell-sorted order (int64, shape=(n,)).

        The caller applies the order to every per-particle array, then
        calls :meth:`build` on the permuted positions.
        """
        wrap_positions(r_ni, self.box_i)
        order = np.empty(self.n, dtype=np.int64)
        if self.use_cells:
            cell_sort(r_ni, self.box_i, self.ncell_i, order, self.cell_start_c)
        else:
            order[:] = np.arange(self.n)
        return order

    def build(self, r_ni):
        """Build the list from wrapped, cell-sorted positions (from :meth:`sort_order`).

        The cell boundaries found by :meth:`sort_order` are used, so the
        positions must be exactly the permuted ones.  Grows the rows and
        rebuilds when a particle has more partners than the row width.
        """
        if self.n_builds == 0:
            width = int(1.3 * self.expected_partners) + 8
            self.nb_nk = np.zeros((self.n, width), dtype=np.int32)
        while True:
            if self.use_cells:
                need = build_half_list_cells(r_ni, self.box_i, self.ncell_i, self.cell_start_c,
                                             self.r_list ** 2, self.nb_nk, self.count_n)
            else:
                need = build_half_list_allpairs(r_ni, self.box_i, self.r_list ** 2,
                                                self.nb_nk, self.count_n)
            if need <= self.nb_nk.shape[1]:
                break
            self.nb_nk = np.zeros((self.n, int(1.2 * need) + 4), dtype=np.int32)
        self.r_ref_ni[:] = r_ni
        self.n_builds += 1

    def needs_rebuild(self, r_ni):
        """True when some particle moved more than skin/2 since the last build."""
        return max_displacement2(r_ni, self.r_ref_ni, self.box_i) > 0.25 * self.skin ** 2

    @property
    def n_listed(self):
        """Number of listed pairs."""
        return int(self.count_n.sum())
