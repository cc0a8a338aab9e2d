"""Keep numba's on-disk cache of the engine's kernels consistent with their source.

numba's ``cache=True`` checks only the source file of the function it
loads.  A kernel that inlines ``pair_eval`` from ``forms.py`` (or the
force loop from ``forces.py``) keeps running the old compiled code after
that other file changes.  To rule this out, the engine's cache is tagged
with a fingerprint of every Python source file of the engine package (its
name and its bytes): when a kernel file changes, is added, is renamed or is
moved away, the fingerprint differs, the engine's cached kernels are
deleted before any kernel is loaded, and numba compiles afresh.  The files
are found by listing the package folder, not from a list of names, so a
kernel moved into or out of the engine cannot slip past the guard.  Only
the engine's own numba cache files are touched.

The numba kernels of :mod:`analysis.virial` call nothing outside their own
file, so numba's own check covers them.
"""
import hashlib
from pathlib import Path

__all__ = ["kernel_sources", "source_fingerprint", "ensure_fresh"]

_TAG = "kernel-sources.sha256"


def kernel_sources(package_dir):
    """The source files whose changes invalidate the cache, sorted by name.

    Parameters
    ----------
    package_dir : path-like
        The engine package's folder.

    Returns
    -------
    list of pathlib.Path
    """
    return sorted(Path(package_dir).glob("*.py"))


def source_fingerprint(package_dir):
    """SHA-256 over the names and bytes of :func:`kernel_sources` (hex string)."""
    h = hashlib.sha256()
    for path in kernel_sources(package_dir):
        h.update(path.name.encode())
        h.update(b"\0")
        h.update(path.read_bytes())
        h.update(b"\0")
    return h.hexdigest()


def ensure_fresh(package_dir):
    """Delete the package's numba cache files if the kernel sources changed.

    Returns True when stale files were removed.  Problems writing the cache
    directory (a read-only install) are ignored: numba then keeps its cache
    elsewhere and compiles as needed.
    """
    package_dir = Path(package_dir)
    cache_dir = package_dir / "__pycache__"
    fingerprint = source_fingerprint(package_dir)
    tag = cache_dir / _TAG
    try:
        if tag.read_text().strip() == fingerprint:
            return False
    except OSError:
        pass
    removed = False
    try:
        cache_dir.mkdir(exist_ok=True)
        for pattern in ("*.nbi", "*.nbc"):
            for f in cache_dir.glob(pattern):
                f.unlink(missing_ok=True)
                removed = True
        tmp = cache_dir / f"{_TAG}.tmp"
        tmp.write_text(fingerprint)
        tmp.replace(tag)
    except OSError:
        return removed
    return removed
