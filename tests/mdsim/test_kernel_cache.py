"""The kernel-cache guard deletes stale numba cache files when a kernel source changes."""
import shutil
from pathlib import Path

import mdsim
import mdsim.engine
from mdsim.engine import kernel_cache


def _engine_copy(tmp_path):
    pkg = tmp_path / "engine"
    shutil.copytree(Path(mdsim.engine.__file__).parent, pkg,
                    ignore=shutil.ignore_patterns("__pycache__"))
    cache = pkg / "__pycache__"
    cache.mkdir()
    assert kernel_cache.ensure_fresh(pkg) is False  # first call: nothing to remove, tag written
    stale = cache / "forces.forces_half-10.py311.nbi"
    stale.write_text("x")
    assert kernel_cache.ensure_fresh(pkg) is False  # sources unchanged: cache kept
    assert stale.exists()
    return pkg, cache, stale


def test_stale_cache_is_removed_when_a_kernel_source_changes(tmp_path):
    pkg, cache, stale = _engine_copy(tmp_path)
    with open(pkg / "potentials.py", "a") as fh:
        fh.write("\n# changed\n")
    assert kernel_cache.ensure_fresh(pkg) is True
    assert not stale.exists()
    other = cache / "system.cpython-311.pyc"
    other.write_text("bytecode")
    with open(pkg / "forces.py", "a") as fh:
        fh.write("\n# changed\n")
    kernel_cache.ensure_fresh(pkg)
    assert other.exists()  # only numba's cache files are touched


def test_moving_a_kernel_file_invalidates_the_cache(tmp_path):
    pkg, cache, stale = _engine_copy(tmp_path)
    (pkg / "forces.py").rename(tmp_path / "forces.py")  # moved out of the engine, unchanged
    assert kernel_cache.ensure_fresh(pkg) is True
    assert not stale.exists()
    stale.write_text("x")
    (tmp_path / "forces.py").rename(pkg / "pair_forces.py")  # back under another name
    assert kernel_cache.ensure_fresh(pkg) is True
    assert not stale.exists()


def test_every_kernel_file_of_the_engine_is_guarded():
    engine_dir = Path(mdsim.engine.__file__).parent
    guarded = {p.name for p in kernel_cache.kernel_sources(engine_dir)}
    with_kernels = {p.name for p in engine_dir.glob("*.py") if "@njit" in p.read_text()}
    assert with_kernels and with_kernels <= guarded


def test_version_comes_from_package_metadata():
    from importlib.metadata import version
    assert mdsim.__version__ == version("free-expansion")
