"""The standard error of a chain's production mean (mdsim.pipeline.chain.production_mean).

Checked on autoregressive series whose error is known in closed form: for an
AR(1) series x_t = phi x_(t-1) + e_t of stationary variance s^2 the variance of
the mean of n samples is s^2 (1 + phi) / ((1 - phi) n) for n much longer than
the correlation time (M. B. Priestley, Spectral Analysis and Time Series,
Academic Press 1981, section 5.3; the statistical inefficiency g = (1 + phi) /
(1 - phi)), and the variances of independent series add.
"""
import types

import numpy as np
from scipy.signal import lfilter

from mdsim.pipeline.chain import MIN_CHAIN_SAMPLES, Chain, production_mean, run_to


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


class _SeriesChain(Chain):
    """A chain whose stages are AR(1) series (no engine): what run_to and the sizing see."""

    def __init__(self, rng, phi, pilot_se, pilot_units=200):
        super().__init__(None, "test", 0, None, "mc-nvt")
        self.rng, self.phi = rng, phi
        self.pilot = types.SimpleNamespace(samples={})
        self.pilot_se, self.pilot_units, self.interval, self.pilot_settled = (
            pilot_se, pilot_units, 1, True)

    def resume_existing(self):
        return self

    def extend(self, n_samples, mandatory=False):
        x = _ar1(self.rng, self.phi, 1.0, int(max(200, n_samples)))
        self.results.append(types.SimpleNamespace(samples={"u_full": x}))
        return True


def test_a_chain_sized_from_a_longer_run_reaches_its_target_in_one_stage():
    # AR(1) with phi = 0.5 (g = 3, variance 1): the error per sample of a long run is
    # sqrt(3) (Priestley 1981, as above).  A pilot that puts it 25 % low (as a 200-sample Monte
    # Carlo pilot did at 22 bar argon) sizes the first stage for 0.64 of the variance needed, so
    # it falls short and is extended; sized from a 20 000-sample run of the same series, the
    # first stage reaches the target, which accept_se = target / 0.95 lets stand.  The long
    # run's error is the larger of the inefficiency's (a few % off) and the 10-block floor's,
    # whose variance is known to sqrt(2 / 9) = 47 % (chi-square of 9 degrees of freedom): the
    # stage is between 0.9 and 1 + 2 x 0.47 times the 7500 samples the exact formula asks for.
    rng = np.random.default_rng(5)
    target = 0.02
    exact_n = 3.0 / target ** 2  # 7500 samples
    short = _SeriesChain(rng, 0.5, pilot_se=0.75 * np.sqrt(3.0 / 200))
    run_to(short, target)
    assert len(short.results) >= 2 and short.results[0].samples["u_full"].size < 0.8 * exact_n
    long_run = _SeriesChain(rng, 0.5, pilot_se=np.nan)
    long_run.extend(20000)
    sized = _SeriesChain(rng, 0.5, pilot_se=0.75 * np.sqrt(3.0 / 200)).size_from(long_run)
    assert 0.9 < sized.samples_for(target) / exact_n < 1.94, sized.samples_for(target)
    run_to(sized, target, accept_se=target / 0.95)
    assert len(sized.results) == 1


def test_a_shorter_or_other_sampler_run_does_not_size_a_chain():
    rng = np.random.default_rng(6)
    own = _SeriesChain(rng, 0.5, pilot_se=0.1, pilot_units=600)
    other = _SeriesChain(rng, 0.5, pilot_se=0.5, pilot_units=200)  # less run than own pilot
    assert own.size_from(other).pilot_se == 0.1
    md = _SeriesChain(rng, 0.5, pilot_se=0.5, pilot_units=6000)
    md.is_md = True  # another sampler's error per step says nothing of Monte Carlo's per sweep
    assert own.size_from(md).pilot_se == 0.1
