"""NVT Monte Carlo and thermostatted MD sample the same canonical state.

Both see the same Lennard-Jones fluid (rc = 3 sigma, analytic tails); MC
weights configurations with the truncated potential and MD moves on the
truncated-and-shifted one.  At rc = 3 the shift is 5.5e-3 epsilon per
pair, and the difference in the sampled ensembles is far below the error
bars here (common practice, no source), so the two must agree on <u_full>
and <p> within their combined standard errors.
"""
import math

import pytest

from analysis.stats import mean_and_stderr
from mdsim.engine.md import MDSampler
from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.engine.system import System


@pytest.mark.slow
@pytest.mark.parametrize("T, rho", [(2.0, 0.5),     # supercritical fluid (Tc* about 1.32)
                                    (1.5, 0.05)])   # dense gas
def test_mc_nvt_and_md_nvt_agree_on_energy_and_pressure(T, rho):
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    n = 256 if rho > 0.1 else 300

    def system():
        s = System.cubic(pairs, [n], rho)
        return s.place_on_lattice(4) if rho > 0.1 else s.place_at_random(4)

    mc = MCSampler(system(), temperature=T, seed=21)
    mc.equilibrate(1000)
    mc_out = mc.run(5000, 1)
    md = MDSampler(system(), temperature=T, seed=22)
    md.equilibrate(4000)
    md_out = md.run(5000, 5)
    for key in ("u_full", "pressure"):
        a = mean_and_stderr(mc_out[key])
        b = mean_and_stderr(md_out[key])
        z = (a.mean - b.mean) / math.hypot(a.stderr, b.stderr)
        # 4 combined standard errors (statistical inefficiency of each series): a
        # false alarm has probability below 1e-4 per comparison
        assert abs(z) < 4.0, f"{key}: MC {a.mean:.5g} +- {a.stderr:.2g}, MD {b.mean:.5g} +- {b.stderr:.2g}"
