"""Monte Carlo samplers: bookkeeping, published LJ data, the microcanonical
weight, settings checks and checkpoint identity."""
import contextlib
import io
import math

import numpy as np
import pytest
from scipy.integrate import quad

from mdsim.errors import StudyError
from mdsim.engine.mc_cells import cell_grid
from mdsim.engine.microcanonical_temperature import nve_temperature
from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.potentials import Exp6, LennardJones, Mie, PairMatrix, Tabulated
from mdsim.engine.system import System


# --- helpers -----------------------------------------------------------------

def statistical_inefficiency(x):
    """pymbar's g (Chodera 2016), imported quietly (pymbar prints a banner)."""
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        from pymbar import timeseries
        return float(timeseries.statistical_inefficiency(np.asarray(x, dtype=float)))


def mean_and_error(x):
    x = np.asarray(x, dtype=float)
    g = statistical_inefficiency(x)
    return float(x.mean()), float(x.std(ddof=1) * math.sqrt(g / x.size))


def min_image_r2(r, box):
    d = r[:, None, :] - r[None, :, :]
    d -= box * np.round(d / box)
    iu = np.triu_indices(len(r), 1)
    return (d ** 2).sum(-1)[iu], iu


def lj_energy_virial_numpy(r, box, rc, eps=1.0, sig=1.0):
    """Slow, obvious all-pairs LJ sum (truncated, not shifted)."""
    r2, _ = min_image_r2(r, box)
    r2 = r2[r2 < rc * rc]
    s6 = (sig * sig / r2) ** 3
    u = 4 * eps * (s6 * s6 - s6)
    w = 24 * eps * (2 * s6 * s6 - s6)  # -r du/dr
    return u.sum(), w.sum()


def pairs_energy_numpy(system, r):
    """All-pairs truncated energy of any potential via its NumPy ``energy``."""
    r2, (ii, jj) = min_image_r2(r, system.box_i)
    total = 0.0
    sp = system.species_n
    for a in range(system.pairs.n_species):
        for b in range(system.pairs.n_species):
            sel = (sp[ii] == a) & (sp[jj] == b)
            rc = system.pairs.params_ab[a, b, 8]  # RC column
            rr = np.sqrt(r2[sel])
            rr = rr[rr < rc]
            if rr.size:
                total += system.pairs.pots[a][b].energy(rr).sum()
    return total


def lj_system(n, density, rc, seed=1, lattice=None):
    s = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], rc), [n], density)
    if lattice or (lattice is None and density > 0.3):
        return s.place_on_lattice(seed)
    return s.place_at_random(seed)


# --- (a) the incremental bookkeeping stays exact -------------------------------

@pytest.mark.parametrize("density,rc,temperature", [(0.8442, 2.5, 0.72), (0.3, 3.0, 2.0),
                                                    (0.0005, 3.0, 2.0)])
def test_running_energy_matches_all_pairs(density, rc, temperature):
    sys_ = lj_system(216, density, rc, seed=4)
    mc = MCSampler(sys_, temperature=temperature, seed=11)
    mc.equilibrate(60)  # 13000 moves, no resynchronisation inside equilibrate
    u_ref, w_ref = lj_energy_virial_numpy(mc.r_ni, sys_.box_i, rc)
    # accumulated round-off of ~1e4 increments of O(1) terms: 1e-9 relative is generous
    assert mc.u_trunc == pytest.approx(u_ref, rel=1e-9, abs=1e-9)
    u_cells, w_cells = mc.energy_and_virial()
    assert u_cells == pytest.approx(u_ref, rel=1e-12, abs=1e-12)  # only summation order differs
    assert w_cells == pytest.approx(w_ref, rel=1e-12, abs=1e-12)
    assert 0.0 < mc.acceptance < 1.0


def test_cell_lists_stay_consistent_and_sorted():
    sys_ = lj_system(300, 0.5, 2.5, seed=2)
    mc = MCSampler(sys_, temperature=1.5, seed=5, max_displacement=0.5)
    mc.equilibrate(20)
    seen = []
    for c in range(mc.head_c.size):
        j, members = mc.head_c[c], []
        while j >= 0:
            members.append(int(j))
            assert mc.cell_n[j] == c
            j = mc.next_n[j]
        assert members == sorted(members)
        seen += members
    assert sorted(seen) == list(range(300))
    # every particle sits in the cell its position says
    nc = mc.ncell_i[:3]
    idx = np.minimum((mc.r_ni / sys_.box_i * nc).astype(int), nc - 1)
    np.testing.assert_array_equal((idx[:, 0] * nc[1] + idx[:, 1]) * nc[2] + idx[:, 2], mc.cell_n)


def test_mixture_exp6_orthorhombic_box_bookkeeping():
    # two exp-6 species (hard-core guard); along z fewer cells than the search
    # stencil, so every cell there is searched once (no pair counted twice)
    pairs = PairMatrix([Exp6(1.0, 1.12, 14.0), Exp6(0.6, 1.3, 13.0)], 2.2)
    sys_ = System(pairs, [60, 40], [9.0, 8.0, 5.2]).place_on_lattice(3)
    mc = MCSampler(sys_, temperature=1.2, seed=8, max_displacement=0.6)
    assert mc.ncell_i[2] < 2 * mc.ncell_i[3] + 1 <= mc.ncell_i[0]
    mc.equilibrate(100)
    assert np.isfinite(mc.u_trunc)
    assert mc.u_trunc == pytest.approx(pairs_energy_numpy(sys_, mc.r_ni), rel=1e-9, abs=1e-9)


def lj_table(r_first=0.8):
    r = np.linspace(r_first, 3.2, 300)
    return Tabulated(r, LennardJones(1.0, 1.0).energy(r), source="LJ sampled")


@pytest.mark.parametrize("pot", [Mie(1.0, 1.0, 14.0, 7.0), lj_table()], ids=["mie", "table"])
def test_other_forms_bookkeeping(pot):
    pairs = PairMatrix([pot], 2.5)
    sys_ = System.cubic(pairs, [125], 0.7).place_on_lattice(6)
    mc = MCSampler(sys_, temperature=1.0, seed=9, max_displacement=0.4)
    mc.equilibrate(80)
    assert mc.u_trunc == pytest.approx(pairs_energy_numpy(sys_, mc.r_ni), rel=1e-9, abs=1e-9)


def test_moves_into_a_hard_core_are_rejected():
    # a table starting at r = 0.97 (u = 0.8 there) is a hard wall: u = +inf below it.
    # At T* = 3, rho* = 0.7 plain LJ pairs come closer than 0.97 all the time
    # (common practice, no source), so moves into the wall are tried often.
    r_wall = 0.97
    pairs = PairMatrix([lj_table(r_wall)], 2.5)
    sys_ = System.cubic(pairs, [125], 0.7).place_on_lattice(6)
    mc = MCSampler(sys_, temperature=3.0, seed=9)
    mc.equilibrate(20)
    out = mc.run(20, 2)
    r2, _ = min_image_r2(mc.r_ni, sys_.box_i)
    assert r2.min() >= r_wall ** 2
    assert np.all(np.isfinite(out["u_trunc"]))
    free = MCSampler(System.cubic(PairMatrix([LennardJones(1.0, 1.0)], 2.5), [125], 0.7)
                     .place_on_lattice(6), temperature=3.0, seed=9)
    free.equilibrate(20)
    free.run(20, 2)
    r2_free, _ = min_image_r2(free.r_ni, sys_.box_i)
    assert r2_free.min() < r_wall ** 2  # the wall was really in the way


def test_cell_grid_is_bounded_in_a_dilute_gas():
    box = np.full(3, (100000 / 0.0005) ** (1 / 3))
    ncell = cell_grid(box, 3.0, 100000)
    assert np.prod(ncell[:3]) <= 4 * 100000
    assert np.all(box / ncell[:3] >= 3.0 / ncell[3])  # cells never shorter than rc / reach


# --- (b) LJ fluid against published simulation data and the reference EOS -------

# NIST Standard Reference Simulation Website, LJ pure fluid, NVT MC, N = 500,
# rc = 3 sigma with analytic long-range corrections, T* = 0.85 (docs/references.md section 4).
# Same N and cut-off as the reference, so no finite-size difference is expected.
NIST_GAS = [(0.005, -5.1901e-2, 4.1003e-3), (0.009, -9.3973e-2, 7.1641e-3)]
NIST_SIGMA_U_GAS = 2e-4      # "a few 1e-4" (docs/references.md section 4); lower end taken


@pytest.mark.parametrize("density,u_ref,p_ref", NIST_GAS)
def test_lj_gas_against_nist(density, u_ref, p_ref):
    mc = MCSampler(lj_system(500, density, 3.0, seed=1), temperature=0.85, seed=1)
    mc.equilibrate(500)
    out = mc.run(4000, 1)
    u, su = mean_and_error(out["u_full"])
    p, sp = mean_and_error(out["pressure"])
    # 4 combined standard errors: fixed seed, false-alarm chance 6e-5 for a correct sampler
    assert abs(u - u_ref) < 4 * math.hypot(su, NIST_SIGMA_U_GAS)
    # NIST's gas-pressure uncertainty is not in docs/references.md section 4: 0.1 % of p allowed for it
    assert abs(p - p_ref) < 4 * math.hypot(sp, 1e-3 * p_ref)
    assert np.all(out["pressure"] - out["pressure_conf"] == pytest.approx(density * 0.85))


@pytest.mark.slow
def test_lj_liquid_against_nist():
    # NIST SRS (as above): rho* = 0.82, U/N = -5.7947, p* = 0.55355; reported
    # standard deviations up to 2.4e-3 (U) and 1.4e-2 (p) for the liquid.
    mc = MCSampler(lj_system(500, 0.82, 3.0, seed=2), temperature=0.85, seed=2)
    mc.equilibrate(300)
    out = mc.run(500, 2)
    u, su = mean_and_error(out["u_full"])
    p, sp = mean_and_error(out["pressure"])
    assert abs(u - (-5.7947)) < 4 * math.hypot(su, 2.4e-3)   # 4 combined standard errors
    assert abs(p - 0.55355) < 4 * math.hypot(sp, 1.4e-2)
    assert 0.35 < out["acceptance"].mean() < 0.55  # tuned step kept frozen in production


@pytest.mark.slow
def test_lj_supercritical_against_teqp():
    teqp = pytest.importorskip("teqp")
    temperature, density = 2.0, 0.3
    model = teqp.build_LJ126_TholJPCRD2016()   # Thol et al., JPCRD 45, 023101 (2016)
    z = np.array([1.0])
    u_ref = temperature * model.get_Ar10(temperature, density, z)
    p_ref = density * temperature * (1.0 + model.get_Ar01(temperature, density, z))
    # N = 400, rc = 3 with tails: at this supercritical state finite-size effects are
    # far below the error bars (common practice, no source)
    mc = MCSampler(lj_system(400, density, 3.0, seed=3, lattice=True), temperature=temperature,
                   seed=3)
    mc.equilibrate(300)
    out = mc.run(1000, 2)
    u, su = mean_and_error(out["u_full"])
    p, sp = mean_and_error(out["pressure"])
    # EOS uncertainty in this region taken as 0.5 % in U and p (Thol et al. 2016, from
    # memory; docs/references.md section 5.1 gives no figure); 4 combined standard errors as above
    assert abs(u - u_ref) < 4 * math.hypot(su, 5e-3 * abs(u_ref))
    assert abs(p - p_ref) < 4 * math.hypot(sp, 5e-3 * p_ref)


# --- (c) microcanonical Monte Carlo ------------------------------------------------

def test_nve_two_particles_distance_distribution_is_exact():
    # Two LJ particles in a cube of edge 6, rc = 2.5, f = 5 per particle (F = 10):
    # the pair distance r < L/2 has density ∝ r^2 (E' - u(r))^(F/2-1) for u(r) < E',
    # E' = E_total - N u_tail (exact: the sphere of radius L/2 fits in the cube).
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.5)
    sys_ = System(pairs, [2], [6.0, 6.0, 6.0], dof_per_particle=5)
    sys_.set_positions([[1.0, 1.0, 1.0], [3.0, 1.0, 1.0]])
    u_tail, _ = sys_.tail()
    e_avail = 0.5
    mc = MCSampler(sys_, energy=0.5 * e_avail + u_tail, seed=21)
    mc.equilibrate(2000)
    lj = LennardJones(1.0, 1.0)
    n_samples = 40000
    r_t = np.empty(n_samples)
    for t in range(n_samples):
        out = mc.run(1, 1)
        assert out["kinetic"][0] > 0.0
        d = mc.r_ni[0] - mc.r_ni[1]
        d -= 6.0 * np.round(d / 6.0)
        r_t[t] = math.sqrt(d @ d)

    def density(r):
        u = float(lj.energy(r)) if r < 2.5 else 0.0
        return r * r * (e_avail - u) ** 4 if u < e_avail else 0.0

    # u(r_lo) = e_avail (LJ solved for r); no weight below it
    r_lo = ((1 + math.sqrt(1 + e_avail)) / 2) ** (-1 / 6)
    edges = [r_lo, 1.0, 1.05, 1.1, 1.2, 1.35, 1.6, 2.0, 2.5, 3.0]
    norm = sum(quad(density, a, b, limit=200)[0] for a, b in zip(edges[:-1], edges[1:]))
    inside = r_t < 3.0
    assert r_t.min() > r_lo
    for a, b in zip(edges[:-1], edges[1:]):
        exact = quad(density, a, b, limit=200)[0] / norm   # quadrature error ~1e-10
        ind = ((r_t >= a) & (r_t < b))[inside].astype(float)
        m, s = mean_and_error(ind)
        assert abs(m - exact) < 4 * s, (a, b, m, exact, s)  # 4 standard errors, fixed seed


@pytest.mark.slow
@pytest.mark.parametrize("dof", [3, 5])
def test_nve_temperature_matches_nvt(dof):
    # NVT at T gives <u_full>; the microcanonical run at E = <u_full> + (f/2 - 1/N) T
    # must recover T.  The -1/N makes the ideal-gas part exact (the most probable
    # kinetic energy of F dof at T is (F/2 - 1) kT, which is what Ray's estimator
    # returns); the remaining difference is O(c_v_res / N^2), far below the error bars.
    n, density, temperature = 108, 0.3, 2.0
    sys_ = lj_system(n, density, 3.0, seed=5, lattice=True)
    nvt = MCSampler(sys_, temperature=temperature, seed=5)
    nvt.equilibrate(300)
    out = nvt.run(3000, 1)
    u_mean, su = mean_and_error(out["u_full"])
    sys_.r_ni = nvt.get_state()["positions"]
    energy = u_mean + (0.5 * dof - 1.0 / n) * temperature
    nve = MCSampler(sys_, energy=energy, dof_per_particle=dof, seed=6)
    nve.equilibrate(300)
    res = nve.run(3000, 1)
    t_est = nve_temperature(res["kinetic"], n, dof)
    # error of T from <1/K> (delta method) and from the error of E: dT/dE ~ 1/c_v
    _, s_inv = mean_and_error(1.0 / res["kinetic"])
    s_t = t_est ** 2 * (0.5 * dof - 1.0 / n) * s_inv
    s_from_e = su / (0.5 * dof)  # c_v >= f/2; an overestimate of this part is safe
    assert abs(t_est - temperature) < 4 * math.hypot(s_t, s_from_e)  # 4 combined errors
    assert math.isnan(res["pressure"][0])
    np.testing.assert_allclose(res["kinetic"] + res["u_full"], energy, rtol=0, atol=1e-12)


def test_nve_temperature_closed_form():
    # constant kinetic energy k per particle: kT = N k / (f N / 2 - 1) (Ray 1991 estimator)
    assert nve_temperature(np.full(10, 1.5), 100, 3) == pytest.approx(150.0 / 149.0, rel=1e-14)
    with pytest.raises(StudyError, match="kinetic_t"):
        nve_temperature([1.0, -1.0], 100, 3)


# --- (d) bad settings ----------------------------------------------------------------

@pytest.fixture
def small_lj():
    return lj_system(64, 0.5, 2.5, seed=1)


@pytest.mark.parametrize("kwargs,match", [
    ({"temperature": -1.0}, "temperature"),
    ({"temperature": float("nan")}, "temperature"),
    ({"temperature": "warm"}, "temperature"),
    ({}, "exactly one"),
    ({"temperature": 1.0, "energy": 1.0}, "exactly one"),
    ({"temperature": 1.0, "method": "mc-npt"}, "method"),
    ({"energy": 1.0, "method": "mc-nvt"}, "temperature"),
    ({"temperature": 1.0, "max_displacement": 100.0}, "max_displacement"),
    ({"temperature": 1.0, "max_displacement": 0.0}, "max_displacement"),
    ({"temperature": 1.0, "target_acceptance": 0.95}, "target_acceptance"),
    ({"energy": 1.0, "dof_per_particle": 0}, "dof_per_particle"),
    ({"energy": 1.0, "dof_per_particle": 2.5}, "dof_per_particle"),
    ({"energy": -50.0}, "energy"),
])
def test_bad_settings_raise(small_lj, kwargs, match):
    with pytest.raises(StudyError, match=match):
        MCSampler(small_lj, seed=1, **kwargs)


def test_bad_run_arguments_and_state(small_lj):
    mc = MCSampler(small_lj, temperature=1.0, seed=1)
    with pytest.raises(StudyError, match="samples"):
        mc.run(0, 1)
    with pytest.raises(StudyError, match="sample_interval"):
        mc.run(5, 1.5)
    with pytest.raises(StudyError, match="equilibration_sweeps"):
        mc.equilibrate(-3)
    nve = MCSampler(small_lj, energy=2.0, seed=1)
    with pytest.raises(StudyError, match="method"):
        nve.set_state(mc.get_state())
    with pytest.raises(StudyError, match="missing"):
        mc.set_state({"positions": mc.r_ni})


def test_no_positions_raises():
    sys_ = System.cubic(PairMatrix([LennardJones(1.0, 1.0)], 2.5), [64], 0.5)
    with pytest.raises(StudyError, match="place_on_lattice"):
        MCSampler(sys_, temperature=1.0, seed=1)


# --- (e) determinism and checkpoint identity --------------------------------------

@pytest.mark.parametrize("method", ["mc-nvt", "mc-nve"])
def test_same_seed_same_numbers_and_resume_identity(method):
    def make():
        sys_ = lj_system(100, 0.6, 2.5, seed=7)
        kw = {"temperature": 1.3} if method == "mc-nvt" else {"energy": -1.0}
        mc = MCSampler(sys_, seed=[3, 14], **kw)
        mc.equilibrate(20)
        return mc

    whole = make().run(30, 3)
    again = make().run(30, 3)
    for key in whole:
        np.testing.assert_array_equal(whole[key], again[key])

    first = make()
    part_a = first.run(12, 3)
    saved = first.get_state()
    second = make()  # a different sampler, then overwritten by the saved state
    second.run(2, 1)
    second.set_state(saved)
    part_b = second.run(18, 3)
    for key in whole:
        np.testing.assert_array_equal(np.concatenate([part_a[key], part_b[key]]), whole[key])
    assert second.get_state()["trial_moves"] == first.n_moves + 18 * 3 * 100
    assert second.settings()["method"] == method


def test_step_size_frozen_in_production(small_lj):
    mc = MCSampler(small_lj, temperature=1.0, seed=2)
    mc.equilibrate(50)
    step = mc.max_displacement
    mc.run(20, 2)
    assert mc.max_displacement == step
    assert mc.get_state()["max_displacement"] == step


def test_dilute_gas_takes_large_steps():
    sys_ = lj_system(200, 0.0005, 3.0, seed=3)
    mc = MCSampler(sys_, temperature=2.0, seed=3)
    mc.equilibrate(100)
    # nearly every move is accepted in so dilute a gas, so the tuner reaches its cap
    assert mc.max_displacement == pytest.approx(0.5 * sys_.box_i.min())


def test_benchmark_quick_runs():
    from mdsim.bench.montecarlo import mc_figures
    figures = mc_figures(quick=True)
    assert set(figures) == {"liquid", "gas"}
    for fig in figures.values():
        assert fig["moves_per_s"] > 0.0 and 0.0 < fig["acceptance"] < 1.0
    # the dilute gas accepts far more moves than the liquid at their tuned steps
    assert figures["gas"]["max_displacement_red"] > figures["liquid"]["max_displacement_red"]
