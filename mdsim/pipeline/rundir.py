"""The run directory: its layout, its task list and its lock.

Layout (all under one directory, ``runs/NAME`` by default; ``docs/run-directory.md``)::

    study.toml        the resolved study, every default filled in
    inputs/           copies of the data files the study names (tables, c_v CSV files)
    tasks.json        the planned tasks, one entry per task (index, kind, state point, seed)
    tasks/NNNN.h5     one file per finished task (written as NNNN.h5.part, renamed when complete)
    tasks/NNNN.stages/  the task's stage files (sampling runs that resume) and
                      its CPU ledger ``cpu-time-ledger.json``
    tasks/NNNN.failed.json    a failed task's error
    tasks/NNNN.progress.json  a running task's progress
    results.csv, results.json, report.md, plots/, log.txt
    coexistence/      cached Gibbs-ensemble coexistence points, one folder per potential
    array.sh, logs/, jobs.json  the Slurm job array, its logs and its submissions
    .lock             present while an ``mdsim run`` owns the directory

Stage files are named by :mod:`mdsim.pipeline.stage_names`.

Every path of a run directory comes from :class:`RunDir`.

The lock file holds the owner's host name and process id.  A second
``mdsim run`` on the same directory refuses with a message naming the owner;
a lock left by a process that no longer exists on this host is taken over.
"""
import json
import logging
import os
import shutil
import socket
import time
from pathlib import Path

from mdsim.errors import StudyError
from mdsim.files import atomic_write_text
from mdsim.pipeline.stage_names import STAGE_LABELS
from mdsim.study.writer import INPUTS_DIR

__all__ = ["RunDir", "LOG_FORMAT", "space_needed_bytes"]

TASKS_FILE = "tasks.json"
LOG_FORMAT = "%(asctime)s %(levelname)s %(name)s: %(message)s"
"""One line of ``log.txt``: time, level, logger, message (every writer of the log uses it)."""
LOCK_FILE = ".lock"
SPACE_PER_TASK_BYTES = 4_000_000
"""Disk space one task needs, generously: its stage files (samples, checkpoints, final
configurations of a few thousand particles) and its task file are usually well below 1 MB."""
SPACE_REPORT_BYTES = 8_000_000
"""Disk space of the report, results and plots of a run."""


def space_needed_bytes(n_tasks):
    """The disk space a run of ``n_tasks`` tasks is expected to need, bytes (an estimate)."""
    return SPACE_REPORT_BYTES + SPACE_PER_TASK_BYTES * int(n_tasks)


class RunDir:
    """Paths and bookkeeping of one run directory."""

    def __init__(self, path):
        self.path = Path(path)

    # -- paths -------------------------------------------------------------------
    @property
    def study_file(self):
        """The resolved study, ``study.toml``."""
        return self.path / "study.toml"

    @property
    def inputs_dir(self):
        """Copies of the data files the study names, ``inputs/``."""
        return self.path / INPUTS_DIR

    @property
    def tasks_file(self):
        """The planned tasks, ``tasks.json``."""
        return self.path / TASKS_FILE

    @property
    def tasks_dir(self):
        return self.path / "tasks"

    @property
    def results_json(self):
        return self.path / "results.json"

    @property
    def results_csv(self):
        return self.path / "results.csv"

    @property
    def report_md(self):
        return self.path / "report.md"

    @property
    def plots_dir(self):
        return self.path / "plots"

    @property
    def coexistence_dir(self):
        """Cached vapour-liquid coexistence points, ``coexistence/POTENTIAL/*.json``
        (the ``cache_dir`` of :func:`mdsim.sampling.coexistence.coexistence_point`)."""
        return self.path / "coexistence"

    @property
    def log_file(self):
        """The log of ``mdsim run`` and of each task, ``log.txt`` (:meth:`append_log`)."""
        return self.path / "log.txt"

    def append_log(self, message, level=logging.INFO, name="mdsim"):
        """Append ``message`` as one line to ``log.txt`` (:data:`LOG_FORMAT`, logger ``name``).

        For a task's own lines, from whatever process runs it (pool worker,
        Dask worker, job-array element), with or without a terminal.  One
        write in append mode: lines of tasks running at once do not mix.
        White space in ``message`` (line ends too) becomes single spaces;
        ``level`` is a :mod:`logging` level.
        """
        record = logging.makeLogRecord({"name": name, "levelno": level,
                                        "levelname": logging.getLevelName(level),
                                        "msg": " ".join(str(message).split())})
        line = logging.Formatter(LOG_FORMAT).format(record) + "\n"
        with open(self.log_file, "a", encoding="utf-8") as fh:
            fh.write(line)

    @property
    def array_script(self):
        """The Slurm job array script, ``array.sh``."""
        return self.path / "array.sh"

    @property
    def logs_dir(self):
        """The job array's output files, ``logs/``."""
        return self.path / "logs"

    @property
    def jobs_file(self):
        """The recorded job array submissions, ``jobs.json``."""
        return self.path / "jobs.json"

    @property
    def lock_file(self):
        return self.path / LOCK_FILE

    def _task_path(self, index, suffix):
        return self.tasks_dir / f"{int(index):04d}{suffix}"

    def task_file(self, index):
        """A finished task's file, ``tasks/NNNN.h5``."""
        return self._task_path(index, ".h5")

    def partial_file(self, index):
        """A task file being written, ``tasks/NNNN.h5.part``."""
        return self._task_path(index, ".h5.part")

    def stages_dir(self, index):
        """Where a task keeps its stage files (checkpointed sampling runs)."""
        return self._task_path(index, ".stages")

    def stage_file(self, index, name):
        """One stage file of a task (``name`` from :mod:`mdsim.pipeline.stage_names`)."""
        return self.stages_dir(index) / f"{name}.h5"

    def cpu_ledger(self, index):
        """A task's CPU time per stage, ``tasks/NNNN.stages/cpu-time-ledger.json``."""
        return self.stages_dir(index) / "cpu-time-ledger.json"

    def older_stage_files(self, index):
        """Files in a task's stages folder under names this version does not write.

        Earlier versions of the tool named stage files otherwise (``initial-pilot.h5``,
        ``cpu.json``, ...); such a task cannot be resumed.  Returns sorted names.
        """
        folder = self.stages_dir(index)
        if not folder.is_dir():
            return []
        ours = STAGE_LABELS + (self.cpu_ledger(index).name,)
        return sorted(p.name for p in folder.iterdir() if not p.name.startswith(ours))

    def progress_file(self, index):
        """A running task's progress, ``tasks/NNNN.progress.json``."""
        return self._task_path(index, ".progress.json")

    def failure_file(self, index):
        """A failed task's error, ``tasks/NNNN.failed.json``."""
        return self._task_path(index, ".failed.json")

    # -- creation ------------------------------------------------------------------
    def preflight(self, n_tasks):
        """Refuse, before anything is written, a place that cannot hold the run.

        The nearest existing directory on the way to the run directory must
        be writable, and its file system must have at least
        :func:`space_needed_bytes` free.

        Raises
        ------
        StudyError
            Naming the directory, what is wrong and what to do.
        """
        base = self.path
        while not base.exists() and base != base.parent:
            base = base.parent
        if self.path.exists() and not self.path.is_dir():
            raise StudyError(f"run directory '{self.path}' is a file, not a directory; choose "
                             "another run directory")
        if not base.is_dir():
            raise StudyError(f"run directory '{self.path}': '{base}' is not a directory; choose "
                             "another run directory")
        if not os.access(base, os.W_OK | os.X_OK):
            raise StudyError(f"run directory '{self.path}' cannot be written ('{base}' is "
                             "read-only or not yours); choose another run directory")
        need = space_needed_bytes(n_tasks)
        free = shutil.disk_usage(base).free
        if free < need:
            raise StudyError(f"run directory '{self.path}': only {free / 1e6:.3g} MB free on its "
                             f"disk, and {n_tasks} task(s) need about {need / 1e6:.3g} MB "
                             "(estimate); free some space or choose another run directory")
        return self

    def create(self):
        """Make the directory tree, failing early if it cannot be written."""
        try:
            self.tasks_dir.mkdir(parents=True, exist_ok=True)
            self.plots_dir.mkdir(exist_ok=True)
            probe = self.path / ".write-test"
            probe.write_text("ok")
            probe.unlink()
        except OSError as exc:
            raise StudyError(f"run directory '{self.path}' cannot be written: {exc.strerror}; "
                             "choose another run directory") from None
        return self

    def exists(self):
        return self.tasks_file.is_file()

    def write_tasks(self, tasks):
        atomic_write_text(self.tasks_file, json.dumps(tasks, indent=1))

    def read_tasks(self):
        path = self.tasks_file
        if not path.is_file():
            raise StudyError(f"'{self.path}' is not a run directory (no {TASKS_FILE}); "
                             "make one by running a study into it ('mdsim run')")
        try:
            tasks = json.loads(path.read_text(encoding="utf-8"))
        except (ValueError, UnicodeDecodeError):
            raise StudyError(f"'{path}' is damaged (not JSON); re-plan with 'mdsim run'") from None
        _refuse_older_layout(path, tasks)
        return tasks

    # -- the lock ------------------------------------------------------------------
    def acquire_lock(self):
        """Take the directory's lock or raise StudyError naming its owner."""
        path = self.lock_file
        me = {"host": socket.gethostname(), "pid": os.getpid(), "since": time.time()}
        for _ in range(2):
            try:
                fd = os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                owner = _read_lock(path)
                if owner is not None and _is_stale(owner):
                    # the owner is gone: take over (rename is atomic, so only one taker wins)
                    stale = path.with_name(f"{LOCK_FILE}.stale.{os.getpid()}")
                    try:
                        os.replace(path, stale)
                        stale.unlink()
                    except FileNotFoundError:
                        pass
                    continue
                who = (f"process {owner['pid']} on host {owner['host']}" if owner
                       else "another process")
                raise StudyError(f"run directory '{self.path}' is in use by {who}; wait for it "
                                 f"to finish, or remove '{path}' if that process is gone") from None
            with os.fdopen(fd, "w") as fh:
                json.dump(me, fh)
            return
        raise StudyError(f"could not take the lock '{path}'; try again")

    def release_lock(self):
        path = self.lock_file
        owner = _read_lock(path)
        if owner and owner.get("pid") == os.getpid() and owner.get("host") == socket.gethostname():
            path.unlink(missing_ok=True)

    # -- task states -----------------------------------------------------------------
    def task_look(self, index):
        """(state, reason): a task's state and why its task file is damaged; changes nothing.

        ``state`` is 'done' (a sound task file), 'damaged' (a task file that
        cannot be trusted: no completion marker, checksum mismatch,
        unreadable; ``reason`` says which, else None), 'failed' (a failure
        note), 'partial' (a ``.part`` task file or a stages folder: it
        resumes) or 'pending'.  Read-only, for ``mdsim status`` and the
        report: nothing is moved, no warning issued; only running the task
        (:meth:`task_state_for_run`) moves a damaged task file aside.
        """
        from mdsim.sampling.store import verify
        path = self.task_file(index)
        if path.is_file():
            reason = verify(path)
            if reason is None:
                return "done", None
            return "damaged", reason
        if self.failure_file(index).is_file():
            return "failed", None
        if self.partial_file(index).is_file() or self.stages_dir(index).is_dir():
            return "partial", None
        return "pending", None

    def task_state(self, index):
        """'done', 'damaged', 'failed', 'partial' or 'pending' (:meth:`task_look`; read-only)."""
        return self.task_look(index)[0]

    def task_state_for_run(self, index):
        """(state, damage): as :meth:`task_look`, but a damaged task file is moved aside first.

        It is renamed ``NNNN.h5.corrupt-<time>`` (:func:`mdsim.sampling.store.move_aside`,
        with a ``CorruptFileWarning`` and a log line), ``state`` is what is left
        ('failed', 'partial' or 'pending': the task runs again) and ``damage``
        says why the file was moved (None when nothing was).  Only the run path
        (``mdsim run``, ``mdsim task``) calls this.
        """
        from mdsim.sampling.store import move_aside
        state, damage = self.task_look(index)
        if state != "damaged":
            return state, None
        move_aside(self.task_file(index), damage)
        return self.task_state(index), damage


def _read_lock(path):
    try:
        return json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError):
        return None


def _is_stale(owner):
    if owner.get("host") != socket.gethostname():
        return False  # cannot see processes on other hosts: never assume they are dead
    try:
        os.kill(int(owner["pid"]), 0)
    except ProcessLookupError:
        return True
    except (PermissionError, KeyError, ValueError, TypeError):
        return False
    return False


# Task fields and route names that only earlier versions of the tool wrote.
OLDER_LAYOUT_FIELDS = {"initial_density_how": "initial_density_from"}


def _refuse_older_layout(path, tasks):
    """Raise StudyError when ``tasks.json`` was written by an earlier layout of the tool.

    Such a directory names routes and fields by their old names and keeps
    its stage files under old names, so it cannot be resumed; it is refused
    whole, naming what is old, rather than mixed with new results.
    """
    from mdsim.study.routes import RENAMED_ROUTES
    for task in tasks if isinstance(tasks, list) else []:
        if not isinstance(task, dict):
            continue
        old = [f"field '{k}' (now '{v}')" for k, v in OLDER_LAYOUT_FIELDS.items() if k in task]
        if task.get("route") in RENAMED_ROUTES:
            old.append(f"route '{task['route']}' (now '{RENAMED_ROUTES[task['route']]}')")
        if old:
            raise StudyError(f"'{path}' was written by an earlier version of the tool ("
                             f"{', '.join(old)}): that run directory cannot be resumed or "
                             "reported by this version; run the study again into a new run "
                             "directory (its finished results stay readable as files)")
