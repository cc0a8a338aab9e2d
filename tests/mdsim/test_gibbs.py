"""Gibbs-ensemble Monte Carlo: the transfer kernel against a slow NumPy
version, the exact ideal-gas distributions of the transfer and volume moves,
Lennard-Jones coexistence against the Thol 2016 EOS, and the cache."""
import math

import numpy as np
import pytest

from analysis.stats import mean_and_stderr, variance_and_stderr
from mdsim.engine import rng as _rng
from mdsim.engine.gibbs import GibbsSampler
from mdsim.engine.gibbs_kernels import gibbs_transfers
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.errors import ConvergenceError, SettingError, StudyError
from mdsim.pipeline.rundir import RunDir
from mdsim.sampling import coexistence as coex
from mdsim.sampling.coexistence import coexistence_point


# --- slow, obvious NumPy references -------------------------------------------

def lj_energy_of(x_i, others_ni, box, rc):
    """Truncated LJ energy of a particle at x_i with the particles others_ni (minimum image)."""
    d = others_ni - x_i
    d -= box * np.round(d / box)
    r2 = (d * d).sum(axis=1)
    r2 = r2[r2 < rc * rc]
    s6 = 1.0 / r2 ** 3
    return float((4.0 * (s6 * s6 - s6)).sum())


def lj_total_numpy(r_ni, box, rc):
    return 0.5 * sum(lj_energy_of(r_ni[k], np.delete(r_ni, k, axis=0), box, rc)
                     for k in range(len(r_ni)))


def transfers_numpy(r_b, box_b, state, n_attempts, beta, rc, tail_a):
    """Transfer moves written out in NumPy, drawing the same random numbers as the kernel."""
    r_b = [r.copy() for r in r_b]
    for _ in range(n_attempts):
        d = 0 if _rng.uniform(state) < 0.5 else 1
        r = 1 - d
        nd, nr = len(r_b[d]), len(r_b[r])
        if nd == 0:
            continue
        x = np.array([_rng.uniform(state) * box_b[r] for _ in range(3)])
        j = min(int(_rng.uniform(state) * nd), nd - 1)
        u_ins = lj_energy_of(x, r_b[r], box_b[r], rc)
        u_rem = lj_energy_of(r_b[d][j], np.delete(r_b[d], j, axis=0), box_b[d], rc)
        v_r, v_d = box_b[r] ** 3, box_b[d] ** 3
        tail = tail_a * (((nr + 1) ** 2 - nr ** 2) / v_r + ((nd - 1) ** 2 - nd ** 2) / v_d)
        arg = -beta * (u_ins - u_rem + tail) + math.log(nd * v_r / ((nr + 1) * v_d))
        if arg < 0.0 and _rng.uniform(state) >= math.exp(arg):
            continue
        r_b[r] = np.vstack([r_b[r], x])
        last = nd - 1
        r_b[d][j] = r_b[d][last]
        r_b[d] = r_b[d][:last]
    return r_b


def test_transfer_kernel_matches_numpy_version():
    """Same start, same random stream: the kernel and the NumPy version make the same
    moves; the running energies equal an all-pairs recount (common practice, no source)."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.5)
    g = GibbsSampler(pairs, 1.2, [80, 30], [0.55, 0.1], seed=11)
    g.equilibrate(5)
    start = [g.r_bni[b, :g.n_b[b]].copy() for b in range(2)]
    state0 = g.state.copy()
    acc = gibbs_transfers(g.r_bni, g.species_n, g.params_ab, g.form, g.table, g.box_bi,
                          g.ncell_bi, g.head_bc, g.next_bn, g.cell_bn, g.n_b, g.u_b, g.state,
                          400, 1.0 / 1.2, float(g.tail_a))
    assert acc > 5     # enough accepted transfers to test the bookkeeping
    ref = transfers_numpy(start, g.box_b, state0, 400, 1.0 / 1.2, 2.5, float(g.tail_a))
    for b in range(2):
        assert g.n_b[b] == len(ref[b])
        np.testing.assert_allclose(g.r_bni[b, :g.n_b[b]], ref[b], rtol=0, atol=1e-12)
        assert g.u_b[b] == pytest.approx(lj_total_numpy(ref[b], g.box_b[b], 2.5), abs=1e-8)
    np.testing.assert_array_equal(g.state, state0)   # both consumed the same draws


def _near_ideal(counts, densities, seed):
    """A gas with epsilon = 1e-6 at T* = 1 and rho* = 0.01: ideal to about 1e-6."""
    pairs = PairMatrix([LennardJones(1e-6, 1.0)], 2.5)
    return GibbsSampler(pairs, 1.0, counts, densities, seed=seed)


def test_ideal_gas_transfers_give_the_binomial_distribution():
    """Fixed volumes V1 = V/4: n_1 is binomial(N, 1/4), mean N/4, variance 3N/16
    (ideal-gas statistics, common practice, no source).  Tolerance: 4 standard errors."""
    g = _near_ideal([10, 30], [0.01, 0.01], seed=5)
    g.volume_moves_per_cycle = 0
    g.transfers_per_cycle = 80
    out = g.run(1500, 1)
    n1_t = out["particles"][:, 0]
    m = mean_and_stderr(n1_t, discard_equilibration=False)
    v = variance_and_stderr(n1_t, discard_equilibration=False)
    assert abs(m.mean - 10.0) < 4 * m.stderr
    assert abs(v.value - 7.5) < 4 * v.stderr
    assert g.volume_moves_refused == 0


def test_ideal_gas_volume_moves_give_the_beta_distribution():
    """Fixed n_1 = 10, n_2 = 30: V_1/V is Beta(n_1 + 1, n_2 + 1) (the ideal-gas weight
    V_1^n1 V_2^n2 in ln V coordinates; Frenkel and Smit, Understanding Molecular
    Simulation, 2nd ed., section 8.3).  Mean 11/42, variance 11*31/(42^2*43).
    Tolerance: 4 standard errors."""
    g = _near_ideal([10, 30], [0.01, 0.01], seed=6)
    g.transfers_per_cycle = 0
    g.volume_step = 0.8
    g.volume_moves_per_cycle = 2
    out = g.run(2000, 1)
    x_t = out["volume"][:, 0] / out["volume"].sum(axis=1)
    m = mean_and_stderr(x_t, discard_equilibration=False)
    v = variance_and_stderr(x_t, discard_equilibration=False)
    assert abs(m.mean - 11 / 42) < 4 * m.stderr
    assert abs(v.value - 11 * 31 / (42 ** 2 * 43)) < 4 * v.stderr
    assert np.all(out["particles"] == [10, 30])


@pytest.fixture(scope="module")
def tiny_point_args():
    return dict(n_particles=100, equilibration_cycles=300, production_cycles=600,
                sample_interval=3, seed=1)


def test_same_seed_same_numbers_and_the_cache_is_read(tmp_path, tiny_point_args, monkeypatch):
    """A second call with the same potential and settings reads the cached point (no
    sampler is made); a fresh run with the same seed gives the same numbers."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.0)
    cache = RunDir(tmp_path).coexistence_dir
    first = coexistence_point(pairs, 1.0, cache_dir=cache, **tiny_point_args)
    again = coexistence_point(pairs, 1.0, **tiny_point_args)
    assert again == first
    files = list(cache.rglob("*.json"))
    assert len(files) == 1

    def refuse(*a, **k):
        raise AssertionError("the cached point was recomputed")
    monkeypatch.setattr(coex, "GibbsSampler", refuse)
    assert coexistence_point(pairs, 1.0, cache_dir=cache, **tiny_point_args) == first
    # other epsilon and sigma, same shape: the same reduced potential, the same cache entry
    scaled = PairMatrix([LennardJones(119.8, 3.405)], 2.0).scaled(119.8, 3.405)
    assert coexistence_point(scaled, 1.0, cache_dir=cache, **tiny_point_args) == first


def test_progress_in_blocks_gives_the_numbers_of_one_run(monkeypatch):
    """The run reports after every block of PROGRESS_BLOCK_CYCLES cycles; blocks of 500
    (one report for the 200-cycle equilibration, one for the 150-cycle production here)
    and of 30 give the same point (the random stream runs on; the tuning groups of ten
    cycles are not cut)."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.0)
    args = dict(n_particles=80, equilibration_cycles=200, production_cycles=150,
                sample_interval=3, seed=2)
    calls = []
    first = coexistence_point(pairs, 1.0, progress=lambda *a: calls.append(a), **args)
    assert [c[:2] for c in calls] == [(200, 350), (350, 350)]
    lo, hi = calls[-1][2]
    assert lo < 0.2 < hi
    monkeypatch.setattr(coex, "PROGRESS_BLOCK_CYCLES", 30)
    calls.clear()
    assert coexistence_point(pairs, 1.0, progress=lambda *a: calls.append(a), **args) == first
    assert len(calls) == 7 + 5 and calls[-1][:2] == (350, 350)


def test_above_the_critical_temperature_there_is_no_coexistence(tiny_point_args):
    """T* = 2 is far above the LJ critical temperature (about 1.3; Thol et al. 2016):
    the boxes do not stay two phases, and the function says so instead of a number."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.0)
    with pytest.raises(StudyError, match="critical temperature"):
        coexistence_point(pairs, 2.0, **tiny_point_args)


def test_bad_settings_are_refused():
    lj = LennardJones(1.0, 1.0)
    with pytest.raises(SettingError, match="n_particles"):
        coexistence_point(PairMatrix([lj], 3.0), 0.9, n_particles=150)
    with pytest.raises(StudyError, match="one species"):
        GibbsSampler(PairMatrix([lj, lj], 2.5), 1.0, [100, 20], [0.7, 0.02], seed=1)
    with pytest.raises(SettingError, match="production_cycles"):
        coexistence_point(PairMatrix([lj], 2.0), 0.9, production_cycles=100, sample_interval=5)


# --- Lennard-Jones coexistence against the Thol 2016 EOS -------------------------

def thol_vle(T):
    """(rho_vap, rho_liq, p_sat) and the model of the Thol et al. 2016 LJ EOS (teqp, test-only)."""
    teqp = pytest.importorskip("teqp")
    model = teqp.make_model({"kind": "LJ126_TholJPCRD2016", "model": {}})
    rho_l, rho_v = model.pure_VLE_T(T, 0.64, 0.055, 20)   # guesses near T* = 1.1
    return rho_v, rho_l, model


@pytest.mark.slow
def test_lennard_jones_coexistence_at_1_1_against_thol_2016():
    """LJ at T* = 1.1, rc = 2.5 sigma with the analytic tail per box, N = 200.

    Reference: the Thol et al. (J. Phys. Chem. Ref. Data 45, 023101, 2016) EOS of the
    full potential through teqp: rho_vap = 0.0548, rho_liq = 0.642, p_sat = 0.0459.
    Tolerances: 3 standard errors plus an allowance for the model (truncation at
    2.5 sigma with g(r) = 1 assumed beyond it) and for N = 200 in two boxes: 0.02 in
    rho_liq and 15 % in rho_vap and p_sat (the tail-corrected truncated potential
    coexists close to the full one: Smit, J. Chem. Phys. 96, 8639, 1992, from memory;
    the size of the allowance is our estimate, not a published figure).  Exact for
    any model: the two boxes have one pressure, and each box lies on the model's own
    equation of state, checked against Thol at the simulated densities with 3 standard
    errors plus 3 % (p) and 0.05 epsilon (u) for the truncation."""
    T = 1.1
    rho_v, rho_l, model = thol_vle(T)
    z = np.array([1.0])
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.5)
    pt = coexistence_point(pairs, T, n_particles=200, equilibration_cycles=1000,
                           production_cycles=3000, sample_interval=5, seed=1)
    assert abs(pt.rho_liq - rho_l) < 3 * pt.rho_liq_err + 0.02
    assert abs(pt.rho_vap / rho_v - 1) < 3 * pt.rho_vap_err / rho_v + 0.15
    p_thol = rho_v * T * (1 + model.get_Ar01(T, rho_v, z))
    assert abs(pt.p_sat / p_thol - 1) < 3 * pt.p_sat_err / p_thol + 0.15
    # one pressure in both boxes (mechanical equilibrium)
    assert abs(pt.p_liq - pt.p_sat) < 3 * math.hypot(pt.p_liq_err, pt.p_sat_err)
    # each phase on the equation of state at its own density
    p_vap_eos = pt.rho_vap * T * (1 + model.get_Ar01(T, pt.rho_vap, z))
    p_vap_err = math.hypot(pt.p_sat_err, T * pt.rho_vap_err)   # dp/drho ~ kT in a dilute vapour
    assert abs(pt.p_sat / p_vap_eos - 1) < 3 * p_vap_err / p_vap_eos + 0.03
    for u, u_err, rho in ((pt.u_liq, pt.u_liq_err, pt.rho_liq),
                          (pt.u_vap, pt.u_vap_err, pt.rho_vap)):
        assert abs(u - T * model.get_Ar10(T, rho, z)) < 3 * u_err + 0.05
    assert pt.cutoff_red == 2.5 and pt.tail == coex.TAIL_TREATMENT


# --- the standard errors of a Gibbs run whose vapour has a slow mode -------------------

class _SyntheticGibbs:
    """A stand-in for GibbsSampler whose run returns invented series of known means.

    The vapour box holds 100 particles plus a slow stationary AR(1) fluctuation
    (phi = 0.98, standard deviation 8 particles: g = 99 samples, as the vapour
    density of a 300-particle run at T* = 0.9 shows, g = 107 measured) in a fixed
    volume; its energy per particle is -10 rho_vap plus fast noise.  The liquid
    box: density 0.75 plus fast noise.  Every series is stationary from the start,
    as a production after equilibration is: the true means are known exactly.
    """

    N_SAMPLES = 1200

    def __init__(self, pairs, T, n_b, rho_b, seed):
        from scipy.signal import lfilter
        rng = np.random.default_rng(seed)
        n = self.N_SAMPLES

        def ar1(phi, sd, burn=3000):
            e = rng.normal(scale=sd * math.sqrt(1.0 - phi * phi), size=n + burn)
            return lfilter([1.0], [1.0, -phi], e)[burn:]
        n_vap = 100.0 + ar1(0.98, 8.0)
        v_vap = 100.0 / 0.015
        rho_liq = 0.75 + ar1(0.5, 0.01)
        self.out = {"particles": np.column_stack([300.0 - n_vap, n_vap]),
                    "volume": np.column_stack([(300.0 - n_vap) / rho_liq, np.full(n, v_vap)]),
                    "u_full": np.column_stack([-5.3 + ar1(0.5, 0.05),
                                               -10.0 * n_vap / v_vap + ar1(0.3, 0.02)]),
                    "pressure": np.column_stack([ar1(0.5, 0.1), 0.012 + ar1(0.9, 0.0005)])}
        self.n_particles, self.rc, self.seed = 300, 3.0, seed
        self.n_b, self.box_b = np.array([200, 100]), np.array([6.0, 19.0])
        self.counters, self.volume_moves_refused = {"volume_moves": 0}, 0  # no volume moves

    def equilibrate(self, n_cycles):
        pass

    def run(self, n_samples, interval):
        part = {k: v[:n_samples] for k, v in self.out.items()}
        self.out = {k: v[n_samples:] for k, v in self.out.items()}
        return part

    def settings(self):
        return {}


def test_errors_of_a_slow_vapour_cover_the_scatter_of_independent_runs(monkeypatch):
    """60 invented runs (seeds 0-59) with a slow vapour mode: the reported errors of rho_vap
    and u_vap match the scatter of the means about the known truth.  For errors that are
    right, |z| = |mean - truth| / error has the median 0.674 (of a normal variable); the
    median of 60 scatters by 1 / (2 x 0.636 x sqrt(60)) = 0.10, and a series of about 12
    slow correlation times cannot show all of its slow mode (production_mean alone: median
    0.79 for rho_vap on 100 such series, measured): 0.45 to 0.95.  Measured on 100 such
    series: the earlier rule (the start cut where equilibration detection put it) 1.11
    (rho_vap) and 1.74 (u_vap), 3 % of the runs refused as drifting; u_vap's own error
    without the density's slow part (analysis.covariate_error) 0.98; now 0.79 and 0.90."""
    monkeypatch.setattr(coex, "GibbsSampler", _SyntheticGibbs)
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    z_rho, z_u = [], []
    for seed in range(60):
        pt = coexistence_point(pairs, 0.9, n_particles=300, equilibration_cycles=0,
                               production_cycles=5 * _SyntheticGibbs.N_SAMPLES, sample_interval=5,
                               seed=seed)
        z_rho.append((pt.rho_vap - 0.015) / pt.rho_vap_err)
        z_u.append((pt.u_vap + 0.15) / pt.u_vap_err)
    for z in (z_rho, z_u):
        assert 0.45 < float(np.median(np.abs(z))) < 0.95, np.median(np.abs(z))


def test_a_liquid_box_held_at_twice_the_cutoff_is_refused_and_the_default_start_avoids_it():
    """A vapour started at a tenth of its coexisting density (T* 0.8, rc 2.5: rho_v about 0.012,
    measured here) draws the liquid down until its box sits at 2 rc, where a quarter of the
    volume moves are refused (measured 144 of 600) and the liquid density is held: the run
    is refused.  The default start (vapour about three times its guess) refuses none."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.5)
    run = dict(n_particles=200, equilibration_cycles=300, production_cycles=600,
               sample_interval=5, seed=1)
    with pytest.raises(ConvergenceError, match="twice the cut-off"):
        coexistence_point(pairs, 0.8, start_densities=(0.0015, 0.80), **run)
    pt = coexistence_point(pairs, 0.8, **run)
    assert pt.moves["volume_moves_refused"] == 0
