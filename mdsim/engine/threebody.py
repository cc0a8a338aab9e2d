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
configuration, which is cheap next to the sampling for a few thousand atoms.

Array suffixes: ``_n`` atom, ``_i`` coordinate, ``_k`` slot of a partner list.
"""
import numpy as np
from numba import njit

from mdsim.checks import positive
from mdsim.engine.potentials import axilrod_teller_sq
from mdsim.errors import SettingError

__all__ = ["three_body_energy", "partner_lists", "triplet_energy"]


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
    _, count_n, d_nki = partner_lists(r, box, rc * rc)
    return float(triplet_energy(count_n, d_nki, rc * rc, float(c9)))
