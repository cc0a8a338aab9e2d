"""The pipeline: plan a study's tasks, run them into a run directory, report.

One task is one state point by one simulation route; it does all its
sampling in resumable stage files and writes one task file.  The run
directory (``docs/run-directory.md``) holds the plan, the task files and
what is built from them: results.json, results.csv, plots and report.md.

The names below are the pipeline's interface to the layers above it (the
command line, the checks); import them from here.

Modules: ``rundir`` (every path of a run directory, the lock, task states);
``settings`` and ``plan`` (the study's tasks); ``task`` (the running task
and its CPU ledger), ``chain`` (pilot and production stage files),
``routes/`` (one runner per simulation route), ``runner`` (``run_task``)
and ``taskfile`` (task and failure files); ``jobs`` (a task as an executor
job); ``collect``, ``summary``, ``results_files``, ``plot_data``, ``plots``,
``figures``, ``report_tables``, ``report_md`` and ``report`` (``build_report``);
``plan_preview`` (``mdsim run --plan``); ``prepare``, ``run_study``,
``array_jobs`` and ``run_status`` (a whole study run, its job array, its
status); ``virial_study``, ``inversion_study`` and ``single_state`` (the
answers that need no run directory).
"""
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline.plan import plan_tasks
from mdsim.pipeline.runner import run_task
from mdsim.pipeline.settings import simulation_settings
from mdsim.pipeline.taskfile import read_task_result
from mdsim.pipeline.jobs import task_job
from mdsim.pipeline.report import build_report
from mdsim.pipeline.plan_preview import preview_plan

# run_study is not re-exported here: the name would hide the module mdsim.pipeline.run_study
__all__ = ["RunDir", "plan_tasks", "read_task_result", "run_task", "simulation_settings",
           "task_job", "build_report", "preview_plan"]
