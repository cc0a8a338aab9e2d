"""Run reports: build_report on a small real run, and on the same run with tasks removed."""
import contextlib
import csv
import io
import json
import math
import shutil

import numpy as np
import pytest

from mdsim.cli import main
from mdsim.errors import StudyError
from mdsim.pipeline import build_report
from mdsim.pipeline.report_tables import particle_cell, results_table, virial_table
from mdsim.pipeline.results_files import CSV_COLUMNS

EPS_K = 175.0  # epsilon/k of the test gas (K)

TINY_STUDY = f"""
[study]
name = "tiny-report"
description = "a small study for the report tests"

[gas]
name = "testgas"
molar_mass = "157 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "{EPS_K} K"
sigma = "3.9 angstrom"
cutoff = 2.5
source = "made-up parameters for a test"

[initial]
temperature = "295.15 K"

[expansion]
volume_ratio = 2.0

[sweep]
pressure = ["10 bar", "30 bar"]

[simulation]
routes = ["energy", "microcanonical", "direct"]
particles = 64
target_stderr = "1 K"
max_cpu_time = "20 s"
seed = 3
"""

ROUTES_PER_POINT = ("virial_b2", "virial_b2b3", "energy", "microcanonical", "direct")
N_POINTS = 2
N_TASKS = 6  # 2 state points x 3 simulation routes, energy-microcanonical-direct


@pytest.fixture(scope="module")
def real_run(tmp_path_factory):
    """A real run through 'mdsim run' (which ends with build_report); (dir, printed JSON)."""
    base = tmp_path_factory.mktemp("report")
    study = base / "tiny.toml"
    study.write_text(TINY_STUDY, encoding="utf-8")
    out = base / "run"
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        status = main(["run", str(study), "--out", str(out), "--workers", "1", "--quiet",
                       "--json"])
    assert status == 0
    return out, json.loads(printed.getvalue())


@pytest.fixture(scope="module")
def run_dir(real_run):
    return real_run[0]


@pytest.fixture(scope="module")
def summary(real_run):
    return real_run[1]


def test_every_file_is_written(run_dir, summary):
    for name in ("results.csv", "results.json", "report.md", "study.toml", "tasks.json"):
        assert (run_dir / name).is_file(), name
    plots = run_dir / "plots"
    stems = {p.stem for p in plots.glob("*.png")}
    assert {"delta_T", "inversion"} <= stems
    assert sum(s.startswith("energy_") for s in stems) == N_POINTS
    assert sum(s.startswith("direct_") for s in stems) == N_POINTS
    assert sum(s.startswith("microcanonical_") for s in stems) == N_POINTS
    for stem in stems:
        assert (plots / f"{stem}.pdf").is_file(), stem
    assert set(summary["files"]) >= {"results.csv", "results.json", "report.md",
                                     "plots/delta_T.png", "plots/delta_T.pdf"}


def test_plots_are_nonempty_pngs(run_dir, summary):
    import matplotlib.image as mpimg
    for path in sorted((run_dir / "plots").glob("*.png")):
        raw = path.read_bytes()
        assert raw[:8] == b"\x89PNG\r\n\x1a\n", path.name
        img = mpimg.imread(path)
        assert img.shape[0] > 300 and img.shape[1] > 300, path.name
        # something is drawn: a blank canvas has one colour
        assert float(np.std(img[..., :3])) > 0.05, path.name
    for path in sorted((run_dir / "plots").glob("*.pdf")):
        assert path.read_bytes()[:5] == b"%PDF-", path.name


def test_results_json_has_the_agreed_shape(run_dir, summary):
    on_disk = json.loads((run_dir / "results.json").read_text(encoding="utf-8"))
    assert on_disk == summary
    assert on_disk["study"] == "tiny-report"
    points = on_disk["state_points"]
    assert [p["index"] for p in points] == list(range(N_POINTS))
    for p in points:
        for end in ("initial", "final"):
            assert {"temperature_K", "pressure_Pa", "density_mol_m3"} <= set(p[end])
        assert p["final"]["source"] == "energy"  # the best route that ran
        assert set(p["delta_T_K"]) == set(ROUTES_PER_POINT)
        for route, entry in p["delta_T_K"].items():
            assert set(entry) == {"value", "stderr"}
            assert math.isfinite(entry["value"])
            if route.startswith("virial"):
                assert entry["stderr"] is None
            else:
                assert entry["stderr"] > 0
        assert isinstance(p["entropy_generated_J_molK"], float)
        assert isinstance(p["warnings"], list)
    assert on_disk["tasks"]["done"] == list(range(N_TASKS))
    assert on_disk["tasks"]["failed"] == [] and on_disk["tasks"]["missing"] == []


def test_low_pressure_simulation_agrees_with_virial(summary):
    # Fact of the trade (no source): the virial series is exact at low density, so at
    # 10 bar (rho* ~ 0.015) the energy route must match B2+B3 within its error bar.
    p = summary["state_points"][0]
    sim, vir = p["delta_T_K"]["energy"], p["delta_T_K"]["virial_b2b3"]
    # 4 standard errors: a fixed-seed check that is not a coin toss
    assert abs(sim["value"] - vir["value"]) < 4.0 * sim["stderr"]


def test_inversion_temperatures_match_the_published_lj_values(summary):
    inv = summary["inversion"]
    # maximum of B2 at T* = 25.15, zero-pressure Joule-Thomson inversion at T* = 6.43
    # (docs/references.md section 2.4, following from the B2 integral); 0.2 %: both are given to 4 figures
    assert inv["joule_inversion_zero_density_K"] / EPS_K == pytest.approx(25.15, rel=2e-3)
    assert inv["joule_thomson_inversion_zero_pressure_K"] / EPS_K == pytest.approx(6.43,
                                                                                    rel=2e-3)


def _read_csv(path):
    with open(path, newline="", encoding="utf-8") as fh:
        reader = csv.DictReader(fh)
        return reader.fieldnames, list(reader)


UNIT_SUFFIXES = ("_K", "_Pa", "_mol_m3", "_seconds", "_J_molK")
DIMENSIONLESS = {"volume_ratio", "n_particles", "seed", "task_index", "state_point_index"}
TEXT = {"route", "status", "stopped_by", "warnings", "initial_density_from"}


def test_csv_columns_carry_units_and_match_the_json(run_dir, summary):
    header, rows = _read_csv(run_dir / "results.csv")
    assert tuple(header) == CSV_COLUMNS
    for col in header:
        assert col in TEXT or col in DIMENSIONLESS or col.endswith(UNIT_SUFFIXES), col
    assert len(rows) == N_POINTS * len(ROUTES_PER_POINT)  # one row per state point and route
    for row in rows:
        assert row["status"] == "done"
        rec = summary["state_points"][int(row["state_point_index"])]
        entry = rec["delta_T_K"][row["route"]]
        assert float(row["delta_T_K"]) == entry["value"]
        assert float(row["initial_temperature_K"]) == rec["initial"]["temperature_K"]
        if entry["stderr"] is None:
            assert row["delta_T_stderr_K"] == ""
        else:
            assert float(row["delta_T_stderr_K"]) == entry["stderr"]
        # each route's own entropy generated, the same number in both files
        ds = rec["delta_s_J_molK"][row["route"]]
        assert row["entropy_generated_J_molK"] == ("" if ds["value"] is None
                                                   else repr(float(ds["value"])))


def test_report_md_has_cautions_settings_and_results(run_dir, summary):
    text = (run_dir / "report.md").read_text(encoding="utf-8")
    for phrase in ("can injure", "not a design basis", "pressure-equipment codes",
                   "licensed engineering practice"):
        assert phrase in text, phrase
    assert "made-up parameters for a test" in text  # the potential's provenance
    assert "1.5 R" in text  # the c_v_ig assumption
    assert "[3, 0]" in text and "[3, 5]" in text  # task seeds
    assert "Versions: python" in text and "numba" in text
    assert "None: every planned task finished." in text
    for stem in ("delta_T", "inversion"):
        assert f"(plots/{stem}.png)" in text
    # the results table has one line per state point, the particles of its tasks in a column
    rows = [line for line in text.splitlines() if line.startswith(("| 0 |", "| 1 |"))]
    # the results table, the per-route entropy table, the virial-coefficient table, and the
    # initial-state table (a row for the virial routes and one per simulation route)
    assert len(rows) == 3 * N_POINTS + N_POINTS * (1 + 3)
    assert all(line.split(" | ")[5] == "64" for line in rows[:N_POINTS])
    assert "- particles:" not in text  # no separate list of particle counts
    # T_f carries its error: the cell is exactly the two-figure rounding of the JSON numbers
    from mdsim.numbers import value_with_error
    fin = summary["state_points"][0]["final"]
    tf_cell = value_with_error(fin["temperature_K"], fin["temperature_stderr_K"])
    assert " ± " in tf_cell and f" {tf_cell} | energy |" in rows[0]


@pytest.fixture()
def damaged_copy(run_dir, tmp_path):
    """The run with task 2 (direct, point 0) never run and task 3 (energy, point 1) failed."""
    copy = tmp_path / "copy"
    shutil.copytree(run_dir, copy)
    (copy / "tasks" / "0002.h5").unlink()
    shutil.rmtree(copy / "tasks" / "0002.stages", ignore_errors=True)  # never started
    (copy / "tasks" / "0003.h5").unlink()
    (copy / "tasks" / "0003.failed.json").write_text(
        json.dumps({"index": 3, "error": "the sampler ran out of memory (made up for a test)"}),
        encoding="utf-8")
    return copy


def test_missing_and_failed_tasks_are_listed(damaged_copy):
    out = build_report(damaged_copy, plots=False)
    assert out["tasks"]["done"] == [0, 1, 4, 5]
    assert [m["index"] for m in out["tasks"]["missing"]] == [2]
    assert out["tasks"]["missing"][0]["route"] == "direct"
    assert [f["index"] for f in out["tasks"]["failed"]] == [3]
    assert "out of memory" in out["tasks"]["failed"][0]["error"]
    # the routes without a result are absent from the records, not filled in
    assert "direct" not in out["state_points"][0]["delta_T_K"]
    assert "energy" not in out["state_points"][1]["delta_T_K"]
    text = (damaged_copy / "report.md").read_text(encoding="utf-8")
    assert "task 2 (direct, state point 0): not run" in text
    assert "task 3 (energy, state point 1): FAILED: the sampler ran out of memory" in text
    _, rows = _read_csv(damaged_copy / "results.csv")
    status = {(r["state_point_index"], r["route"]): r["status"] for r in rows}
    assert status[("0", "direct")] == "missing (not run)"
    assert status[("1", "energy")] == "failed"
    assert status[("1", "direct")] == "done"
    assert len(rows) == N_POINTS * len(ROUTES_PER_POINT)  # nothing dropped


def test_rebuild_from_the_files_gives_the_same_numbers(run_dir, summary, tmp_path):
    copy = tmp_path / "rebuilt"
    shutil.copytree(run_dir, copy)
    again = build_report(copy, plots=False)
    assert again["state_points"] == summary["state_points"]
    assert again["tasks"] == summary["tasks"]
    # a rebuild without drawing keeps showing the figures that are there, and says so
    text = (copy / "report.md").read_text()
    assert "](plots/delta_T.png)" in text and "not redrawn" in text
    # and keeps every result: the Joule inversion is computed without drawing
    assert again["inversion"] == summary["inversion"]
    assert "## Joule inversion (virial route, B2 + B3)" in text
    assert "## Results" in text and "## Virial estimates against simulation" in text


def test_report_command_rebuilds_and_prints_json(damaged_copy, capsys):
    assert main(["report", str(damaged_copy), "--json", "--no-plots", "--quiet"]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert printed["tasks"]["done"] == [0, 1, 4, 5]


def test_not_a_run_directory(tmp_path, capsys):
    with pytest.raises(StudyError, match="not a run directory"):
        build_report(tmp_path)
    assert main(["report", str(tmp_path / "nowhere")]) == 2
    assert "is not a directory" in capsys.readouterr().err


def _synthetic_point():
    """A state point and its record with made-up numbers whose rounding is worked by hand."""
    from types import SimpleNamespace
    sp = SimpleNamespace(index=0, volume_ratio=2.0, temperature_K=295.15)
    rec = {"initial": {"temperature_K": 295.15, "pressure_Pa": 1.0e6,
                       "density_mol_m3": 412.3456},
           "final": {"temperature_K": 289.6834, "temperature_stderr_K": 0.04237,
                     "source": "energy"},
           "delta_T_K": {"virial_b2": {"value": -5.41234, "stderr": None},
                         "energy": {"value": -5.4666, "stderr": 0.04237}},
           "entropy_generated_J_molK": 5.7312,
           "simulation": {"energy": {"n_particles": 1092}, "direct": {"n_particles": 2000}},
           "virial": {"temperature_K": 295.15, "B2_m3_mol": -1.8765e-4,
                      "dB2_dT_m3_molK": 1.234e-6, "B3_m6_mol2": 1.1e-8,
                      "dB3_dT_m6_mol2K": -2.2e-11}}
    return sp, rec


def test_results_row_rounds_each_value_to_its_error():
    sp, rec = _synthetic_point()
    cells = results_table([sp], [rec])[2].strip("| ").split(" | ")
    # error 0.04237 -> 0.042 (two figures), so the value to three decimals
    assert cells[8] == "-5.467 ± 0.042"  # Delta T, energy route
    assert cells[11] == "289.683 ± 0.042"  # T_f with its error
    assert cells[6] == "-5.4123"  # a virial value has no error: five figures
    assert cells[5] == "energy 1092, direct 2000"  # routes with different N, per route
    assert cells[2] == "10" and cells[7] == "-"  # p_i in bar; a route not run


def test_particle_cell_is_one_number_when_the_routes_agree():
    assert particle_cell({"simulation": {"energy": {"n_particles": 64},
                                         "direct": {"n_particles": 64}}}) == "64"
    assert particle_cell({"simulation": {}}) == "-"


def test_virial_table_is_in_cm_units():
    sp, rec = _synthetic_point()
    head, _, row = virial_table([sp], [rec])
    assert "B2 (cm^3/mol)" in head and "B3 (cm^6/mol^2)" in head
    assert "dB2/dT (cm^3/(mol K))" in head and "dB3/dT (cm^6/(mol^2 K))" in head
    # -1.8765e-4 m^3/mol = -187.65 cm^3/mol; 1.1e-8 m^6/mol^2 = 11000 cm^6/mol^2
    assert row.strip("| ").split(" | ") == ["0", "295.15", "-187.65", "1.234", "11000", "-22"]


def test_plot_labels_write_T_f_with_its_rounded_error(monkeypatch, tmp_path):
    from mdsim.pipeline import plots
    drawn = []
    monkeypatch.setattr(plots, "save", lambda fig, stem: drawn.append(fig) or [])
    plots.plot_series({"temperature_K": np.linspace(290.0, 289.7, 20)}, "t", tmp_path / "s",
                      final_T_K=289.6834, final_T_stderr_K=0.04237)
    labels = [t.get_text() for ax in drawn[0].axes for t in ax.get_legend().get_texts()]
    assert labels == ["T_f = 289.683 ± 0.042 K"]
