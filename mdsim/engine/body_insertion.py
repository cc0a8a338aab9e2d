"""Test-body insertion (Widom) for rigid bodies of any shape and the atoms and linear molecules
of their mixtures.

A test body of type a placed with its centre at a uniformly random point
of a sampled configuration and its orientation uniform over the rotations,
and not kept, has the energy dU with all bodies; the residual chemical
potential is

    mu_res,a = -kT ln < exp(-dU / kT) > + dU_tail,a

averaged over the canonical configurations, the insertion points and the
orientations (B. Widom, J. Chem. Phys. 39, 2808, 1963; for rigid molecules
the average over orientations joins that over positions: Frenkel and Smit,
Understanding Molecular Simulation, 2nd ed., section 7.2.1).  The
orientation is a uniform unit quaternion (:func:`uniform_quaternion`).  dU
is the energy the rigid-body Monte Carlo uses
(:func:`mdsim.engine.body_mc_kernels.body_energy`: the plain molecular
cut-off); the isotropic site-site tail of the inserted body is a constant at
fixed density (:meth:`mdsim.engine.body_model.BodyPairModel.insertion_tail`),
added by the caller.  An atom's orientation is drawn as well (its sites do
not move), so that every type advances the stream alike.

Array suffixes: ``_n`` body, ``_s`` site of one body, ``_i`` Cartesian
coordinate, ``_c`` cell.  Reduced units of the model.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.body_mc_kernels import body_energy
from mdsim.engine.body_rotation import rotate_sites
from mdsim.engine.rigid_insertion import check_insertion_request

__all__ = ["uniform_quaternion", "body_insertion_sums", "body_insertion_sums_of"]


@njit(cache=True)
def uniform_quaternion(state):
    """A unit quaternion uniform over the rotations, from three uniform deviates.

    Returns
    -------
    (float, float, float, float)
        q0, q1, q2, q3 = sqrt(1 - u1) sin(2 pi u2), sqrt(1 - u1) cos(2 pi u2),
        sqrt(u1) sin(2 pi u3), sqrt(u1) cos(2 pi u3), u1, u2, u3 drawn in this order.

    Notes
    -----
    Uniform on the unit 3-sphere, the uniform (Haar) measure on the
    rotations (Shoemake, "Uniform random rotations", Graphics Gems III,
    1992); q and -q are the same orientation.
    """
    u1 = _rng.uniform(state)
    u2 = 2.0 * math.pi * _rng.uniform(state)
    u3 = 2.0 * math.pi * _rng.uniform(state)
    a, b = math.sqrt(1.0 - u1), math.sqrt(u1)
    return a * math.sin(u2), a * math.cos(u2), b * math.sin(u3), b * math.cos(u3)


@njit(cache=True)
def body_insertion_sums(centre_ni, offset_nsi, type_n, box_i, ncell_i, head_c, next_n,
                        site_start_t, site_body_ki, params_kk, form, rc, t_test, beta, n_trials,
                        rng_state):
    """Sums of exp(-beta dU) and exp(-2 beta dU) over ``n_trials`` random test bodies.

    Parameters
    ----------
    centre_ni : ndarray, shape=(n, 3), float64, in [0, box), sigma
    offset_nsi : ndarray, shape=(n, max_sites, 3), float64, sigma
        Lab-frame site offsets of the bodies.
    type_n : ndarray, shape=(n,), int64
    box_i : ndarray, shape=(3,), float64, sigma
    ncell_i, head_c, next_n : ndarray, int64
        The linked cells of the centres (:mod:`mdsim.engine.mc_cells`).
    site_start_t, site_body_ki, params_kk, form, rc
        The model (:class:`mdsim.engine.body_model.BodyPairModel`).
    t_test : int
        Type of the test body.
    beta : float
        1 / kT, reduced.
    n_trials : int
    rng_state : ndarray, shape=(4,), uint64
        Advanced in place: per trial x, y, z uniform in the box, then the
        orientation (:func:`uniform_quaternion`).

    Returns
    -------
    (float, float)
        sum exp(-beta dU), sum exp(-2 beta dU) (plain cut).

    Notes
    -----
    The test body is body n of a type list one longer than ``type_n``: the
    cells hold bodies 0 to n - 1 only, so :func:`body_energy` meets every one
    of them.
    """
    n = centre_ni.shape[0]
    type_ext_n = np.empty(n + 1, dtype=np.int64)
    type_ext_n[:n] = type_n
    type_ext_n[n] = t_test
    cells_c = np.empty((2 * ncell_i[3] + 1) ** 3, dtype=np.int64)
    trial_si = np.zeros((offset_nsi.shape[1], 3))
    k0, k1 = site_start_t[t_test], site_start_t[t_test + 1]
    s1 = 0.0
    s2 = 0.0
    for _ in range(n_trials):
        x = _rng.uniform(rng_state) * box_i[0]
        y = _rng.uniform(rng_state) * box_i[1]
        z = _rng.uniform(rng_state) * box_i[2]
        q0, q1, q2, q3 = uniform_quaternion(rng_state)
        rotate_sites(q0, q1, q2, q3, site_body_ki, k0, k1, trial_si)
        du = body_energy(n, x, y, z, trial_si, centre_ni, offset_nsi, type_ext_n, box_i,
                         ncell_i, head_c, next_n, site_start_t, params_kk, form, rc, cells_c)
        if du < math.inf:
            w = math.exp(-beta * du)
            s1 += w
            s2 += w * w
    return s1, s2


def body_insertion_sums_of(mc, type_a, n_trials, rng_state):
    """:func:`body_insertion_sums` in the current configuration of a rigid-body Monte Carlo
    sampler ``mc`` (:class:`mdsim.engine.body_mc.BodyMCSampler`, not changed): sum
    exp(-dU / kT) and sum exp(-2 dU / kT), arguments and results as for
    :func:`mdsim.engine.rigid_insertion.insertion_sums_of`.

    Examples
    --------
    One bent body in a large box: a test body far from it has dU = 0, so
    nearly every Boltzmann factor is 1.

    >>> from mdsim.engine.potentials import LennardJones
    >>> from mdsim.engine.body_mc import BodyMCSampler
    >>> from mdsim.engine.body_model import BodyPairModel
    >>> from mdsim.engine.rng import make_state
    >>> pos = [[0.0, 0.1, 0.0], [0.25, -0.05, 0.0], [-0.25, -0.05, 0.0]]
    >>> m = BodyPairModel([(pos, [LennardJones(1.0, 1.0)] * 3)], 2.5)
    >>> mc = BodyMCSampler(m, [[5.0, 5.0, 5.0]], [[1.0, 0.0, 0.0, 0.0]], [0], [40.0] * 3,
    ...                    temperature=2.0, seed=1)
    >>> s1, s2 = body_insertion_sums_of(mc, 0, 1000, make_state(3))
    >>> bool(0.99 < s1 / 1000 < 1.01)
    True
    """
    m = mc.model
    a, n_trials = check_insertion_request(m.n_types, type_a, n_trials, rng_state)
    return body_insertion_sums(mc.centre_ni, mc.offset_nsi, mc.type_n, mc.box_i, mc.ncell_i,
                               mc.head_c, mc.next_n, m.site_start_t, m.site_body_ki,
                               m.params_kk, m.form, m.rc, a, 1.0 / mc.temperature, n_trials,
                               rng_state)
