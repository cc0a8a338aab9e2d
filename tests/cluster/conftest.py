"""A real single-node Slurm cluster for the tests in this folder, started once per session.

The fixture ``slurm_cluster`` runs ``slurm_up.sh`` (Debian's slurmctld,
slurmd, slurmdbd with MariaDB, munge; config, state and logs in a scratch
directory under /tmp) and, at the end of the session, also when tests
fail or are interrupted, ``slurm_down.sh``, which stops every daemon by
the process id it recorded.  ``SLURM_CONF`` points at the scratch
configuration for the whole session, so the tests' ``sbatch``/``squeue``
and the array elements talk to this cluster only.  The tests are skipped,
with the bring-up script's own message, only when the cluster cannot be
started (no root to install the packages, no packages, a daemon that does
not start).
"""
import atexit
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
# the mdsim test helpers (write_study, ...) live beside the engine tests
sys.path.insert(0, str(HERE.parent / "mdsim"))

UP_TIMEOUT_S = 900  # generous: a fresh machine installs the Debian packages first (apt-get)


class SlurmCluster:
    """The running test cluster: its scratch directory, configuration and bring-up time."""

    def __init__(self, directory, up_seconds):
        self.directory = Path(directory)
        self.conf = self.directory / "etc" / "slurm.conf"
        self.up_seconds = up_seconds

    def log(self, name):
        """The text of one daemon log (slurmctld, slurmd, slurmdbd, ...), for failure messages."""
        path = self.directory / "log" / f"{name}.log"
        return path.read_text(errors="replace") if path.is_file() else ""


def _down(directory):
    subprocess.run(["bash", str(HERE / "slurm_down.sh"), str(directory)],
                   stdin=subprocess.DEVNULL, capture_output=True, text=True, timeout=120)


@pytest.fixture(scope="session")
def slurm_cluster():
    if shutil.which("bash") is None:
        pytest.skip("the Slurm test cluster cannot be started: no bash")
    directory = tempfile.mkdtemp(prefix="mdsim-slurm-", dir="/tmp")  # short: socket paths
    stopped = []

    def stop():
        if not stopped:
            stopped.append(True)
            _down(directory)

    atexit.register(stop)  # also if the session dies before the fixture's teardown
    t0 = time.monotonic()
    try:
        proc = subprocess.run(["bash", str(HERE / "slurm_up.sh"), directory],
                              stdin=subprocess.DEVNULL, capture_output=True, text=True,
                              timeout=UP_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        stop()
        pytest.skip(f"the Slurm test cluster cannot be started: slurm_up.sh took more than "
                    f"{UP_TIMEOUT_S} s")
    up_seconds = time.monotonic() - t0
    if proc.returncode != 0:
        stop()  # the scratch directory is kept: its log/ says why
        reason = " ".join(proc.stderr.split())[-600:]
        pytest.skip(f"the Slurm test cluster cannot be started: {reason}")
    old = os.environ.get("SLURM_CONF")
    os.environ["SLURM_CONF"] = str(Path(directory) / "etc" / "slurm.conf")
    try:
        yield SlurmCluster(directory, up_seconds)
    finally:
        stop()
        if old is None:
            os.environ.pop("SLURM_CONF", None)
        else:
            os.environ["SLURM_CONF"] = old
        shutil.rmtree(directory, ignore_errors=True)
