"""Progress of a run: per-task progress files and one live line on a terminal.

A running task (in any process: the local pool, a Dask worker, an array
element) writes ``tasks/NNNN.progress.json`` at most once per
``WRITE_EVERY_S`` seconds: the stage it is in, samples done of that stage,
the current standard error of Delta T against the target, and the CPU time
spent.  The file is removed when the task ends.  :class:`ProgressLine`
reads these files and draws one line on stderr, overwritten in place, only
when stderr is a terminal and the user did not ask for ``--quiet``;
``mdsim status`` reads the same files.
"""
import json
import os
import sys
import time
from pathlib import Path

WRITE_EVERY_S = 1.0


class TaskProgressFile:
    """Writer of one task's progress file (throttled; atomic replace)."""

    def __init__(self, path, callback=None):
        self.path = Path(path)
        self.callback = callback
        self.info = {}
        self._last = 0.0

    def __call__(self, **info):
        self.info.update(info)
        now = time.time()
        if now - self._last >= WRITE_EVERY_S:
            self._last = now
            self.info["time"] = now
            tmp = self.path.with_name(self.path.name + f".tmp{os.getpid()}")
            try:
                tmp.write_text(json.dumps(self.info), encoding="utf-8")
                os.replace(tmp, self.path)
            except OSError:
                pass  # progress is a convenience; a full disk shows up in the run files
        if self.callback is not None:
            self.callback()

    def remove(self):
        self.path.unlink(missing_ok=True)


def read_progress(path):
    """The dict of a progress file, or None if absent or being replaced."""
    try:
        return json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def _duration(seconds):
    if seconds is None or seconds != seconds or seconds < 0:
        return "?"
    seconds = int(round(seconds))
    if seconds < 60:
        return f"{seconds}s"
    if seconds < 3600:
        return f"{seconds // 60}m{seconds % 60:02d}s"
    return f"{seconds // 3600}h{(seconds % 3600) // 60:02d}m"


def describe_task(index, info):
    """A short text for one running task from its progress dict."""
    parts = [f"task {index:04d}"]
    if info.get("stage"):
        parts.append(f"{info['stage']} {info.get('done', 0)}/{info.get('total', '?')}")
    if info.get("stderr_K") is not None and info.get("target_K") is not None:
        parts.append(f"stderr {info['stderr_K']:.3g} K (target {info['target_K']:.3g})")
    return " ".join(parts)


class ProgressLine:
    """One live progress line on stderr for a whole run.

    Parameters
    ----------
    progress_file : callable
        ``progress_file(index)`` -> the path of a task's progress file
        (:meth:`mdsim.pipeline.rundir.RunDir.progress_file`).
    indices : list of int
        The tasks this run executes.
    n_total : int
        All tasks of the run directory (done ones included).
    enabled : bool, optional
        Default: stderr is a terminal.  ``--quiet`` passes False.
    workers : int
        Tasks running at once (for the time estimate).
    """

    def __init__(self, progress_file, indices, n_total, enabled=None, workers=1, stream=None):
        self.progress_file = progress_file
        self.indices = list(indices)
        self.n_total = int(n_total)
        self.stream = stream or sys.stderr
        self.enabled = (self.stream.isatty() if enabled is None else bool(enabled))
        self.workers = max(1, int(workers))
        self.start = time.time()
        self.finished = {}
        self._last_draw = 0.0
        self._width = 0

    def done(self, index, error):
        self.finished[index] = error
        self.draw(force=True)

    def eta(self):
        n_done = len(self.finished)
        left = len(self.indices) - n_done
        if n_done == 0 or left <= 0:
            return None
        per_task = (time.time() - self.start) / n_done * min(self.workers, len(self.indices))
        return per_task * left / min(self.workers, left)

    def text(self):
        n_prev = self.n_total - len(self.indices)
        ok = sum(1 for e in self.finished.values() if e is None)
        failed = len(self.finished) - ok
        head = f"[{n_prev + ok}/{self.n_total} tasks done"
        head += f", {failed} failed]" if failed else "]"
        running = []
        for k in self.indices:
            if k in self.finished:
                continue
            info = read_progress(self.progress_file(k))
            if info:
                running.append(describe_task(k, info))
        body = "; ".join(running[:2]) + (" ..." if len(running) > 2 else "")
        return f"{head} {body} | elapsed {_duration(time.time() - self.start)}, " \
               f"left ~{_duration(self.eta())}"

    def draw(self, force=False):
        if not self.enabled:
            return
        now = time.time()
        if not force and now - self._last_draw < 0.5:
            return
        self._last_draw = now
        line = self.text()
        pad = max(0, self._width - len(line))
        self._width = len(line)
        self.stream.write("\r" + line + " " * pad)
        self.stream.flush()

    def close(self):
        if self.enabled and self._width:
            self.stream.write("\n")
            self.stream.flush()
