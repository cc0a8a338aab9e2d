"""One state point of a gas of rigid molecules (linear ones or their mixture with atoms, or
non-linear ones and their mixtures with atoms and linear molecules) by canonical Monte Carlo.

:func:`sample_rigid_state` puts ``n_molecules`` molecules of a
:class:`~analysis.molecules.RigidMolecule` in a cubic box at the density
asked for, equilibrates (tuning the steps), samples, and returns the
residual internal energy and the pressure with standard errors from the
statistical inefficiency of the series (:mod:`analysis.stats`).  Reduced
units inside: epsilon and sigma of the molecule's first site.
"""
import dataclasses

import numpy as np

from analysis.expansion.energy import StateSample
from analysis.stats import mean_and_stderr, variance_and_stderr
from mdsim.engine.body_mc import BodyMCSampler
from mdsim.engine.rigid_mc import RigidMCSampler
from mdsim.numbers import value_with_error
from mdsim.sampling.body_box import body_mixture_box
from mdsim.sampling.rigid_box import mixture_box, rigid_box

__all__ = ["RigidStateEstimate", "sample_rigid_state"]


@dataclasses.dataclass(frozen=True)
class RigidStateEstimate:
    """Means with standard errors of one canonical Monte Carlo run (SI units).

    Attributes
    ----------
    temperature_K, density_mol_m3 : float
    u_res_J_mol, u_res_stderr : float
        Residual (configurational) internal energy per mole, with the tail.
    pressure_Pa, pressure_stderr : float
    acceptance_m : tuple of float
        Acceptance of translations and rotations in production.
    n_molecules : int
    cutoff_sigma : float
    u_tail_J_mol : float
        The tail part of u_res (isotropic site-site correction).
    cv_res_J_molK, cv_res_stderr : float
        Residual heat capacity N Var(u) / (k T^2) per mole (u the energy
        per molecule; canonical fluctuation formula, Allen and Tildesley,
        Computer Simulation of Liquids, section 2.5).
    """

    temperature_K: float
    density_mol_m3: float
    u_res_J_mol: float
    u_res_stderr: float
    pressure_Pa: float
    pressure_stderr: float
    acceptance_m: tuple
    n_molecules: int
    cutoff_sigma: float
    u_tail_J_mol: float
    cv_res_J_molK: float
    cv_res_stderr: float

    def state_sample(self):
        """The averages as an energy-route sample on an isochore (:class:`StateSample`)."""
        return StateSample(self.temperature_K, self.u_res_J_mol, self.u_res_stderr,
                           self.cv_res_J_molK, self.cv_res_stderr)

    def describe(self):
        """One line: state, u_res and p with their errors."""
        return (f"rigid-molecule MC (NVT, {self.n_molecules} molecules, cut-off "
                f"{self.cutoff_sigma:g} sigma) at {self.temperature_K:g} K, "
                f"{self.density_mol_m3:.6g} mol/m^3: u_res = "
                f"{value_with_error(self.u_res_J_mol, self.u_res_stderr, 'J/mol')}, p = "
                f"{value_with_error(self.pressure_Pa / 1e5, self.pressure_stderr / 1e5, 'bar')}")


def sample_rigid_state(molecule, temperature_K, density_mol_m3, *, n_molecules=256, cutoff=5.0,
                       equilibration_sweeps=200, samples=200, interval=2, seed=1,
                       counts_t=None):
    """u_res and p of a gas of rigid molecules at (T, rho), canonical Monte Carlo.

    Parameters
    ----------
    molecule : RigidMolecule or list of RigidMolecule
        Linear, two or more sites, optional site charges or axial point dipole
        and quadrupole, or non-linear (site Lennard-Jones or Mie and optional
        site charges: :mod:`mdsim.engine.body_mc`); a list is a mixture of
        linear molecules and atoms, with ``counts_t``, or of non-linear
        molecules with atoms and linear molecules (every species a rigid body).
    temperature_K : float, K
    density_mol_m3 : float, mol/m^3
    n_molecules : int
    cutoff : float, sigma
        Molecular (centre-centre) cut-off; the box edge must exceed twice it.
    equilibration_sweeps, samples, interval : int
        Sweeps (N trial moves) to equilibrate; recorded samples; sweeps between them.
    seed : int
    counts_t : list of int, optional
        Molecules of each type of a mixture (then ``n_molecules`` is their sum).

    Returns
    -------
    RigidStateEstimate

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.014),
    ...                           Site(lj, (0, 0, 0.5232), 0.014)])
    >>> est = sample_rigid_state(n2, 300.0, 4000.0, n_molecules=64, cutoff=3.0,
    ...                          equilibration_sweeps=10, samples=100, interval=1)
    >>> est.u_res_J_mol < 0, 0.9e7 < est.pressure_Pa < 1.1e7
    (True, True)
    """
    mols = [molecule] if counts_t is None else list(molecule)
    if any(m.is_nonlinear for m in mols):  # rigid bodies: orientations as quaternions
        box = body_mixture_box(mols, [n_molecules] if counts_t is None else counts_t,
                               temperature_K, density_mol_m3, cutoff, seed)
        sampler = BodyMCSampler(box.model, box.centre_ni, box.quat_nq, box.type_n, box.box_i,
                                temperature=box.temperature, seed=[seed, 1])
    else:
        if counts_t is None:
            box = rigid_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed)
        else:
            box = mixture_box(molecule, counts_t, temperature_K, density_mol_m3, cutoff, seed)
        sampler = RigidMCSampler(box.model, box.centre_ni, box.axis_ni, box.type_n,
                                 box.box_i, temperature=box.temperature, seed=[seed, 1])
    T, rho, n, units = box.temperature_K, box.density_mol_m3, len(box.centre_ni), box.units
    sampler.equilibrate(equilibration_sweeps)
    tried0, accepted0 = sampler.tried_m.copy(), sampler.accepted_m.copy()
    out = sampler.run(samples, interval)
    acc = (sampler.accepted_m - accepted0) / np.maximum(sampler.tried_m - tried0, 1)
    u = mean_and_stderr(out["u_full"])
    p = mean_and_stderr(out["pressure"])
    var = variance_and_stderr(out["u_full"])
    cv_scale = n / sampler.temperature ** 2 * units.energy_to_J_mol(1.0) / units.epsilon_K
    return RigidStateEstimate(
        T, rho, units.energy_to_J_mol(u.mean), units.energy_to_J_mol(u.stderr),
        units.pressure_to_Pa(p.mean), units.pressure_to_Pa(p.stderr),
        (float(acc[0]), float(acc[1])), n, float(cutoff),
        units.energy_to_J_mol(sampler.u_tail), cv_scale * var.value, cv_scale * var.stderr)
