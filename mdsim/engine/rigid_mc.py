"""Canonical Monte Carlo of rigid linear molecules: the sampler.

:class:`RigidMCSampler` moves one molecule at a time, a translation or a
rotation of its axis (an atom of a mixture only translations; kernels in
:mod:`mdsim.engine.rigid_mc_kernels`),
with the Metropolis acceptance at temperature kT.  The two step sizes are
tuned toward ``target_acceptance`` in :meth:`RigidMCSampler.equilibrate`
only and frozen during :meth:`RigidMCSampler.run`, which keeps detailed
balance.  The energy is the plain-cut pair energy of
:class:`mdsim.engine.rigid_model.LinearPairModel`; its isotropic site-site
tail (:meth:`LinearPairModel.tail`) is added to the recorded energy and
pressure.  The pressure is rho kT + W / (3 V) + p_tail from the molecular
virial W = sum over pairs of d_ab . F_b (the centre-centre vector times
the total force on b; the intramolecular constraint forces of a rigid
molecule then drop out: Allen and Tildesley, Computer Simulation of
Liquids, 2nd ed. 2017, section 2.4).

Reduced units of the model.  Array suffixes: ``_n`` molecule, ``_i``
Cartesian coordinate, ``_m`` move kind (0 translation, 1 rotation).
"""
import math

import numpy as np

from mdsim.checks import count
from mdsim.engine import rng as _rng
from mdsim.engine.mc_cells import build_cells, cell_grid
from mdsim.engine.rigid_mc_kernels import rigid_energy_virial, rigid_moves
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.errors import SettingError, SimulationError

__all__ = ["RigidMCSampler", "lattice_start"]

# Tuning blocks: at least this many trial moves of each kind.
_TUNE_BLOCK_MOVES = 200
_MIN_STEP = 1e-5


def lattice_start(n_molecules, box_i, seed):
    """Centres on a simple cubic lattice filling the box, axes uniform on the sphere.

    Returns
    -------
    centre_ni, axis_ni : ndarray, shape=(n, 3), float64

    Examples
    --------
    >>> c, e = lattice_start(27, np.array([6.0, 6.0, 6.0]), seed=1)
    >>> c[1].tolist(), bool(np.allclose(np.linalg.norm(e, axis=1), 1.0))
    ([0.0, 0.0, 2.0], True)
    """
    n = count("n_molecules", n_molecules, 1, "molecules in the box")
    box_i = np.asarray(box_i, dtype=float)
    side = int(math.ceil(n ** (1.0 / 3.0) - 1e-9))
    grid = np.array([(a, b, c) for a in range(side) for b in range(side) for c in range(side)])
    centre_ni = (grid[:n] + 0.0) * box_i / side
    axis_ni = np.random.default_rng(seed).normal(size=(n, 3))
    axis_ni /= np.linalg.norm(axis_ni, axis=1)[:, None]
    return centre_ni, axis_ni


class RigidMCSampler:
    """Canonical (NVT) Monte Carlo of rigid linear molecules and their mixtures with atoms.

    Parameters
    ----------
    model : LinearPairModel
        The pair model (its plain cut is used; ``shifted`` must be False).
    centre_ni, axis_ni : array_like, shape=(n, 3)
        Start centres (sigma) and axes (normalised here); copied.
    type_n : array_like, shape=(n,), int
        Molecule types (indices of the model's types).
    box_i : array_like, shape=(3,), sigma
        Box edges, each more than twice the cut-off.
    temperature : float
        kT, reduced.
    seed : int or list of int
    max_displacement : float, optional
        Start half-width of the translation cube, sigma (default 0.3).
    max_angle : float, optional
        Start largest rotation angle, radian (default 0.5).
    target_acceptance : float, optional
        Acceptance both tuners aim at (default 0.45).

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> m = LinearPairModel([([-0.16, 0.16], [LennardJones(1.0, 1.0)] * 2, 0.5)], 2.5)
    >>> box = np.full(3, 7.0)
    >>> c, e = lattice_start(64, box, seed=2)
    >>> s = RigidMCSampler(m, c, e, np.zeros(64, int), box, temperature=3.0, seed=3)
    >>> s.equilibrate(5)
    >>> out = s.run(3, 2)
    >>> sorted(out), out["u_full"].shape
    (['acceptance', 'pressure', 'u_full', 'u_trunc'], (3,))
    """

    def __init__(self, model, centre_ni, axis_ni, type_n, box_i, *, temperature, seed,
                 max_displacement=0.3, max_angle=0.5, target_acceptance=0.45):
        if not isinstance(model, self.model_class):
            raise TypeError(f"model must be a {self.model_class.__module__}."
                            f"{self.model_class.__name__}")
        if model.shifted:
            raise SettingError("model.shifted", True, "Monte Carlo uses the plain cut with its "
                               "tail correction; build the model with shifted=False")
        self.model = model
        self.box_i = np.ascontiguousarray(box_i, dtype=np.float64).reshape(3)
        if not np.all(self.box_i > 2.0 * model.rc):
            raise SettingError("box_i", self.box_i.tolist(), f"every edge must exceed twice the "
                               f"cut-off {model.rc:g} (minimum image); use more molecules or a "
                               "shorter cut-off")
        c = np.ascontiguousarray(centre_ni, dtype=np.float64)
        n = c.shape[0]
        if c.shape != (n, 3) or not np.all(np.isfinite(c)):
            raise SettingError("centre_ni", c.shape, "needs an (n, 3) array of finite centres")
        self.type_n = np.ascontiguousarray(type_n, dtype=np.int64).reshape(n)
        if self.type_n.min() < 0 or self.type_n.max() >= model.n_types:
            raise SettingError("type_n", sorted(set(self.type_n.tolist())),
                               f"types must be 0 to {model.n_types - 1}")
        self.n_molecules = n
        self.centre_ni = np.mod(c, self.box_i)
        self.centre_ni[self.centre_ni >= self.box_i] = 0.0
        self.set_orientations(axis_ni)
        self.temperature = _positive("temperature", temperature)
        self.max_displacement = min(_positive("max_displacement", max_displacement),
                                    0.5 * float(self.box_i.min()))
        self.max_angle = min(_positive("max_angle", max_angle), math.pi)
        self.target_acceptance = float(target_acceptance)
        if not 0.2 <= self.target_acceptance <= 0.8:
            raise SettingError("target_acceptance", target_acceptance, "must lie in [0.2, 0.8]")
        self.seed = seed
        self.state = _rng.make_state(seed)
        self.volume = float(np.prod(self.box_i))
        x_t = np.bincount(self.type_n, minlength=model.n_types) / n
        self.u_tail, self.p_tail = model.tail(n / self.volume, x_t)
        self.ncell_i = cell_grid(self.box_i, model.rc, n)
        self.head_c = np.empty(int(np.prod(self.ncell_i[:3])), dtype=np.int64)
        self.next_n = np.empty(n, dtype=np.int64)
        self.cell_n = np.empty(n, dtype=np.int64)
        build_cells(self.centre_ni, self.box_i, self.ncell_i, self.head_c, self.next_n,
                    self.cell_n)
        self.tried_m = np.zeros(2, dtype=np.int64)
        self.accepted_m = np.zeros(2, dtype=np.int64)
        self.u_trunc = self.energy_and_virial()[0]
        if not math.isfinite(self.u_trunc):
            raise SimulationError("rigid Monte Carlo: the start configuration has a non-finite "
                                  "energy; start from a looser configuration")

    model_class = LinearPairModel
    """The model the sampler takes (a subclass for other bodies takes its own)."""

    def set_orientations(self, axis_ni):
        """Set the axes (normalised here) from an (n, 3) array of non-zero vectors."""
        e = np.ascontiguousarray(axis_ni, dtype=np.float64)
        norm = np.linalg.norm(e, axis=-1) if e.shape == (self.n_molecules, 3) else np.zeros(1)
        if e.shape != (self.n_molecules, 3) or not np.all(norm > 0.0):
            raise SettingError("axis_ni", e.shape, f"needs an ({self.n_molecules}, 3) array of "
                               "non-zero axes")
        self.axis_ni = e / norm[:, None]

    def energy_and_virial(self):
        """Total truncated energy and molecular virial of the current configuration, epsilon."""
        m = self.model
        return rigid_energy_virial(self.centre_ni, self.axis_ni, self.type_n, self.box_i,
                                   self.ncell_i, self.head_c, self.next_n, m.site_start_t,
                                   m.site_z_k, m.params_kk, m.form, m.elec_tm, m.rc)

    def _moves(self, n_moves):
        m = self.model
        tried, acc = self.tried_m.copy(), self.accepted_m.copy()
        self.u_trunc = rigid_moves(
            self.centre_ni, self.axis_ni, self.type_n, self.box_i, self.ncell_i, self.head_c,
            self.next_n, self.cell_n, m.site_start_t, m.site_z_k, m.params_kk, m.form,
            m.elec_tm, m.rc, m.core ** 2, m.rotates_t, self.state, int(n_moves),
            float(self.max_displacement), float(self.max_angle), 1.0 / self.temperature,
            float(self.u_trunc), self.tried_m,
            self.accepted_m)
        if not math.isfinite(self.u_trunc):
            raise SimulationError("rigid Monte Carlo: the running energy is no longer finite")
        return self.tried_m - tried, self.accepted_m - acc

    def equilibrate(self, n_sweeps):
        """Run ``n_sweeps`` sweeps (N trial moves each), tuning both step sizes.

        After each block of at least 400 trial moves each step is
        multiplied by exp(acceptance - target) of its own kind of move (the
        angle only when some molecule rotates: atoms are only displaced),
        the displacement capped at half the shortest box edge and the angle
        at pi (a dilute gas accepts nearly every move and ends at the caps).
        """
        n_sweeps = count("equilibration_sweeps", n_sweeps, 0, "sweeps of N trial moves")
        total = n_sweeps * self.n_molecules
        block = max(2 * _TUNE_BLOCK_MOVES, self.n_molecules)
        rotating = bool(self.model.rotates_t[self.type_n].any())  # atoms alone never turn
        done = 0
        while done < total:
            k = min(block, total - done)
            tried, acc = self._moves(k)
            enough = tried >= _TUNE_BLOCK_MOVES // 2
            if enough[0] and (enough[1] or not rotating):
                rate = acc / np.maximum(tried, 1)
                self.max_displacement = min(0.5 * float(self.box_i.min()), max(
                    _MIN_STEP, self.max_displacement * math.exp(rate[0] - self.target_acceptance)))
                if rotating:
                    self.max_angle = min(math.pi, max(
                        _MIN_STEP, self.max_angle * math.exp(rate[1] - self.target_acceptance)))
            done += k

    def run(self, n_samples, interval):
        """Production: ``n_samples`` samples, one every ``interval`` sweeps; steps frozen.

        Returns
        -------
        dict of ndarray, each shape=(n_samples,), float64
            "u_trunc", "u_full" (per molecule, epsilon; u_full with the
            tail), "pressure" (rho kT + W / (3 V) + p_tail, epsilon/sigma^3),
            "acceptance" (of all moves since the previous sample).

        Notes
        -----
        The energy and virial are recomputed over all pairs at each sample
        and the running energy reset to it, so round-off cannot accumulate.
        """
        n_samples = count("samples", n_samples, 1, "number of recorded samples")
        interval = count("sample_interval", interval, 1, "sweeps between samples")
        n = self.n_molecules
        out = {k: np.empty(n_samples) for k in ("u_trunc", "u_full", "pressure", "acceptance")}
        for t in range(n_samples):
            tried, acc = self._moves(interval * n)
            u, w = self.energy_and_virial()
            self.u_trunc = u
            out["u_trunc"][t] = u / n
            out["u_full"][t] = u / n + self.u_tail
            out["pressure"][t] = (n * self.temperature + w / 3.0) / self.volume + self.p_tail
            out["acceptance"][t] = acc.sum() / tried.sum()
        return out

    @property
    def acceptance_m(self):
        """Acceptance of translations and rotations so far, shape=(2,)."""
        return self.accepted_m / np.maximum(self.tried_m, 1)


def _positive(name, value):
    v = float(value)
    if not (math.isfinite(v) and v > 0.0):
        raise SettingError(name, value, "must be a positive finite number")
    return v
