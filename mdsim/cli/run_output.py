"""What ``mdsim run`` and ``mdsim demo`` print about a study run (not a command).

Both commands run a study through :func:`mdsim.pipeline.run_study.run_study`
and report its :class:`~mdsim.pipeline.run_study.StudyRun` the same way:
the summary as JSON when asked, one result line per state point (Delta T
and T_f with their errors, by :func:`mdsim.numbers.value_with_error`), a
closing line, and, with a job array, what was written or submitted and the
command lines to watch, submit or gather.
"""
from mdsim.cli.options import print_json, say
from mdsim.numbers import value_with_error
from mdsim.study.routes import ROUTE_LABELS

__all__ = ["EXIT_TASKS_FAILED", "print_study_run", "result_lines"]

#: Exit status of a run in which some task has no result.
EXIT_TASKS_FAILED = 1


def _array_lines(result, study_arg):
    """The messages of a run that ended at the job array (or gathered one)."""
    from mdsim.execute.slurm import array_spec
    info, rd = result.array_info, result.run_dir
    n = len(result.tasks)
    state = result.array_state
    if state == "active":
        return [f"{len(info['active'])} of {n} array elements (job {', '.join(info['job_ids'])}) "
                f"are still pending or running; watch them with:   mdsim status {rd}",
                "run this command again when they have finished to gather the results"]
    if state in ("submitted", "resubmitted"):
        spec = array_spec(info["submitted"])
        return [f"{state} {len(info['submitted'])} array element(s) ({spec}) as job "
                f"{info['job_id']}",
                f"Watch it with:    mdsim status {rd}",
                "When it finished, gather the results with the same 'mdsim run' command "
                f"(or:   mdsim report {rd})"]
    if state == "written":
        script = info["array_script"]
        return [f"wrote {script} ({n} array elements).",
                f"Submit it with:   mdsim run {study_arg} --out {rd} --on array --submit   "
                f"(or: sbatch {script})",
                f"Afterwards gather the results with:   mdsim report {rd}",
                f"Watch it with:    mdsim status {rd}"]
    if state == "gathered" and result.failed:
        return [f"{len(result.failed)} task(s) have no result; submit them again with:   "
                f"mdsim run {study_arg} --out {rd} --resubmit-failed"]
    return []


def result_lines(summary):
    """One line per state point: Delta T, T_f and Delta s of its best route, each with its error.

    Parameters
    ----------
    summary : dict
        :func:`mdsim.pipeline.summary.run_summary` (``state_points``: records).

    Returns
    -------
    list of str

    Examples
    --------
    >>> rec = {"index": 0, "delta_T_K": {"energy": {"value": -5.4666, "stderr": 0.04237}},
    ...        "final": {"temperature_K": 289.6834, "temperature_stderr_K": 0.04237,
    ...                  "source": "energy"}}
    >>> result_lines({"state_points": [rec]})
    ['state point 0: Delta T = -5.467 ± 0.042 K, T_f = 289.683 ± 0.042 K (energy)']
    """
    lines = []
    for rec in summary.get("state_points", []):
        fin = rec.get("final") or {}
        source = fin.get("source")
        entry = rec.get("delta_T_K", {}).get(source) if source else None
        if not entry or entry.get("value") is None or fin.get("temperature_K") is None:
            lines.append(f"state point {rec['index']}: no route gave a result")
            continue
        dT = value_with_error(entry["value"], entry.get("stderr"), "K")
        T_f = value_with_error(fin["temperature_K"], fin.get("temperature_stderr_K"), "K", 6)
        lines.append(f"state point {rec['index']}: Delta T = {dT}, T_f = {T_f}"
                     f"{_entropy_text(rec, source)} ({ROUTE_LABELS.get(source, source)})")
        if rec.get("two_phase"):
            lines.append(f"state point {rec['index']}: warning: TWO-PHASE final state: the "
                         "sample is not one stable fluid (evidence in report.md and "
                         "results.json); Delta T is that of the simulated sample")
            from mdsim.pipeline.coexistence_route import coexistence_text
            for route, entry in rec.get("simulation", {}).items():
                text = coexistence_text(entry.get("coexistence"))
                if text:
                    lines.append(f"state point {rec['index']}: {route} route, {text}")
    return lines


def fitted_range_lines(summary):
    """The state points' warnings that a temperature lies far outside the potential's fitted range.

    >>> rec = {"index": 1, "warnings": ["the initial temperature 900 K lies far outside the "
    ...                                 "potential's fitted range ... ([potential] fitted_range)",
    ...                                 "something else"]}
    >>> fitted_range_lines({"state_points": [rec]})  # doctest: +ELLIPSIS
    ["warning: state point 1: the initial temperature 900 K lies far outside ...fitted_range)"]
    """
    from mdsim.study.fitted_range import MARK
    return [f"warning: state point {rec['index']}: {w}"
            for rec in summary.get("state_points", []) for w in rec.get("warnings", [])
            if MARK in w]


def _entropy_text(rec, source):
    """", Delta s = ..." of the route that gave T_f, or its reason for being absent ("" if none).

    >>> _entropy_text({"delta_s_J_molK": {"energy": {"value": 5.3994, "stderr": 0.0939}}}, "energy")
    ', Delta s = 5.399 ± 0.094 J/(mol K)'
    >>> _entropy_text({"delta_s_J_molK": {"energy": {"value": None, "unavailable": "dense"}}},
    ...               "energy")
    ', Delta s not available (dense)'
    """
    entry = (rec.get("delta_s_J_molK") or {}).get(source)
    if not entry:
        return ""
    if entry.get("value") is None:
        return f", Delta s not available ({entry.get('unavailable') or 'no reason given'})"
    return f", Delta s = {value_with_error(entry['value'], entry.get('stderr'), 'J/(mol K)')}"


def print_study_run(result, study_arg, json_out=False, quiet=False):
    """Print what a study run did; return the exit status.

    Parameters
    ----------
    result : mdsim.pipeline.run_study.StudyRun
    study_arg : str
        The study file as the user gave it, for the command lines printed.
    json_out : bool
        Print the run summary (or, when the run ended at the job array, the
        array's description) as JSON on stdout.
    quiet : bool
        No messages on stderr.

    Returns
    -------
    int
        0, or :data:`EXIT_TASKS_FAILED` when some task has no result.
    """
    lines = _array_lines(result, study_arg) if result.array_state else []
    if lines:
        say("\n".join(lines), quiet)
    if result.summary is None:  # ended at the job array: nothing to report yet
        if json_out:
            print_json(result.array_info)
        return 0
    if json_out:
        print_json(result.summary)
    from mdsim.pipeline.prepare import as_run_dir
    lines = result_lines(result.summary) + fitted_range_lines(result.summary)
    if lines:
        say("\n".join(lines), quiet)
    n = len(result.tasks)
    say(f"run directory {result.run_dir}: {n - len(result.failed)} of {n} tasks complete; "
        f"report {as_run_dir(result.run_dir).report_md}", quiet)
    return EXIT_TASKS_FAILED if result.failed else 0
