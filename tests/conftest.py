"""Fixtures shared by the test folders: the Lennard-Jones reference equation of state; how
the tests are shared between pytest-xdist workers.

The README's test command runs the suite on every core (``-n auto --dist
loadgroup``).  :func:`pytest_collection_modifyitems` keeps each test file on
one worker, so a file's module- and session-scoped fixtures (a finished
pipeline run, a built table) are computed once, and every test that needs
the Slurm test cluster on one worker, which starts it once.  Without xdist
the marks do nothing.
"""
from pathlib import Path

import numpy as np
import pytest

TESTS = Path(__file__).resolve().parent


def pytest_collection_modifyitems(config, items):
    """Give every test an ``xdist_group``: "slurm" for tests/cluster, else its own file."""
    for item in items:
        path = Path(str(item.path)).resolve()
        rel = path.relative_to(TESTS) if path.is_relative_to(TESTS) else path
        group = "slurm" if rel.parts[0] == "cluster" else str(rel)
        item.add_marker(pytest.mark.xdist_group(group))


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
