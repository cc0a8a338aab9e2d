"""Fixtures shared by the test folders: the Lennard-Jones reference equation of state."""
import numpy as np
import pytest


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
