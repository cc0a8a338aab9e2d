"""Canonical Monte Carlo of non-linear rigid molecules (and their mixtures) with test-body
insertions, in stage files.

:class:`BodyInsertionStageSampler` is the rigid-body Monte Carlo of
:class:`mdsim.sampling.body_stage.BodyMCStageSampler` that, at every sample,
inserts test bodies of each type (centre uniform in the box, orientation
uniform over the rotations; :mod:`mdsim.engine.body_insertion`) and records
the same series as the linear molecules'
:class:`mdsim.sampling.rigid_insertion_stage.RigidInsertionStageSampler`
(the mean Boltzmann factor and its square per type, ``pressure_conf``),
which :func:`analysis.sampled_entropy.residual_entropy` turns into mu_res
and s_res.  Method :data:`BODY_INSERTION_METHOD`; the run file, its
checkpoints and the resume bit for bit are those of every stage.

Reduced units of the first molecule's first site (:mod:`mdsim.sampling.body_box`).
"""
from mdsim.engine.body_insertion import body_insertion_sums_of
from mdsim.sampling.body_stage import BodyMCStageSampler
from mdsim.sampling.rigid_insertion_stage import RigidInsertionStageSampler

__all__ = ["BODY_INSERTION_METHOD", "BodyInsertionStageSampler"]

BODY_INSERTION_METHOD = "rigid-body-mc-nvt-insertion"
"""The method name of canonical Monte Carlo of non-linear rigid molecules with test-body
insertions."""


class BodyInsertionStageSampler(RigidInsertionStageSampler, BodyMCStageSampler):
    """Canonical Monte Carlo of a :class:`~mdsim.sampling.body_stage.BodySystem` with test-body
    insertions at every sample.

    Parameters as for :class:`RigidInsertionStageSampler`, with ``method``
    :data:`BODY_INSERTION_METHOD`; the system's MD momenta, if any, are not used.

    Examples
    --------
    >>> import numpy as np
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> from mdsim.sampling.body_stage import body_system
    >>> lj = LennardJones(50.0, 3.0)
    >>> bent = RigidMolecule("bent", [Site(lj, (0.0, 0.0, 0.0), 0.016),
    ...                               Site(lj, (0.8, 0.6, 0.0), 0.001),
    ...                               Site(lj, (-0.8, 0.6, 0.0), 0.001)])
    >>> s = BodyInsertionStageSampler(body_system(bent, 300.0, 2000.0, 27, 3.0, seed=1),
    ...                               temperature=6.0, seed=2, method=BODY_INSERTION_METHOD,
    ...                               insertions=8)
    >>> s.equilibrate(2)
    >>> out = s.run(3, 1)
    >>> sorted(out)[:3], bool(np.all(out["insertion_factor_0"] > 0))
    (['acceptance', 'insertion_factor_0', 'insertion_factor_sq_0'], True)
    """

    insertion_method = BODY_INSERTION_METHOD
    insertion_sums = staticmethod(body_insertion_sums_of)
