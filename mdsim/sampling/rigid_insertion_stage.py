"""Canonical Monte Carlo of rigid molecules with test-molecule insertions, in stage files.

:class:`RigidInsertionStageSampler` is the rigid-molecule Monte Carlo of
:class:`mdsim.sampling.rigid_stage.RigidMCStageSampler` that, at every
sample, inserts test molecules of each type (centre uniform in the box,
axis uniform on the sphere; :mod:`mdsim.engine.rigid_insertion`) and
records the mean Boltzmann factor and its square, the series that
:func:`analysis.sampled_entropy.residual_entropy` turns into mu_res and s_res,
as the spheres' :class:`mdsim.engine.insertion.InsertionSampler` does (the
same series names).  It also records ``pressure_conf`` (the pressure less
rho kT), which s_res needs.  Method :data:`METHOD`; the run file and its
checkpoints are those of every stage, and a resumed run continues bit for
bit (the insertion stream is saved with the state).

Reduced units of the molecule's first site.
"""
import numpy as np

from mdsim.checks import count
from mdsim.engine.insertion import (insertion_stream, run_with_insertions,
                                    saved_insertion_stream)
from mdsim.engine.rigid_insertion import insertion_sums_of
from mdsim.errors import StudyError
from mdsim.sampling.rigid_stage import RigidMCStageSampler

__all__ = ["METHOD", "RigidInsertionStageSampler", "insertion_tails"]

METHOD = "rigid-mc-nvt-insertion"
"""The method name of canonical Monte Carlo of rigid molecules with test-molecule insertions."""


def insertion_tails(system):
    """Tail energy of one inserted molecule of each type of a rigid system, epsilon.

    Parameters
    ----------
    system : mdsim.sampling.rigid_stage.RigidSystem

    Returns
    -------
    list of float
        :meth:`mdsim.engine.rigid_model.LinearPairModel.insertion_tail` at the
        system's density and type fractions, one per type of the model.
    """
    model = system.model
    return [model.insertion_tail(system.density, system.fractions_t, a)
            for a in range(model.n_types)]


class RigidInsertionStageSampler(RigidMCStageSampler):
    """Canonical Monte Carlo of a rigid system with test-molecule insertions at every sample.

    Parameters
    ----------
    system : mdsim.sampling.rigid_stage.RigidSystem
    temperature : float
        kT, reduced.
    energy : None
        Refused when given (canonical only).
    seed : int or list of int
        Seed of the Monte Carlo stream; the insertions draw from a second
        stream seeded with ``seed`` followed by 1 (saved with the state).
    method : str
        :data:`METHOD`.
    insertions : int, optional
        Test molecules per type at each sample (default: the number of
        molecules, so an insertion pass costs about half a sweep: one
        energy per trial against two per Monte Carlo move).
    max_displacement, max_angle : float, optional
        Start steps, as :class:`RigidMCStageSampler`.

    Notes
    -----
    Each sample adds, per type a, ``insertion_factor_a`` = the mean of
    exp(-dU / kT) over the insertions and ``insertion_factor_sq_a`` the mean
    of its square, dU with the plain cut (the tail is in
    :func:`insertion_tails`), to the Monte Carlo observables.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> from mdsim.sampling.rigid_stage import rigid_system
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> s = RigidInsertionStageSampler(rigid_system(n2, 300.0, 4000.0, 64, 3.0, seed=1),
    ...                                temperature=8.6, seed=2, insertions=16)
    >>> s.equilibrate(2)
    >>> out = s.run(3, 1)
    >>> sorted(out)[:3], bool(np.all(out["insertion_factor_0"] > 0))
    (['acceptance', 'insertion_factor_0', 'insertion_factor_sq_0'], True)
    """

    insertion_method = METHOD
    """The stage method this class runs (its Monte Carlo alone: ``method_name``)."""

    def __init__(self, system, temperature=None, energy=None, seed=0, method=METHOD,
                 insertions=None, max_displacement=0.3, max_angle=0.5):
        if method != self.insertion_method or temperature is None or energy is not None:
            raise StudyError(f"setting 'method' = {method!r}: test-molecule insertion runs "
                             f"canonical Monte Carlo ({self.insertion_method!r}) at a set "
                             "temperature")
        super().__init__(system, temperature, None, seed, self.method_name, max_displacement,
                         max_angle)
        self.method = self.insertion_method
        self.insertions = count("insertions", system.n_particles if insertions is None
                                else insertions, 1, "test molecules per type and sample")
        self.insertion_state = insertion_stream(seed)

    insertion_sums = staticmethod(insertion_sums_of)
    """The insertion kernel's wrapper: (sampler, type, n, stream) -> the two sums."""

    def run(self, n_samples, interval):
        """The Monte Carlo observables plus ``pressure_conf`` and the insertion factors."""
        n_samples = count("samples", n_samples, 1, "number of recorded samples")
        mc = self.mc
        out = run_with_insertions(
            lambda: mc.run(1, interval),
            lambda a: self.insertion_sums(mc, a, self.insertions, self.insertion_state),
            mc.model.n_types, n_samples, self.insertions)
        out["pressure_conf"] = out["pressure"] - self.system.density * mc.temperature
        return out

    def get_state(self):
        """The Monte Carlo state plus the insertion stream."""
        state = super().get_state()
        state["insertion_rng_state"] = self.insertion_state.copy()
        return state

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        stream = saved_insertion_stream(state, type(self).__name__)
        super().set_state(state)
        self.insertion_state = stream

    def settings(self):
        """The Monte Carlo settings plus the insertions and the inserted molecules' tails."""
        out = super().settings()
        out.update(method=self.insertion_method, insertions_per_species=int(self.insertions),
                   insertion_tail_red=np.array(insertion_tails(self.system)))
        return out
