"""Run the Examples sections of the public docstrings (numpydoc ``Examples`` with ``>>>``).

Every module of ``mdsim`` and ``analysis`` is searched, so an example added
to a docstring is tested without registering it here.  The benchmarks are
left out (they time things; their examples would be slow).
"""
import doctest
import importlib
import pkgutil

import pytest

import analysis
import mdsim


def _modules():
    names = []
    for pkg in (mdsim, analysis):
        names.append(pkg.__name__)
        for info in pkgutil.walk_packages(pkg.__path__, prefix=pkg.__name__ + "."):
            if ".bench" in info.name or info.name.endswith("__main__") or info.name == "mdsim.bench_job":
                continue
            names.append(info.name)
    return sorted(names)


MODULES = _modules()


def _tests_in(name):
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    return [t for t in finder.find(module, name) if t.examples and t.name.startswith(name)]


@pytest.mark.parametrize("name", MODULES)
def test_examples_in_docstrings_run(name):
    tests = _tests_in(name)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    for t in tests:
        runner.run(t)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"


def test_the_user_facing_functions_have_examples():
    """The functions a user scripts against carry a runnable example (run by the test above)."""
    wanted = [
        ("mdsim.sampling", "sample_state_point"), ("mdsim.study", "read_study"),
        ("analysis.virial", "b2"), ("analysis.virial", "b3"),
        ("analysis.virial_eos", "VirialGas"), ("analysis.expansion", "virial_expansion"),
        ("analysis.expansion", "energy_route"), ("analysis.expansion", "microcanonical_route"),
        ("analysis.expansion", "direct_route"), ("mdsim.engine", "LennardJones"),
    ]
    missing = []
    for module_name, attr in wanted:
        obj = getattr(importlib.import_module(module_name), attr)
        doc = obj.__doc__ or ""
        if ">>>" not in doc:
            missing.append(f"{module_name}.{attr}")
    assert not missing, f"no runnable example in: {', '.join(missing)}"
