"""``mdsim status RUN_DIR``: the tasks' states and the time spent; the scheduler's view beside them."""
from mdsim.cli.options import print_json, print_out
from mdsim.numbers import value_with_error

HELP = "show the tasks of a run directory: done, running, failed, left; time spent"


def add_arguments(p):
    p.add_argument("run_dir", help="run directory made by 'mdsim run'")
    p.add_argument("--json", action="store_true", help="print the status as JSON")


def _scheduler_line(sched):
    if sched["error"]:
        return f"  scheduler: cannot be asked: {sched['error']}"
    s = sched["counts"]
    return (f"  scheduler (job array {', '.join(sched['job_ids'])}): {s['pending']} pending, "
            f"{s['running']} running, {s['done']} done, {s['failed']} failed"
            + (f", {s['unknown']} not known" if s["unknown"] else ""))


def _task_line(row):
    from mdsim.execute.progress import describe_task
    line = f"  {row['index']:04d} {row['route']:<14} point {row['state_point_index']:<3} " \
           f"{row['state']:<8}"
    if row["state"] == "done":
        d = row["delta_T_K"]
        line += f" Delta T = {value_with_error(d['value'], d['stderr'], 'K')} " \
                f"(stopped by {row['stopped_by']}, {row['cpu_seconds']:.1f} s CPU)"
    elif row["state"] == "damaged":
        line += f" task file damaged ({row['damage']}); 'mdsim run' moves it aside and " \
                "runs the task again"
    elif row["state"] == "failed":
        line += f" {row['error']}"
    elif row["state"] == "running":
        line += " " + describe_task(row["index"], row["progress"])
    elif row.get("cpu_seconds"):
        line += f" (interrupted; {row['cpu_seconds']:.1f} s CPU so far, resumes)"
    view = row.get("scheduler")
    if view is not None:
        code = f", exit {view['exit_code']}" if view.get("exit_code") else ""
        line += f"  [scheduler: {view['state']} ({view['slurm_state'] or 'not known'}{code}, " \
                f"job {view['job_id']})]"
    return line


def run(args):
    from mdsim.pipeline.run_status import run_status
    data = run_status(args.run_dir)
    if args.json:
        print_json(data)
        return 0
    c = data["counts"]
    damaged = sum(row["state"] == "damaged" for row in data["tasks"])
    lines = [f"{data['run_dir']}: {len(data['tasks'])} tasks: {c['done']} done, "
             f"{c['running']} running, {c['failed']} failed, {c['left']} left"
             + (f" ({damaged} with a damaged task file)" if damaged else "")
             + f"; {data['cpu_seconds_total']:.1f} s CPU spent"]
    if data.get("scheduler") is not None:
        lines.append(_scheduler_line(data["scheduler"]))
    lines += [_task_line(row) for row in data["tasks"]]
    print_out("\n".join(lines))
    return 0
