"""Tasks of a gas of rigid molecules: their stage chains and what the task takes from the model.

A study with ``[potential] form = "rigid-molecule"`` runs the energy,
microcanonical and direct routes (:mod:`mdsim.pipeline.routes`) as a sphere
study does, pressure iteration included (:mod:`mdsim.pipeline.initial_state`);
only its stages differ.  Each stage is canonical Monte Carlo of the rigid
molecules (translations and rotations: linear ones :mod:`mdsim.sampling.rigid_stage`,
non-linear ones :mod:`mdsim.sampling.body_stage`)
or molecular dynamics of linear ones, thermostatted or at fixed energy
(:mod:`mdsim.sampling.rigid_md_stage`), in a run file like any other,
checkpointed after every block and resumed bit for bit.
:class:`RigidChain` continues one chain across its stages, carrying the
axes (or quaternions) and, for Monte Carlo, both tuned steps, for MD the velocities and
angular momenta, as well as the centres.

:func:`set_up_molecular_task` gives the running task what follows from the
model: the molecular virial series (B2 by orientation quadrature, B3 by Monte Carlo
integration) for the first guesses and the pressure iteration's slope.
"""
import math

import numpy as np

from mdsim.errors import StudyError
from mdsim.pipeline.chain import Chain
from mdsim.sampling import store
from mdsim.sampling.rigid_md_stage import MD_METHODS
from mdsim.sampling.body_md_stage import BODY_MD_METHOD, BODY_MD_NVE_METHOD, mean_free_time
from mdsim.sampling.body_stage import BODY_METHOD, body_mixture_system
from mdsim.sampling.rigid_stage import METHOD, mixture_system

__all__ = ["RigidChain", "rigid_system_maker", "set_up_molecular_task", "rigid_method",
           "reduced_rigid_inertia", "box_kinetic_dof", "is_nonlinear_gas",
           "BODY_EQUILIBRATION_COLLISIONS", "BODY_PILOT_COLLISIONS"]


class RigidChain(Chain):
    """A :class:`mdsim.pipeline.chain.Chain` of rigid-molecule stages (:func:`rigid_method`).

    A continued stage starts from the previous stage's centres and axes (the
    axes from its final checkpoint) and, for Monte Carlo, both of its tuned
    steps, for MD its velocities and angular momenta, so the production
    stages are one chain.  Parameters as for ``Chain``; a gas of non-linear
    molecules runs their Monte Carlo (:data:`BODY_METHOD`, orientations as
    quaternions) or MD (:data:`BODY_MD_METHOD`, :data:`BODY_MD_NVE_METHOD`) where a
    linear one runs :data:`METHOD`, "rigid-md-nvt" or "rigid-md-nve".
    """

    def __init__(self, task, label, chain_id, make_system, method, **kwargs):
        if is_nonlinear_gas(task.study.gas):
            method = _BODY_METHODS.get(method, method)
        super().__init__(task, label, chain_id, make_system, method, **kwargs)

    def continue_system(self, prev):
        """A system in the last configuration (centres, orientations and MD momenta) of a
        finished stage."""
        system = super().continue_system(prev)
        state, _ = store.read_checkpoint(prev.path)
        if "quat_nq" in state:  # a non-linear molecule's orientations (and MD's momenta)
            system.quat_nq = state["quat_nq"].astype(float)
            if "type_n" in state:  # a mixture's types, as its Monte Carlo keeps them
                system.type_n = np.asarray(state["type_n"], dtype=np.int64)
            if "angular_momenta" in state:
                system.pb_ni = state["angular_momenta"].astype(float)
            return system
        system.axis_ni = state["axis_ni"].astype(float)
        if "angular_momenta" in state:  # MD: the run continued with its momenta
            system.l_ni = state["angular_momenta"].astype(float)
        # a mixture: the types of the molecules continued, in the system's order (MD keeps its
        # own arrays in cell order and writes the types in the system's as molecule_types)
        types = state.get("molecule_types", state.get("type_n"))
        if types is not None:
            system.type_n = np.asarray(types, dtype=np.int64)
        return system

    def pilot_spacing(self, system, n_samples):
        """The pilot's equilibration and sample interval: for MD of non-linear molecules in
        mean free times (:data:`BODY_EQUILIBRATION_COLLISIONS`, :data:`BODY_PILOT_COLLISIONS`),
        at least the chain's defaults; otherwise the defaults."""
        n_eq, interval = super().pilot_spacing(system, n_samples)
        kT = self.T_red if self.T_red is not None else self.md_settings.get("start_temperature")
        if not (self.is_md and getattr(system, "quat_nq", None) is not None and kT is not None
                and "time_step" in self.md_settings):
            return n_eq, interval
        steps = mean_free_time(system, kT) / float(self.md_settings["time_step"])
        return (max(n_eq, math.ceil(BODY_EQUILIBRATION_COLLISIONS * steps)),
                max(interval, round(BODY_PILOT_COLLISIONS * steps / n_samples)))

    def _settings(self, prev):
        if self.is_md:
            return dict(self.md_settings)
        if prev is None:
            return {}
        attrs = store.read_attrs(prev.path)
        return {"max_displacement": float(attrs["sampler_final_max_displacement_red"]),
                "max_angle": float(attrs["sampler_final_max_angle_rad"])}


BODY_EQUILIBRATION_COLLISIONS = 5
"""Mean free times (:func:`mdsim.sampling.body_md_stage.mean_free_time`) of thermostatted
equilibration before an MD pilot of non-linear molecules.  Propane at 20 bar (rho sigma^3 =
0.02) relaxes from the lattice in about 1.5 of them (16 seeds, measured)."""
BODY_PILOT_COLLISIONS = 20
"""Mean free times an MD pilot of non-linear molecules spans.  Propane's energy at 20 bar
decorrelates over about 0.8 of them (500 steps); the route's 2000-step pilot spanned 3.3,
measured a statistical inefficiency of under 4 samples of 10 steps against 50, spaced the
production ten times too closely, and the short-range error of its samples then put the
scatter of Delta T over seeds (0.5 K) at 2.5 times the reported error (measured)."""

_RIGID_METHODS = {"mc-nvt": METHOD, **{engine: stage for stage, engine in MD_METHODS.items()}}
# the stage methods of a non-linear molecule in place of a linear one's
_BODY_METHODS = {METHOD: BODY_METHOD, "rigid-md-nvt": BODY_MD_METHOD,
                 "rigid-md-nve": BODY_MD_NVE_METHOD}


def rigid_method(method):
    """The stage method of a rigid-molecule task for the route's engine method.

    >>> rigid_method("mc-nvt"), rigid_method("md-nve")
    ('rigid-mc-nvt', 'rigid-md-nve')
    """
    if method not in _RIGID_METHODS:
        raise StudyError(f"method {method!r}: rigid molecules are sampled by canonical Monte "
                         "Carlo or by molecular dynamics (thermostatted or at fixed energy), "
                         f"not {method}")
    return _RIGID_METHODS[method]


def rigid_system_maker(job, rho_mol_m3, tag, temperature_K=None):
    """A function making a fresh rigid system of the task at a density (seeded start).

    The molecular cut-off is the study's ``[potential] cutoff`` (sigma of the
    first site), with the tail of molecules uncorrelated beyond it
    (:mod:`mdsim.engine.molecular_tail`).
    A mixture's box holds the study's mole fractions rounded to whole
    molecules (:meth:`mdsim.study.reader.Study.counts`).
    """
    molecules = job.study.gas.molecules
    counts_t = job.study.counts(job.n_particles)
    rc = float(job.study.reduced_pairs().rc_max)
    T = job.T_i if temperature_K is None else temperature_K
    if len(molecules) > 1:
        note = _mixture_note(job.study.gas, counts_t)
        if note not in job.notes:
            job.notes.append(note)

    if is_nonlinear_gas(job.study.gas):  # every species a rigid body
        def make():
            return body_mixture_system(molecules, counts_t, T, rho_mol_m3, rc,
                                       job.start_seed(tag))
        return make

    def make():
        return mixture_system(molecules, counts_t, T, rho_mol_m3, rc, job.start_seed(tag))
    return make


def is_nonlinear_gas(gas):
    """True for a gas with non-linear rigid molecules (one kind, or a mixture of them with atoms
    and linear molecules, every species simulated as a rigid body,
    :func:`mdsim.study.molecule.check_simulation_supported`)."""
    return gas.molecules is not None and any(m.is_nonlinear for m in gas.molecules)


def reduced_rigid_inertia(job):
    """The moments of inertia of the task's molecules in the study's reduced units, m sigma^2
    (0 for an atom of a mixture, the smallest principal moment of a non-linear molecule,
    which sets its time step), shape=(n_species,)."""
    from mdsim.sampling.body_box import reduced_principal_inertia
    from mdsim.sampling.rigid_box import reduced_inertia
    return np.array([reduced_principal_inertia(m, job.units).min() if m.is_nonlinear
                     else reduced_inertia(m, job.units) for m in job.study.gas.molecules])


def box_kinetic_dof(job):
    """F = 3N - 3 + sum of the molecules' rotations of the task's box
    (:meth:`mdsim.study.reader.Study.counts` of each species): 2 per linear rotor, 3 per
    non-linear molecule, none for the atoms of a mixture."""
    from mdsim.engine.rigid_integrator import translational_dof
    counts_t = job.study.counts(job.n_particles)
    rotations = sum(int(c) * int(m.rotational_dof)
                    for c, m in zip(counts_t, job.study.gas.molecules))
    return translational_dof(int(sum(counts_t))) + rotations


def set_up_molecular_task(job):
    """Give a running task of rigid molecules its virial series and notes (its c_v_ig with the
    model's kinetic part comes from :func:`mdsim.study.statepoints.ideal_heat_capacity`)."""
    from mdsim.study.statepoints import virial_gas
    study = job.study
    job.virial_gas = virial_gas(study)
    gas = study.gas
    what = ", ".join(f"{m.name}, {m.n_sites} site{'s' if m.n_sites > 1 else ''}"
                     for m in gas.molecules)
    moves = ("translation and rotation moves (atoms translations only)"
             if any(m.n_sites == 1 for m in gas.molecules) else "translation and rotation moves")
    mc = f"canonical Monte Carlo with {moves}"
    md = "molecular dynamics (symplectic rigid-body splitting, shifted-energy model)"
    how = {"energy": md.replace("molecular", "thermostatted molecular", 1)
           if job.task.get("sampler") == "md" else mc,
           "microcanonical": f"the initial state by {mc}, the final state by fixed-energy {md}",
           "direct": f"{md}, thermostatted at the initial state, then at fixed energy"}
    job.notes.append(
        f"rigid molecules ({what}): {how.get(job.task.get('route'), mc)}, molecular cut-off "
        f"{float(study.reduced_pairs().rc_max):g} sigma with the tail of uncorrelated molecules "
        "(site-site potentials averaged over both rotations); "
        f"{gas.describe_heat_capacity_counts()}")
    from mdsim.sampling.rigid_box import electrostatics_note
    note = electrostatics_note(gas.molecules, float(study.reduced_pairs().rc_max))
    if note:
        job.notes.append(note)


def _mixture_note(gas, counts_t):
    """What the task says of a mixture's box: its molecules, and the rules between them."""
    n = int(sum(counts_t))
    box = ", ".join(f"{c} {m.name}" for c, m in zip(counts_t, gas.molecules))
    x = ", ".join(f"{c / n:.4g}" for c in counts_t)
    return (f"mixture: {box} in the box (mole fractions {x}: the study's "
            f"{', '.join(f'{v:.4g}' for v in gas.fractions)} rounded to whole molecules); "
            "unlike sites by Lorentz-Berthelot, quadrupole-quadrupole energy between the "
            "molecules that carry one")
