"""Slurm's command-line clients wrapped: submit a job array, read its elements' states, cancel.

A run directory's job array (written by
:func:`mdsim.execute.array.write_array_script`) has one element per task:
element k runs task k.  :func:`submit_tasks` submits the elements of some
task indices with ``sbatch`` and records the job id in a submissions file
(the run directory's ``jobs.json``: one entry per submission, the latest
last), so that :func:`scheduler_view` can say, for each task, what the
scheduler thinks of the element that last ran it: ``pending``,
``running``, ``done`` or ``failed`` (with Slurm's own state name, e.g.
``CANCELLED`` or ``TIMEOUT``, and the exit code).  The live view comes
from ``squeue``, finished elements from ``sacct`` (the accounting
database).  The functions take the submissions file's path; the pipeline
knows where it is in a run directory.

Errors: a client program that is missing, or a submission the scheduler
refuses, raises :class:`~mdsim.errors.StudyError` (the user can fix it: the
message carries the scheduler's own words and what to do); a query that
fails when the scheduler does not answer raises
:class:`~mdsim.errors.SimulationError`.
"""
import json
import re
import shutil
import subprocess
import time
from pathlib import Path

from mdsim.errors import SimulationError, StudyError
from mdsim.files import atomic_write_text

CLIENT_TIMEOUT_S = 60.0

# Slurm's job states, grouped into the four this tool reports.
STATE_GROUPS = {
    "PENDING": "pending", "CONFIGURING": "pending", "REQUEUED": "pending",
    "REQUEUE_FED": "pending", "REQUEUE_HOLD": "pending", "RESV_DEL_HOLD": "pending",
    "RUNNING": "running", "COMPLETING": "running", "SUSPENDED": "running",
    "STAGE_OUT": "running", "SIGNALING": "running", "RESIZING": "running",
    "STOPPED": "running",
    "COMPLETED": "done",
    "FAILED": "failed", "CANCELLED": "failed", "TIMEOUT": "failed", "NODE_FAIL": "failed",
    "OUT_OF_MEMORY": "failed", "PREEMPTED": "failed", "BOOT_FAIL": "failed",
    "DEADLINE": "failed", "REVOKED": "failed", "SPECIAL_EXIT": "failed",
}
ACTIVE = ("pending", "running")


def state_group(slurm_state):
    """Slurm's state name ('CANCELLED by 0', 'RUNNING', ...) -> pending/running/done/failed/unknown."""
    word = str(slurm_state).split()[0].rstrip("+").upper() if str(slurm_state).strip() else ""
    return STATE_GROUPS.get(word, "unknown")


# -- running the clients ---------------------------------------------------------------

def _run(argv, what, timeout=CLIENT_TIMEOUT_S):
    """Run a Slurm client; return (returncode, stdout, stderr).

    A missing program raises StudyError; a client that hangs raises SimulationError.
    """
    exe = shutil.which(argv[0])
    if exe is None:
        raise StudyError(f"{what} needs Slurm's '{argv[0]}' command, which is not on PATH; "
                         "run on a machine with Slurm's client commands (package slurm-client), "
                         "or run the tasks on the local process pool or a Dask cluster instead")
    try:
        proc = subprocess.run([exe, *argv[1:]], capture_output=True, text=True,
                              timeout=timeout, stdin=subprocess.DEVNULL)
    except subprocess.TimeoutExpired:
        raise SimulationError(f"{what}: '{' '.join(argv)}' did not answer within {timeout:g} s; "
                              "is the Slurm controller up? (try 'scontrol ping')") from None
    return proc.returncode, proc.stdout, proc.stderr


def _one_line(text):
    return " ".join(str(text).split())


def array_spec(indices):
    """Sorted distinct indices as Slurm's --array list: [0, 1, 2, 5, 7, 8] -> '0-2,5,7-8'."""
    idx = sorted({int(k) for k in indices})
    if not idx:
        raise StudyError("no array elements to submit")
    if idx[0] < 0:
        raise StudyError(f"array element {idx[0]}: element indices are 0 or more")
    parts, start, prev = [], idx[0], idx[0]
    for k in idx[1:] + [None]:
        if k is not None and k == prev + 1:
            prev = k
            continue
        parts.append(str(start) if start == prev else f"{start}-{prev}")
        if k is not None:
            start = prev = k
    return ",".join(parts)


def parse_array_ids(job_id_text):
    """'12_3' -> [('12', 3)]; '12_[1,4-6%2]' -> [('12', 1), ('12', 4), ...]; '12' -> [('12', None)]."""
    text = str(job_id_text).strip()
    m = re.fullmatch(r"(\d+)_(\d+)(?:\(\w+\))?", text)
    if m:
        return [(m.group(1), int(m.group(2)))]
    m = re.fullmatch(r"(\d+)_\[([0-9,\-]+)(?:%\d+)?\]", text)
    if m:
        out = []
        for part in m.group(2).split(","):
            if "-" in part:
                lo, hi = part.split("-", 1)
                out += [(m.group(1), k) for k in range(int(lo), int(hi) + 1)]
            elif part:
                out.append((m.group(1), int(part)))
        return out
    m = re.fullmatch(r"(\d+)(?:\+\d+)?", text)
    if m:
        return [(m.group(1), None)]
    return []


def submit(script, indices=None, extra_args=()):
    """Submit a batch script with ``sbatch``; ``indices`` replaces its #SBATCH --array list.

    Returns the job id (a string of digits).  A refusal raises StudyError
    with sbatch's message.
    """
    script = Path(script)
    if not script.is_file():
        raise StudyError(f"job script '{script}' does not exist; write it first "
                         "(mdsim.execute.array.write_array_script)")
    argv = ["sbatch", "--parsable"]
    if indices is not None:
        argv.append(f"--array={array_spec(indices)}")
    argv += [str(a) for a in extra_args]
    argv.append(str(script))
    rc, out, err = _run(argv, "submitting the job array")
    if rc != 0:
        raise StudyError(f"sbatch refused '{script}': {_one_line(err) or 'no message'}; "
                         "check the [cluster] table of the study (partition, cores, memory, "
                         "walltime) against what the cluster offers ('sinfo')")
    job_id = out.strip().split(";")[0].strip()
    if not job_id.isdigit():
        raise SimulationError(f"sbatch printed no job id (it printed {out.strip()!r})")
    return job_id


def cancel(job_id, index=None, signal=None):
    """Cancel a job, or one element of a job array, with ``scancel``."""
    target = f"{job_id}_{int(index)}" if index is not None else str(job_id)
    argv = ["scancel"] + ([f"--signal={signal}"] if signal else []) + [target]
    rc, _, err = _run(argv, f"cancelling job {target}")
    if rc != 0:
        raise SimulationError(f"scancel {target} failed: {_one_line(err)}")


def element_states(job_ids):
    """The scheduler's view of the elements of some job arrays.

    Returns ``{(job_id, array_index): {"job_id": "12_3", "slurm_state": ...,
    "state": pending/running/done/failed/unknown, "exit_code": "0:0" or None,
    "reason": ...}}``.  ``sacct`` gives finished elements; ``squeue`` the
    live ones (it is more current, so it wins for pending and running ones).
    """
    ids = sorted({str(j) for j in job_ids}, key=int)
    if not ids:
        return {}
    view = {}
    rc, out, err = _run(["sacct", "-n", "-P", "-X", "-j", ",".join(ids),
                         "-o", "JobID,State,ExitCode"], "reading job states")
    if rc == 0:
        for line in out.splitlines():
            fields = line.split("|")
            if len(fields) < 3:
                continue
            for job, k in parse_array_ids(fields[0]):
                if k is None:
                    continue
                view[(job, k)] = {"job_id": f"{job}_{k}", "slurm_state": fields[1].split()[0],
                                  "state": state_group(fields[1]), "exit_code": fields[2] or None,
                                  "reason": None}
    sacct_error = None if rc == 0 else _one_line(err)
    rc, out, err = _run(["squeue", "-h", "-r", "-t", "all", "-j", ",".join(ids),
                         "-o", "%i|%T|%r"], "reading job states")
    if rc != 0 and "Invalid job id" not in err:
        if sacct_error is not None:
            raise SimulationError(f"the scheduler does not answer: sacct: {sacct_error}; "
                                  f"squeue: {_one_line(err)}")
        out = ""
    for line in (out if rc == 0 else "").splitlines():
        fields = line.split("|")
        if len(fields) < 3:
            continue
        for job, k in parse_array_ids(fields[0]):
            if k is None:
                continue
            group = state_group(fields[1])
            old = view.get((job, k))
            if old is None or group in ACTIVE or old["state"] in ACTIVE or old["state"] == "unknown":
                view[(job, k)] = {"job_id": f"{job}_{k}", "slurm_state": fields[1],
                                  "state": group,
                                  # sacct's exit code only once it has seen the end too
                                  "exit_code": old["exit_code"] if old and group not in ACTIVE
                                  and old["state"] == group else None,
                                  "reason": None if fields[2] in ("None", "") else fields[2]}
    return view


# -- the record of submissions ----------------------------------------------------------

def read_submissions(jobs_file):
    """The submissions recorded in a submissions file, oldest first ([] when none).

    Parameters
    ----------
    jobs_file : path-like
        The file (a run directory's ``jobs.json``); absent means nothing was submitted.

    Returns
    -------
    list of dict
        Each ``{"job_id", "indices", "script", "submitted"}`` (the time, s since the epoch).
    """
    path = Path(jobs_file)
    if not path.is_file():
        return []
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (ValueError, UnicodeDecodeError, OSError):
        raise StudyError(f"'{path}' is damaged (not JSON); it records the submitted job arrays: "
                         "cancel them with scancel if any still run, then delete the file") from None
    if not isinstance(data, list):
        raise StudyError(f"'{path}' is damaged (not a list of submissions); cancel any job "
                         "arrays of this run that still run, then delete the file")
    return data


def record_submission(jobs_file, job_id, indices, script):
    """Append one submission to the submissions file (written atomically)."""
    subs = read_submissions(jobs_file)
    subs.append({"job_id": str(job_id), "indices": sorted(int(k) for k in indices),
                 "script": str(script), "submitted": time.time()})
    atomic_write_text(Path(jobs_file), json.dumps(subs, indent=1))


def submit_tasks(jobs_file, indices, script):
    """Submit the array elements of some tasks from ``script`` and record the job id; returns it."""
    indices = sorted({int(k) for k in indices})
    job_id = submit(Path(script), indices)
    record_submission(jobs_file, job_id, indices, script)
    return job_id


def latest_elements(jobs_file):
    """{task index: job id of the submission that last included it}."""
    out = {}
    for sub in read_submissions(jobs_file):
        for k in sub.get("indices", []):
            out[int(k)] = str(sub["job_id"])
    return out


def scheduler_view(jobs_file):
    """{task index: the scheduler's view of its latest element} for a submissions file.

    Each value is a dict as in :func:`element_states`; an element the
    scheduler no longer knows (neither squeue nor sacct) has state
    'unknown'.  Empty when nothing was submitted.
    """
    latest = latest_elements(jobs_file)
    if not latest:
        return {}
    states = element_states(set(latest.values()))
    out = {}
    for k, job in sorted(latest.items()):
        out[k] = states.get((job, k), {"job_id": f"{job}_{k}", "slurm_state": None,
                                       "state": "unknown", "exit_code": None, "reason": None})
    return out
