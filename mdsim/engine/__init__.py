"""The simulation engine: pair potentials, the periodic system, the random
stream, neighbour lists, force kernels, molecular dynamics and Monte Carlo.

Reduced Lennard-Jones-style units throughout (``docs/units.md``).  Importing
the package first checks that numba's cached kernels were compiled from the
current sources (:mod:`mdsim.engine.kernel_cache`), then offers the public
API below; each kernel is compiled, or loaded from the cache, on first use.

Modules: :mod:`~mdsim.engine.forms` (form codes, parameter rows, the scalar
pair kernel), :mod:`~mdsim.engine.pair_potential` (the potential interface),
:mod:`~mdsim.engine.potentials` (analytic forms, mixing, pair matrix),
:mod:`~mdsim.engine.tabulated` (tables), :mod:`~mdsim.engine.feynman_hibbs`
(the quadratic Feynman-Hibbs effective potential), :mod:`~mdsim.engine.system`,
:mod:`~mdsim.engine.rng`, :mod:`~mdsim.engine.neighbours`,
:mod:`~mdsim.engine.forces`, :mod:`~mdsim.engine.integrator` and
:mod:`~mdsim.engine.md` (molecular dynamics), :mod:`~mdsim.engine.mc_cells`,
:mod:`~mdsim.engine.mc_kernels`, :mod:`~mdsim.engine.montecarlo` and
:mod:`~mdsim.engine.microcanonical_temperature` (Monte Carlo),
:mod:`~mdsim.engine.insertion` (test-particle insertion),
:mod:`~mdsim.engine.gibbs_kernels` and :mod:`~mdsim.engine.gibbs` (Gibbs ensemble),
:mod:`~mdsim.engine.charges`, :mod:`~mdsim.engine.ewald` and
:mod:`~mdsim.engine.damped_coulomb` (point charges: Ewald summation and the
damped shifted-force sum), :mod:`~mdsim.engine.threebody` (the Axilrod-Teller
energy of a configuration), :mod:`~mdsim.engine.rigid_pair` (pair energy, forces
and torques of rigid linear molecules) and :mod:`~mdsim.engine.rigid_model` (their model), :mod:`~mdsim.engine.rigid_mc_kernels` and
:mod:`~mdsim.engine.rigid_mc` (their Monte Carlo), :mod:`~mdsim.engine.rigid_insertion`
(their test-molecule insertion), :mod:`~mdsim.engine.rigid_integrator`
and :mod:`~mdsim.engine.rigid_md` (their molecular dynamics; its time step and drift
in :mod:`~mdsim.engine.rigid_md_steps`); rigid bodies of any shape (non-linear
molecules): :mod:`~mdsim.engine.body_rotation` (quaternions),
:mod:`~mdsim.engine.body_pair` and :mod:`~mdsim.engine.body_model` (pair energy,
forces, torques; the site-pair table and tail shared with the linear model in
:mod:`~mdsim.engine.site_pairs`), :mod:`~mdsim.engine.body_mc_kernels` and
:mod:`~mdsim.engine.body_mc` (Monte Carlo), :mod:`~mdsim.engine.body_insertion`
(test-body insertion), :mod:`~mdsim.engine.body_integrator`,
:mod:`~mdsim.engine.body_inertia` and :mod:`~mdsim.engine.body_md` (molecular dynamics).
"""
from pathlib import Path as _Path

from mdsim.engine import kernel_cache as _kernel_cache

# before any kernel module is imported, so that no stale cached kernel is loaded
_kernel_cache.ensure_fresh(_Path(__file__).parent)

from mdsim.engine.integrator import default_time_step, energy_drift  # noqa: E402
from mdsim.engine.gibbs import GibbsSampler  # noqa: E402
from mdsim.engine.md import MDSampler  # noqa: E402
from mdsim.engine.microcanonical_temperature import nve_temperature  # noqa: E402
from mdsim.engine.montecarlo import MCSampler  # noqa: E402
from mdsim.engine.potentials import (Exp6, LennardJones, Mie, PairMatrix,  # noqa: E402
                                     PairPotential, Tabulated, combine, read_table)
from mdsim.engine.system import System  # noqa: E402

__all__ = ["PairPotential", "LennardJones", "Mie", "Exp6", "Tabulated", "read_table", "combine",
           "PairMatrix", "System", "MDSampler", "MCSampler", "GibbsSampler", "default_time_step",
           "energy_drift", "nve_temperature"]
