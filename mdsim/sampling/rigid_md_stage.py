"""Molecular dynamics of rigid linear molecules in stage files: a sampler that follows the protocol.

:class:`RigidMDStageSampler` wraps :class:`mdsim.engine.rigid_md.RigidMDSampler`
in the protocol of :func:`mdsim.sampling.state_point.sample_state_point`
(built from a :class:`mdsim.sampling.rigid_stage.RigidSystem`,
``equilibrate``, ``run``, ``get_state``/``set_state``, ``settings``), so
that thermostatted ("rigid-md-nvt") and fixed-energy ("rigid-md-nve") runs
of rigid molecules are resumable run files like the Monte Carlo stages,
with a checkpoint after every block that continues the run bit for bit.

The fixed energy.  ``energy`` is the total energy per molecule of the
Monte Carlo model, plain cut plus tail (``u_full``) plus the kinetic
energy.  A run that starts without momenta equilibrates with the
thermostat at ``start_temperature`` (a guess of the temperature the energy
gives, so that the structure is that of the fluid, not of the start
lattice), then scales translations and rotations by one factor so that the
configuration and momenta hold exactly that energy, and goes on at fixed
energy.  The dynamics conserve the shifted-energy model's total
(:mod:`mdsim.engine.rigid_md`), so ``u_full + kinetic`` of later samples
departs from ``energy`` by the change of the plain-cut-minus-shifted
difference and by the integrator's drift; both are in the samples (the
route corrects for them, :mod:`mdsim.pipeline.routes.rigid_microcanonical`).
A run continuing a stage's momenta keeps them as they are.

Reduced units of the first molecule's first site (a mixture's masses and
moments of inertia in them).  Run-file ``positions`` and ``velocities`` are
the molecular centres and their velocities in the order the system gave
them; the checkpoint also holds ``axis_ni``, ``angular_momenta`` and
``molecule_types`` in that order, from which a continued stage starts.
"""
import copy

import numpy as np

from mdsim.engine.rigid_integrator import ROTATIONAL_DOF, translational_dof
from mdsim.engine.rigid_md import RigidMDSampler
from mdsim.errors import SettingError, SimulationError, StudyError

__all__ = ["MD_METHODS", "RigidMDStageSampler", "kinetic_dof_total"]

MD_METHODS = {"rigid-md-nvt": "md-nvt", "rigid-md-nve": "md-nve"}
"""The stage methods of rigid-molecule MD and the engine method of each."""


def kinetic_dof_total(n_molecules, n_rotors=None):
    """Kinetic degrees of freedom of N molecules in MD, N_rot of them linear rotors (default
    all) and the rest atoms: 3N - 3 + 2 N_rot (the total momentum conserved).

    >>> kinetic_dof_total(128), kinetic_dof_total(200, 198)
    (637, 993)
    """
    n_rot = int(n_molecules) if n_rotors is None else int(n_rotors)
    return translational_dof(n_molecules) + ROTATIONAL_DOF * n_rot


class RigidMDStageSampler:
    """Rigid-molecule MD of a :class:`~mdsim.sampling.rigid_stage.RigidSystem` behind the protocol.

    Parameters
    ----------
    system : RigidSystem
        One kind of linear molecule, or a mixture of them and atoms, with
        the masses and moments of inertia of its types.  Its model is run in
        its shifted-energy form (the dynamics conserve
        that energy; ``u_full`` stays the plain cut's).  Its ``v_ni`` and
        ``l_ni`` (velocities, angular momenta), when set, start the run;
        otherwise momenta are drawn (and, for NVE, set to ``energy`` after
        the equilibration).
    temperature : float, optional
        kT, reduced ("rigid-md-nvt": the thermostat's target).
    energy : float, optional
        Total energy per molecule, u_full + kinetic, reduced
        ("rigid-md-nve" from a fresh start, module docstring; a run from
        the system's momenta keeps their energy and may leave it out).
    start_temperature : float, optional
        kT, reduced, of the thermostatted equilibration of a fresh
        "rigid-md-nve" start (required for one).
    seed : int or list of int
    method : {"rigid-md-nvt", "rigid-md-nve"}
    time_step, thermostat_time, skin : float, optional
        Reduced; defaults of :class:`~mdsim.engine.rigid_md.RigidMDSampler`.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> from mdsim.sampling.rigid_stage import rigid_system
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.0140067),
    ...                           Site(lj, (0, 0, 0.5232), 0.0140067)])
    >>> s = RigidMDStageSampler(rigid_system(n2, 300.0, 4000.0, 64, 3.0, seed=1),
    ...                         energy=21.0, seed=2, method="rigid-md-nve", start_temperature=8.6)
    >>> s.equilibrate(100)
    >>> out = s.run(1, 1)
    >>> round(float(out["u_full"][0] + out["kinetic"][0]), 2)  # the energy asked for
    21.0
    """

    methods = MD_METHODS
    """The stage methods this sampler runs and the engine method of each."""

    def __init__(self, system, temperature=None, energy=None, seed=0, method="rigid-md-nvt",
                 time_step=None, thermostat_time=0.5, start_temperature=None, skin=None):
        if method not in self.methods:
            raise StudyError(f"setting 'method' = {method!r}: rigid-molecule MD offers "
                             f"{', '.join(self.methods)}")
        nvt_name, nve_name = self.methods
        nve = self.methods[method] == "md-nve"
        momenta = self.start_momenta(system)
        if (nve and (temperature is not None or (energy is None and momenta is None))) or (
                not nve and (temperature is None or energy is not None)):
            raise SettingError("method", method, f"{nvt_name} takes a temperature, "
                               f"{nve_name} an energy per molecule or the system's momenta "
                               "(not a temperature)")
        self.method, self.system = method, system
        self.model = copy.copy(system.model)
        self.model.shifted = 1  # the dynamics need the shifted energy (mdsim.engine.rigid_md)
        self.dof_per_particle = int(system.dof_per_particle)
        self.energy = None if energy is None else float(energy)
        self.fresh_nve = nve and momenta is None  # equilibrate, then set the energy
        if self.fresh_nve:
            if start_temperature is None:
                raise SettingError("start_temperature", None, "a fresh rigid-md-nve run "
                                   "equilibrates with the thermostat first: give kT/epsilon")
            temperature = start_temperature
        self.md = self.engine(system, temperature=temperature, seed=seed,
                              method="md-nvt" if self.fresh_nve else self.methods[method],
                              time_step=time_step, thermostat_time=thermostat_time, skin=skin,
                              momenta=momenta)

    @staticmethod
    def start_momenta(system):
        """The system's (velocities, angular momenta) to start from, or None."""
        if system.v_ni is not None and system.l_ni is not None:
            return system.v_ni, system.l_ni
        return None

    def engine(self, system, **settings):
        """The engine's sampler of the system (:class:`mdsim.engine.rigid_md.RigidMDSampler`)
        in the shifted-energy model."""
        return RigidMDSampler(self.model, system.r_ni, system.axis_ni, system.box_i,
                              mass_t=system.mass_t, inertia_t=system.inertia_t,
                              type_n=system.type_n, **settings)

    def equilibrate(self, n_steps):
        """Unrecorded steps: thermostatted for NVT and a fresh NVE start (then set to the
        energy asked for, module docstring), at fixed energy for a continued NVE run."""
        self.md.equilibrate(n_steps)
        if self.fresh_nve:
            self.set_energy()

    def set_energy(self):
        """Scale the momenta so that u_full + kinetic is the energy asked for, and go on at
        fixed energy."""
        md, n = self.md, self.md.n
        u_full = md.plain_cut_energy() / n + md.u_tail
        kinetic = self.energy - u_full
        if not kinetic > 0.0:
            raise SimulationError(
                f"rigid-molecule MD at fixed energy: the equilibrated configuration holds "
                f"{u_full:.5g} epsilon per molecule of potential energy, not below the energy "
                f"asked for ({self.energy:.5g}); use the energy route at this state")
        md.scale_momenta(np.sqrt(n * kinetic / (0.5 * self.kinetic_dof() * md.temperature_now())))
        md.set_method("md-nve")
        self.fresh_nve = False

    def kinetic_dof(self):
        """F = 3N - 3 + 2 N_rot of the run (:func:`kinetic_dof_total`)."""
        return self.md.nf_trans + self.md.nf_rot

    def run(self, n_samples, interval):
        """Production samples: the engine's series (:class:`RigidMDSampler` Notes) plus
        "kinetic" (K / N, translations and rotations) and "temperature_inst" (2K / F)."""
        out = self.md.run(n_samples, interval)
        out["kinetic"] = out["kinetic_trans"] + out["kinetic_rot"]
        out["temperature_inst"] = (2.0 * self.md.n / self.kinetic_dof()) * out["kinetic"]
        return out

    def positions(self):
        """The molecular centres in the system's order, shape=(n, 3), sigma."""
        return self.md.configuration()[0]

    def velocities(self):
        """The centres' velocities in the system's order, shape=(n, 3), reduced."""
        return self.md.momenta()[0]

    def get_state(self):
        """The engine's state (bit for bit; its arrays in the engine's cell order) plus the
        axes, angular momenta and molecule types in the system's order, from which a continued
        stage starts."""
        md = self.md
        state = md.get_state()
        state["axis_ni"] = md.configuration()[1]
        state["angular_momenta"] = md.momenta()[1]
        types = np.empty_like(md.type_n)
        types[md.id_n] = md.type_n
        state["molecule_types"] = types
        return state

    def set_state(self, state):
        """Continue from a dictionary made by :meth:`get_state`."""
        self.md.set_state(state)

    def settings(self):
        """Settings as plain numbers and strings (for HDF5 attributes)."""
        md = self.md
        return {"method": self.method, "temperature_red": float(md.temperature or np.nan),
                "n_particles": int(md.n), "density_red": float(self.system.density),
                "dof_per_particle": self.dof_per_particle,
                "kinetic_dof_total": int(self.kinetic_dof()),
                "time_step_red": float(md.time_step),
                "thermostat_time_red": float(md.thermostat_time), "skin_red": float(md.skin),
                "cutoff_red": float(md.model.rc), "u_tail_red": float(md.u_tail),
                "p_tail_red": float(md.p_tail)}
