"""The tail beyond a molecular cut-off averaged over both molecules' rotations
(mdsim.engine.molecular_tail), and the rigid models that use it.

References: the closed form of the average of r^-n over two spheres (two applications of the
shell theorem's distance density t / (2 a s); a textbook integral, common practice, no
source) and its integrals by scipy's adaptive quadrature; a brute-force Monte Carlo average
over random rotations (scipy's uniform rotations) of rigid propane's site-site energies,
written here with NumPy; for sites at the centres the atomic tail integrals (Allen and
Tildesley, Computer Simulation of Liquids, section 2.8).
"""
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.spatial.transform import Rotation

from mdsim.engine.molecular_tail import orientation_averaged_tail, shell_average
from mdsim.engine.potentials import LennardJones, Mie, combine
from mdsim.engine.site_pairs import site_site_tail
from mdsim.errors import SettingError
from mdsim.sampling.body_box import body_box
from mdsim.study.reader import read_study

CONFIGS = Path(__file__).resolve().parents[2] / "configs"


def _power_average(n, a, b, R):
    """<r^-n> over two spheres of radii a, b whose centres are R apart (a, b > 0):
    [G(R + b) - G(R - b)] / (4 a b R (n - 2)), G(s) = ((s - a)^(3-n) - (s + a)^(3-n)) / (3 - n)."""
    def G(s):
        return ((s - a) ** (3 - n) - (s + a) ** (3 - n)) / (3 - n)
    return (G(R + b) - G(R - b)) / (4 * a * b * R * (n - 2))


@pytest.mark.parametrize("a, b, R", [(0.4, 0.3, 3.0), (0.16, 0.16, 2.5), (1.2, 0.9, 3.0),
                                     (0.3, 0.05, 2.2)])
def test_shell_average_and_tail_integrals_against_the_closed_form(a, b, R):
    lj = LennardJones(1.0, 1.0)

    def closed(r):
        return 4.0 * (_power_average(12, a, b, r) - _power_average(6, a, b, r))
    # 16 Gauss-Legendre nodes per sphere: measured 1e-15 relative at (0.4, 0.3, 3), 6e-10 where
    # the spheres come within 0.9 sigma of each other (1.2, 0.9, 3)
    assert float(shell_average(lj, a, b, R)) == pytest.approx(closed(R), rel=1e-8)
    # the integrals beyond R: I_u = int R^2 <u>, I_w = int R^3 d<u>/dR (by parts in the module)
    i_u, i_w = orientation_averaged_tail(lj, a, b, R)
    assert i_u == pytest.approx(quad(lambda r: r * r * closed(r), R, np.inf,
                                     epsabs=1e-14, epsrel=1e-12)[0], rel=1e-9)
    h = 1e-5
    d_closed = quad(lambda r: r ** 3 * (closed(r + h) - closed(r - h)) / (2 * h), R, np.inf,
                    epsabs=1e-14, epsrel=1e-10)[0]
    assert i_w == pytest.approx(d_closed, rel=1e-6)  # the finite difference's error


def test_sites_at_the_centres_give_the_atomic_tail_and_overlap_is_refused():
    for pot, rc in ((LennardJones(1.0, 1.0), 3.0), (Mie(1.0, 1.0, 20.0, 6.0), 2.0),
                    (combine(LennardJones(1.0, 1.0), LennardJones(0.5, 1.3)), 2.5)):
        np.testing.assert_allclose(orientation_averaged_tail(pot, 0.0, 0.0, rc),
                                   pot.tail_integrals(rc), rtol=1e-12)
    # one site at the centre: the single-shell average of r^-n,
    # ((R - a)^(2-n) - (R + a)^(2-n)) / (2 a R (n - 2))
    a, R = 0.35, 2.5
    one = [((R - a) ** (2 - n) - (R + a) ** (2 - n)) / (2 * a * R * (n - 2)) for n in (12, 6)]
    assert float(shell_average(LennardJones(1.0, 1.0), a, 0.0, R)) == pytest.approx(
        4.0 * (one[0] - one[1]), rel=1e-12)
    with pytest.raises(SettingError, match="must exceed the sum"):
        orientation_averaged_tail(LennardJones(1.0, 1.0), 1.5, 1.0, 2.4)


def test_propane_tail_against_a_brute_force_average_over_rotations():
    # rigid propane (configs/propane.toml, TraPPE-UA from memory) at rc = 3 sigma,
    # rho sigma^3 = 0.02: the model's u_tail against 2 pi rho int_rc^inf R^2 <u>(R) dR with
    # <u> a Monte Carlo average over 20000 random pairs of rotations per radial node (fixed
    # seed; over seeds 0-7 it scatters by 1.5e-4 relative, measured).  Tolerance 0.1 %.  The
    # shortcut with the site-site distance set to R gives -0.0487, 6.3 % smaller in magnitude
    (mol,) = read_study(CONFIGS / "propane.toml").gas.molecules
    model = body_box(mol, 400.0, 600.0, 8, 3.0, seed=1).model
    pos, pots = model.site_body_ki, model.site_potentials
    rng = np.random.default_rng(3)
    y, w = np.polynomial.legendre.leggauss(10)
    y, w = 0.5 * (y + 1.0), 0.5 * w
    total = 0.0
    for yi, wi in zip(y, w):
        R = 3.0 / yi
        n = 20000
        ra = np.einsum("nij,kj->nki", Rotation.random(n, random_state=rng).as_matrix(), pos)
        rb = np.einsum("nij,kj->nki", Rotation.random(n, random_state=rng).as_matrix(), pos)
        d = rng.normal(size=(n, 3))
        d *= R / np.linalg.norm(d, axis=1)[:, None]
        u = np.zeros(n)
        for k in range(len(pos)):
            for m in range(len(pos)):
                pot = pots[k] if pots[k] == pots[m] else combine(pots[k], pots[m])
                u += pot.energy(np.linalg.norm(d + rb[:, m] - ra[:, k], axis=1))
        total += wi * 3.0 ** 3 / yi ** 4 * u.mean()
    brute = 2.0 * np.pi * 0.02 * total
    assert model.tail(0.02)[0] == pytest.approx(brute, rel=1e-3)
    shortcut = site_site_tail(pots, model.site_start_t, 3.0, 0.02)[0]
    assert abs(shortcut - brute) > 0.05 * abs(brute)
