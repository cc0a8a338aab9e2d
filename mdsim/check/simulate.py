"""Fresh simulations for ``mdsim check``: one ordinary run directory per measured state.

When the study asks for simulation routes (its ``[simulation]`` table lists
``routes``), every measurement that no earlier run directory already holds
gets a study of its own: the checked study with ``[initial]`` and
``[expansion]`` set to that measurement's state.  It is run through the
normal pipeline (``prepare_run_dir``, the local process pool,
``build_report``) into ``OUT/simulations/row-LLLL`` (LLLL the measurement's
line in its file), so the runs are resumable, reusable as ``runs_dir`` of a
check and readable with ``mdsim report`` like any other.
"""
import json
import logging
import shutil
import sys
from pathlib import Path

from mdsim.errors import StudyError

log = logging.getLogger(__name__)


def study_asks_for_simulation(study):
    """True when the study file itself lists simulation routes."""
    sim = study.raw.get("simulation") if isinstance(study.raw, dict) else None
    return bool(isinstance(sim, dict) and sim.get("routes"))


def _row_document(study, data, k, copies):
    from mdsim.study.writer import resolved_study_document
    doc = resolved_study_document(study, copies)
    doc.pop("sweep", None)
    doc["study"] = dict(doc.get("study", {}))
    doc["study"]["name"] = f"{study.name}-row{int(data.line_n[k]):04d}"
    initial = {"temperature": f"{float(data.temperature_K[k])!r} K"}
    if data.pressure_Pa is not None:
        initial["pressure"] = f"{float(data.pressure_Pa[k])!r} Pa"
    else:
        initial["density"] = f"{float(data.density_mol_m3[k])!r} mol/m^3"
    doc["initial"] = initial
    doc["expansion"] = {"volume_ratio": float(data.volume_ratio[k])}
    return doc


def simulate_rows(study, data, rows, sim_dir, workers=None, quiet=False):
    """Run the study's simulation routes at the measured states ``rows``.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    data : mdsim.check.measurements.ExpansionData
    rows : list of int
        Indices of the measurements to simulate.
    sim_dir : Path
        Where the row studies and their run directories go.
    workers : int, optional
        Processes of the local pool (default: the cores).

    Returns
    -------
    dict
        ``done`` (rows with a finished run directory), ``failed`` ({row: error}).
    """
    import functools
    from mdsim.execute.local import run_local
    from mdsim.pipeline.jobs import task_job
    from mdsim.pipeline.prepare import prepare_run_dir
    from mdsim.study.writer import dumps_toml
    from mdsim.pipeline.report import build_report
    from mdsim.study.reader import read_study
    sim_dir = Path(sim_dir)
    sim_dir.mkdir(parents=True, exist_ok=True)
    done, failed = [], {}
    for count, k in enumerate(rows, 1):
        line = int(data.line_n[k])
        copies = {}
        doc = _row_document(study, data, k, copies)
        for dest, src in copies.items():
            target = sim_dir / dest
            target.parent.mkdir(parents=True, exist_ok=True)
            shutil.copyfile(src, target)
        study_file = sim_dir / f"row-{line:04d}.toml"
        study_file.write_text(dumps_toml(doc), encoding="utf-8")
        if not quiet:
            print(f"check: simulating measurement {count} of {len(rows)} (line {line} of "
                  f"{data.path.name})", file=sys.stderr, flush=True)
        try:
            row_study = read_study(study_file)
            rd, tasks = prepare_run_dir(row_study, sim_dir / f"row-{line:04d}")
            rd.acquire_lock()
            try:
                pending = [t["index"] for t in tasks if rd.task_state(t["index"]) != "done"]
                outcome = run_local(functools.partial(task_job, str(rd.path)), pending,
                                    workers=workers)
                errors = {i: e for i, e in outcome.items() if e}
                build_report(rd.path, plots=False)
            finally:
                rd.release_lock()
        except StudyError as exc:
            failed[k] = " ".join(str(exc).split())
            log.warning("measurement on line %d: not simulated: %s", line, failed[k])
            continue
        if errors:
            failed[k] = "; ".join(f"task {i}: {e}" for i, e in sorted(errors.items()))
        else:
            done.append(k)
    (sim_dir / "rows.json").write_text(json.dumps(
        {"done_lines": [int(data.line_n[k]) for k in done],
         "failed": {str(int(data.line_n[k])): e for k, e in failed.items()}}, indent=1),
        encoding="utf-8")
    return {"done": done, "failed": failed}
