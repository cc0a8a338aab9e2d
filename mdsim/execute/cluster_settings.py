"""The study's ``[cluster]`` table, translated for the batch scheduler: the one place.

Study keys (``docs/run-directory.md``): ``system``, ``partition``,
``cpus_per_job``, ``memory_per_job``, ``time_limit``, ``network_interface``,
``batch_jobs``, ``address``.  dask-jobqueue calls them ``cores``,
``memory``, ``walltime``, ``queue`` and ``interface``; Slurm's batch
directives ``--cpus-per-task``, ``--mem``, ``--time`` and ``--partition``.
"""
import math
import re

from mdsim.errors import StudyError

__all__ = ["JOBQUEUE_CLASSES", "jobqueue_class_name", "jobqueue_arguments", "slurm_memory",
           "sbatch_directives"]

JOBQUEUE_CLASSES = {"slurm": "SLURMCluster", "pbs": "PBSCluster"}
# The defaults of these keys live in the study schema (mdsim.study.schema): a
# study's [cluster] table always has them; a key missing here is left out.


def jobqueue_class_name(settings):
    """The dask-jobqueue class for ``[cluster] system``."""
    name = str(settings.get("system", "")).lower()
    if name not in JOBQUEUE_CLASSES:
        raise StudyError(f"[cluster] system = {settings.get('system')!r}: allowed "
                         f"{', '.join(JOBQUEUE_CLASSES)}")
    return JOBQUEUE_CLASSES[name]


def jobqueue_arguments(settings, log_directory=None):
    """Keyword arguments of a dask-jobqueue cluster from a ``[cluster]`` table (dict)."""
    kw = {}
    for key, name, kind in (("cpus_per_job", "cores", int), ("memory_per_job", "memory", str),
                            ("time_limit", "walltime", str)):
        if settings.get(key) is not None:
            kw[name] = kind(settings[key])
    if settings.get("partition"):
        kw["queue"] = str(settings["partition"])
    if settings.get("network_interface"):
        kw["interface"] = str(settings["network_interface"])
    if log_directory is not None:
        kw["log_directory"] = str(log_directory)
    kw["scheduler_options"] = {"dashboard_address": ":0"}
    return kw


def slurm_memory(text):
    """'2GB' / '512 MiB' / '2G' -> Slurm's '2G' / '512M' form."""
    m = re.fullmatch(r"\s*([0-9]+(?:\.[0-9]+)?)\s*([KMGT])(?:i?B)?\s*", str(text), re.I)
    if not m:
        raise StudyError(f"[cluster] memory_per_job = {text!r}: give a size such as \"2GB\" "
                         "or \"512MB\"")
    value, unit = float(m.group(1)), m.group(2).upper()
    if value != int(value):  # Slurm takes whole numbers: go one unit down
        down = {"T": "G", "G": "M", "M": "K"}
        if unit in down:
            value, unit = value * 1024, down[unit]
    return f"{int(math.ceil(value))}{unit}"


def sbatch_directives(settings):
    """Slurm ``#SBATCH`` lines for one job of a ``[cluster]`` table (list of str)."""
    lines = []
    if settings.get("cpus_per_job") is not None:
        lines.append(f"#SBATCH --cpus-per-task={int(settings['cpus_per_job'])}")
    if settings.get("time_limit"):
        lines.append(f"#SBATCH --time={settings['time_limit']}")
    if settings.get("memory_per_job"):
        lines.append(f"#SBATCH --mem={slurm_memory(settings['memory_per_job'])}")
    if settings.get("partition"):
        lines.append(f"#SBATCH --partition={settings['partition']}")
    return lines
