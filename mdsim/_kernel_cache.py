"""Keep numba's on-disk cache of the engine's kernels consistent with their source.

numba's ``cache=True`` checks only the source file of the function it
loads.  A kernel that inlines ``pair_eval`` from ``potentials.py`` (or the
force loop from ``forces.py``) keeps running the old compiled code after
that other file changes.  To rule this out, the cache of this package is
tagged with a hash of all the kernel source files; when the hash differs,
the package's cached kernels are deleted before any kernel is loaded, and
numba compiles afresh.  Only this package's own cache files are touched.
"""
import hashlib
from pathlib import Path

KERNEL_MODULES = ("potentials.py", "rng.py", "neighbours.py", "forces.py", "md.py",
                  "montecarlo.py")
_TAG = "kernel-sources.sha256"


def source_fingerprint(package_dir):
    h = hashlib.sha256()
    for name in KERNEL_MODULES:
        path = Path(package_dir) / name
        h.update(name.encode())
        h.update(path.read_bytes() if path.exists() else b"")
    return h.hexdigest()


def ensure_fresh(package_dir):
    """Delete this package's numba cache files if the kernel sources changed.

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
