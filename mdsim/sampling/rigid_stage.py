"""Rigid linear molecules in stage files: a system and a sampler that follow the sampler protocol.

:func:`mdsim.sampling.state_point.sample_state_point` drives any sampler
that follows the project's protocol (built from a system, ``equilibrate``,
``run``, ``get_state``/``set_state``, ``settings``).  The canonical Monte
Carlo of rigid linear molecules (:class:`mdsim.engine.rigid_mc.RigidMCSampler`)
takes arrays, not a system; :class:`RigidSystem` holds those arrays and
:class:`RigidMCStageSampler` wraps the engine sampler in the protocol, so
that a study's rigid-molecule states are sampled into the same resumable
run files as spheres (method :data:`METHOD`), with a checkpoint after
every block that continues the run bit for bit.

Reduced units of the molecule's first site (:mod:`mdsim.sampling.rigid_box`).
The run file's ``positions`` are the molecular centres; the axes live in
the checkpoint state (``axis_ni``).
"""
import dataclasses

import numpy as np

from mdsim.errors import StudyError
from mdsim.sampling.rigid_box import mixture_box, rigid_box

__all__ = ["METHOD", "RigidSystem", "RigidMCStageSampler", "rigid_system", "mixture_system"]

METHOD = "rigid-mc-nvt"
"""The method name of canonical Monte Carlo of rigid molecules in stage files."""


@dataclasses.dataclass
class RigidSystem:
    """Rigid linear molecules in a cubic box: what a rigid stage starts from (reduced units).

    Attributes
    ----------
    model : mdsim.engine.rigid_model.LinearPairModel
    box_i : ndarray, shape=(3,), sigma
    r_ni : ndarray, shape=(n, 3), sigma
        Molecular centres (the name the stage machinery uses for positions).
    axis_ni : ndarray, shape=(n, 3)
        Unit axes.
    dof_per_particle : int
        Kinetic degrees of freedom per molecule (3 + 2 for a linear rotor;
        of a mixture the largest, as ``[gas] dof_per_particle``).
    type_n : ndarray, shape=(n,), int64, optional
        The type of each molecule (default: all type 0).
    mass_t : ndarray, shape=(n_types,), optional
        Masses of the types in units of the first's (molecular dynamics).
    inertia_t : ndarray, shape=(n_types,), m sigma^2, optional
        Moments of inertia of the types, 0 for an atom (molecular dynamics).
    v_ni, l_ni : ndarray, shape=(n, 3), optional
        Velocities and angular momenta to start molecular dynamics from (a
        continued stage); None for a fresh start.
    """

    model: object
    box_i: np.ndarray
    r_ni: np.ndarray
    axis_ni: np.ndarray
    dof_per_particle: int
    type_n: np.ndarray = None
    mass_t: np.ndarray = None
    inertia_t: np.ndarray = None
    v_ni: np.ndarray = None
    l_ni: np.ndarray = None

    def __post_init__(self):
        if self.type_n is None:  # one kind of molecule
            self.type_n = np.zeros(self.n_particles, dtype=np.int64)

    @property
    def n_particles(self):
        return int(self.r_ni.shape[0])

    @property
    def n_rotors(self):
        """The molecules that rotate (linear rotors; not the atoms of a mixture)."""
        return int(np.count_nonzero(self.model.rotates_t[self.type_n]))

    @property
    def volume(self):
        return float(np.prod(self.box_i))

    @property
    def density(self):
        return self.n_particles / self.volume

    @property
    def fractions_t(self):
        """Mole fractions of the model's molecule types in the box, shape=(n_types,)."""
        return np.bincount(self.type_n, minlength=self.model.n_types) / self.n_particles


def rigid_system(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed):
    """A :class:`RigidSystem` of one linear molecule at a density (lattice centres, random axes).

    Parameters
    ----------
    molecule : analysis.molecules.RigidMolecule
    temperature_K : float, K
        Only checked (the box does not depend on it).
    density_mol_m3 : float, mol/m^3
    n_molecules : int
    cutoff : float, sigma
        Molecular (centre-centre) cut-off.
    seed : int
        Seeds the start axes.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> s = rigid_system(n2, 300.0, 4000.0, 64, 3.0, seed=1)
    >>> s.n_particles, s.dof_per_particle, round(s.volume, 1)
    (64, 5, 725.3)
    """
    box = rigid_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed)
    return RigidSystem(box.model, box.box_i, box.centre_ni, box.axis_ni,
                       int(molecule.kinetic_dof), mass_t=box.mass_t, inertia_t=box.inertia_t)


def mixture_system(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed):
    """A :class:`RigidSystem` of a mixture of linear molecules and atoms
    (:func:`mdsim.sampling.rigid_box.mixture_box`: lattice centres, the types in a seeded
    random order, random axes); arguments as there.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(116.79, 3.3952), (0, 0, 0), 0.039948)])
    >>> s = mixture_system([n2, ar], [60, 4], 300.0, 4000.0, 3.0, seed=1)
    >>> s.n_particles, s.dof_per_particle, np.bincount(s.type_n).tolist()
    (64, 5, [60, 4])
    """
    box = mixture_box(molecules, counts_t, temperature_K, density_mol_m3, cutoff, seed)
    return RigidSystem(box.model, box.box_i, box.centre_ni, box.axis_ni,
                       max(int(m.kinetic_dof) for m in molecules), box.type_n,
                       mass_t=box.mass_t, inertia_t=box.inertia_t)


class RigidMCStageSampler:
    """Canonical Monte Carlo of a :class:`RigidSystem` behind the sampler protocol.

    Parameters
    ----------
    system : RigidSystem
    temperature : float
        kT, reduced.
    energy : None
        Refused when given (canonical only).
    seed : int or list of int
    method : str
        :data:`METHOD`.
    max_displacement, max_angle : float, optional
        Start steps (sigma, radian): a continued stage passes the tuned ones.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> s = RigidMCStageSampler(rigid_system(n2, 300.0, 4000.0, 64, 3.0, seed=1),
    ...                         temperature=8.6, seed=2)
    >>> s.equilibrate(2)
    >>> sorted(s.run(3, 1))
    ['acceptance', 'pressure', 'u_full', 'u_trunc']
    """

    def __init__(self, system, temperature=None, energy=None, seed=0, method=METHOD,
                 max_displacement=0.3, max_angle=0.5):
        from mdsim.engine.rigid_mc import RigidMCSampler
        if method != METHOD or temperature is None or energy is not None:
            raise StudyError(f"setting 'method' = {method!r}: rigid molecules are sampled by "
                             f"canonical Monte Carlo ({METHOD!r}) at a set temperature")
        self.method = METHOD
        self.system = system
        self.dof_per_particle = int(system.dof_per_particle)
        self.mc = RigidMCSampler(system.model, system.r_ni, system.axis_ni, system.type_n,
                                 system.box_i, temperature=temperature, seed=seed,
                                 max_displacement=max_displacement, max_angle=max_angle)

    def equilibrate(self, n_sweeps):
        """Equilibration sweeps, tuning both steps (:meth:`RigidMCSampler.equilibrate`)."""
        self.mc.equilibrate(n_sweeps)

    def run(self, n_samples, interval):
        """Production samples (:meth:`RigidMCSampler.run`), steps frozen."""
        return self.mc.run(n_samples, interval)

    def positions(self):
        """The molecular centres, shape=(n, 3), sigma."""
        return self.mc.centre_ni.copy()

    def get_state(self):
        """Everything needed to continue bit for bit (arrays are copies, cell lists included)."""
        mc = self.mc
        return {"positions": mc.centre_ni.copy(), "axis_ni": mc.axis_ni.copy(),
                "rng_state": mc.state.copy(), "max_displacement": float(mc.max_displacement),
                "max_angle": float(mc.max_angle), "u_trunc_total": float(mc.u_trunc),
                "tried_m": mc.tried_m.copy(), "accepted_m": mc.accepted_m.copy(),
                "head_c": mc.head_c.copy(), "next_n": mc.next_n.copy(),
                "cell_n": mc.cell_n.copy(), "type_n": mc.type_n.copy()}

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        mc = self.mc
        missing = sorted(set(self.get_state()) - set(state) - {"type_n"})  # older files: one type
        if missing:
            raise StudyError(f"rigid Monte Carlo state is missing {missing}; it must come from "
                             "RigidMCStageSampler.get_state")
        for key, target in (("positions", mc.centre_ni), ("axis_ni", mc.axis_ni),
                            ("rng_state", mc.state), ("tried_m", mc.tried_m),
                            ("accepted_m", mc.accepted_m), ("head_c", mc.head_c),
                            ("next_n", mc.next_n), ("cell_n", mc.cell_n)):
            value = np.asarray(state[key])
            if value.shape != target.shape:
                raise StudyError(f"rigid Monte Carlo state '{key}' has shape {value.shape}, "
                                 f"this sampler {target.shape}; resume with the same system")
            target[...] = value
        if not np.array_equal(np.asarray(state.get("type_n", mc.type_n)), mc.type_n):
            raise StudyError("rigid Monte Carlo state: the molecule types differ from this "
                             "sampler's; resume with the same system")
        mc.max_displacement = float(state["max_displacement"])
        mc.max_angle = float(state["max_angle"])
        mc.u_trunc = float(state["u_trunc_total"])

    def settings(self):
        """Settings as plain numbers and strings (for HDF5 attributes)."""
        mc = self.mc
        return {"method": self.method, "temperature_red": float(mc.temperature),
                "n_particles": int(mc.n_molecules), "density_red": float(self.system.density),
                "dof_per_particle": self.dof_per_particle,
                "max_displacement_red": float(mc.max_displacement),
                "max_angle_rad": float(mc.max_angle),
                "target_acceptance": float(mc.target_acceptance),
                "cutoff_red": float(mc.model.rc), "u_tail_red": float(mc.u_tail),
                "p_tail_red": float(mc.p_tail)}
