"""The standard error of a chain's production mean (mdsim.pipeline.chain.production_mean).

Checked on autoregressive series whose error is known in closed form: for an
AR(1) series x_t = phi x_(t-1) + e_t of stationary variance s^2 the variance of
the mean of n samples is s^2 (1 + phi) / ((1 - phi) n) for n much longer than
the correlation time (M. B. Priestley, Spectral Analysis and Time Series,
Academic Press 1981, section 5.3; the statistical inefficiency g = (1 + phi) /
(1 - phi)), and the variances of independent series add.
"""
import numpy as np
from scipy.signal import lfilter

from mdsim.pipeline.chain import MIN_CHAIN_SAMPLES, production_mean


def _ar1(rng, phi, var, n, burn=3000):
    """A stationary AR(1) series of n samples (started `burn` samples earlier)."""
    e = rng.normal(scale=np.sqrt(var * (1.0 - phi * phi)), size=n + burn)
    return lfilter([1.0], [1.0, -phi], e)[burn:]


def test_the_error_of_a_correlated_series_agrees_with_the_ar1_formula():
    # A chain's shortest production (MIN_CHAIN_SAMPLES) of a series with g = 9: the means of
    # 100 independent chains scatter as their reported errors say.  The rms of z = mean / se
    # over 100 chains is 1 within about 1 / sqrt(200) = 0.07 when the errors are right;
    # 0.85 to 1.2 allows twice that each way.
    rng = np.random.default_rng(11)
    n, phi = MIN_CHAIN_SAMPLES, 0.8
    z = [m / se for m, se in (production_mean(_ar1(rng, phi, 1.0, n)) for _ in range(100))]
    rms = float(np.sqrt(np.mean(np.square(z))))
    assert 0.85 < rms < 1.2, rms


def test_a_slow_mode_the_short_range_inefficiency_misses_still_shows_in_the_error():
    # A fast mode (phi = 0.5, variance 1, g = 3) plus a slow one of small variance (phi = 0.99,
    # variance 0.05, g = 199) that holds most of the error of the mean: the exact error of
    # 2000 samples is sqrt((3 + 0.05 x 199) / 2000) = 0.080.  The statistical inefficiency of
    # one such series alone reports 0.60 of it on average over these 30 series (measured); the
    # block floor raises that to 0.78.  Over 30 series the average is known to about 5 %; the
    # bound 0.65 keeps the block floor's gain.
    rng = np.random.default_rng(12)
    n = 2000
    exact = np.sqrt((3.0 * 1.0 + 199.0 * 0.05) / n)
    se = [production_mean(_ar1(rng, 0.5, 1.0, n) + _ar1(rng, 0.99, 0.05, n, burn=6000))[1]
          for _ in range(30)]
    assert np.mean(se) > 0.65 * exact, (np.mean(se), exact)
