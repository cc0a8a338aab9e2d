"""A task's two-phase final state gets its expansion through coexistence (coexistence_for_task).

The Gibbs-ensemble cache of the run directory is pre-filled from the Lennard-Jones
reference EOS of Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp
(test-only; tests/mdsim/conftest.py), and the Gibbs sampler is made to fail if called,
so these tests check the choice of temperatures, the cache, the solver call and the
record, in well under a second.  The study is argon (configs/argon.toml: LJ 119.8 K,
3.405 angstrom, rc = 3 sigma).  The issue's example, T* = 0.8 and rho* = 0.75 doubled in
volume: the homogeneous energy route ends at T* = 0.43 (a stretched sample), the Thol
construction at T_f* = 0.84785 with 1.318 % vapour (tests/analysis/test_coexistence_expansion.py).
"""
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from analysis.expansion import SampledExpansionResult
from analysis.heatcapacity import ConstantHeatCapacity
from mdsim.pipeline import RunDir
from mdsim.pipeline.coexistence_route import (GRID_STEP_RED, LOWEST_T_RED, MAX_POINTS,
                                              coexistence_for_task, coexistence_text,
                                              warn_virial_in_dome)
from mdsim.pipeline.task import CpuLedger
from mdsim.study.reader import read_study

ARGON = Path(__file__).resolve().parents[2] / "configs" / "argon.toml"


@pytest.fixture
def job(tmp_path, thol_coexistence_cache, monkeypatch):
    import mdsim.sampling.coexistence as gibbs

    def no_run(*args, **kwargs):
        raise AssertionError("a Gibbs-ensemble run was started: the cache was not used")
    monkeypatch.setattr(gibbs, "GibbsSampler", no_run)
    study = read_study(ARGON)
    rd = RunDir(tmp_path / "run")
    grid = LOWEST_T_RED + GRID_STEP_RED * np.arange(MAX_POINTS)
    thol_coexistence_cache(rd.coexistence_dir, study.reduced_pairs(), grid[grid < 1.3])
    u = study.units
    return SimpleNamespace(study=study, units=u, rd=rd, feynman_hibbs=False, initial_chain=None,
                           T_i=u.temperature_to_K(0.8), rho_f=u.density_to_mol_m3(0.375),
                           cv_ig=ConstantHeatCapacity.in_units_of_R(1.5),
                           ledger=CpuLedger(tmp_path / "ledger.json"))


def _route_result(job, thol_lj, t_i, rho_i, t_f):
    """The route's result as the energy route gives it; its initial energy from the EOS."""
    u = job.units
    return SampledExpansionResult(
        "energy", "newton", u.temperature_to_K(t_i), u.temperature_to_K(t_f), 0.3,
        u.temperature_to_K(t_f - t_i), 0.3,
        details={"initial_u_res_J_mol": u.energy_to_J_mol(thol_lj.u_res(t_i, rho_i)),
                 "initial_u_res_stderr_J_mol": 5.0})


def test_the_issue_example_matches_the_thol_construction(job, thol_lj):
    rec = coexistence_for_task(job, _route_result(job, thol_lj, 0.8, 0.75, 0.43))
    assert rec["available"] is True
    eps = job.units.epsilon_K
    # Thol 2016 (teqp): T_f* = 0.84785 (101.572 K), x = 0.01318.  The table is a spline through
    # points 0.05 T* apart (0.70 to 0.85); measured 101.569 K, x = 0.01320: tolerance 0.05 K,
    # 2e-4 in x (the spline's error over that spacing; the EOS answer itself to 1e-5 T*)
    assert rec["final_temperature_K"]["value"] == pytest.approx(0.84785 * eps, abs=0.05)
    assert rec["delta_T_K"]["value"] == pytest.approx((0.84785 - 0.8) * eps, abs=0.05)
    assert rec["vapour_fraction"]["value"] == pytest.approx(0.01318, abs=2e-4)
    # from 0.43 the grid starts at its lowest point (triple point) and climbs past T_f*
    assert rec["temperatures_K"][0] == pytest.approx(LOWEST_T_RED * eps)
    assert max(rec["temperatures_K"]) >= 0.84785 * eps
    # the invented point errors propagate (0.11 K measured); no error would give 0
    assert 0.05 < rec["final_temperature_K"]["stderr"] < 0.5
    assert "Delta T = " in coexistence_text(rec)


def test_a_route_ending_near_the_answer_needs_only_the_first_points(job, thol_lj):
    # the same state; a route T_f* of 0.80 starts the grid at 0.80: 0.80, 0.85, 0.90 suffice
    rec = coexistence_for_task(job, _route_result(job, thol_lj, 0.8, 0.75, 0.80))
    eps = job.units.epsilon_K
    assert len(rec["temperatures_K"]) == 3
    assert rec["final_temperature_K"]["value"] == pytest.approx(0.84785 * eps, abs=0.05)


def test_a_homogeneous_final_state_gets_a_reason_and_no_number(job, thol_lj, monkeypatch):
    # T* = 2, rho* = 0.3 to 0.15 stays supercritical (T_c* = 1.32, Thol 2016): no two-phase root
    # up to the last cached point (T* = 1.25); above it the sampler fails as it does above the
    # model's critical temperature (its StudyError, imitated here), and the search ends with
    # one line, no number
    import mdsim.sampling.coexistence as gibbs
    from mdsim.errors import StudyError

    def above_critical(*args, **kwargs):
        raise StudyError("the two boxes swapped roles (imitated)")
    monkeypatch.setattr(gibbs, "GibbsSampler", above_critical)
    job.T_i = job.units.temperature_to_K(2.0)
    job.rho_f = job.units.density_to_mol_m3(0.15)
    rec = coexistence_for_task(job, _route_result(job, thol_lj, 2.0, 0.3, 1.0))
    assert rec["available"] is False and "delta_T_K" not in rec
    assert "swapped roles" in rec["reason"] and "no vapour-liquid final state" in rec["reason"]
    assert len(rec["temperatures_K"]) == 6  # 1.00 to 1.25 cached, then 1.30 failed


def test_mixtures_and_molecules_are_not_treated(job, thol_lj):
    job.study = SimpleNamespace(gas=SimpleNamespace(n_species=2, molecules=None))
    rec = coexistence_for_task(job, _route_result(job, thol_lj, 0.8, 0.75, 0.43))
    assert rec == {"available": False, "reason": rec["reason"]} and "pure gas" in rec["reason"]
    assert coexistence_text(rec).startswith("through coexistence: no result: ")


def test_virial_final_states_are_checked_against_the_cached_curve(job):
    # The run directory's cache (Thol 2016 points, T* = 0.70 to 1.25) is the model's curve.
    # At T* = 0.85 the saturated vapour is rho* = 0.0075 and the liquid 0.77 (Thol 2016):
    # B2+B3 ending at rho* = 0.3 is inside, B2 ending at rho* = 0.004 (initial 0.008) is not
    u = job.units
    rec = {"initial": {"temperature_K": u.temperature_to_K(0.9),
                       "density_mol_m3": u.density_to_mol_m3(0.6)},
           "volume_ratio": 2.0, "warnings": [],
           "delta_T_K": {"virial_b2b3": {"value": u.temperature_to_K(0.85 - 0.9)}}}
    dilute = {**rec, "initial": {**rec["initial"], "density_mol_m3": u.density_to_mol_m3(0.008)},
              "delta_T_K": {"virial_b2": {"value": u.temperature_to_K(0.85 - 0.9)}},
              "warnings": []}
    assert warn_virial_in_dome(job.study, job.rd.coexistence_dir, [rec, dilute]) is True
    assert len(rec["warnings"]) == 1 and rec["warnings"][0].startswith("virial_b2b3: TWO-PHASE")
    assert dilute["warnings"] == []


def test_no_cached_curve_means_no_virial_check(tmp_path):
    study = read_study(ARGON)
    rec = {"warnings": []}
    assert warn_virial_in_dome(study, tmp_path / "empty", [rec]) is False
    assert rec["warnings"] == []


def test_a_gibbs_run_reports_its_progress_and_logs_lines(tmp_path):
    # the task's progress callback gets every block; log.txt a line at most every
    # LOG_EVERY_S seconds and at the end, whether or not there is a terminal
    from mdsim.pipeline.coexistence_route import LOG_EVERY_S, gibbs_progress
    seen = []
    rd = RunDir(tmp_path / "run")
    rd.path.mkdir(parents=True)
    task = SimpleNamespace(rd=rd, index=7, progress=lambda **kw: seen.append(kw))
    report = gibbs_progress(task, "coexistence-T0.900000", 0.9)
    for done in (500, 1000, 1500):   # three blocks within LOG_EVERY_S (10 s): one line
        report(done, 9000, (0.0151, 0.7523))
    report(9000, 9000, (0.0148, 0.7530))   # the end: always a line
    assert LOG_EVERY_S >= 5.0
    assert [s["done"] for s in seen] == [500, 1000, 1500, 9000]
    assert seen[0] == {"stage": "coexistence-T0.900000", "done": 500, "total": 9000}
    lines = rd.log_file.read_text(encoding="utf-8").splitlines()
    assert len(lines) == 2
    assert "task 0007 coexistence-T0.900000: Gibbs ensemble at T* = 0.9, cycle 500/9000" in lines[0]
    assert "cycle 9000/9000, box densities 0.0148 and 0.753" in lines[1]
