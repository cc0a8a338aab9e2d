"""Local density on a grid of cells: one population for a homogeneous fluid, two for two phases.

A homogeneous fluid puts a number of particles in each cell of a fixed grid
that scatters around the mean in one peak (Poisson-like for a gas, narrower
for a liquid).  A box holding vapour and liquid has empty-looking cells in
the vapour and crowded ones in the liquid: the histogram of the counts,
pooled over cells and sampled configurations, has two peaks with a valley
between them.  Arrays: ``r_ni`` positions (particle, coordinate), reduced.
"""
import math
from dataclasses import dataclass

import numpy as np

__all__ = ["CELL_LENGTH_RED", "MIN_CELL_COUNTS", "cell_counts", "local_density_check",
           "LocalDensityCheck"]

CELL_LENGTH_RED = 2.5
"""Target cell edge in sigma: a liquid cell (rho* 0.5 to 0.9) holds 8 to 14 particles, well
apart from an empty vapour cell (chosen; larger cells would blur a small box's interfaces)."""
MIN_CELL_COUNTS = 64
"""Fewer pooled cell counts than this give no verdict."""
MIN_PEAK_MASS = 0.1
"""Each class of cells (dilute, dense) must hold at least this fraction of the cells."""
DILUTE_RATIO = 0.5
"""The dilute class's mean count must be below this fraction of the dense class's."""
BROAD_RATIO = 2.0
"""Cell counts scattering by more than this many times an ideal gas's variance are evidence."""


def cell_counts(configurations, box):
    """Particle counts in the cells of a grid, pooled over configurations.

    Parameters
    ----------
    configurations : sequence of ndarray, each shape=(n_particles, 3), reduced
    box : array_like, shape=(3,), reduced
        Box edges; the grid has ``max(2, floor(L / CELL_LENGTH_RED))`` cells along each edge.

    Returns
    -------
    counts : ndarray of int, shape=(n_configurations * n_cells,)
    cell_volume : float
        Reduced volume of one cell.
    n_cells : int
        Cells per configuration.

    Examples
    --------
    >>> r = np.array([[0.5, 0.5, 0.5], [0.6, 0.5, 0.5], [4.5, 4.5, 4.5]])
    >>> counts, v, n_cells = cell_counts([r], [6.0, 6.0, 6.0])
    >>> sorted(counts.tolist())[-2:], v, n_cells
    ([1, 2], 27.0, 8)
    """
    box = np.asarray(box, dtype=float)
    n_cells = np.maximum(2, np.floor(box / CELL_LENGTH_RED).astype(int))
    out = []
    for r_ni in configurations:
        idx = np.floor(np.mod(np.asarray(r_ni, dtype=float), box) / box * n_cells).astype(int)
        idx = np.minimum(idx, n_cells - 1)
        flat = np.ravel_multi_index(idx.T, tuple(n_cells))
        out.append(np.bincount(flat, minlength=int(np.prod(n_cells))))
    return np.concatenate(out), float(np.prod(box / n_cells)), int(np.prod(n_cells))


@dataclass(frozen=True)
class LocalDensityCheck:
    """The verdict on a cell-count histogram.

    Attributes
    ----------
    bimodal : bool or None
        True: a dilute and a dense class of cells; None: too few cells for a verdict.
    low_peak_density_red, high_peak_density_red : float or None
        Mean local densities (reduced) of the two classes when bimodal.
    low_side_fraction : float or None
        Fraction of the cells in the dilute class.
    n_counts : int
    variance_ratio : float or None
        Variance of the counts over that of an ideal gas of the same particles,
        m (1 - 1/n_cells) for a mean count m (the multinomial variance).
    broad : bool or None
        ``variance_ratio`` above :data:`BROAD_RATIO`.
    """

    bimodal: object
    low_peak_density_red: float = None
    high_peak_density_red: float = None
    low_side_fraction: float = None
    n_counts: int = 0
    variance_ratio: float = None
    broad: object = None

    def describe(self):
        """One line of evidence, or None when the check found none."""
        if self.broad and not self.bimodal:
            return (f"local density scatters {self.variance_ratio:.2g} times as much as an ideal "
                    f"gas's over {self.n_counts} grid cells (phase separation, or the critical "
                    "region)")
        if not self.bimodal:
            return None
        return (f"local density bimodal over {self.n_counts} grid cells: a dilute "
                f"class at rho* {self.low_peak_density_red:.3g} ({100 * self.low_side_fraction:.0f}"
                f" % of cells) and a dense one at {self.high_peak_density_red:.3g}")


def local_density_check(configurations, box):
    """Whether the local densities of sampled configurations fall in a dilute and a dense class.

    Parameters
    ----------
    configurations : sequence of ndarray, each shape=(n_particles, 3), reduced
    box : array_like, shape=(3,), reduced

    Returns
    -------
    LocalDensityCheck

    Notes
    -----
    The counts are split in two classes at the count that maximises the
    variance between the classes (Otsu's threshold: N. Otsu, IEEE Trans.
    Syst. Man Cybern. 9, 62, 1979).  The split is called two phases when
    each class holds at least :data:`MIN_PEAK_MASS` of the cells, the dilute
    class's mean is below :data:`DILUTE_RATIO` times the dense class's, and
    the class means lie more than 3 sqrt(mean count) apart.  A homogeneous
    fluid's counts scatter by sqrt(S(0) mean count) (S(0) = rho kT kappa_T);
    its Otsu classes lie about 1.6 of those widths apart, so only a fluid
    with S(0) above about 3.5, near the critical point, could pass (common
    practice, no source).  Apart from that split, counts whose variance
    exceeds :data:`BROAD_RATIO` times an ideal gas's (``variance_ratio``,
    an estimate of S(0) over cells of this size: about 1.4 for LJ at
    T* = 2, rho* = 0.15 by the virial series, S(0) = 1 / (1 + 2 B rho + 3 C
    rho^2), and below 1 in liquids) are evidence too: a box too small for two clean phases still
    scatters that much (``broad``; it also flags the critical region).

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> gas = [rng.uniform(0.0, 10.0, (250, 3)) for _ in range(4)]  # invented: ideal gas
    >>> local_density_check(gas, [10.0, 10.0, 10.0]).bimodal
    False
    """
    counts, v_cell, n_cells = cell_counts(configurations, box)
    if counts.size < MIN_CELL_COUNTS:
        return LocalDensityCheck(None, n_counts=int(counts.size))
    m = float(np.mean(counts))
    ratio = float(np.var(counts, ddof=1)) / max(m * (1.0 - 1.0 / n_cells), 1e-300)
    spread = {"variance_ratio": ratio, "broad": ratio > BROAD_RATIO}
    c = np.sort(counts).astype(float)
    n = c.size
    cum = np.cumsum(c)
    best = None
    for k in np.flatnonzero(np.diff(c) > 0) + 1:  # split between c[k-1] and c[k]
        m_lo, m_hi = cum[k - 1] / k, (cum[-1] - cum[k - 1]) / (n - k)
        between = k * (n - k) * (m_hi - m_lo) ** 2
        if best is None or between > best[0]:
            best = (between, m_lo, m_hi, k / n)
    if best is None:
        return LocalDensityCheck(False, n_counts=n, **spread)
    _, m_lo, m_hi, frac = best
    two = (MIN_PEAK_MASS <= frac <= 1.0 - MIN_PEAK_MASS and m_lo < DILUTE_RATIO * m_hi
           and m_hi - m_lo > 3.0 * math.sqrt(max(float(np.mean(c)), 1.0)))
    if not two:
        return LocalDensityCheck(False, n_counts=n, **spread)
    return LocalDensityCheck(True, m_lo / v_cell, m_hi / v_cell, frac, n, **spread)
