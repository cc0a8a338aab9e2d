"""The kernel-cache guard deletes stale numba cache files when a kernel source changes."""
import shutil
from pathlib import Path

import mdsim
from mdsim import _kernel_cache


def test_stale_cache_is_removed_when_a_kernel_source_changes(tmp_path):
    pkg = tmp_path / "pkg"
    shutil.copytree(Path(mdsim.__file__).parent, pkg,
                    ignore=shutil.ignore_patterns("__pycache__"))
    cache = pkg / "__pycache__"
    cache.mkdir()
    assert _kernel_cache.ensure_fresh(pkg) is False  # first call: nothing to remove, tag written
    stale = cache / "forces.forces_half-10.py311.nbi"
    stale.write_text("x")
    assert _kernel_cache.ensure_fresh(pkg) is False  # sources unchanged: cache kept
    assert stale.exists()
    with open(pkg / "potentials.py", "a") as fh:
        fh.write("\n# changed\n")
    assert _kernel_cache.ensure_fresh(pkg) is True
    assert not stale.exists()
    other = cache / "system.cpython-311.pyc"
    other.write_text("bytecode")
    with open(pkg / "forces.py", "a") as fh:
        fh.write("\n# changed\n")
    _kernel_cache.ensure_fresh(pkg)
    assert other.exists()  # only numba's cache files are touched


def test_version_comes_from_package_metadata():
    from importlib.metadata import version
    assert mdsim.__version__ == version("free-expansion")
