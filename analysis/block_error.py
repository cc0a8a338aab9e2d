"""Block-averaging errors and the mean of a production series that follows an equilibration.

The standard error of a short correlated series from its statistical
inefficiency alone misses slow modes; :func:`production_mean` takes the
larger of that and the scatter of block means (:func:`block_stderr`).
"""
import math

import numpy as np

from analysis.stats import check_series, mean_and_stderr
from mdsim.errors import StudyError

__all__ = ["ERROR_BLOCKS", "block_stderr", "production_mean"]

ERROR_BLOCKS = 10
"""Blocks of the block-averaging floor of a production mean's standard error."""


def block_stderr(x_t, n_blocks=5):
    """Standard error of the mean of a series from the scatter of its block means.

    Parameters
    ----------
    x_t : array_like, shape=(n_samples,)
        At least ``MIN_SAMPLES`` finite values (the equilibrated part).
    n_blocks : int
        Number of contiguous blocks (at least 2); samples beyond a whole
        number of blocks at the end are left out.

    Returns
    -------
    float
        std(block means, ddof=1) / sqrt(n_blocks).

    Notes
    -----
    Block averaging (Flyvbjerg and Petersen, J. Chem. Phys. 91, 461, 1989):
    blocks much longer than the correlation time have independent means.
    With few long blocks the estimate is itself uncertain (about
    1 / sqrt(2 (n_blocks - 1)) relative) but it does not depend on
    estimating the correlation time, so it catches a slow mode that the
    statistical inefficiency of a short series misses.

    Examples
    --------
    >>> round(block_stderr([0.0] * 10 + [1.0] * 10, n_blocks=2), 6)
    0.5
    """
    x_t = check_series(x_t)
    if int(n_blocks) < 2:
        raise StudyError(f"block_stderr: 'n_blocks' = {n_blocks!r}; need at least 2 blocks")
    n_blocks = int(n_blocks)
    size = x_t.size // n_blocks
    means = x_t[:size * n_blocks].reshape(n_blocks, size).mean(axis=1)
    return float(np.std(means, ddof=1) / math.sqrt(n_blocks))


def production_mean(x_t, settled=True):
    """Mean and standard error of a production series that follows an equilibration.

    For the production stages of a sampling chain
    (:mod:`mdsim.pipeline.chain`) and the production of a Gibbs-ensemble run
    (:mod:`mdsim.sampling.coexistence`): a start cut where the data suggest
    makes the mean of a short series noisier and its error smaller (it
    takes a slow fluctuation for a transient and keeps only what follows).

    Parameters
    ----------
    x_t : ndarray, shape=(n_samples,)
        The concatenated production samples.
    settled : bool
        The series follows an equilibrated start (a chain whose pilot
        settled in its first half, a Gibbs run after its tuned
        equilibration): none is cut off.  Otherwise the transient is
        detected and cut.

    Returns
    -------
    (float, float)
        The mean and its standard error: the larger of sqrt(g var / n)
        (:func:`analysis.stats.mean_and_stderr`) and the block-averaging
        error over ``ERROR_BLOCKS`` blocks (Flyvbjerg and Petersen,
        J. Chem. Phys. 91, 461, 1989) when the series has at least
        ``ERROR_BLOCKS`` x 20 samples.

    Raises
    ------
    ConvergenceError
        When the series still drifts (from :func:`analysis.stats.mean_and_stderr`).

    Examples
    --------
    A series whose second half sits higher than its first: the blocks see
    the slow change that a short-range statistical inefficiency does not.

    >>> x = np.concatenate([np.tile([0.0, 0.2], 200), np.tile([0.1, 0.3], 200)])
    >>> m, se = production_mean(x)
    >>> round(m, 4), round(se, 4)
    (0.15, 0.0167)
    """
    m = mean_and_stderr(x_t, discard_equilibration=not settled)
    used = np.asarray(x_t)[m.t0:]
    se = m.stderr
    if used.size >= 20 * ERROR_BLOCKS:
        se = max(se, block_stderr(used, ERROR_BLOCKS))
    return m.mean, se
