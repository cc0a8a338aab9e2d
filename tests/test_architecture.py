"""The package's layers import only downwards, and no module imports another's private name.

The layers (docs/architecture.md section 1), top to bottom; a module may import from
its own layer and from the layers below it, never from above:

    mdsim.cli
    mdsim.check, mdsim.cstable
    mdsim.pipeline
    mdsim.study, mdsim.sampling, mdsim.execute
    analysis
    mdsim.engine
    mdsim.errors, mdsim.units, mdsim.files, mdsim.checks, mdsim.numbers

``analysis`` may import only the base (errors, units, checks) and
``mdsim.engine.potentials`` (the pair-potential definitions).  ``mdsim.bench``
is apart: it may import anything, and nothing imports it.  Imports are read from the source with
``ast`` (also those inside functions), so a lazy import cannot hide an
upward dependency.
"""
import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

LAYERS = [
    ["mdsim.cli", "mdsim.__main__"],
    ["mdsim.check", "mdsim.cstable"],
    ["mdsim.pipeline"],
    ["mdsim.study", "mdsim.sampling", "mdsim.execute"],
    ["analysis"],
    ["mdsim.engine"],
    ["mdsim.errors", "mdsim.units", "mdsim.files", "mdsim.checks", "mdsim.numbers", "mdsim"],
]
APART = ["mdsim.bench", "mdsim.bench_job"]
ANALYSIS_MAY_IMPORT = ("mdsim.errors", "mdsim.units", "mdsim.checks", "mdsim.engine.potentials")


def _module_name(path):
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _within(name, prefix):
    return name == prefix or name.startswith(prefix + ".")


def _layer(name):
    for group in APART:
        if _within(name, group):
            return "apart"
    best = None
    for rank, group in enumerate(LAYERS):
        for prefix in group:
            if _within(name, prefix) and (best is None or len(prefix) > len(best[1])):
                best = (rank, prefix)
    return None if best is None else best[0]


def _sources():
    for pkg in ("mdsim", "analysis"):
        for path in sorted((ROOT / pkg).rglob("*.py")):
            yield path


def _imports(path):
    """(line, imported module, names) for every import of mdsim or analysis in a file."""
    name = _module_name(path)
    is_pkg = path.name == "__init__.py"
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = name.split(".") if is_pkg else name.split(".")[:-1]
                base = base[:len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            names = [a.name for a in node.names]
            if target.split(".")[0] in ("mdsim", "analysis"):
                yield node.lineno, target, names
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.split(".")[0] in ("mdsim", "analysis"):
                    yield node.lineno, a.name, []


def _resolve(target, names):
    """The modules an import statement reaches: 'from mdsim.engine import rng' reaches mdsim.engine.rng."""
    out = []
    for n in names:
        candidate = f"{target}.{n}"
        path = ROOT.joinpath(*candidate.split("."))
        if path.with_suffix(".py").is_file() or (path / "__init__.py").is_file():
            out.append(candidate)
    return out or [target]


def test_every_module_belongs_to_a_layer():
    unplaced = [_module_name(p) for p in _sources() if _layer(_module_name(p)) is None]
    assert not unplaced, f"modules outside every layer: {unplaced}"


def test_imports_flow_downwards_only():
    bad = []
    for path in _sources():
        me = _module_name(path)
        my_layer = _layer(me)
        for line, target, names in _imports(path):
            for dep in _resolve(target, names):
                their = _layer(dep)
                where = f"{path.relative_to(ROOT)}:{line} imports {dep}"
                if my_layer == "apart":
                    continue
                if their == "apart":
                    bad.append(f"{where} (the benchmarks are apart)")
                elif their is not None and their < my_layer:
                    bad.append(f"{where} (a higher layer)")
                elif _within(me, "analysis") and not _within(dep, "analysis") \
                        and not any(_within(dep, ok) for ok in ANALYSIS_MAY_IMPORT) and dep != "mdsim":
                    bad.append(f"{where} (analysis may import only {', '.join(ANALYSIS_MAY_IMPORT)})")
    assert not bad, "imports against the layer order:\n" + "\n".join(bad)


def test_no_module_imports_a_private_name_of_another():
    bad = []
    for path in _sources():
        me = _module_name(path)
        for line, target, names in _imports(path):
            if target == me:
                continue
            for n in names:
                if n.startswith("_") and not n.startswith("__"):
                    bad.append(f"{path.relative_to(ROOT)}:{line} imports {target}.{n}")
            if any(part.startswith("_") and not part.startswith("__") for part in target.split(".")):
                bad.append(f"{path.relative_to(ROOT)}:{line} imports the private module {target}")
    assert not bad, "private names imported across modules:\n" + "\n".join(bad)


@pytest.mark.parametrize("pkg", sorted({str(p.parent.relative_to(ROOT)) for p in
                                        ROOT.glob("mdsim/**/__init__.py")} | {"analysis"}))
def test_every_subpackage_declares_its_interface(pkg):
    text = (ROOT / pkg / "__init__.py").read_text(encoding="utf-8")
    assert "__all__" in text, f"{pkg}/__init__.py does not declare __all__"


def test_the_checker_itself_sees_an_upward_import(tmp_path):
    """The walker resolves relative and lazy imports (a check that the check can fail)."""
    src = tmp_path / "m.py"
    src.write_text("def f():\n    from mdsim.cli import main\n", encoding="utf-8")
    tree = ast.parse(src.read_text())
    lazy = [n for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)]
    assert lazy and lazy[0].module == "mdsim.cli"
    assert _layer("mdsim.engine.md") > _layer("mdsim.pipeline.tasks") > _layer("mdsim.cli.run")
    assert _layer("mdsim.bench.engine") == "apart"
