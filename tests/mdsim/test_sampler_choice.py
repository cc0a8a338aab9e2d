"""The energy route's MD setting (a thermostat relaxing in a few steps) samples the canonical state.

The stochastic velocity-rescaling thermostat samples the canonical ensemble
for any relaxation time (G. Bussi, D. Donadio and M. Parrinello, J. Chem.
Phys. 126, 014101, 2007).  With the energy route's relaxation time of
THERMOSTAT_STEPS time steps: the kinetic energy of nf = 3N - 3 degrees of
freedom has the canonical mean nf kT / 2 and variance nf (kT)^2 / 2
(a gamma distribution; textbook statistical mechanics, no source), and the
configurational energy agrees with canonical Monte Carlo within the
combined standard errors.
"""
import math

from analysis.stats import mean_and_stderr, variance_and_stderr
from mdsim.engine.md import MDSampler
from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.engine.system import System
from mdsim.engine.integrator import default_time_step
from mdsim.pipeline.routes.sampler_choice import md_settings


def test_md_with_the_short_thermostat_samples_the_canonical_ensemble():
    T, rho, n = 2.0, 0.5, 128  # a supercritical LJ fluid (Tc* about 1.32)
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 3.0)

    def system():
        return System.cubic(pairs, [n], rho).place_on_lattice(4)

    md = MDSampler(system(), temperature=T, seed=31,
                   **md_settings(default_time_step(T, [1.0])))
    md.equilibrate(1000)
    md_out = md.run(2500, 5)
    nf = 3 * n - 3
    total_kinetic = md_out["kinetic"] * n
    mean = mean_and_stderr(total_kinetic)
    var = variance_and_stderr(total_kinetic)
    # 4 standard errors (statistical inefficiency of each series): a false alarm has
    # probability below 1e-4 per comparison
    assert abs(mean.mean - 0.5 * nf * T) < 4.0 * mean.stderr
    assert abs(var.value - 0.5 * nf * T * T) < 4.0 * var.stderr
    mc = MCSampler(system(), temperature=T, seed=32)
    mc.equilibrate(300)
    mc_out = mc.run(1000, 1)
    a, b = mean_and_stderr(mc_out["u_full"]), mean_and_stderr(md_out["u_full"])
    z = (a.mean - b.mean) / math.hypot(a.stderr, b.stderr)
    assert abs(z) < 4.0, f"MC {a.mean:.5g} +- {a.stderr:.2g}, MD {b.mean:.5g} +- {b.stderr:.2g}"
