"""Whole-job benchmarks: studies through ``mdsim run``, timed (``python -m mdsim.bench_job``).

Two cases, both energy route, volume doubled, the number of particles, the
sampler's step, the sample spacing and the run length left to the tool:

- ``argon``: argon as Lennard-Jones (epsilon/k = 119.8 K, sigma = 3.405
  angstrom, 39.948 g/mol, c_v_ig = 1.5 R) from 295.15 K and 22 bar,
  ``target_stderr = "0.02 K"``; goal: under 40 CPU-s.
- ``dense``: the Lennard-Jones fluid at T* = 10, rho* = 0.9 (the warming
  regime of the Joule expansion), with epsilon/k = 100 K, sigma = 3.405
  angstrom and 39.948 g/mol (so T_i = 1000 K and rho_i = 0.9 / (N_A
  sigma^3) = 37856.48 mol/m^3), c_v_ig = 1.5 R,
  ``target_stderr = "0.3 K"`` (0.003 in reduced temperature); goal: under
  200 CPU-s.

Each case runs in a fresh Python process, ``python -m mdsim run STUDY
--no-plots`` in effect (the report's tables and text, not its figures;
``--plots`` draws them too), and prints the CPU time of that process and its
workers from its start (interpreter, imports, numba kernel loading or
compiling, the task, the report), the CPU time of the task's stages (its
ledger) split by part of the job, the wall time, the standard error reached,
the answer against its reference, and what the tool chose.  ``--cache``:
``warm`` (numba's cache as found: compiled by an earlier run), ``cold`` (an
empty numba cache, so every kernel the job uses is compiled inside the
figure) or ``both`` (cold, then warm on the cache the cold run filled).
References: the dense case against the Lennard-Jones equation of state of
Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), T_f* = 10.87960
(Delta T = +87.96 K at epsilon/k = 100 K, computed through teqp 0.23:
u(T_f*, 0.45) = u(10, 0.9)); argon against real argon, CoolProp 8.0
(Tegeler et al. 1999): Delta T = -5.413 K from 909.04 mol/m^3.  The LJ
model is not real argon, and both reference values carry what separates the
simulated model (cut-off with the analytic tail, finite N) from them.  A
benchmark, not a test: timings on a shared machine are noisy.
"""
import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

STUDY = """\
[study]
name = "bench-{name}-job"
description = "Whole-job benchmark: {description}"

[gas]
name = "{gas}"
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "{epsilon}"
sigma = "3.405 angstrom"
cutoff = 3.0

[initial]
temperature = "{temperature}"
{state}

[expansion]
volume_ratio = 2.0

[simulation]
routes = ["energy"]
target_stderr = "{target}"
max_cpu_time = "{budget}"
seed = 2024
"""

CASES = {
    "argon": {"gas": "argon", "epsilon": "119.8 K", "temperature": "295.15 K",
              "state": 'pressure = "22 bar"', "target": "0.02 K", "budget": "10 min",
              "goal_cpu_s": 40.0, "reference_delta_T_K": -5.413,
              "reference": "real argon, CoolProp 8.0 (not the LJ model)",
              "description": "argon (LJ) from 295.15 K and 22 bar, volume doubled"},
    "dense": {"gas": "dense-lj", "epsilon": "100 K", "temperature": "1000 K",
              "state": 'density = "37856.4825 mol/m^3"', "target": "0.3 K",
              "budget": "30 min", "goal_cpu_s": 200.0, "reference_delta_T_K": 87.96,
              "reference": "LJ EOS of Thol et al. 2016 (teqp)",
              "description": "LJ fluid at T* = 10, rho* = 0.9 (epsilon/k = 100 K, sigma = "
                             "3.405 angstrom), volume doubled"},
}
"""The benchmark cases: study-file values and the CPU-time goal of each."""


def _cpu_seconds():
    """CPU seconds of this process since its start and of its finished workers."""
    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


PARTS = (("sampler choice pilots", ("-choice-", "-sampler")), ("entropy insertion runs", ("insertion-",)),
         ("phase snapshots", ("phase-snapshot",)), ("pressure iteration", ("initial-state-try",)),
         ("initial state", ("initial-state",)), ("final density", ("final-density-guess",)))
"""Where a stage's CPU time is booked, by the first pattern its name contains (in this order)."""


def _cpu_by_part(ledger):
    """CPU seconds of the task's stages by part of the job (:data:`PARTS`), from its ledger.

    The sampler choice's MC pilot at the final density doubles as that chain's pilot and
    is booked under "final density"; the accepted density of a pressure iteration is the
    initial state's chain and is booked under "pressure iteration".

    >>> _cpu_by_part({"initial-state-choice-md-pilot": {"cpu_s": 2.0},
    ...               "initial-state-00": {"cpu_s": 10.0}, "insertion-final-00": {"cpu_s": 1.0}})
    {'sampler choice pilots': 2.0, 'entropy insertion runs': 1.0, 'initial state': 10.0}
    """
    out = {}
    for name, row in ledger.items():
        part = next((p for p, keys in PARTS if any(k in name for k in keys)), "other")
        out[part] = round(out.get(part, 0.0) + float(row["cpu_s"]), 3)
    return {p: out[p] for p, _ in PARTS + (("other", ()),) if p in out}


def run_case(name, target=None, workers=1, out=None, plots=False):
    """Run one case through ``mdsim run`` in this process and return its figures (dict), or an
    int status.  CPU time is counted from this process's start (:func:`_cpu_seconds`)."""
    from mdsim.cli import main as cli_main
    from mdsim.pipeline import read_task_result
    case = dict(CASES[name])
    if target:
        case["target"] = target
    with tempfile.TemporaryDirectory(prefix="mdsim-bench-job-") as tmp:
        study = Path(tmp) / "bench.toml"
        study.write_text(STUDY.format(name=name, **case), encoding="utf-8")
        run_dir = Path(out) / name if out else Path(tmp) / "run"
        wall0 = time.perf_counter()
        status = cli_main(["run", str(study), "--out", str(run_dir), "--workers", str(workers),
                           "--quiet", *([] if plots else ["--no-plots"])])
        wall = time.perf_counter() - wall0
        cpu = _cpu_seconds()
        if status != 0:
            return status
        _, res, _ = read_task_result(run_dir / "tasks" / "0000.h5")
        ledger = json.loads((run_dir / "tasks" / "0000.stages" / "cpu-time-ledger.json")
                            .read_text(encoding="utf-8"))
    d = res["details"]
    dT, se = res["delta_T_K"]["value"], res["delta_T_K"]["stderr"]
    return {
        "case": f"{name}: {case['description']}, energy route",
        "report_figures": "drawn" if plots else "not drawn (mdsim run --no-plots)",
        "target_stderr_K": res["target_stderr_K"],
        "delta_T_K": dT,
        "stderr_reached_K": se,
        "stderr_parts_K": res.get("delta_T_stderr_parts_K"),
        "reference_delta_T_K": case["reference_delta_T_K"],
        "reference": case["reference"],
        "off_reference_in_stderr": (dT - case["reference_delta_T_K"]) / se,
        "stopped_by": res["stopped_by"],
        "cpu_seconds_total": cpu,
        "cpu_seconds_goal": case["goal_cpu_s"],
        "cpu_seconds_sampling": res["cpu_seconds"],
        "cpu_seconds_outside_sampling": cpu - res["cpu_seconds"],
        "cpu_seconds_by_part": _cpu_by_part(ledger),
        "wall_seconds": wall,
        "n_particles": res["n_particles"],
        "sample_interval_initial_state": d.get("sample_interval"),
        "initial_samples": d.get("initial_samples"),
        "final_samples": d.get("final_samples"),
        "final_temperatures_sampled": d.get("newton_temperatures"),
        "sampler_initial_state": d.get("sampler_initial"),
        "sampler_final_state": d.get("sampler_final"),
        "sampler_chosen_by": d.get("sampler_chosen_by"),
        "method": res["method"],
    }


def _in_fresh_process(name, args, cache_dir, mode):
    """Run one case in a new Python process (numba's cache in ``cache_dir``, or numba's own when
    None; run directories under ``--out``/``mode``); returns its figures (dict) or an int
    status."""
    cmd = [sys.executable, "-m", "mdsim.bench.job", "--one", name, "--workers", str(args.workers)]
    out = Path(args.out) / mode if args.out else None
    for flag, value in (("--target", args.target), ("--out", out)):
        if value:
            cmd += [flag, str(value)]
    if args.plots:
        cmd.append("--plots")
    env = dict(os.environ)
    if cache_dir is not None:
        env["NUMBA_CACHE_DIR"] = str(cache_dir)
    done = subprocess.run(cmd, env=env, stdout=subprocess.PIPE, text=True)
    if done.returncode != 0:
        return done.returncode
    return json.loads(done.stdout)


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python -m mdsim.bench_job", description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--case", choices=[*CASES, "all"], default="all",
                        help="which case to run (default: all)")
    parser.add_argument("--target", help="target stderr, overriding the case's (e.g. \"0.05 K\")")
    parser.add_argument("--workers", type=int, default=1, help="local workers (default 1)")
    parser.add_argument("--out", help="folder for the run directories (default: temporary)")
    parser.add_argument("--plots", action="store_true", help="draw the report's figures too")
    parser.add_argument("--cache", choices=("warm", "cold", "both"), default="warm",
                        help="numba's kernel cache: as found (warm, the default), empty (cold), "
                             "or cold then warm (both)")
    parser.add_argument("--one", choices=list(CASES), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.one:  # the fresh process of one case
        report = run_case(args.one, args.target, args.workers, args.out, args.plots)
        if isinstance(report, int):
            return report
        print(json.dumps(report))
        return 0
    names = list(CASES) if args.case == "all" else [args.case]
    modes = ("cold", "warm") if args.cache == "both" else (args.cache,)
    with tempfile.TemporaryDirectory(prefix="mdsim-bench-numba-") as numba_dir:
        for name in names:
            for mode in modes:
                # cold: an empty cache of the case's own; warm after cold: the cache it filled
                cache = Path(numba_dir) / name if args.cache != "warm" else None
                report = _in_fresh_process(name, args, cache, mode)
                if isinstance(report, int):
                    print(f"bench_job: {name}: mdsim run failed with status {report}",
                          file=sys.stderr)
                    return report
                report["numba_cache"] = (f"{mode}: " + ("empty at the start, every kernel "
                                                         "compiled inside the figure"
                                                         if mode == "cold" else
                                                         "kernels compiled by an earlier run"))
                print(json.dumps(report, indent=2), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
