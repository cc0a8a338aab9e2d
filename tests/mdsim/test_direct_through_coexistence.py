"""The direct NVE check of the expansion through coexistence, both routes with ONE model.

A homogeneous Lennard-Jones liquid (T* = 0.8, rho* = 0.7489, the density of
tests/mdsim/test_liquid_into_dome.py) is doubled in volume; its final state is
vapour and liquid.  Two answers are compared:

- the direct route's steps (mdsim.pipeline.routes.direct): NVT molecular
  dynamics of the liquid, its end configuration in the box enlarged 2-fold
  along z with the particles left in place (the wall removed), velocities
  scaled to the canonical mean energy, then NVE molecular dynamics at the final
  (U, V) in an elongated box, where the gas forms a liquid slab with two planar
  interfaces;
- the coexistence route: the lever-rule balance of
  :func:`mdsim.pipeline.coexistence_route.expansion_through_coexistence` on
  Gibbs-ensemble points (:func:`mdsim.sampling.coexistence.coexistence_point`).

One model for both: Lennard-Jones truncated AND shifted at rc = 2.5 sigma, no
tail correction, the model molecular dynamics conserves.  The Gibbs ensemble
samples the truncated, unshifted potential with a homogeneous tail per box; to
give it the same model it gets the shifted potential as a table ending at rc
(so its tail is zero).  Both routes start from the same energy, the canonical
mean <K + U_model> of the initial liquid.  (Comparing a cut-and-shifted MD slab
with the full-potential coexistence answer mixes two models: at rc = 3 sigma the
model alone moves T_f* from 0.849 to 0.800, docs/physics.md section 3.4a.)

The finite-size term.  The two interfaces hold the excess energy 2 A u_s, u_s
the surface excess energy per area (gamma - T dgamma/dT at the equimolar
surface), which the bulk phases of the coexistence route do not have, so the
slab ends colder than the macroscopic two-phase state by

    Delta T_fs = 2 A u_s / (N c_2ph),

c_2ph = dU/dT per particle along the two-phase isochore (the slope of the
coexistence route's balance).  u_s: the truncated-and-shifted fluid at rc =
2.5 sigma has gamma = 2.08 (1 - T/Tc)^1.21 with Tc = 1.0779 (Vrabec, Kedia,
Fuchs and Hasse, Mol. Phys. 104, 1509, 2006; from memory), so u_s = 1.9
epsilon/sigma^2 at T* = 0.72 to 0.77; +- 0.4 for the recall.  Measured here at
rc = 3 sigma (the slab energy minus the Gibbs bulk energies at the slab's
temperature, N = 400 and 800 with A = 6.2^2): u_s = 2.34 +- 0.07 and 2.26 +-
0.18; at rc = 2.5 sigma 2.4 +- 0.2 and 2.9 +- 0.3 (docs/physics.md section 3.4a).
"""
import math
from types import SimpleNamespace

import numpy as np
import pytest

from analysis.heatcapacity import ConstantHeatCapacity
from analysis.stats import mean_and_stderr
from mdsim.engine.md import MDSampler
from mdsim.engine.potentials import LennardJones, PairMatrix
from mdsim.engine.system import System
from mdsim.engine.tabulated import Tabulated
from mdsim.pipeline.coexistence_route import expansion_through_coexistence
from mdsim.pipeline.routes.direct import start_at_canonical_energy, wall_removed_system
from mdsim.sampling.coexistence import coexistence_point
from mdsim.units import R_GAS, ReducedUnits

pytestmark = pytest.mark.slow

RC = 2.5
T_I, RHO_I, RATIO = 0.8, 0.7489, 2.0
N, SIDE = 400, 5.5                       # cross-section 5.5 x 5.5 sigma^2 (> 2 rc)
DT = 0.005
U_S, U_S_ERR = 1.9, 0.4                  # epsilon / sigma^2 (module docstring)
UNITS = ReducedUnits(100.0, 3.405e-10, 0.039948)   # any scale: the comparison is reduced


def _lj(r):
    return 4.0 * (r ** -12 - r ** -6)


def _shifted_table_pairs():
    """The MD model for Monte Carlo: u_LJ(r) - u_LJ(rc) tabulated up to rc (zero tail)."""
    r = np.linspace(0.6, RC, 3000)
    return PairMatrix([Tabulated(r, _lj(r) - _lj(RC), source="LJ cut and shifted at 2.5",
                                 n_knots=8001)], 100.0)


def _direct_nve(seed):
    """(u_i, T_f samples) of the direct route with the cut-and-shifted LJ (MD's model).

    The route's own steps (mdsim.pipeline.routes.direct): NVT MD of the liquid; its
    end configuration in the box enlarged 2-fold along z, particles left in place;
    velocities scaled so the energy is the canonical mean <K + U_model> of the
    liquid (:func:`start_at_canonical_energy`); NVE MD.
    """
    pairs = PairMatrix([LennardJones(1.0, 1.0)], RC)
    liquid = System(pairs, [N], [SIDE, SIDE, N / (RHO_I * SIDE ** 2)]).place_on_lattice(seed=seed)
    nvt = MDSampler(liquid, temperature=T_I, seed=seed, method="md-nvt", time_step=DT)
    nvt.equilibrate(1500)
    start = SimpleNamespace(samples=nvt.run(300, 10))       # 3000 steps, 15 tau
    final = wall_removed_system(liquid, RATIO, liquid.r_ni)
    final.v_ni = liquid.v_ni
    velocities = start_at_canonical_energy(final, start, T_I, DT)
    nve = MDSampler(final, seed=seed, method="md-nve", time_step=DT, velocities=velocities)
    out = nve.run(1250, 20)                                   # 25 000 steps, 125 tau
    drift = abs(out["e_conserved"][-1] - out["e_conserved"][0])
    return mean_and_stderr(start.samples["u_model"]), out["temperature_inst"], drift


def _coexistence_route(u_i):
    """T_f* and its error by the coexistence route, and c_2ph (k per particle) with its error."""
    pairs = _shifted_table_pairs()
    # The vapour box starts at about 3 times the vapour density, so that at equilibrium
    # most particles sit in the liquid and its box stays well above 2 rc: started at the
    # vapour density itself, the total volume put two thirds of the particles in the
    # vapour and pressed the liquid box against 2 rc, where volume moves are refused
    # (measured: 10 to 17 % of them), which holds the liquid below its density.
    points = [coexistence_point(pairs, t, n_particles=200, equilibration_cycles=1000,
                                production_cycles=5000, sample_interval=5, seed=0,
                                start_densities=start)
              for t, start in ((0.75, (0.03, 0.77)), (0.80, (0.05, 0.73)))]
    for p in points:
        assert p.moves["volume_moves_refused"] < 0.01 * 6000, p.moves
    res = expansion_through_coexistence(
        UNITS.energy_to_J_mol(u_i.mean), UNITS.energy_to_J_mol(u_i.stderr),
        UNITS.temperature_to_K(T_I), UNITS.density_to_mol_m3(RHO_I / RATIO), points, UNITS,
        ConstantHeatCapacity.in_units_of_R(1.5))
    c_2ph = res.details["balance_slope_J_molK"] / R_GAS
    # the slope of a line through two points 0.05 apart: their liquid energies' errors
    s_c = math.hypot(points[0].u_liq_err, points[1].u_liq_err) / 0.05
    return (UNITS.temperature_to_reduced(res.final_temperature_K),
            UNITS.temperature_to_reduced(res.final_temperature_stderr_K), c_2ph, s_c)


def test_direct_nve_slab_against_the_coexistence_route_same_model():
    u_i, temperature_t, drift = _direct_nve(seed=1)
    assert drift < 2e-3                                      # NVE holds its energy
    # the slab settles within about 2000 steps (measured); 5000 are dropped
    direct = mean_and_stderr(temperature_t[250:], discard_equilibration=False)
    t_coex, s_coex, c_2ph, s_c = _coexistence_route(u_i)
    # the interface holds energy: the slab ends colder than the two bulk phases, by more
    # than 3 standard errors of the two routes.  Measured: direct 0.7226 +- 0.0022,
    # coexistence 0.7697 +- 0.0047 (c_2ph 7.5 +- 1.1 k), gap 0.047: 9 standard errors
    s_routes = math.hypot(direct.stderr, s_coex)
    assert t_coex - direct.mean > 3.0 * s_routes, (direct.mean, t_coex, s_routes)
    # and by the finite-size term (module docstring), within 4 combined standard errors.
    # Measured: Delta T_fs = 0.038 +- 0.010, residual -0.009 against 4 sigma = 0.045
    shift = 2.0 * SIDE ** 2 * U_S / (N * c_2ph)
    s_shift = shift * math.hypot(U_S_ERR / U_S, s_c / c_2ph)
    sigma = math.hypot(s_routes, s_shift)
    assert abs(direct.mean - (t_coex - shift)) < 4.0 * sigma, \
        (direct.mean, t_coex, shift, sigma)
