"""Every simulation route from dilute gas to dense liquid, against the reference LJ equation of state.

One study per state (epsilon/k = 100 K, so a temperature in K is 100 x the
reduced one; sigma = 3.4 angstrom; the initial density is given, so no virial
density is involved) runs through the real pipeline
(:func:`mdsim.pipeline.run_study.run_study`) with the routes energy,
microcanonical and direct.  Each route's Delta T must agree with the free
expansion (volume ratio 2) of the Lennard-Jones reference equation of state of
Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), evaluated through
teqp, within 4 standard errors plus an allowance ``b`` for what separates the
simulated model from the reference (see ``_allowance_K``).

The states (reduced T*, rho*): (2, 0.3) the supercritical fluid at which the
energy route once failed outright; (5, 0.2) a hot moderately dense gas;
(10, 0.9) and (20, 1.0) hot dense fluids above the Joule inversion (they warm);
(1.5, 0.5) a dense supercritical fluid whose expansion ends inside the
vapour-liquid dome, where no agreement with the infinite-system reference is
possible in a small box (see test_expansion_into_the_dome_...).  A liquid below
the critical temperature expanded to half its density ends in the dome too.
"""

import numpy as np
import pytest
from scipy.optimize import brentq

from mdsim.pipeline import RunDir, read_task_result
from mdsim.pipeline.run_study import run_study
from mdsim.study.reader import read_study
from mdsim.units import N_A, R_GAS

pytestmark = pytest.mark.slow

EPS_K = 100.0
SIGMA_M = 3.4e-10
VOLUME_RATIO = 2.0
ROUTES = ("energy", "microcanonical", "direct")

# (T*, rho*) of the states that end in one phase, and the target standard error of each (K):
# looser where |Delta T| is large (about 3 % of it at the two hot dense states), so that the whole
# file costs about 3 CPU-minutes.  Measured with the earlier targets 2 K and 4 K (idle machine
# shared with one other job): T* = 10 energy 86.9 +- 1.6, microcanonical 83.9 +- 1.7, direct
# 86.1 +- 1.3 K against 87.96 K, 118 CPU-s; T* = 20 energy 384.2 +- 3.7, microcanonical
# 387.4 +- 2.8, direct 383.6 +- 3.1 K against 393.18 K, 121 CPU-s.
# The reference is stated valid for 0.5 < T/T_c < 7 (docs/references.md section 5.1; T_c* = 1.32,
# so T* < 9.2): T* = 10 lies just above that range, T* = 20 (T/T_c = 15) is an extrapolation of
# the reference.  Measured at T* = 20 with a 2 K target: energy 382.2 +- 1.4 K,
# microcanonical 390.1 +- 1.8 K, direct 390.0 +- 2.2 K against the reference's 393.2 K: the
# energy route is 7.6 stderr off (the sampled initial u_res, 7.03 epsilon, is 2 % below the
# reference's 7.18, far beyond the cut-off bound).  A 20 000-sweep canonical run gives the model's
# initial u_res 1.3 % below the reference: that gap is allowed for (_extrapolation_allowance_K);
# whether it is the reference's extrapolation or the model's is not settled.
STATES = {(2.0, 0.3): "1 K", (5.0, 0.2): "1 K", (10.0, 0.9): "3 K", (20.0, 1.0): "6 K"}
# T* = 1.5, rho* = 0.5 expands into the vapour-liquid dome: see test_expansion_into_the_dome
DOME_STATE = (1.5, 0.5)
PARTICLES = 256
MAX_CPU = "45 s"  # per task: caps the direct route at T* = 20 (measured 63 s there for 2.2 K)
SEED = 7

STUDY = """[study]
name = "lj-T{t}-rho{rho}"
[gas]
molar_mass = "40 g/mol"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "100 K"
sigma = "3.4 angstrom"
cutoff = 3.0
[initial]
temperature = "{T_K} K"
density = "{rho_mol_m3} mol/m^3"
[expansion]
volume_ratio = {r}
[simulation]
routes = ["energy", "microcanonical", "direct"]
particles = {particles}
target_stderr = "{target}"
max_cpu_time = "{max_cpu}"
seed = {seed}
"""


def _thol():
    """The reference EOS: Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp."""
    teqp = pytest.importorskip("teqp")
    return teqp.build_LJ126_TholJPCRD2016()


def _u_homogeneous(model, T, rho):
    """Internal energy per particle / epsilon of the homogeneous fluid: 1.5 T + T Ar10
    (Thol 2016 through teqp; docs/references.md section 5.1: u_res = T Ar10)."""
    return 1.5 * T + T * model.get_Ar10(T, rho, np.array([1.0]))


def _saturation(model, T):
    """(rho_liquid, rho_vapour) of the reference EOS at T* < 1.3, traced up from T* = 1 (Thol 2016
    via teqp's pure_VLE_T; the liquid 0.702 and vapour 0.0295 at T* = 1 start the trace)."""
    rho_l, rho_v = 0.70, 0.03
    for t in np.append(np.arange(1.0, T, 0.01), T):
        rho_l, rho_v = model.pure_VLE_T(t, rho_l, rho_v, 100)
    return rho_l, rho_v


def _u_equilibrium(model, T, rho):
    """Internal energy per particle / epsilon at equilibrium: inside the vapour-liquid dome the
    lever rule over the coexisting phases (the homogeneous EOS there is no physical state: Thol's
    u(T*, 0.25) swings between -1.2 and +92 for T* from 1.0 to 1.1); outside it the homogeneous fluid.
    Only T* < 1.3 is checked for two phases (the reference's critical point: T* = 1.32, rho* = 0.31)."""
    if T < 1.3:
        rho_l, rho_v = _saturation(model, T)
        if rho_v < rho < rho_l:
            liquid = (1.0 / rho_v - 1.0 / rho) / (1.0 / rho_v - 1.0 / rho_l)  # particle fraction
            return (liquid * _u_homogeneous(model, T, rho_l)
                    + (1.0 - liquid) * _u_homogeneous(model, T, rho_v))
    return _u_homogeneous(model, T, rho)


def _reference_delta_T_K(t_star, rho_star):
    """Delta T (K) of the free expansion of the reference EOS (Thol et al., J. Phys. Chem. Ref.
    Data 45, 023101 (2016), through teqp): u(T_f, rho/r) = u(T_i, rho), with the final state at
    equilibrium (two phases where it falls inside the dome)."""
    model = _thol()
    u_i = _u_homogeneous(model, t_star, rho_star)
    t_f = brentq(lambda t: _u_equilibrium(model, t, rho_star / VOLUME_RATIO) - u_i,
                 0.7 * t_star, 1.3 * t_star, xtol=1e-12)
    return (t_f - t_star) * EPS_K




def _allowance_K(rho_star, cutoff=3.0, h_max=0.05):
    """The allowance b (K) for the simulated model against the reference: a bound, not a fit.

    Cut-off: the simulation counts pairs beyond rc = 3 sigma by the analytic tail, which takes
    g(r) = 1 there; the reference EOS is the full potential.  The error of the tail is
    2 pi rho int_rc^inf r^2 u(r) (g(r) - 1) dr, at most h_max |u_tail(rho)| with
    u_tail(rho) = (8/3) pi rho (rc^-9 / 3 - rc^-3) = -0.310 rho (epsilon per particle), taking
    |g(r) - 1| <= h_max = 0.05 beyond 3 sigma (the third-shell oscillation of a LJ fluid is below
    that amplitude; at the hot states here it is smaller still).  The initial and final
    states' errors add at worst, and dividing by the heat capacity at constant volume
    (>= 1.5 k per particle) turns an energy error into a temperature error:
    |d Delta T| <= h_max |u_tail| (rho + rho / r) / 1.5  ->  0.31 K at rho* = 0.2,
    0.47 K at 0.3, 1.4 K at 0.9, 1.55 K at 1.0.
    Finite N (256 here): not given an allowance.  At T* = 2, rho* = 0.3 the lead measured with
    N = 1000 energy -54.51 +- 0.15 K and microcanonical -55.17 +- 0.22 K; N = 256 gives
    -55.8 +- 0.6 K and -54.4 +- 0.7 K against the reference -54.80 K: no size effect at the
    level of these error bars.
    """
    u_tail = 8.0 / 3.0 * np.pi * rho_star * (cutoff ** -9 / 3.0 - cutoff ** -3)
    return h_max * abs(u_tail) * (1.0 + 1.0 / VOLUME_RATIO) / 1.5 * EPS_K


# The model's residual energy at T* = 20, rho* = 1.0 against the reference there, measured by the
# lead (canonical MC, N = 256, rc = 3 sigma with the analytic tail, 20 000 sweeps, `mdsim sample`):
# 5888 +- 16 J/mol against Thol's 5968 J/mol (eps/k = 100 K), 1.3 % (5 stderr) below.
EXTRAPOLATED_U_RES_GAP_J_MOL = {(20.0, 1.0): 80.0}


def _extrapolation_allowance_K(t_star, rho_star):
    """Above T/T_c = 7 (T* > 9.2) the reference is an extrapolation (Thol et al. 2016 state
    their EOS valid up to there; docs/references.md section 5.1).  At T* = 20 the simulated
    model's own initial u_res lies 80 J/mol (1.3 %) below it, which is either the reference's
    extrapolation error or the model's (cut-off, N = 256); the check cannot tell them apart, so
    that gap, over the smallest heat capacity 1.5 R, is allowed for: 6.4 K of the 393 K.  The
    other states get no such term (T* = 10, rho* = 0.9 lies just above the range: its measured
    Delta T agree within the other allowances)."""
    gap = EXTRAPOLATED_U_RES_GAP_J_MOL.get((t_star, rho_star), 0.0)
    return gap / (1.5 * R_GAS)


def _run_state(tmp_path, t_star, rho_star, target, coexistence_cache=None):
    """Run the study of one state through the pipeline.

    ``coexistence_cache``: the ``thol_coexistence_cache`` fixture, to pre-fill the run
    directory's Gibbs-ensemble cache (a two-phase final state then costs no Gibbs run).

    Returns {route: (Delta T in K, its stderr in K, CPU s, warnings, what stopped the task,
    the route's entropy entry, its T_f*)}.
    """
    path = tmp_path / "study.toml"
    path.write_text(STUDY.format(
        t=t_star, rho=rho_star, T_K=t_star * EPS_K, rho_mol_m3=rho_star / (N_A * SIGMA_M ** 3),
        r=VOLUME_RATIO, particles=PARTICLES, target=target, max_cpu=MAX_CPU, seed=SEED),
        encoding="utf-8")
    if coexistence_cache is not None:
        coexistence_cache(RunDir(tmp_path / "run").coexistence_dir,
                          read_study(path).reduced_pairs(), 0.70 + 0.05 * np.arange(13))
    run = run_study(read_study(path), tmp_path / "run", on="local", workers=2, quiet=True,
                    plots=False)
    assert run.failed == {}, run.failed  # no task failed (the energy route once did at T* = 2)
    rd = RunDir(tmp_path / "run")
    out = {}
    for task in rd.read_tasks():
        _, res, _ = read_task_result(rd.task_file(task["index"]))
        out[task["route"]] = (res["delta_T_K"]["value"], res["delta_T_K"]["stderr"],
                              float(res["cpu_seconds"]), res["warnings"], res["stopped_by"],
                              res["entropy_generated_J_molK"],
                              res["final_temperature_K"]["value"] / EPS_K)
    assert set(out) == set(ROUTES)
    for route, (value, stderr, *_) in out.items():
        assert np.isfinite(value) and np.isfinite(stderr) and stderr > 0.0, route
    return out


@pytest.mark.parametrize("t_star, rho_star", list(STATES), ids=[f"T{t}-rho{r}" for t, r in STATES])
def test_every_route_agrees_with_the_reference_eos(tmp_path, t_star, rho_star):
    reference = _reference_delta_T_K(t_star, rho_star)
    measured = _run_state(tmp_path, t_star, rho_star, STATES[(t_star, rho_star)])
    allowance = _allowance_K(rho_star) + _extrapolation_allowance_K(t_star, rho_star)
    for route, (value, stderr, _, warnings, _, entropy, t_f) in measured.items():
        assert warnings == [], (route, warnings)  # e.g. an unconverged energy-route solve
        assert abs(value - reference) < 4.0 * stderr + allowance, \
            (route, value, stderr, reference, allowance)
        _check_entropy(route, entropy, t_star, rho_star, t_f)


def _check_entropy(route, entropy, t_star, rho_star, t_f):
    """A route's Delta s: a number near the reference's at the route's own end states, or
    'not available' with the reason (test-particle insertion fails in dense fluids), never a
    silent stand-in.  The reference is Thol 2016 through teqp, s_res / k = Ar10 - Ar00; the
    tolerance is 4 standard errors plus the cut-off allowance of _allowance_K carried over
    to s = (u - a) / T: |d u| <= h_max |u_tail|, |d a| <= 2 h_max |u_tail| (the inserted
    particle's tail is twice u_tail) at each end state, over T."""
    if entropy["value"] is None:
        assert entropy["unavailable"], (route, entropy)
        return
    model, z = _thol(), np.array([1.0])

    def s_res(t, rho):
        return model.get_Ar10(t, rho, z) - model.get_Ar00(t, rho, z)

    reference = R_GAS * (1.5 * np.log(t_f / t_star) + np.log(VOLUME_RATIO)
                         + s_res(t_f, rho_star / VOLUME_RATIO) - s_res(t_star, rho_star))
    u_tail = 8.0 / 3.0 * np.pi * rho_star * (3.0 ** -9 / 3.0 - 3.0 ** -3)
    allowance = R_GAS * 3.0 * 0.05 * abs(u_tail) * (1.0 + 1.0 / VOLUME_RATIO) / min(t_star, t_f)
    assert entropy["stderr"] > 0.0
    assert abs(entropy["value"] - reference) < 4.0 * entropy["stderr"] + allowance, \
        (route, entropy, reference, allowance)


@pytest.fixture(scope="module")
def dome_run(tmp_path_factory, thol_coexistence_cache):
    """The routes at T* = 1.5, rho* = 0.5 (run once for the two tests below); the two-phase
    final state's coexistence points come from the Thol EOS (tests/mdsim/conftest.py), not
    from Gibbs runs, which would cost minutes here."""
    return _run_state(tmp_path_factory.mktemp("dome"), *DOME_STATE, "3 K",
                      coexistence_cache=thol_coexistence_cache)


def test_expansion_into_the_dome_finishes_and_cools_more_than_equilibrium(dome_run):
    """T* = 1.5, rho* = 0.5 -> rho* = 0.25: the final state lies inside the vapour-liquid dome.

    The reference at equilibrium (lever rule over the coexisting phases of Thol 2016 through
    teqp) is T_f* = 1.219 (70 % of the particles liquid), Delta T = -28.06 K.  (The homogeneous
    EOS solved naively gives -23.55 K, a root of its unphysical loop inside the dome.)  A box
    of 256 particles cannot reach that equilibrium: phase separation in it costs an interface
    whose excess energy (positive below the critical point) is a sizeable part of the energy
    per particle (it falls only as N^(-1/3)), so at the same energy the finite system is colder:
    every route must finish and cool MORE than the equilibrium reference.  The routes also
    differ from each other here (measured: energy -51.4 +- 0.4 K, microcanonical -59.8 +- 0.6 K,
    direct -53.9 +- 0.7 K with a 1 K target), likely because the canonical and microcanonical
    ensembles of a small system are not equivalent inside the dome and the final
    configurations depend on the path (not shown here).  No agreement with the infinite-system reference is asserted: none is expected.
    """
    reference = _reference_delta_T_K(*DOME_STATE)
    assert reference == pytest.approx(-28.06, abs=0.01)  # the two-phase reference, as above
    for route, (value, stderr, *_) in dome_run.items():
        assert value + 4.0 * stderr < reference, (route, value, stderr, reference)


def test_the_energy_route_in_the_dome_is_solved_or_says_it_is_not(dome_run):
    """Inside the dome the Newton search once swung by +-88 K between guesses (150 K -> 59 K ->
    148 K -> ...) and the task reported an unconverged Delta T of -89.5 K as "stopped by the
    target".  Now the steps stay inside the bracket the samples make, and a balance still
    unsolved when the guesses are used up is the task's stop reason, with its warning."""
    from mdsim.pipeline.routes.energy import BUDGET_UNSOLVED, UNSOLVED
    value, _, _, warnings, stopped_by, *_ = dome_run["energy"]
    solved = not warnings and abs(value - dome_run["microcanonical"][0]) < 15.0  # routes' spread
    unsolved = stopped_by in (UNSOLVED, BUDGET_UNSOLVED) and warnings
    assert solved or unsolved, (value, stopped_by, warnings)
