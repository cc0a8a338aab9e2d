"""Whole-job benchmark: one study through ``mdsim run``, timed (``python -m mdsim.bench_job``).

The case: argon as Lennard-Jones (epsilon/k = 119.8 K, sigma = 3.405
angstrom, 39.948 g/mol, c_v_ig = 1.5 R), from 295.15 K and 22 bar into
twice the volume, energy route, ``target_stderr = "0.02 K"``.  The number
of particles, the sample spacing and the run length are the tool's own
choice.  Prints the CPU time (this process and its workers), the wall
time, the standard error reached and what the tool chose.  A benchmark,
not a test: timings on a shared machine are noisy.
"""
import argparse
import json
import resource
import sys
import tempfile
import time
from pathlib import Path

STUDY = """\
[study]
name = "bench-argon-job"
description = "Whole-job benchmark: argon (LJ) from 295.15 K and 22 bar, volume doubled"

[gas]
name = "argon"
molar_mass = "39.948 g/mol"
ideal_heat_capacity = "1.5 R"

[potential]
form = "lennard-jones"
epsilon = "119.8 K"
sigma = "3.405 angstrom"
cutoff = 3.0

[initial]
temperature = "295.15 K"
pressure = "22 bar"

[expansion]
volume_ratio = 2.0

[simulation]
routes = ["energy"]
target_stderr = "{target}"
max_cpu_time = "10 min"
seed = 2024
"""


def _cpu_seconds():
    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python -m mdsim.bench_job", description=__doc__)
    parser.add_argument("--target", default="0.02 K", help='target stderr (default "0.02 K")')
    parser.add_argument("--workers", type=int, default=1, help="local workers (default 1)")
    parser.add_argument("--out", help="run directory (default: a temporary one)")
    args = parser.parse_args(argv)
    from mdsim.cli import main as cli_main
    from mdsim.pipeline import read_task_result
    with tempfile.TemporaryDirectory(prefix="mdsim-bench-job-") as tmp:
        study = Path(tmp) / "bench.toml"
        study.write_text(STUDY.format(target=args.target), encoding="utf-8")
        out = Path(args.out) if args.out else Path(tmp) / "run"
        cpu0, wall0 = _cpu_seconds(), time.perf_counter()
        status = cli_main(["run", str(study), "--out", str(out), "--workers", str(args.workers),
                           "--quiet"])
        wall = time.perf_counter() - wall0
        cpu = _cpu_seconds() - cpu0
        if status != 0:
            print(f"bench_job: mdsim run failed with status {status}", file=sys.stderr)
            return status
        _, res, _ = read_task_result(out / "tasks" / "0000.h5")
        d = res["details"]
        report = {
            "case": "argon LJ, 295.15 K, 22 bar, r = 2, energy route",
            "target_stderr_K": res["target_stderr_K"],
            "delta_T_K": res["delta_T_K"]["value"],
            "stderr_reached_K": res["delta_T_K"]["stderr"],
            "stopped_by": res["stopped_by"],
            "cpu_seconds_total": cpu,
            "cpu_seconds_sampling": res["cpu_seconds"],
            "wall_seconds": wall,
            "n_particles": res["n_particles"],
            "sample_interval_sweeps": d.get("sample_interval"),
            "initial_samples": d.get("initial_samples"),
            "final_temperatures_sampled": d.get("newton_temperatures"),
            "method": res["method"],
        }
    print(json.dumps(report, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
