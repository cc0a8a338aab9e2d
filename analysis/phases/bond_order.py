"""Steinhardt's bond orientational order q6: is a sampled configuration crystalline?

For particle i with neighbours j within ``NEIGHBOUR_CUTOFF_RED``,
q6m(i) = (1/N_b(i)) sum_j Y6m(r_ij) (Steinhardt, Nelson and Ronchetti, Phys.
Rev. B 28, 784, 1983).  Two neighbours are joined by a crystal-like bond when
the normalised vectors agree, Re sum_m q6m(i) q6m(j)* / (|q6(i)| |q6(j)|) >
0.5, and a particle with at least 7 such bonds is crystal-like (ten Wolde,
Ruiz-Montero and Frenkel, J. Chem. Phys. 104, 9932, 1996; from memory).
A liquid has few crystal-like particles, a crystal nearly all.  Arrays:
``r_ni`` positions (particle, coordinate), reduced.
"""
import numpy as np
from scipy.special import sph_harm_y

__all__ = ["NEIGHBOUR_CUTOFF_RED", "CRYSTAL_FRACTION_SOLID", "bond_vectors", "global_q6",
           "crystal_like_fraction"]

NEIGHBOUR_CUTOFF_RED = 1.5
"""Neighbour shell in sigma: about the first minimum of g(r) of a dense LJ fluid (common
practice, no source)."""
CRYSTAL_FRACTION_SOLID = 0.3
"""A state whose configurations hold more crystal-like particles than this is solid
(chosen: a liquid near freezing holds a few per cent)."""
BOND_AGREEMENT = 0.5
MIN_CRYSTAL_BONDS = 7


def bond_vectors(r_ni, box, cutoff=NEIGHBOUR_CUTOFF_RED):
    """Pairs i < j closer than ``cutoff`` (minimum image) and their separation vectors.

    Returns
    -------
    i, j : ndarray of int, shape=(n_bonds,)
    d_bx : ndarray, shape=(n_bonds, 3), reduced
    """
    r = np.asarray(r_ni, dtype=float)
    box = np.asarray(box, dtype=float)
    i, j = np.triu_indices(r.shape[0], k=1)
    d = r[j] - r[i]
    d -= box * np.round(d / box)
    keep = np.einsum("bx,bx->b", d, d) < cutoff * cutoff
    return i[keep], j[keep], d[keep]


def _q6m(r_ni, box):
    """Per-particle q6m (n_particles, 13), neighbour counts, and the bonds (i, j, Y_bm)."""
    n = np.asarray(r_ni).shape[0]
    i, j, d = bond_vectors(r_ni, box)
    dist = np.sqrt(np.einsum("bx,bx->b", d, d))
    theta = np.arccos(np.clip(d[:, 2] / dist, -1.0, 1.0))
    phi = np.arctan2(d[:, 1], d[:, 0])
    ylm = np.stack([sph_harm_y(6, m, theta, phi) for m in range(-6, 7)], axis=1)
    q = np.zeros((n, 13), dtype=complex)
    nb = np.zeros(n)
    # Y6m(-r) = Y6m(r) (even l): the bond counts alike for both ends
    np.add.at(q, i, ylm)
    np.add.at(q, j, ylm)
    np.add.at(nb, i, 1.0)
    np.add.at(nb, j, 1.0)
    return q / np.maximum(nb, 1.0)[:, None], nb, i, j, ylm


def global_q6(r_ni, box):
    """The global bond order Q6 of one configuration.

    Parameters
    ----------
    r_ni : ndarray, shape=(n_particles, 3), reduced
    box : array_like, shape=(3,), reduced

    Returns
    -------
    float
        Q6 = sqrt(4 pi / 13 sum_m |<Y6m>|^2), the mean over all bonds: 0.575
        for fcc, 0.511 for bcc, about 0 for a large liquid (Steinhardt et
        al. 1983, Table I; from memory).

    Examples
    --------
    >>> pair = np.array([[0.0, 0.0, 0.0], [0.3, 0.4, 1.0]])
    >>> round(global_q6(pair, [20.0, 20.0, 20.0]), 12)  # one bond: 1 (addition theorem)
    1.0
    """
    *_, ylm = _q6m(r_ni, box)
    if ylm.shape[0] == 0:
        return 0.0
    return float(np.sqrt(4.0 * np.pi / 13.0 * np.sum(np.abs(ylm.mean(axis=0)) ** 2)))


def crystal_like_fraction(configurations, box):
    """The fraction of particles that are crystal-like, over sampled configurations.

    Parameters
    ----------
    configurations : sequence of ndarray, each shape=(n_particles, 3), reduced
    box : array_like, shape=(3,), reduced

    Returns
    -------
    float
        Crystal-like particles (module docstring) over all particles of all configurations.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> crystal_like_fraction([rng.uniform(0.0, 8.0, (300, 3))], [8.0, 8.0, 8.0])  # invented
    0.0
    """
    solid = total = 0
    for r_ni in configurations:
        q, nb, i, j, _ = _q6m(r_ni, box)
        norm = np.linalg.norm(q, axis=1)
        qh = q / np.where(norm > 0.0, norm, 1.0)[:, None]
        agree = np.real(np.sum(qh[i] * np.conj(qh[j]), axis=1)) > BOND_AGREEMENT
        bonds = np.bincount(i[agree], minlength=q.shape[0]) + np.bincount(j[agree],
                                                                          minlength=q.shape[0])
        solid += int(np.sum(bonds >= MIN_CRYSTAL_BONDS))
        total += q.shape[0]
    return solid / total if total else 0.0
