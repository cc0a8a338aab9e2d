"""The initial state belongs to the model: the density found at a given pressure, and its report.

A Lennard-Jones gas (epsilon/k = 100 K, sigma = 3.4 angstrom, cut-off 3 sigma with the analytic
tail; a temperature in K is 100 x the reduced one) at T* = 10 and the pressure the Thol 2016
reference equation of state (J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp,
test-only) gives at rho* = 0.21 (936.06 bar).  There the B2 + B3 series, which the plan uses,
puts the density 0.69 % too high (rho* = 0.21145; its third-virial term is just inside the
plan's limit of 0.05 of Z): the model's pressure at that density is about 0.9 % above the one
asked for.  (The reference is stated valid up to T/T_c = 7, T* = 9.2; T* = 10 lies just above,
where the virial error is among the largest the plan lets through.)
"""
import json

import numpy as np
import pytest

from mdsim.pipeline import RunDir, read_task_result
from mdsim.pipeline.prepare import prepare_run_dir
from mdsim.study.reader import read_study
from mdsim.units import K_B, N_A
from test_routes_across_states import EPS_K, SIGMA_M, STUDY as LJ_STUDY

T_STAR, RHO_STAR = 10.0, 0.21
RHO_UNIT = N_A * SIGMA_M ** 3  # rho* per mol/m^3
P_UNIT = K_B * EPS_K / SIGMA_M ** 3  # Pa per p*

ROUTES_LINE = 'routes = ["energy", "microcanonical", "direct"]'


def _study_text(state, particles, target):
    """The Lennard-Jones study of tests/mdsim/test_routes_across_states.py at T_STAR, its
    [initial] density line replaced by ``state`` and the microcanonical route alone."""
    text = LJ_STUDY.format(t=T_STAR, rho=RHO_STAR, T_K=T_STAR * EPS_K, rho_mol_m3=0.0, r=2.0,
                           particles=particles, target=target, max_cpu="60 s", seed=11)
    assert ROUTES_LINE in text
    lines = [state if line.startswith("density = ") else line
             for line in text.replace(ROUTES_LINE, 'routes = ["microcanonical"]').splitlines()]
    return "\n".join(lines) + "\n"


def _thol():
    """The reference EOS: Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), via teqp."""
    return pytest.importorskip("teqp").build_LJ126_TholJPCRD2016()


def _thol_pressure(rho_star):
    """(p*, dp*/drho*) of the reference EOS at T* = T_STAR: p = rho T (1 + Ar01),
    dp/drho = T (1 + 2 Ar01 + Ar02) (teqp's reduced residual Helmholtz derivatives)."""
    model, x = _thol(), np.array([1.0])
    a01, a02 = model.get_Ar01(T_STAR, rho_star, x), model.get_Ar02(T_STAR, rho_star, x)
    return rho_star * T_STAR * (1.0 + a01), T_STAR * (1.0 + 2.0 * a01 + a02)


def _thol_density(p_star):
    """rho* of the reference EOS at (T_STAR, p*)."""
    from scipy.optimize import brentq
    return brentq(lambda r: _thol_pressure(r)[0] - p_star, 0.1, 0.3, xtol=1e-12)


def _pressure_allowance(rho_star, cutoff=3.0, h_max=0.05):
    """A bound (p*) on what separates the cut-off model from the full potential's reference.

    Pairs beyond rc count through the analytic tail, which takes g(r) = 1 there; the error is
    at most h_max |p_tail| with p_tail = (16/3) pi rho^2 (2/3 rc^-9 - rc^-3) and |g - 1| <= h_max
    = 0.05 beyond 3 sigma (the bound of tests/mdsim/test_routes_across_states.py, there for the
    energy; common practice, no source): 0.0014 p* at rho* = 0.21, 0.05 % of the pressure.
    """
    p_tail = 16.0 / 3.0 * np.pi * rho_star ** 2 * (2.0 / 3.0 * cutoff ** -9 - cutoff ** -3)
    return h_max * abs(p_tail)


def _study(tmp_path, state, particles, target):
    path = tmp_path / "study.toml"
    path.write_text(_study_text(state, particles, target), encoding="utf-8")
    return read_study(path)


def _pressure_state():
    """The [initial] line: the reference pressure at rho* = 0.21, in bar."""
    p_star, _ = _thol_pressure(RHO_STAR)
    return f'pressure = "{p_star * P_UNIT / 1e5:.8g} bar"'


@pytest.mark.slow
def test_the_density_found_is_the_reference_density_and_the_virial_one_is_off(tmp_path):
    """The pressure iteration at T* = 10, p* = p_Thol(0.21), 200 particles, each density sampled
    to a pressure error of about 0.23 % (the microcanonical route's initial state for a 0.7 K
    target; about 6 CPU-s a density): the density it finds agrees with Thol 2016 within the
    combined error, and the pressure sampled at the plan's virial density is measurably off
    (expected 0.9 % / 0.23 % = 4 standard errors; measured 3.4)."""
    from mdsim.pipeline.chain import stage_share
    from mdsim.pipeline.initial_state import run_initial_state
    from mdsim.pipeline.task import RunningTask
    rd, tasks = prepare_run_dir(_study(tmp_path, _pressure_state(), 200, "0.7 K"),
                                tmp_path / "run")
    job = RunningTask(rd, tasks[0])
    p_asked = tasks[0]["state_point"]["pressure_Pa"]
    chain = run_initial_state(job, "mc-nvt", T_STAR, stage_share(job, 1.5))
    assert job.initial_chain is chain and job.warnings == []
    first, last = job.pressure_tries[0], job.pressure_tries[-1]
    # the first try is the plan's B2 + B3 density, which lies 0.69 % above the reference's
    rho_virial = first["density_mol_m3"] * RHO_UNIT
    assert rho_virial == pytest.approx(job.planned_rho_i * RHO_UNIT)
    assert rho_virial / _thol_density(p_asked / P_UNIT) - 1.0 == pytest.approx(0.0069, abs=3e-4)
    # measurably off: the pressure sampled there is more than 3 standard errors from the asked
    assert abs(first["pressure_Pa"] - p_asked) > 3.0 * first["pressure_stderr_Pa"], first
    # accepted: the last try is within one standard error and is the initial state used
    assert abs(last["pressure_Pa"] - p_asked) <= last["pressure_stderr_Pa"], last
    assert job.rho_i == last["density_mol_m3"] and job.rho_f == job.rho_i / 2.0
    n = len(job.pressure_tries)
    assert n >= 2 and job.initial_density_from == f"pressure iteration, {n} steps"
    # the density found against the reference: the accepted departure plus 3 standard errors of
    # its sampled pressure, over the reference slope, plus the cut-off allowance
    rho_found = job.rho_i * RHO_UNIT
    rho_ref = _thol_density(p_asked / P_UNIT)
    _, slope = _thol_pressure(rho_ref)
    tol = ((abs(last["pressure_Pa"] - p_asked) + 3.0 * last["pressure_stderr_Pa"]) / P_UNIT
           + _pressure_allowance(rho_ref)) / slope
    assert abs(rho_found - rho_ref) < tol, (rho_found, rho_ref, tol)
    assert tol < abs(rho_virial - rho_ref) * 1.5  # a check that could tell the two apart


def _run(tmp_path, state, particles=108, target="2 K"):
    """Run the microcanonical route of one state through the pipeline; (task result, record,
    csv rows, report text)."""
    from mdsim.pipeline.run_study import run_study
    import csv
    run = run_study(_study(tmp_path, state, particles, target), tmp_path / "run", on="local",
                    workers=1, quiet=True, plots=False)
    assert run.failed == {}, run.failed
    rd = RunDir(tmp_path / "run")
    _, res, _ = read_task_result(rd.task_file(0))
    record = json.loads(rd.results_json.read_text(encoding="utf-8"))["state_points"][0]
    with open(rd.results_csv, newline="", encoding="utf-8") as f:
        rows = {row["route"]: row for row in csv.DictReader(f)}
    return res, record, rows, rd.report_md.read_text(encoding="utf-8")


def test_a_state_given_by_pressure_reports_the_pressure_sampled_and_the_density_found(tmp_path):
    res, record, rows, report = _run(tmp_path, _pressure_state())
    p, se = res["initial_pressure_Pa"]["value"], res["initial_pressure_Pa"]["stderr"]
    asked = res["requested_initial_pressure_Pa"]
    how = res["initial_density_from"]
    # within one standard error of the pressure asked for, or the warning says why not
    if "not converged" in how:
        assert any("pressure iteration stopped" in w for w in res["warnings"]), res["warnings"]
    else:
        assert abs(p - asked) <= se and how.startswith("pressure iteration, ")
    tries = res["pressure_iteration"]
    assert tries[0]["density_mol_m3"] == res["planned_initial_density_mol_m3"]
    assert tries[-1]["density_mol_m3"] == res["initial_density_mol_m3"]
    assert res["final_density_mol_m3"] == pytest.approx(res["initial_density_mol_m3"] / 2.0)
    # the record: the virial routes keep the B2 + B3 density and say so; the route has its own
    assert record["initial"]["density_from"] == "virial B2+B3 (virial routes)"
    assert record["initial"]["density_mol_m3"] == res["planned_initial_density_mol_m3"]
    sim = record["simulation"]["microcanonical"]
    assert sim["initial_density_mol_m3"] == res["initial_density_mol_m3"]
    assert sim["initial_density_from"] == how
    assert sim["initial_pressure_Pa"] == {"value": p, "stderr": se}
    # results.csv: the route's row carries its own density and the pressure it sampled
    row = rows["microcanonical"]
    assert float(row["initial_density_mol_m3"]) == res["initial_density_mol_m3"]
    assert float(row["initial_pressure_sampled_Pa"]) == p
    assert float(row["initial_pressure_sampled_stderr_Pa"]) == se
    assert row["initial_density_from"] == how
    assert rows["virial_b2b3"]["initial_density_from"] == "virial B2+B3 (virial routes)"
    # the report's initial-state table
    from mdsim.numbers import value_with_error
    assert f"| {value_with_error(p / 1e5, se / 1e5)} |" in report and f"| {how} |" in report

    # run again (as a resumed task does): the stage files are read back, the same densities
    # are tried and no CPU is spent (decisions come from the stage files and seeds alone)
    from mdsim.pipeline.chain import stage_share
    from mdsim.pipeline.initial_state import run_initial_state
    from mdsim.pipeline.task import RunningTask
    rd = RunDir(tmp_path / "run")
    job = RunningTask(rd, rd.read_tasks()[0])
    spent = job.cpu_spent()
    run_initial_state(job, "mc-nvt", T_STAR, stage_share(job, 1.5))
    assert job.pressure_tries == tries and job.rho_i == res["initial_density_mol_m3"]
    assert job.cpu_spent() == spent


def test_a_state_given_by_density_reports_the_pressure_sampled_there(tmp_path):
    """Given rho* = 0.21 at T* = 10: sampled once there, the pressure reported agrees with the
    Thol 2016 pressure within 3 standard errors plus the cut-off allowance."""
    res, record, rows, _ = _run(tmp_path, f'density = "{RHO_STAR / RHO_UNIT:.10g} mol/m^3"')
    assert res["initial_density_from"] == "given" and res["pressure_iteration"] == []
    p, se = res["initial_pressure_Pa"]["value"], res["initial_pressure_Pa"]["stderr"]
    p_ref, _ = _thol_pressure(RHO_STAR)
    assert abs(p / P_UNIT - p_ref) < 3.0 * se / P_UNIT + _pressure_allowance(RHO_STAR), \
        (p / P_UNIT, se / P_UNIT, p_ref)
    assert record["initial"]["sampled_pressure_Pa"] == {"value": p, "stderr": se}
    assert record["initial"]["density_from"] == "given"
    assert float(rows["microcanonical"]["initial_pressure_sampled_Pa"]) == p
