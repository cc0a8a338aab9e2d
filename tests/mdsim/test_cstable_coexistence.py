"""The optional coexistence grid of a corresponding-states table, and the route reading it.

A tiny table (2 x 1 simulated points, short runs) is built with one Gibbs-ensemble
coexistence point at T* = 1.1 (160 particles, rc = 2.5 sigma, the analytic tail per
box, 600 + 1200 cycles).  Checked: the grid read back for two gases of the same
shape (argon and an invented lighter one) equals the build's Gibbs cache read
directly and maps to SI by the reduced units alone; a gas of another cut-off is
refused; the point agrees with the Lennard-Jones reference EOS of Thol et al.,
J. Phys. Chem. Ref. Data 45, 023101 (2016), through teqp (test-only), within its
errors plus the truncation allowance of tests/mdsim/test_gibbs.py; and the
coexistence route, given a table through [simulation] coexistence_table, solves a
two-phase final state on its grid without any Gibbs run.
"""
from pathlib import Path
from types import SimpleNamespace

import h5py
import numpy as np
import pytest

from analysis.expansion import SampledExpansionResult
from analysis.heatcapacity import ConstantHeatCapacity
from mdsim.cstable import CorrespondingStatesTable, build_table, points_dir_for
from mdsim.cstable.coexistence import EQUILIBRATION_FRACTION, SAMPLE_INTERVAL, coexistence_dir_for
from mdsim.errors import StudyError
from mdsim.pipeline import RunDir
from mdsim.pipeline.coexistence_route import coexistence_for_task, coexistence_text
from mdsim.pipeline.task import CpuLedger
from mdsim.sampling import coexistence as coex
from mdsim.sampling.coexistence import CoexistencePoint, coexistence_point
from mdsim.sampling.coexistence_grid import grid_for, read_grid, write_grid
from mdsim.study.reader import read_study
from mdsim.study.writer import resolved_study_document

GAS = """[study]
name = "{name}"
[gas]
molar_mass = "{mass}"
ideal_heat_capacity = "1.5 R"
[potential]
form = "lennard-jones"
epsilon = "{eps}"
sigma = "{sigma}"
cutoff = {cutoff}
[initial]
temperature = "{T}"
density = "{rho}"
[expansion]
volume_ratio = 2.0
"""
ARGON = dict(name="argon", mass="39.948 g/mol", eps="119.8 K", sigma="3.405 angstrom",
             cutoff=2.5, T="95.84 K", rho="29000 mol/m^3")
# invented: a lighter gas of the same shape, for the corresponding-states mapping
OTHER = dict(name="invented-gas", mass="20.18 g/mol", eps="35.6 K", sigma="2.75 angstrom",
             cutoff=2.5, T="30 K", rho="50000 mol/m^3")
TABLE = """[table]
temperatures = [1.5, 2.0]
densities = [0.1]
particles = 64
equilibration = 100
samples = 200
seed = 3
coexistence_temperatures = [1.1]
coexistence_particles = 160
coexistence_cycles = 1200
"""


def _si(p, units):
    """A reduced coexistence point in SI through a study's reduced units."""
    return {"T": units.temperature_to_K(p.T_red), "rho_liq": units.density_to_mol_m3(p.rho_liq),
            "rho_vap": units.density_to_mol_m3(p.rho_vap), "u_vap": units.energy_to_J_mol(p.u_vap),
            "u_liq": units.energy_to_J_mol(p.u_liq), "p_sat": units.pressure_to_Pa(p.p_sat)}


def _study(folder, gas, extra=""):
    path = Path(folder) / f"{gas['name']}.toml"
    path.write_text(GAS.format(**gas) + extra, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    d = tmp_path_factory.mktemp("coextable")
    out = build_table(_study(d, ARGON, TABLE), d / "argon_table.h5", workers=1, progress=False)
    return d, out


def test_grid_is_reused_for_any_epsilon_and_sigma_of_the_shape(built, monkeypatch):
    d, path = built
    assert CorrespondingStatesTable.load(path).coexistence_T_red.tolist() == [1.1]
    monkeypatch.setattr(coex, "GibbsSampler", None)   # a run now would fail: cache reads only
    cycles = 1200
    settings = dict(n_particles=160, equilibration_cycles=int(EQUILIBRATION_FRACTION * cycles),
                    production_cycles=cycles, sample_interval=SAMPLE_INTERVAL, seed=3)
    tables = []
    for gas in (ARGON, OTHER):
        study = read_study(_study(d, gas))
        grid = grid_for(path, study.reduced_pairs())
        direct = coexistence_point(study.reduced_pairs(), 1.1,
                                   cache_dir=coexistence_dir_for(points_dir_for(path)), **settings)
        assert [p.T_red for p in grid] == [1.1]
        for key in ("rho_vap", "rho_liq", "u_vap", "u_liq", "p_sat", "rho_vap_err", "u_vap_err"):
            assert getattr(grid[0], key) == getattr(direct, key), key
        si_grid, si_direct = _si(grid[0], study.units), _si(direct, study.units)
        assert si_grid == si_direct
        tables.append(si_grid)
    # corresponding states (the reduced units alone): T as epsilon, rho as 1 / sigma^3,
    # u as epsilon, p as epsilon / sigma^3
    ratio_eps, ratio_sigma = 35.6 / 119.8, 2.75 / 3.405
    for key, power in (("T", (1, 0)), ("rho_liq", (0, -3)), ("rho_vap", (0, -3)),
                       ("u_vap", (1, 0)), ("u_liq", (1, 0)), ("p_sat", (1, -3))):
        assert tables[1][key] / tables[0][key] == pytest.approx(
            ratio_eps ** power[0] * ratio_sigma ** power[1], rel=1e-12), key
    # another cut-off is another model: refused
    with pytest.raises(StudyError, match="another potential shape or cut-off"):
        grid_for(path, read_study(_study(d, dict(ARGON, name="rc3", cutoff=3.0))).reduced_pairs())


def test_grid_point_against_thol_2016(built, thol_lj):
    # Thol et al. 2016 (teqp) at T* = 1.1: rho_v = 0.0548, rho_l = 0.642, p_sat = 0.0459.
    # Tolerance: 3 standard errors plus the allowance of test_gibbs.py's T* = 1.1 check
    # (0.02 in rho_l, 15 % in rho_v and p_sat: truncation at 2.5 sigma with g(r) = 1 beyond
    # it, N = 160-200 in two boxes; our estimate, not a published figure).
    _, path = built
    (pt,), attrs = read_grid(path)
    rl, rv = thol_lj.saturation(1.1)
    p = rv * 1.1 * (1.0 + thol_lj.model.get_Ar01(1.1, rv, np.array([1.0])))
    assert abs(pt.rho_liq - rl) < 3 * pt.rho_liq_err + 0.02
    assert abs(pt.rho_vap / rv - 1) < 3 * pt.rho_vap_err / rv + 0.15
    assert abs(pt.p_sat / p - 1) < 3 * pt.p_sat_err / p + 0.15
    # the model the points belong to is stated with them: coexistence depends on it
    assert attrs["cutoff_red"] == 2.5 and pt.cutoff_red == 2.5
    assert attrs["tail"] == coex.TAIL_TREATMENT


@pytest.fixture
def table_study(tmp_path, thol_lj):
    """Argon (rc = 3) naming a table file whose grid is the Thol 2016 coexistence, 0.70 to
    0.90 (invented errors; the wiring, not the Gibbs ensemble, is tested here)."""
    gas = dict(ARGON, cutoff=3.0)
    study = read_study(_study(tmp_path, gas))
    pts = []
    for t in (0.70, 0.75, 0.80, 0.85, 0.90):
        rl, rv = thol_lj.saturation(t)
        pts.append(CoexistencePoint(t, rv, 2e-4, rl, 2e-3, thol_lj.u_res(t, rv), 2e-3,
                                    thol_lj.u_res(t, rl), 2e-3, 0.0, 0.0, 0.0, 0.0, 300, 3000,
                                    6000, 3.0))
    with h5py.File(tmp_path / "lj_table.h5", "w") as f:
        write_grid(f, pts, study.reduced_pairs())
    path = _study(tmp_path, gas, '[simulation]\ncoexistence_table = "lj_table.h5"\n')
    return read_study(path)


def test_the_route_solves_on_the_table_without_a_gibbs_run(table_study, tmp_path, thol_lj,
                                                           monkeypatch):
    monkeypatch.setattr(coex, "GibbsSampler", None)
    u = table_study.units
    job = SimpleNamespace(study=table_study, units=u, rd=RunDir(tmp_path / "run"),
                          feynman_hibbs=False, initial_chain=None, T_i=u.temperature_to_K(0.8),
                          rho_f=u.density_to_mol_m3(0.375),
                          cv_ig=ConstantHeatCapacity.in_units_of_R(1.5),
                          ledger=CpuLedger(tmp_path / "ledger.json"))
    res = SampledExpansionResult("energy", "newton", job.T_i, u.temperature_to_K(0.43), 0.3,
                                 u.temperature_to_K(0.43 - 0.8), 0.3,
                                 details={"initial_u_res_J_mol":
                                          u.energy_to_J_mol(thol_lj.u_res(0.8, 0.75)),
                                          "initial_u_res_stderr_J_mol": 5.0})
    rec = coexistence_for_task(job, res)
    # the Thol construction (test_coexistence_for_task.py): T_f* = 0.84785, x = 0.01318,
    # within the spline's 0.05 K and 2e-4 over points 0.05 T* apart
    assert rec["available"] is True
    assert rec["final_temperature_K"]["value"] == pytest.approx(0.84785 * 119.8, abs=0.05)
    assert rec["vapour_fraction"]["value"] == pytest.approx(0.01318, abs=2e-4)
    assert "lj_table.h5" in rec["source"] and "lj_table.h5" in coexistence_text(rec)
    assert not job.rd.coexistence_dir.exists()   # nothing computed, nothing cached


def test_the_table_path_is_checked_and_copied_with_the_run(table_study, tmp_path):
    assert Path(table_study.simulation["coexistence_table"]) == (tmp_path / "lj_table.h5")
    copies = {}
    doc = resolved_study_document(table_study, copies)
    assert doc["simulation"]["coexistence_table"] == "inputs/lj_table.h5"
    assert copies == {"inputs/lj_table.h5": str(tmp_path / "lj_table.h5")}
    missing = _study(tmp_path, dict(ARGON, name="missing"),
                     '[simulation]\ncoexistence_table = "none.h5"\n')
    with pytest.raises(StudyError, match="coexistence_table.*does not exist"):
        read_study(missing)


def test_a_build_from_before_the_grid_resumes_without_one(tmp_path):
    # a plan.json written before the coexistence keys existed stands for "no grid" with the
    # default sizes: the same build resumes; asking for a grid is another build
    import json

    from mdsim.cstable import table_settings, write_plan
    study = read_study(_study(tmp_path, ARGON, TABLE.split("coexistence_temperatures")[0]))
    plan = write_plan(tmp_path / "t.h5.points", table_settings(study), study)
    old = {k: v for k, v in plan.items() if not k.startswith("coexistence_")}
    (tmp_path / "t.h5.points" / "plan.json").write_text(json.dumps(old), encoding="utf-8")
    write_plan(tmp_path / "t.h5.points", table_settings(study), study)
    grid = read_study(_study(tmp_path, dict(ARGON, name="grid"), TABLE))
    with pytest.raises(StudyError, match="coexistence_temperatures"):
        write_plan(tmp_path / "t.h5.points", table_settings(grid), grid)
