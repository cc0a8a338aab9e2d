"""One state point of a study sampled on its own: energy, pressure, heat capacity, in SI and reduced.

:func:`sample_single_state` builds the study's system at a density, samples
it with one of the four samplers (canonical Monte Carlo or MD at a
temperature, microcanonical Monte Carlo at an energy, microcanonical MD
from start velocities at a temperature), optionally into a resumable run
file, and returns the averages with their standard errors
(``docs/units.md`` for the reduced units).
"""
from mdsim.checks import count, positive
from mdsim.errors import SettingError

__all__ = ["METHODS", "DEFAULTS", "DEFAULT_INTERVAL", "sample_single_state"]

#: The samplers: Monte Carlo or molecular dynamics, canonical or microcanonical.
METHODS = ("mc-nvt", "md-nvt", "mc-nve", "md-nve")
#: Particles, production samples and equilibration sweeps or steps by default.
DEFAULTS = {"particles": 256, "samples": 2000, "equilibration": 500}
#: Sweeps (MC) or steps (MD) between samples by default.
DEFAULT_INTERVAL = {"mc": 1, "md": 10}

# quantity -> (unit conversion of the study's reduced units, key of the sampler's summary)
_QUANTITIES = {
    "energy_J_mol": ("energy_to_J_mol", "u_full"),
    "pressure_Pa": ("pressure_to_Pa", "pressure"),
    "heat_capacity_res_J_molK": ("heat_capacity_to_J_molK", "c_v_res"),
}


def _reduced_state(units, method, temperature_K, energy_J_mol):
    """(T_red or None, energy_red or None) for a method; refuse the setting it does not take."""
    if method not in METHODS:
        raise SettingError("method", method, f"allowed {', '.join(METHODS)}")
    if method == "mc-nve":
        if energy_J_mol is None:
            raise SettingError("energy_J_mol", None, "required for method mc-nve (total energy "
                               "per mole, for example 1500 J/mol); the temperature is not used")
        if temperature_K is not None:
            raise SettingError("temperature_K", temperature_K, "does not apply to method "
                               "mc-nve; give the total energy per mole instead")
        return None, units.energy_to_reduced(float(energy_J_mol))
    if energy_J_mol is not None:
        raise SettingError("energy_J_mol", energy_J_mol, f"applies to method mc-nve only, "
                           f"not {method}")
    if temperature_K is None:
        raise SettingError("temperature_K", None, f"required for method {method} (for "
                           "example 150 K)")
    T_K = positive("temperature_K", temperature_K, "the temperature in K, for example 150 K")
    return units.temperature_to_reduced(T_K), None


def _entry(value, stderr, est):
    if not est.available:
        return {"value": None, "stderr": None, "unavailable": est.reason}
    return {"value": value, "stderr": stderr}


def _summary_dict(study, summary, rho):
    """The SI and reduced averages of a sampler's summary (JSON-ready)."""
    units = study.units
    out, reduced = {}, {}
    for key, (conversion, name) in _QUANTITIES.items():
        conv, e = getattr(units, conversion), summary[name]
        out[key] = _entry(conv(e.value), conv(e.stderr), e)
        reduced[key] = _entry(e.value, e.stderr, e)
    out["reduced"] = reduced
    T_est = summary["temperature"]
    out["temperature_K"] = {"value": units.temperature_to_K(T_est.value),
                            "stderr": units.temperature_to_K(T_est.stderr)}
    reduced["temperature"] = {"value": T_est.value, "stderr": T_est.stderr}
    out["density_mol_m3"] = rho
    reduced["density"] = units.density_to_reduced(rho)
    # The reduced block repeats the SI keys so that a reader finds each quantity under
    # one name; its numbers are in the Lennard-Jones units of species 0, said here.
    reduced["units"] = (f"reduced: energy per particle / epsilon, pressure * sigma^3 / "
                        f"epsilon, heat capacity per particle / k, with epsilon/k = "
                        f"{units.epsilon_K:g} K and sigma = {units.sigma_m * 1e10:g} angstrom")
    return out


def sample_single_state(study, density_mol_m3, method="mc-nvt", temperature_K=None,
                        energy_J_mol=None, particles=DEFAULTS["particles"],
                        samples=DEFAULTS["samples"], interval=None,
                        equilibration=DEFAULTS["equilibration"], seed=1, out=None):
    """Sample one state point of a study.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    density_mol_m3 : float
        Molar density, mol/m^3, above 0.
    method : {"mc-nvt", "md-nvt", "mc-nve", "md-nve"}
    temperature_K : float, optional
        K; required by every method but mc-nve (md-nve uses it for the
        start velocities).
    energy_J_mol : float, optional
        Total energy per mole (kinetic plus configurational), J/mol;
        mc-nve only, and required there.
    particles, samples : int
        Particles; production samples.
    interval : int, optional
        Sweeps (MC) or steps (MD) between samples (default
        :data:`DEFAULT_INTERVAL`).
    equilibration : int
        Equilibration sweeps or steps.
    seed : int
    out : path-like, optional
        Run file ``FILE.h5`` (resumed when ``FILE.h5.part`` exists).

    Returns
    -------
    dict
        JSON-ready: ``energy_J_mol``, ``pressure_Pa``,
        ``heat_capacity_res_J_molK`` each ``{value, stderr}`` in SI (or
        ``{value: None, stderr: None, unavailable: why}``),
        ``temperature_K``, ``density_mol_m3``; ``reduced``, the same keys
        in reduced units (``temperature``, ``density``) and ``units``
        saying which; and ``study``, ``method``, ``particles``,
        ``samples``, ``interval``, ``seed``, ``run_file``, ``resumed``,
        ``quantum_potential`` (the study's ``[simulation]`` key: with
        "feynman-hibbs" the energy is the thermodynamic estimator of that
        potential, docs/physics.md section 3.5).
    """
    from mdsim.sampling.state_point import sample_state_point
    units = study.units
    rho = positive("density_mol_m3", density_mol_m3, "for example 500 mol/m^3")
    T_red, energy_red = _reduced_state(units, method, temperature_K, energy_J_mol)
    interval = DEFAULT_INTERVAL[method[:2]] if interval is None else count("interval", interval)
    system = study.system(count("particles", particles), rho, seed=count("seed", seed, minimum=0),
                          temperature_K=None if T_red is None else temperature_K)
    attrs = {"study_name": study.name, "study_file": str(study.path),
             **{f"units_{k}": v for k, v in units.as_dict().items()},
             "density_mol_m3": rho}
    result = sample_state_point(system, method, T_red, energy_red,
                                n_equilibration=count("equilibration", equilibration, minimum=0),
                                n_samples=count("samples", samples), interval=interval,
                                seed=seed, path=out, attrs=attrs)
    data = _summary_dict(study, result.summary, rho)
    data.update({"study": study.name, "method": method, "particles": system.n_particles,
                 "quantum_potential": study.simulation["quantum_potential"],
                 "samples": samples, "interval": interval, "seed": seed,
                 "run_file": str(result.path) if result.path else None,
                 "resumed": result.resumed})
    return data
