"""Test-molecule insertion (Widom) for rigid linear molecules and the atoms of their mixtures.

A test molecule of type a placed with its centre at a uniformly random
point of a sampled configuration and its axis uniform on the sphere, and
not kept, has the energy dU with all molecules; the residual chemical
potential is

    mu_res,a = -kT ln < exp(-dU / kT) > + dU_tail,a

averaged over the canonical configurations, the insertion points and the
orientations (B. Widom, J. Chem. Phys. 39, 2808, 1963; for rigid molecules
the average over orientations joins that over positions: Frenkel and Smit,
Understanding Molecular Simulation, 2nd ed., section 7.2.1; Allen and
Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, section 9.2).  dU
is the energy the rigid Monte Carlo uses (:func:`mdsim.engine.rigid_mc_kernels.molecule_energy`:
the plain molecular cut-off, the hard core at the centre); the isotropic
site-site tail of the inserted molecule is a constant at fixed density
(:meth:`mdsim.engine.rigid_model.LinearPairModel.insertion_tail`), added by
the caller.  An atom's axis is drawn as well (its energy does not depend on
it), so that every type advances the stream alike.

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate, ``_c`` cell.
Reduced units of the model.
"""
import math

import numpy as np
from numba import njit

from mdsim.checks import count
from mdsim.engine import rng as _rng
from mdsim.engine.rigid_mc_kernels import molecule_energy
from mdsim.errors import SettingError

__all__ = ["rigid_insertion_sums", "insertion_sums_of", "check_insertion_request"]


@njit(cache=True)
def rigid_insertion_sums(centre_ni, axis_ni, type_n, box_i, ncell_i, head_c, next_n,
                         site_start_t, site_z_k, params_kk, form, elec_tm, rc, core2, t_test,
                         beta, n_trials, rng_state):
    """Sums of exp(-beta dU) and exp(-2 beta dU) over ``n_trials`` random test molecules.

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, in [0, box), sigma
    axis_ni : ndarray, shape=(n, 3), float64, unit axes
    type_n : ndarray, shape=(n,), int64
    box_i : ndarray, shape=(3,), float64, sigma
    ncell_i, head_c, next_n : ndarray, int64
        The linked cells of the centres (:mod:`mdsim.engine.mc_cells`).
    site_start_t, site_z_k, params_kk, form, elec_tm, rc
        The model (:class:`mdsim.engine.rigid_model.LinearPairModel`).
    core2 : float, sigma^2
        Square of the hard core at the centre (0: none).
    t_test : int
        Type of the test molecule.
    beta : float
        1 / kT, reduced.
    n_trials : int
    rng_state : ndarray, shape=(4,), uint64
        Advanced in place: per trial x, y, z uniform in the box, then the
        axis (:func:`mdsim.engine.rng.unit_vector`).

    Returns
    -------
    (float, float)
        sum exp(-beta dU), sum exp(-2 beta dU) (plain cut; an overlap
        contributes 0).
    """
    cells_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    s1 = 0.0
    s2 = 0.0
    for _ in range(n_trials):
        x = _rng.uniform(rng_state) * box_i[0]
        y = _rng.uniform(rng_state) * box_i[1]
        z = _rng.uniform(rng_state) * box_i[2]
        ex, ey, ez = _rng.unit_vector(rng_state)
        du = molecule_energy(-1, t_test, x, y, z, ex, ey, ez, centre_ni, axis_ni, type_n, box_i,
                             ncell_i, head_c, next_n, site_start_t, site_z_k, params_kk, form,
                             elec_tm, rc, core2, cells_c)
        if du < math.inf:
            w = math.exp(-beta * du)
            s1 += w
            s2 += w * w
    return s1, s2


def insertion_sums_of(mc, type_a, n_trials, rng_state):
    """:func:`rigid_insertion_sums` in the current configuration of a rigid Monte Carlo sampler.

    Parameters
    ----------
    mc : mdsim.engine.rigid_mc.RigidMCSampler
        Its configuration, cells, model and temperature are used (not changed).
    type_a : int
        Type of the test molecules.
    n_trials : int
    rng_state : ndarray, shape=(4,), uint64
        Advanced in place.

    Returns
    -------
    (float, float)
        sum exp(-dU / kT), sum exp(-2 dU / kT).

    Examples
    --------
    One molecule in a large box: a test molecule far from it has dU = 0, so
    nearly every Boltzmann factor is 1.

    >>> from mdsim.engine.potentials import LennardJones
    >>> from mdsim.engine.rigid_mc import RigidMCSampler
    >>> from mdsim.engine.rigid_model import LinearPairModel
    >>> m = LinearPairModel([([-0.16, 0.16], [LennardJones(1.0, 1.0)] * 2, 0.0)], 2.5)
    >>> mc = RigidMCSampler(m, [[5.0, 5.0, 5.0]], [[0.0, 0.0, 1.0]], [0], [40.0] * 3,
    ...                     temperature=2.0, seed=1)
    >>> from mdsim.engine.rng import make_state
    >>> s1, s2 = insertion_sums_of(mc, 0, 1000, make_state(3))
    >>> bool(0.99 < s1 / 1000 < 1.01)
    True
    """
    m = mc.model
    a, n_trials = check_insertion_request(m.n_types, type_a, n_trials, rng_state)
    return rigid_insertion_sums(mc.centre_ni, mc.axis_ni, mc.type_n, mc.box_i, mc.ncell_i,
                                mc.head_c, mc.next_n, m.site_start_t, m.site_z_k, m.params_kk,
                                m.form, m.elec_tm, m.rc, m.core ** 2, a,
                                1.0 / mc.temperature, n_trials, rng_state)


def check_insertion_request(n_types, type_a, n_trials, rng_state):
    """The type and the number of test molecules of an insertion call, checked.

    Returns
    -------
    (int, int)
        ``type_a`` and ``n_trials``; a type outside the model, a count below 1
        or a random state not made by :func:`mdsim.engine.rng.make_state` is a
        :class:`SettingError`.
    """
    a = int(type_a)
    if not 0 <= a < n_types:
        raise SettingError("type_a", type_a, f"types of the model are 0 to {n_types - 1}")
    n_trials = count("insertions", n_trials, 1, "test molecules per call")
    state = np.asarray(rng_state)
    if state.dtype != np.uint64 or state.shape != (_rng.STATE_WORDS,):
        raise SettingError("rng_state", state.shape, "needs a random state from "
                           "mdsim.engine.rng.make_state")
    return a, n_trials
