"""Fixtures shared by the test folders: the Lennard-Jones reference equation of state; how
the tests are shared between pytest-xdist workers.

The README's test command runs the suite on every core (``-n auto --dist
loadgroup``).  :func:`pytest_collection_modifyitems` keeps each test file on
one worker, so a file's module- and session-scoped fixtures (a finished
pipeline run, a built table) are computed once, and every test that needs
the Slurm test cluster on one worker, which starts it once.  It must run
before pytest-xdist's own hook of that name, which turns the marks into
groups: without ``tryfirst`` every test was its own group, and a file's
module fixtures were computed on both workers (measured: the report tests'
28 s pipeline run twice).  The files that take longest are handed out
first (:data:`LONGEST_FIRST`, with xdist's reordering by test count turned
off in :func:`pytest_configure`), so that no long file starts last while
the other worker idles.  Without xdist the marks do nothing.
"""
from pathlib import Path

import numpy as np
import pytest

TESTS = Path(__file__).resolve().parent


#: Test groups that take longest (seconds of wall time on two workers, measured with
#: ``--durations``), handed out first; the rest follow in collection order.
LONGEST_FIRST = ("mdsim/test_routes_across_states.py",      # about 300-380 s
                 "slurm",                                    # tests/cluster, about 100 s
                 "mdsim/test_run.py",                        # about 100 s
                 "mdsim/test_direct_through_coexistence.py",  # about 60 s
                 "mdsim/test_faults.py",                     # about 60 s
                 "mdsim/test_body_md.py",                    # about 40 s
                 "mdsim/test_report.py",                     # about 35 s
                 "mdsim/test_route_entropy.py")              # about 35 s


def pytest_configure(config):
    """Keep the collection order of the groups (xdist would reorder them by test count)."""
    if hasattr(config.option, "loadscopereorder"):
        config.option.loadscopereorder = False


def _group(item):
    path = Path(str(item.path)).resolve()
    rel = path.relative_to(TESTS) if path.is_relative_to(TESTS) else path
    return "slurm" if rel.parts[0] == "cluster" else rel.as_posix()


@pytest.hookimpl(tryfirst=True)
def pytest_collection_modifyitems(config, items):
    """Give every test an ``xdist_group``: "slurm" for tests/cluster, else its own file; the
    groups of :data:`LONGEST_FIRST` first."""
    rank = {g: k for k, g in enumerate(LONGEST_FIRST)}
    groups = {id(item): _group(item) for item in items}
    items.sort(key=lambda item: rank.get(groups[id(item)], len(rank)))  # stable: else unmoved
    for item in items:
        item.add_marker(pytest.mark.xdist_group(groups[id(item)]))


class TholLJ:
    """The LJ reference EOS of Thol et al., J. Phys. Chem. Ref. Data 45, 023101 (2016), through
    teqp (test-only), in reduced units: residual energy and vapour-liquid saturation."""

    def __init__(self, model):
        self.model = model

    def u_res(self, t, rho):
        """Residual energy per particle / epsilon: T Ar10 (docs/references.md section 5.1)."""
        return t * self.model.get_Ar10(t, rho, np.array([1.0]))

    def saturation(self, t):
        """(rho_l*, rho_v*) at T* (0.7 to 1.3), traced from T* = 1 in steps of 0.01 (liquid 0.70
        and vapour 0.03 start teqp's pure_VLE_T there; Thol 2016 gives 0.7018 and 0.0295)."""
        rho_l, rho_v = 0.70, 0.03
        step = -0.01 if t < 1.0 else 0.01
        for s in np.append(np.arange(1.0, t, step), t):
            rho_l, rho_v = self.model.pure_VLE_T(s, rho_l, rho_v, 100)
        return rho_l, rho_v


@pytest.fixture(scope="session")
def thol_lj():
    """:class:`TholLJ`; skips the test when teqp is not installed."""
    teqp = pytest.importorskip("teqp")
    return TholLJ(teqp.build_LJ126_TholJPCRD2016())
