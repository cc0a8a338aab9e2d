"""One state point of a gas of rigid linear molecules (or their mixture with atoms) by
molecular dynamics.

:func:`sample_rigid_state_md` puts ``n_molecules`` molecules of a
:class:`~analysis.molecules.RigidMolecule` (or of a mixture's types) in a
cubic box at the density asked for, equilibrates with the thermostat (stochastic velocity rescaling
of translations and rotations), and produces either canonically
("md-nvt", the averages at the temperature asked for) or
microcanonically ("md-nve", the averages at the run's own temperature,
which is reported, and the drift of the conserved energy in K per ns per
molecule).  Means and standard errors come from the statistical
inefficiency of each series (:mod:`analysis.stats`).  Reduced units
inside: epsilon and sigma of the first molecule's first site.
"""
import dataclasses

from analysis.stats import mean_and_stderr
from mdsim.checks import count
from mdsim.engine.rigid_md import METHODS, RigidMDSampler
from mdsim.engine.rigid_md_steps import drift_K_per_ns
from mdsim.errors import SettingError
from mdsim.numbers import value_with_error
from mdsim.sampling.rigid_box import mixture_box, rigid_box

__all__ = ["RigidDynamicsEstimate", "sample_rigid_state_md"]


@dataclasses.dataclass(frozen=True)
class RigidDynamicsEstimate:
    """Means with standard errors of one molecular-dynamics run (SI units).

    Attributes
    ----------
    method : str
        "md-nvt" or "md-nve" (the production).
    temperature_K, temperature_stderr : float
        The target (NVT, error 0) or the run's kinetic temperature over
        F = 3N - 3 + 2 N_rot degrees of freedom (NVE).
    density_mol_m3 : float
    u_res_J_mol, u_res_stderr : float
        Residual internal energy per mole, plain cut plus tail.
    pressure_Pa, pressure_stderr : float
    temperature_trans_K, temperature_trans_stderr, temperature_rot_K, temperature_rot_stderr
        Kinetic temperatures of the translations (3N - 3 degrees of
        freedom) and of the rotations (2 N_rot, the linear rotors').
    drift_K_per_ns : float
        Slope of the conserved energy per molecule (NVE); NaN for NVT.
    time_step_s : float
    n_molecules : int
    cutoff_sigma : float
    """

    method: str
    temperature_K: float
    temperature_stderr: float
    density_mol_m3: float
    u_res_J_mol: float
    u_res_stderr: float
    pressure_Pa: float
    pressure_stderr: float
    temperature_trans_K: float
    temperature_trans_stderr: float
    temperature_rot_K: float
    temperature_rot_stderr: float
    drift_K_per_ns: float
    time_step_s: float
    n_molecules: int
    cutoff_sigma: float

    def describe(self):
        """One line: the run, u_res, p and the two kinetic temperatures with their errors."""
        drift = ("" if self.method == "md-nvt"
                 else f", energy drift {self.drift_K_per_ns:.2g} K/ns per molecule")
        return (f"rigid-molecule MD ({self.method}, {self.n_molecules} molecules, cut-off "
                f"{self.cutoff_sigma:g} sigma) at "
                f"{value_with_error(self.temperature_K, self.temperature_stderr, 'K')}, "
                f"{self.density_mol_m3:.6g} mol/m^3: u_res = "
                f"{value_with_error(self.u_res_J_mol, self.u_res_stderr, 'J/mol')}, p = "
                f"{value_with_error(self.pressure_Pa / 1e5, self.pressure_stderr / 1e5, 'bar')}"
                f"; T_trans = "
                f"{value_with_error(self.temperature_trans_K, self.temperature_trans_stderr, 'K')}"
                f", T_rot = "
                f"{value_with_error(self.temperature_rot_K, self.temperature_rot_stderr, 'K')}"
                f"{drift}")


def sample_rigid_state_md(molecule, temperature_K, density_mol_m3, *, method="md-nvt",
                          n_molecules=256, cutoff=5.0, equilibration_steps=2000, samples=200,
                          interval=20, seed=1, counts_t=None):
    """u_res, p and the kinetic temperatures of a gas of linear rigid molecules by MD.

    Parameters
    ----------
    molecule : RigidMolecule or list of RigidMolecule
        Linear, two or more sites, optional site charges or axial point dipole
        and quadrupole; a list is a mixture of such molecules and atoms, with
        ``counts_t``.
    temperature_K : float, K
        The thermostat's target (equilibration, and NVT production).
    density_mol_m3 : float, mol/m^3
    method : {"md-nvt", "md-nve"}
        The production.
    n_molecules : int
    cutoff : float, sigma
        Molecular (centre-centre) cut-off of the shifted-energy model.
    equilibration_steps, samples, interval : int
        Thermostatted steps first; recorded samples; steps between them.
    seed : int
    counts_t : list of int, optional
        Molecules of each type of a mixture (then ``n_molecules`` is their sum).

    Returns
    -------
    RigidDynamicsEstimate

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules import RigidMolecule, Site
    >>> lj = LennardJones(34.897, 3.3211)
    >>> n2 = RigidMolecule("N2", [Site(lj, (0, 0, -0.5232), 0.014),
    ...                           Site(lj, (0, 0, 0.5232), 0.014)])
    >>> est = sample_rigid_state_md(n2, 300.0, 4000.0, n_molecules=64, cutoff=3.0,
    ...                             equilibration_steps=1000, samples=100, interval=20)
    >>> est.u_res_J_mol < 0, 0.8e7 < est.pressure_Pa < 1.2e7
    (True, True)
    """
    if method not in METHODS:
        raise SettingError("method", method, f"molecular dynamics offers {', '.join(METHODS)}")
    if counts_t is None:
        box = rigid_box(molecule, temperature_K, density_mol_m3, n_molecules, cutoff, seed,
                        shifted=True)
    else:
        box = mixture_box(molecule, counts_t, temperature_K, density_mol_m3, cutoff, seed,
                          shifted=True)
    T, rho, n, units = box.temperature_K, box.density_mol_m3, len(box.centre_ni), box.units
    md = RigidMDSampler(box.model, box.centre_ni, box.axis_ni, box.box_i, mass_t=box.mass_t,
                        inertia_t=box.inertia_t, type_n=box.type_n, temperature=box.temperature,
                        seed=[seed, 2])
    md.equilibrate(count("equilibration_steps", equilibration_steps, 0))
    md.set_method(method)
    out = md.run(samples, interval)
    # the results drop a transient if the series show one; the kinetic temperatures, slow
    # to exchange energy in a gas, are diagnostics averaged over the whole production
    est = {k: mean_and_stderr(out[k], k in ("u_full", "pressure"))
           for k in ("u_full", "pressure", "temperature_trans", "temperature_rot")}
    t_red = (out["temperature_trans"] * md.nf_trans + out["temperature_rot"] * md.nf_rot) / (
        md.nf_trans + md.nf_rot)
    t_run = mean_and_stderr(t_red, False) if method == "md-nve" else None
    drift = (drift_K_per_ns(out["e_conserved"], interval, md.time_step, units)
             if method == "md-nve" else float("nan"))
    eps = units.epsilon_K
    return RigidDynamicsEstimate(
        method, T if t_run is None else t_run.mean * eps, 0.0 if t_run is None
        else t_run.stderr * eps, rho,
        units.energy_to_J_mol(est["u_full"].mean), units.energy_to_J_mol(est["u_full"].stderr),
        units.pressure_to_Pa(est["pressure"].mean), units.pressure_to_Pa(est["pressure"].stderr),
        est["temperature_trans"].mean * eps, est["temperature_trans"].stderr * eps,
        est["temperature_rot"].mean * eps, est["temperature_rot"].stderr * eps,
        drift, md.time_step * units.time_s, n, float(cutoff))
