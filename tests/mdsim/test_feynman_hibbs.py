"""The quadratic Feynman-Hibbs simulation: potential, energy estimator, dilute limit, neon.

Neon-like Lennard-Jones throughout: epsilon/k = 35.6 K, sigma = 2.749 angstrom,
20.18 g/mol (Hirschfelder, Curtiss and Bird, Molecular Theory of Gases and
Liquids, 1954, table I-A; REFERENCES.md lists the same pair), de Boer
parameter 0.59; q = hbar^2 / (24 mu) = Lambda*^2 / (48 pi^2) = 7.4e-4 in
reduced units, 50 K is T* = 1.404.
"""
import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from mdsim.engine import LennardJones, MCSampler, MDSampler, PairMatrix, System
from mdsim.engine.feynman_hibbs import FeynmanHibbs, feynman_hibbs_pairs, laplacian
from mdsim.engine.forms import RC
from mdsim.errors import StudyError
from mdsim.units import N_A

EPS_K, SIGMA_A, MOLAR_MASS = 35.6, 2.749, 20.18e-3


def _q_neon():
    """hbar^2 / (24 mu) of neon-like LJ in reduced units, mu = m / 2 (written out here)."""
    hbar, k_B = 1.054571817e-34, 1.380649e-23  # CODATA 2018
    m = MOLAR_MASS / N_A
    return hbar ** 2 / (12.0 * m) / (EPS_K * k_B * (SIGMA_A * 1e-10) ** 2)


def _lj(r):
    """u, u', u'' + 2u'/r of LJ (epsilon = sigma = 1) in closed form."""
    return (4 * (r ** -12 - r ** -6), 4 * (-12 * r ** -13 + 6 * r ** -7),
            4 * (132 * r ** -14 - 30 * r ** -8))


# -- the potential --------------------------------------------------------------------------

def test_table_matches_the_closed_form_of_lennard_jones():
    q, T = 5e-3, 1.2
    fh = FeynmanHibbs(LennardJones(1.0, 1.0), q, T, r_end=3.2)
    r = np.linspace(0.85, 3.1, 200)
    u, du, lap = _lj(r)
    # d/dr (u'' + 2u'/r) of LJ in closed form
    dlap = 4 * (-14 * 132 * r ** -15 + 8 * 30 * r ** -9)
    # the table is a cubic spline on 6001 knots: 1e-8 in u, 1e-5 in u' where the wall is steep
    assert fh.energy(r) == pytest.approx(u + q / T * lap, abs=1e-8)
    assert fh.dudr(r) == pytest.approx(du + q / T * dlap, abs=1e-5)
    assert float(laplacian(LennardJones(1.0, 1.0), 1.1)) == pytest.approx(_lj(1.1)[2], rel=1e-9)
    # the tail integrals beyond rc against numerical quadrature of the closed form
    rc = 2.5
    i_u = quad(lambda x: (_lj(x)[0] + q / T * _lj(x)[2]) * x * x, rc, np.inf, epsabs=1e-13)[0]
    i_w = quad(lambda x: (_lj(x)[1] + q / T * 4 * (-14 * 132 * x ** -15 + 8 * 30 * x ** -9))
               * x ** 3, rc, np.inf, epsabs=1e-13)[0]
    assert fh.tail_integrals(rc) == pytest.approx((i_u, i_w), rel=1e-9)
    # the reduced-unit copy is the same potential
    k = FeynmanHibbs(LennardJones(35.6, 2.749), q * 35.6 * 2.749 ** 2, T * 35.6, 3.2 * 2.749)
    red = k.scaled(35.6, 2.749)
    assert red.energy(r) == pytest.approx(fh.energy(r), abs=1e-8)


def test_pair_matrix_keeps_the_cut_off_radius():
    lj = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    fh = feynman_hibbs_pairs(lj, 1e-3, 1.5)
    assert float(fh.params_ab[0, 0, RC]) == pytest.approx(3.0, rel=1e-12)
    assert fh.pots[0][0].sigma > 1.0  # the effective wall lies further out (common practice)


def test_next_order_ratio_against_the_closed_form_and_where_the_quadratic_form_fails(tmp_path):
    """(s^2/4) |lap lap u / lap u| at u(r_T) = kT, s^2 = 2 q / kT; for LJ
    lap lap u = 4 (24024 r^-16 - 1680 r^-10) (n(n-1)(n+1)(n+2) for r^-n)."""
    from mdsim.engine.feynman_hibbs import next_order_ratio
    from mdsim.study.quantum_potential import feynman_hibbs_validity
    from mdsim.study.reader import read_study
    for q, T in ((_q_neon(), 50.0 / EPS_K), (0.0143, 20.0 / 10.22)):
        r_t = brentq(lambda r: _lj(r)[0] - T, 0.5, 1.0, xtol=1e-14)
        closed = 0.5 * q / T * 4 * (24024 * r_t ** -16 - 1680 * r_t ** -10) / _lj(r_t)[2]
        assert next_order_ratio(LennardJones(1.0, 1.0), q, T) == pytest.approx(closed, rel=1e-4)
    assert feynman_hibbs_validity(read_study(_write(tmp_path)), 50.0)[1] is None  # neon, 0.06
    # helium as LJ (10.22 K, 2.556 angstrom; Hirschfelder, Curtiss and Bird) at 20 K: 0.89
    helium = tmp_path / "helium.toml"
    helium.write_text(NEON_STUDY.format(routes='["energy"]', sampler="mc").replace(
        "35.6 K", "10.22 K").replace("2.749", "2.556").replace("20.18 g/mol", "4.0026 g/mol")
        .replace("50 K", "20 K").replace("3000 mol", "300 mol"), encoding="utf-8")
    note, warning = feynman_hibbs_validity(read_study(helium), 20.0)
    assert "0.89" in note and "not enough" in warning


# -- the sampler's estimator against a slow NumPy all-pairs reference ------------------------

def _reference_sums(r_ni, box, rc, q, T):
    """Per-particle sums of u, c = q (u'' + 2u'/r) and the virial -r u_FH'(r) over all pairs."""
    n = r_ni.shape[0]
    i, j = np.triu_indices(n, 1)
    d = r_ni[i] - r_ni[j]
    d -= box * np.round(d / box)
    r = np.sqrt((d * d).sum(axis=1))
    r = r[r < rc]
    u, du, lap = _lj(r)
    dlap = 4 * (-14 * 132 * r ** -15 + 8 * 30 * r ** -9)
    return u.sum() / n, q * lap.sum() / n, (-r * (du + q / T * dlap)).sum()


def test_monte_carlo_energy_estimator_against_numpy_all_pairs():
    q, T, rho, n = 5e-3, 1.5, 0.3, 64
    pairs = feynman_hibbs_pairs(PairMatrix([LennardJones(1.0, 1.0)], 2.5), q, T)
    system = System.cubic(pairs, [n], rho).place_on_lattice(seed=2)
    sampler = MCSampler(system, temperature=T, seed=3)
    out = sampler.run(3, 2)
    rc = float(pairs.params_ab[0, 0, RC])
    u_pp, c_pp, w = _reference_sums(sampler.r_ni, system.box_i, rc, q, T)
    # tails (Allen and Tildesley, section 2.8) of LJ and of the correction in closed form
    du_c, lap_c = _lj(rc)[1], _lj(rc)[2]
    tail_u = 2 * math.pi * rho * 4 * (rc ** -9 / 9 - rc ** -3 / 3)
    tail_c = 2 * math.pi * rho * (-rc * rc * du_c)  # times q; int (u''+2u'/r) r^2 = -rc^2 u'
    i_w = (4 * (-4.0 / 3.0 * rc ** -9 + 2 * rc ** -3)
           + q / T * (3 * rc * rc * du_c - rc ** 3 * lap_c))
    expect_eff = u_pp + c_pp / T + tail_u + q * tail_c / T
    expect_thermo = u_pp + 2 * c_pp / T + tail_u + 2 * q * tail_c / T
    expect_p = rho * T + w / (3 * system.volume) - 2 * math.pi / 3 * rho ** 2 * i_w
    assert out["u_effective"][-1] == pytest.approx(expect_eff, rel=1e-7)
    assert out["u_full"][-1] == pytest.approx(expect_thermo, rel=1e-7)
    assert out["pressure"][-1] == pytest.approx(expect_p, rel=1e-7)


def test_samplers_refuse_what_the_potential_does_not_allow():
    pairs = feynman_hibbs_pairs(PairMatrix([LennardJones(1.0, 1.0)], 2.5), 1e-3, 1.5)
    system = System.cubic(pairs, [64], 0.3).place_on_lattice(seed=1)
    with pytest.raises(StudyError, match="built for kT = 1.5"):
        MCSampler(system, temperature=2.0, seed=1)
    with pytest.raises(StudyError, match="canonically"):
        MCSampler(system, energy=1.0, seed=1)
    with pytest.raises(StudyError, match="canonically"):
        MDSampler(system, temperature=1.5, seed=1)
    mix = PairMatrix([LennardJones(1.0, 1.0), LennardJones(1.2, 1.1)], 2.5)
    with pytest.raises(StudyError, match="pure gases only"):
        feynman_hibbs_pairs(mix, 1e-3, 1.5)


@pytest.mark.slow
def test_two_particles_energy_and_heat_capacity_against_exact_integrals():
    """Two particles in a periodic box (rc < L/2, so one pair and one image): the exact
    canonical averages are radial integrals.  The heat capacity is checked against the
    numerical T-derivative of the exact thermodynamic energy, not against a fluctuation
    formula, so the extra -2 <C> term of the estimator is tested; without it the result
    would be about 8 standard errors off (0.077 against 0.049).  Strong quantum case:
    q = 0.01, T* = 1."""
    q, T, rho, rc = 0.01, 1.0, 0.05, 1.7
    volume = 2.0 / rho

    def closed_tail(beta):  # per particle: u_tail + 2 beta q c_tail (Allen and Tildesley 2.8)
        i_u = 4 * (rc ** -9 / 9 - rc ** -3 / 3)
        i_c = -rc * rc * _lj(rc)[1]  # int_rc^inf (u'' + 2u'/r) r^2 dr
        return 2 * math.pi * rho * (i_u + 2 * beta * q * i_c)

    def energy(temp):  # per particle, exact: <u + 2 beta c> of the pair / 2 plus the tails
        beta = 1.0 / temp
        edges = [0.6, 0.9, 1.1, 1.3, rc]

        def integral(f):
            return sum(quad(lambda r: 4 * math.pi * r * r * f(*_lj(r))
                            * math.exp(-beta * (_lj(r)[0] + beta * q * _lj(r)[2])),
                            a, b, epsabs=1e-14, limit=200)[0] for a, b in zip(edges, edges[1:]))
        z = integral(lambda u, du, lap: 1.0) + volume - 4.0 / 3.0 * math.pi * rc ** 3
        e = integral(lambda u, du, lap: u + 2 * beta * q * lap) / z
        return e / 2 + closed_tail(beta), integral(lambda u, du, lap: beta * q * lap) / z / 2

    e_exact, d_exact = energy(T)
    h = 1e-4
    c_exact = (energy(T + h)[0] - energy(T - h)[0]) / (2 * h)
    pairs = feynman_hibbs_pairs(PairMatrix([LennardJones(1.0, 1.0)], rc), q, T)
    system = System.cubic(pairs, [2], rho).place_at_random(seed=1)
    from mdsim.sampling.state_point import sample_state_point
    res = sample_state_point(system, "mc-nvt", T, n_equilibration=200, n_samples=60000,
                             interval=1, seed=3)
    u, c = res.summary["u_full"], res.summary["c_v_res"]
    assert abs(u.value - e_exact) < 4 * u.stderr
    assert abs(c.value - c_exact) < 4 * c.stderr
    # N Var(e) / T^2 alone (the classical formula) would miss by 2 <beta C> / (N T), far outside
    d_tail = closed_tail(1.0 / T) - closed_tail(0.0)  # 2 beta q c_tail: the tail's part of 2D
    naive = c_exact + (2 * d_exact + d_tail) / T
    assert abs(naive - c.value) > 6 * c.stderr


# -- the dilute limit ---------------------------------------------------------------------

def _pair_integrals(q, T):
    """Dilute-limit u_res / rho and c_v,res / rho of the FH gas by quadrature (reduced, per
    particle): (1/2) int 4 pi r^2 e^(-beta u_FH) X dr with X = u + 2 beta c (thermodynamic),
    u + beta c (the mean effective potential) and beta^2 [(u + 2 beta c)^2 - 2 c] (c_v)."""
    beta = 1.0 / T
    fh = FeynmanHibbs(LennardJones(1.0, 1.0), q, T, r_end=40.0, n_knots=20001)
    r0 = float(fh.r_points[0])

    def integral(f):
        edges = [r0, 1.0, 1.5, 3.0, 40.0]
        return sum(quad(lambda r: 2 * math.pi * r * r * math.exp(-beta * float(fh.energy(r)))
                        * f(*_lj(r)), a, b, limit=200, epsabs=1e-13)[0]
                   for a, b in zip(edges[:-1], edges[1:]))
    thermo = integral(lambda u, du, lap: u + 2 * beta * q * lap)
    naive = integral(lambda u, du, lap: u + beta * q * lap)
    c_v = integral(lambda u, du, lap: beta ** 2 * ((u + 2 * beta * q * lap) ** 2 - 2 * q * lap))
    return thermo, naive, c_v


def _wigner_kirkwood(q, T):
    """-T^2 dB/dT and -(2 T B' + T^2 B'') of classical B2 plus the first-order Wigner-Kirkwood
    term (Hirschfelder, Curtiss and Bird, chapter 6), reduced; h^2/mu = 96 pi^2 q."""
    from analysis.virial import b2, b2_quantum
    lj = LennardJones(1.0, 1.0)
    _, d1, d2 = np.add(b2(lj, T), b2_quantum(lj, T, 96 * math.pi ** 2 * q))
    return -T * T * d1, -(2 * T * d1 + T * T * d2)


def test_dilute_limit_reproduces_the_wigner_kirkwood_second_virial_coefficient():
    """Quadratic FH is exact to order hbar^2 (Feynman and Hibbs 1965), so its thermodynamic
    energy and heat capacity in the dilute limit approach B2 + first-order Wigner-Kirkwood with
    a remainder of order hbar^4: quartering q must shrink the remainder about 16-fold.  The
    mean effective potential <u_FH> is wrong already at order hbar^2 (remainder shrinks 4-fold)."""
    T, q = 50.0 / EPS_K, _q_neon()
    remainders = []
    for scale in (1.0, 0.25):
        thermo, naive, c_v = _pair_integrals(q * scale, T)
        u_wk, c_wk = _wigner_kirkwood(q * scale, T)
        remainders.append((thermo - u_wk, naive - u_wk, c_v - c_wk))
    (u1, n1, c1), (u4, n4, c4) = remainders
    # measured ratios: 15 (energy), 15 (heat capacity), 4.1 (mean effective potential)
    assert abs(u1 / u4) > 12.0 and abs(c1 / c4) > 12.0
    assert 3.0 < abs(n1 / n4) < 5.0
    # at neon's q the FH energy is within 12 % of the quantum shift of -T^2 dB/dT (measured 10 %)
    u_cl = _wigner_kirkwood(0.0, T)[0]
    u_wk = _wigner_kirkwood(q, T)[0]
    assert abs(u1) < 0.12 * abs(u_wk - u_cl)


@pytest.mark.slow
def test_low_density_simulation_against_the_virial_series():
    """u_res and c_v,res of FH Monte Carlo at rho* = 0.01, neon at 50 K, against the virial
    series with B2 + first-order Wigner-Kirkwood and classical B3 (analysis.virial).
    Tolerance: 4 standard errors plus the FH-minus-WK remainder of order hbar^4 (the quadrature
    above) plus the whole B3 term (bounds its omitted quantum part and B4)."""
    from analysis.virial import b3
    T, q, rho = 50.0 / EPS_K, _q_neon(), 0.01
    pairs = feynman_hibbs_pairs(PairMatrix([LennardJones(1.0, 1.0)], 3.0), q, T)
    system = System.cubic(pairs, [500], rho).place_at_random(seed=1)
    from mdsim.sampling.state_point import sample_state_point
    res = sample_state_point(system, "mc-nvt", T, n_equilibration=200, n_samples=3000,
                             interval=1, seed=5)
    u_wk, c_wk = _wigner_kirkwood(q, T)
    _, d1c, d2c = b3(LennardJones(1.0, 1.0), T)
    b3_u, b3_c = -T * T * rho ** 2 / 2 * d1c, -rho ** 2 / 2 * (2 * T * d1c + T * T * d2c)
    thermo, _, c_fh = _pair_integrals(q, T)
    u, c = res.summary["u_full"], res.summary["c_v_res"]
    allow_u = rho * abs(thermo - u_wk) + abs(b3_u)
    allow_c = rho * abs(c_fh - c_wk) + abs(b3_c)
    assert abs(u.value - rho * u_wk - b3_u) < 4 * u.stderr + allow_u
    assert abs(c.value - rho * c_wk - b3_c) < 4 * c.stderr + allow_c
    # and it is not the classical gas: the quantum shift is far outside the tolerance
    u_cl = _wigner_kirkwood(0.0, T)[0]
    assert abs(u.value - rho * u_cl - b3_u) > 4 * u.stderr + allow_u


# -- the energy route for neon, against the model's virial series and CoolProp ----------------

NEON_STUDY = """[study]
name = "neon-fh"
[gas]
molar_mass = "20.18 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "35.6 K"
sigma = "2.749 angstrom"
cutoff = 3.0
[initial]
temperature = "50 K"
density = "3000 mol/m^3"
[expansion]
volume_ratio = 2.0
[simulation]
routes = {routes}
particles = 256
target_stderr = "0.1 K"
max_cpu_time = "60 s"
seed = 3
sampler = "{sampler}"
quantum_potential = "feynman-hibbs"
"""


def _write(tmp_path, routes='["energy"]', sampler="mc"):
    path = tmp_path / "neon.toml"
    path.write_text(NEON_STUDY.format(routes=routes, sampler=sampler), encoding="utf-8")
    return path


@pytest.mark.parametrize("routes, sampler, words", [
    ('["energy", "microcanonical"]', "mc", "fixed energy"),
    ('["direct"]', "mc", "fixed energy"),
    ('["energy"]', "md", "Monte Carlo sampler"),
])
def test_study_refuses_routes_the_potential_cannot_serve(tmp_path, routes, sampler, words):
    from mdsim.study.reader import read_study
    with pytest.raises(StudyError, match=f"quantum_potential.*{words}"):
        read_study(_write(tmp_path, routes, sampler))


def test_sample_command_says_which_potential_and_refuses_fixed_energy(tmp_path, capsys):
    from mdsim.cli import main
    path = str(_write(tmp_path))
    common = ["sample", path, "--density", "3000 mol/m^3", "--particles", "100",
              "--samples", "200"]
    assert main(common + ["--method", "mc-nvt", "--temperature", "50 K"]) == 0
    assert "quadratic Feynman-Hibbs" in capsys.readouterr().out
    assert main(common + ["--method", "mc-nve", "--energy", "100 J/mol"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "quantum_potential = 'feynman-hibbs'" in err[0]


def test_corresponding_states_table_refuses_the_quantum_potential(tmp_path):
    """A table of one potential shape serves every epsilon and sigma; Feynman-Hibbs depends on
    the mass too (through Lambda*), so a table of an FH study is refused, not built classically."""
    from mdsim.cstable import table_settings
    from mdsim.study.reader import read_study
    path = _write(tmp_path)
    path.write_text(path.read_text() + "[table]\ntemperatures = [1.5, 2, 3, 4]\n"
                    "densities = [0.05, 0.1, 0.2, 0.3]\n")
    with pytest.raises(StudyError, match="quantum_potential"):
        table_settings(read_study(path))


def _coolprop_delta_T(T_i, rho_i, r):
    """Free-expansion Delta T of CoolProp's Neon (Katti, Jacobsen, Stewart and Jahangiri 1986)."""
    cp = pytest.importorskip("CoolProp.CoolProp")
    u_i = cp.PropsSI("Umolar", "T", T_i, "Dmolar", rho_i, "Neon")
    return brentq(lambda t: cp.PropsSI("Umolar", "T", t, "Dmolar", rho_i / r, "Neon") - u_i,
                  T_i - 20.0, T_i + 5.0, xtol=1e-10) - T_i


@pytest.mark.slow
def test_neon_free_expansion_against_virial_series_and_coolprop(tmp_path):
    """Neon-like LJ with FH, 50 K, 3000 mol/m^3 (rho* = 0.038, 11 bar), volume ratio 2.

    (a) Against the same model's virial route (B2 + first-order WK, classical B3): 4 stderr
    plus the B3 part of that route (bounding B4 and the quantum part of B3).
    (b) Against CoolProp's reference EOS for neon: 4 stderr plus a model allowance, the
    first-order effect on Delta T of the mismatch between the model's and the reference's
    dB2/dT at T_i, R T^2 |dB_model - dB_ref| (rho_i - rho_f) / c_v, plus (a)'s B3 part.
    The LJ parameters were fitted to B2 data classically, so adding the quantum correction
    moves the model's B2 away from the reference (by 7 % at 50 K): that is the allowance.
    Measured: -3.12 +- 0.06 K (FH), model virial -3.17 K, CoolProp -3.43 K, allowance 0.36 K.
    """
    import warnings
    from analysis.expansion.virial_series import virial_expansion
    from analysis.heatcapacity import heat_capacity_from_spec
    from analysis.virial_eos import VirialGas
    from mdsim.pipeline import read_task_result
    from mdsim.pipeline.prepare import prepare_run_dir
    from mdsim.pipeline.runner import run_task
    from mdsim.study.reader import read_study
    from mdsim.units import R_GAS
    cp = pytest.importorskip("CoolProp.CoolProp")
    T_i, rho_i, r = 50.0, 3000.0, 2.0
    study = read_study(_write(tmp_path))
    rd, _ = prepare_run_dir(study, tmp_path / "run")
    run_task(rd.path, 0)
    _, res, _ = read_task_result(rd.task_file(0))
    value, stderr = res["delta_T_K"]["value"], res["delta_T_K"]["stderr"]
    assert res["warnings"] == [] and any("Feynman-Hibbs" in n for n in res["notes"])

    cv = heat_capacity_from_spec("1.5 R", "test")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the de Boer warning (0.59) is expected here
        gas = VirialGas(LennardJones(EPS_K, SIGMA_A), [1.0], MOLAR_MASS, quantum_correction=True)
        dT3 = virial_expansion(gas, cv, T_i, r, rho_i=rho_i, order=3).delta_T_K
        dT2 = virial_expansion(gas, cv, T_i, r, rho_i=rho_i, order=2).delta_T_K
    b3_part = abs(dT3 - dT2)
    assert abs(value - dT3) < 4 * stderr + b3_part, (value, stderr, dT3)

    def b_ref(t):
        return cp.PropsSI("Bvirial", "T", t, "Dmolar", 1e-6, "Neon")
    db_ref = (b_ref(T_i + 0.5) - b_ref(T_i - 0.5)) / 1.0
    model = R_GAS * T_i ** 2 * abs(gas.dB_dT(T_i) - db_ref) * (rho_i - rho_i / r) / cv.cv(T_i)
    reference = _coolprop_delta_T(T_i, rho_i, r)
    assert abs(value - reference) < 4 * stderr + model + b3_part, (value, reference, model)
