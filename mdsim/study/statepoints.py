"""State points of a study: the initial states and volume ratios to expand.

A study gives one initial state in ``[initial]`` (temperature and one of
pressure or density) and one ``[expansion]`` volume ratio, or lists of any
of them in ``[sweep]``.  :func:`state_points` expands the lists into every
combination, in a fixed order::

    for temperature in temperatures:          # outermost
        for pressure_or_density in states:
            for volume_ratio in ratios:       # innermost, varies fastest
                StatePoint(index, ...)

each list in the order written in the file; indices count from 0.

When the initial state is given by pressure, :func:`resolve_initial_density`
finds the density from the model's own equation of state: the B2 + B3
virial series, where it converges.  Dense states must be given by density.

The virial equation of state (:func:`virial_gas`) and the ideal-gas heat
capacity model (:func:`ideal_heat_capacity`) of a study are built once per
study object and kept on it.
"""
import dataclasses
import itertools
import warnings

from mdsim.errors import ConvergenceError, SettingError, StudyError
from mdsim.units import R_GAS

__all__ = ["StatePoint", "state_points", "with_initial_state", "resolve_initial_density", "virial_gas", "virial_warnings",
           "ideal_heat_capacity", "MAX_STATE_POINTS", "PRESSURE_TO_DENSITY_ORDER"]

# Largest number of state points one study may expand to.
MAX_STATE_POINTS = 10000

# Order of the virial series used to turn an initial pressure into a density.
PRESSURE_TO_DENSITY_ORDER = 3


@dataclasses.dataclass(frozen=True)
class StatePoint:
    """One initial state and volume ratio of a study.

    Attributes
    ----------
    index : int
        Position in the study's list of state points (from 0).
    temperature_K : float
        Initial temperature, K.
    volume_ratio : float
        V_final / V_initial, > 1.
    pressure_Pa : float or None
        Initial pressure, Pa, when the study gives pressures.
    density_mol_m3 : float or None
        Initial molar density, mol/m^3, when the study gives densities.
        Exactly one of ``pressure_Pa`` and ``density_mol_m3`` is set.
    """

    index: int
    temperature_K: float
    volume_ratio: float
    pressure_Pa: float | None
    density_mol_m3: float | None

    def as_dict(self):
        """The state point as a JSON-ready dict (field names as keys)."""
        return dataclasses.asdict(self)

    @classmethod
    def from_dict(cls, data):
        """The inverse of :meth:`as_dict`."""
        return cls(index=int(data["index"]), temperature_K=float(data["temperature_K"]),
                   volume_ratio=float(data["volume_ratio"]),
                   pressure_Pa=(None if data.get("pressure_Pa") is None
                                else float(data["pressure_Pa"])),
                   density_mol_m3=(None if data.get("density_mol_m3") is None
                                   else float(data["density_mol_m3"])))

    def label(self):
        """A short text such as 'T = 295.15 K, p = 22 bar, r = 2'."""
        state = (f"p = {self.pressure_Pa / 1e5:.6g} bar" if self.pressure_Pa is not None
                 else f"rho = {self.density_mol_m3:.6g} mol/m^3")
        return f"T = {self.temperature_K:.6g} K, {state}, r = {self.volume_ratio:.6g}"


def _missing(study, table, key, example):
    raise StudyError(f"study file '{study.path}', [{table}] key '{key}': missing; the study "
                     f"needs it to define its state points; add {key} = {example} to "
                     f"[{table}], or a list in [sweep]")


def with_initial_state(study, temperature_K=None, pressure_Pa=None, density_mol_m3=None):
    """The study with its initial temperature and pressure or density replaced.

    A value given replaces ``[initial]`` and its ``[sweep]`` list; a
    pressure replaces a density and the other way round.  What is not given
    stays as the study file has it.

    Parameters
    ----------
    study : Study
    temperature_K : float, optional
    pressure_Pa, density_mol_m3 : float, optional
        At most one of them.

    Returns
    -------
    Study
        A new study object (the one given is left as it was).

    Examples
    --------
    >>> from pathlib import Path
    >>> from mdsim.study.reader import read_study
    >>> argon = read_study(Path(__file__).parents[2] / "configs" / "argon.toml")
    >>> sp = state_points(with_initial_state(argon, 150.0, density_mol_m3=500.0))[0]
    >>> sp.temperature_K, sp.pressure_Pa, sp.density_mol_m3
    (150.0, None, 500.0)
    """
    if pressure_Pa is not None and density_mol_m3 is not None:
        raise SettingError("density_mol_m3", density_mol_m3, "give a pressure or a density, "
                           "not both")
    initial, sweep = dict(study.initial), dict(study.sweep)
    for setting, key, value in (("temperature_K", "temperature", temperature_K),
                                ("pressure_Pa", "pressure", pressure_Pa),
                                ("density_mol_m3", "density", density_mol_m3)):
        if value is None:
            continue
        if not (value > 0.0 and value < float("inf")):
            raise SettingError(setting, value, "must be a positive number")
        initial[key] = float(value)
        sweep.pop(key, None)
        if key != "temperature":
            other = "density" if key == "pressure" else "pressure"
            initial.pop(other, None)
            sweep.pop(other, None)
    return dataclasses.replace(study, initial=initial, sweep=sweep)


def state_points(study):
    """Every state point of a study, in the documented order.

    Parameters
    ----------
    study : Study

    Returns
    -------
    list of StatePoint

    Raises
    ------
    StudyError
        When a temperature, a pressure or density, or the volume ratio is
        given neither in [initial]/[expansion] nor in [sweep], or the sweep
        has more than ``MAX_STATE_POINTS`` combinations.
    """
    initial, sweep = study.initial, study.sweep
    temperatures = sweep.get("temperature") or (
        [initial["temperature"]] if "temperature" in initial else None)
    if temperatures is None:
        _missing(study, "initial", "temperature", '"295.15 K"')
    if "pressure" in sweep or "pressure" in initial:
        kind = "pressure"
    elif "density" in sweep or "density" in initial:
        kind = "density"
    else:
        raise StudyError(f"study file '{study.path}', [initial]: neither 'pressure' nor 'density' "
                         'is given; add pressure = "22 bar" or density = "500 mol/m^3" '
                         "(or a list of either in [sweep])")
    states = sweep.get(kind) or [initial[kind]]
    ratios = sweep.get("volume_ratio") or (
        [study.expansion["volume_ratio"]] if "volume_ratio" in study.expansion else None)
    if ratios is None:
        _missing(study, "expansion", "volume_ratio", "2.0")
    n = len(temperatures) * len(states) * len(ratios)
    if n > MAX_STATE_POINTS:
        raise StudyError(f"study file '{study.path}', [sweep]: {n} state points; allowed at most "
                         f"{MAX_STATE_POINTS}; shorten the lists or split the study")
    points = []
    for index, (T, state, r) in enumerate(itertools.product(temperatures, states, ratios)):
        points.append(StatePoint(index=index, temperature_K=float(T), volume_ratio=float(r),
                                 pressure_Pa=float(state) if kind == "pressure" else None,
                                 density_mol_m3=float(state) if kind == "density" else None))
    return points


def virial_gas(study):
    """The study's virial equation of state (a :class:`analysis.virial_eos.VirialGas`).

    A gas of rigid molecules gets an
    :class:`analysis.molecules.MolecularVirialGas` (B by orientation
    quadrature, C by Monte Carlo integration; the convergence of B2 of
    charged non-linear molecules in the rotation degree measured at the
    study's coldest initial temperature).  Built once per study object;
    the de Boer check's and that measurement's warnings are kept in
    ``study._virial_warnings`` (see :func:`virial_warnings`).
    """
    gas = getattr(study, "_virial_gas", None)
    if gas is None:
        from analysis.molecules import MolecularVirialGas
        from analysis.virial_eos import VirialGas
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            if study.gas.molecules is not None:
                coldest = min(sp.temperature_K for sp in state_points(study))
                gas = MolecularVirialGas(study.gas.molecules, study.gas.fractions,
                                         convergence_temperature_K=coldest)
            else:
                gas = VirialGas(study.gas.pairs_K_angstrom, study.gas.fractions,
                                study.gas.molar_masses_kg_mol,
                                quantum=study.gas.quantum,
                                spin=study.gas.spin_components(),
                                three_body_c9_K_A9=study.gas.three_body_c9_K_A9)
        study._virial_gas = gas
        study._virial_warnings = [str(w.message) for w in caught]
    return gas


def virial_warnings(study):
    """Warnings issued when the study's virial gas was built (quantum checks)."""
    virial_gas(study)
    return list(study._virial_warnings)


def ideal_heat_capacity(study):
    """The study's ideal-gas heat capacity model (``analysis.heatcapacity``), built once.

    For rigid molecules ``[gas] ideal_heat_capacity_counts`` says what the
    study gives: the vibrational part ("vibrations"), to which the model
    adds the kinetic (f/2) R of the molecules' translations and rotations,
    or the whole c_v_ig ("all motions"), of which (f/2) R is the model's
    (``WholeOfRigidModel``).
    """
    model = getattr(study, "_cv_ig", None)
    if model is None:
        from analysis.heatcapacity import (ConstantHeatCapacity, KineticPlusInternal,
                                           WholeOfRigidModel, heat_capacity_from_spec,
                                           parse_molar_heat_capacity)
        spec = study.gas.ideal_heat_capacity
        where = f"study file '{study.path}', [gas] key 'ideal_heat_capacity'"
        if study.gas.molecules is None:
            model = heat_capacity_from_spec(spec, where=where)
        elif study.gas.ideal_heat_capacity_counts == "all motions":
            model = WholeOfRigidModel(heat_capacity_from_spec(spec, where=where),
                                      study.gas.kinetic_dof)
        elif isinstance(spec, str) and not spec.strip().lower().endswith(".csv"):
            # a constant vibrational part, which may be 0: one constant with the kinetic part
            model = ConstantHeatCapacity(0.5 * study.gas.kinetic_dof * R_GAS
                                         + parse_molar_heat_capacity(spec, where))
        else:
            model = KineticPlusInternal(heat_capacity_from_spec(spec, where=where),
                                        study.gas.kinetic_dof)
        study._cv_ig = model
    return model


def resolve_initial_density(study, sp):
    """The initial molar density of a state point, and how it was obtained.

    Parameters
    ----------
    study : Study
    sp : StatePoint

    Returns
    -------
    rho_i_mol_m3 : float
        Initial density, mol/m^3.
    how : str
        "given" (the study gives the density) or "virial B2+B3" (solved
        from the given pressure with the model's B2 + B3 virial series).

    Raises
    ------
    StudyError
        When the pressure is given and the B2 + B3 series does not converge
        at that state (``VirialGas.check_converged``) or cannot reach that
        pressure: the message asks for the density instead.
    """
    if sp.density_mol_m3 is not None:
        return float(sp.density_mol_m3), "given"
    from analysis.virial_eos import VirialSeriesError
    gas = virial_gas(study)
    T, p = sp.temperature_K, sp.pressure_Pa
    try:
        rho = float(gas.density_from_pressure(T, p, order=PRESSURE_TO_DENSITY_ORDER))
        gas.check_converged(T, rho)
    except (VirialSeriesError, ConvergenceError) as exc:
        raise StudyError(
            f"study file '{study.path}', state point {sp.index} ({sp.label()}): the initial "
            f"density cannot be found from the pressure with the B2 + B3 virial series "
            f"({' '.join(str(exc).split())}); for dense states give the initial density "
            'instead, [initial] density = "... mol/m^3" (or a [sweep] density list)') from None
    return rho, "virial B2+B3"
