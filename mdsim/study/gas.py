"""The gas of a study: its species, pair potentials and ideal-gas heat capacity.

:func:`read_gas` checks ``[gas]`` and ``[potential]`` (a pure gas) or the
``[[gas.species]]`` blocks with the mixing keys of ``[potential]`` (a
mixture) and returns a :class:`Gas`.  The ideal-gas heat capacity is
validated here (:func:`check_heat_capacity`) but kept as written, for the
analysis package to build its model from; CSV tables in it must be in the
study's folder (:mod:`mdsim.study.datafiles`).
"""
import dataclasses
import math
import numbers

import numpy as np

from mdsim.errors import StudyError
from mdsim.engine.potentials import PairMatrix
from mdsim.study.datafiles import data_file, data_lines
from mdsim.study.fitted_range import check_fitted_range
from mdsim.study.molecule import (MOLECULE_FORM, check_dof, mean_kinetic_dof, read_c9,
                                  read_molecule, species_molecules)
from mdsim.study.potential import MIXING_KEYS, build_potential, check_k_ij
from mdsim.study.schema import ANGSTROM, SCHEMA
from mdsim.study.values import MISSING, check_table, suggest
from mdsim.units import N_A, R_GAS, ReducedUnits, parse_quantity

__all__ = ["Gas", "read_gas", "check_quantum", "eval_fraction", "HYDROGEN_SPIN_ISOMERS", "check_heat_capacity", "close_packed_density_mol_m3",
           "CLOSE_PACKED_DENSITY_RED", "HEAT_CAPACITY_CSV_HEADER", "HEAT_CAPACITY_DICT_KEYS"]

#: Hydrogen's spin-isomer choices of [gas] nuclear_spin and their ortho fractions.
HYDROGEN_SPIN_ISOMERS = {"normal-hydrogen": 0.75, "para-hydrogen": 0.0}
#: Densest state accepted: close-packed spheres of diameter sigma, rho sigma^3 = sqrt(2).
CLOSE_PACKED_DENSITY_RED = math.sqrt(2.0)
#: The header line of a heat-capacity CSV table.
HEAT_CAPACITY_CSV_HEADER = ("temperature_K", "cv_J_molK")
#: Keys of a heat-capacity inline table.
HEAT_CAPACITY_DICT_KEYS = ("polynomial", "unit", "valid_range_K", "table")
_HEAT_CAPACITY_FORMS = ('"1.5 R", "20.8 J/(mol K)", { polynomial = [a0, a1, ...], '
                        'unit = "J/(mol K)", valid_range_K = [T_low, T_high] }, a CSV file name '
                        'ending in .csv, or { table = "file.csv" }')


@dataclasses.dataclass
class Gas:
    """A validated gas: its species, pair potentials and ideal-gas heat capacity.

    Attributes
    ----------
    name : str
    species_names : list of str, length n_species
    pairs_K_angstrom : PairMatrix
        Pair potentials with energies u/k in K and lengths in angstrom.
    fractions : ndarray, shape=(n_species,), float64
        Mole fractions (sum to 1).
    molar_masses_kg_mol : ndarray, shape=(n_species,), float64
    quantum : str
        The quantum treatment of B2 ("classical", "first-order",
        "second-order", "exact").
    statistics : str
        "boltzmann", "bose" or "fermi" (used when quantum is "exact").
    nuclear_spin : str
        The nuclear spin I ("0", "1/2", ...) or "normal-hydrogen" /
        "para-hydrogen".
    ideal_heat_capacity : str or dict
        The validated raw specification ("1.5 R", "20.8 J/(mol K)",
        {"polynomial": [...], "unit": ...} or an absolute CSV path).
    dof_per_particle : int
    units : ReducedUnits
        Reduced units of species 0.
    molecules : list of analysis.molecules.RigidMolecule or None
        One per species when the potential is a rigid molecule (atoms of
        such a mixture are one-site molecules); None for spherical
        potentials.  ``pairs_K_angstrom`` then holds each species' first
        site potential (for its reduced units and density bounds).
    three_body_c9_K_A9 : float
        Axilrod-Teller C9/k in K angstrom^9 (0: pairwise additive).
    fitted_range_K : (float, float) or None
        ``[potential] fitted_range``: the temperatures the potential was
        fitted over (:mod:`mdsim.study.fitted_range`), or None.
    """

    name: str
    species_names: list
    pairs_K_angstrom: PairMatrix
    fractions: np.ndarray
    molar_masses_kg_mol: np.ndarray
    quantum: str
    statistics: str
    nuclear_spin: str
    ideal_heat_capacity: object
    dof_per_particle: int
    units: ReducedUnits
    molecules: list = None
    three_body_c9_K_A9: float = 0.0
    fitted_range_K: tuple = None

    @property
    def kinetic_dof(self):
        """Kinetic degrees of freedom per molecule, the mole-fraction mean (3 for atoms)."""
        return mean_kinetic_dof(self.fractions, self.molecules)

    @property
    def n_species(self):
        """The number of species (1 for a pure gas)."""
        return len(self.species_names)

    @property
    def quantum_correction(self):
        """Whether B2 carries any quantum treatment (``quantum`` is not "classical")."""
        return self.quantum != "classical"

    def spin_components(self):
        """The exchange statistics of like pairs for the exact B2 (analysis SpinComponents)."""
        from analysis.virial.quantum_exact import spin_components
        if self.nuclear_spin in HYDROGEN_SPIN_ISOMERS:
            return spin_components("bose", ortho_fraction=HYDROGEN_SPIN_ISOMERS[self.nuclear_spin])
        spin = eval_fraction(self.nuclear_spin)
        return spin_components(self.statistics, internal_states=int(round(2.0 * spin + 1.0)))

    def describe_quantum(self):
        """One line: the quantum treatment of the virial routes."""
        if self.quantum != "exact":
            return f"B2 {self.quantum} (Wigner-Kirkwood)" if self.quantum_correction else \
                "B2 classical"
        stats = (self.nuclear_spin if self.nuclear_spin in HYDROGEN_SPIN_ISOMERS
                 else f"{self.statistics} statistics, nuclear spin {self.nuclear_spin}")
        return f"B2 exact quantum (phase shifts, {stats})"


def close_packed_density_mol_m3(gas):
    """The densest molar density accepted, mol/m^3: rho sigma_x^3 = sqrt(2).

    sigma_x^3 = sum_ab x_a x_b sigma_ab^3 (the one-fluid mean; sigma the
    zero crossing of each pair potential).  Close-packed spheres of
    diameter sigma have rho sigma^3 = sqrt(2); no fluid or solid of the
    model is denser.
    """
    pairs = gas.pairs_K_angstrom
    x = gas.fractions
    s3 = sum(x[a] * x[b] * (pairs.pots[a][b].sigma * ANGSTROM) ** 3
             for a in range(gas.n_species) for b in range(gas.n_species))
    return CLOSE_PACKED_DENSITY_RED / (N_A * s3)


# -- the ideal-gas heat capacity -------------------------------------------------------

def _heat_capacity_csv(ctx, value, base_dir):
    """Check a c_v table file in the study's folder and return its absolute path."""
    table, key = "gas", "ideal_heat_capacity"
    path = data_file(ctx, table, key, value.strip(), base_dir, "a CSV of temperature_K, cv_J_molK")
    lines = data_lines(ctx, table, key, value, path)
    header = tuple(f.strip() for f in lines[0].split(",")) if lines else ()
    if header != HEAT_CAPACITY_CSV_HEADER:
        ctx.fail(table, key, value, f"file '{path}' has header {header!r}",
                 "a first line 'temperature_K, cv_J_molK'", "then one 'T, c_v' pair per line")
    if len(lines) < 3:
        ctx.fail(table, key, value, f"file '{path}' has fewer than two data rows", "",
                 "give c_v at two or more temperatures")
    return str(path)


def _heat_capacity_polynomial(ctx, value):
    """Check ``{ polynomial = [...], unit = "...", valid_range_K = [lo, hi] }``."""
    table, key = "gas", "ideal_heat_capacity"
    coeffs = value.get("polynomial")
    if not isinstance(coeffs, list) or not coeffs or not all(
            isinstance(a, numbers.Real) and not isinstance(a, bool) and math.isfinite(a)
            for a in coeffs):
        ctx.fail(table, key, value, "'polynomial' must be a non-empty list of numbers",
                 "[a0, a1, ...] meaning sum a_k (T/K)^k", "")
    unit = value.get("unit")
    if not isinstance(unit, str):
        ctx.fail(table, key, value, "'unit' is missing or not a string", '"J/(mol K)" or "R"', "")
    parse_quantity("1 " + unit, "molar_heat_capacity", ctx.where(table, key) + " (unit)")
    out = {"polynomial": [float(a) for a in coeffs], "unit": unit}
    if "valid_range_K" in value:
        rng = value["valid_range_K"]
        ok = (isinstance(rng, list) and len(rng) == 2
              and all(isinstance(t, numbers.Real) and not isinstance(t, bool) for t in rng)
              and 0.0 <= rng[0] < rng[1])
        if not ok:
            ctx.fail(table, key, value, "'valid_range_K' must be [T_low, T_high] in K",
                     "0 <= T_low < T_high", "for example valid_range_K = [100.0, 1000.0]")
        out["valid_range_K"] = [float(t) for t in rng]
    return out


def _check_vibrational(ctx, value, c, kinetic_dof):
    """A rigid molecule's c_v: the vibrational part only, 0 <= c < 1.5 R."""
    if c < 0.0:
        ctx.fail("gas", "ideal_heat_capacity", value, "a heat capacity cannot be negative",
                 ">= 0", '"0 R" when the vibrations are frozen')
    if c >= 1.5 * R_GAS * (1.0 - 1e-9):
        ctx.fail("gas", "ideal_heat_capacity", value,
                 f"{c / R_GAS:.4g} R already counts translations (and rotations): with a "
                 f"rigid-molecule potential the model carries {kinetic_dof:.4g}/2 R of kinetic "
                 "heat capacity itself and ideal_heat_capacity holds only the vibrational part",
                 "0 <= c_v < 1.5 R", f'give the vibrational part, e.g. "0 R" (the total c_v '
                 f'is then {kinetic_dof / 2:.4g} R)')


def check_heat_capacity(ctx, value, base_dir, kinetic_dof=3.0):
    """Validate the ideal-gas c_v specification of ``[gas] ideal_heat_capacity``.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    value : str or dict
        As written: "1.5 R", "20.8 J/(mol K)", "cv.csv",
        ``{ table = "cv.csv" }`` or ``{ polynomial = [...], unit = ... }``.
    base_dir : Path
        The study file's folder.
    kinetic_dof : float, optional
        Kinetic degrees of freedom the potential's model carries (3 for
        atoms; above 3 for rigid molecules, whose c_v then holds only the
        vibrational part: from 0 up to below 1.5 R at its lowest
        temperature, the table's first row or the polynomial's lower limit,
        or 298.15 K without one).

    Returns
    -------
    str or dict
        The specification as written, with CSV paths made absolute and
        polynomial coefficients as floats (the input of
        ``analysis.heatcapacity.heat_capacity_from_spec``).
    """
    spec = _heat_capacity_spec(ctx, value, base_dir, kinetic_dof)
    constant = isinstance(spec, str) and not spec.strip().lower().endswith(".csv")
    if kinetic_dof > 3.0 and not constant:  # a table or polynomial: at its lowest temperature
        from analysis.heatcapacity import heat_capacity_from_spec
        model = heat_capacity_from_spec(spec, where=ctx.where("gas", "ideal_heat_capacity"))
        low = model.valid_range[0] if model.valid_range[0] > 0.0 else 298.15
        _check_vibrational(ctx, value, float(model.cv(low)), kinetic_dof)
    return spec


def _heat_capacity_spec(ctx, value, base_dir, kinetic_dof):
    """The checked specification (see :func:`check_heat_capacity`); constants checked here."""
    table, key = "gas", "ideal_heat_capacity"
    if isinstance(value, str):
        if value.strip().lower().endswith(".csv"):
            return _heat_capacity_csv(ctx, value, base_dir)
        c = parse_quantity(value, "molar_heat_capacity", ctx.where(table, key))
        if kinetic_dof > 3.0:
            _check_vibrational(ctx, value, c, kinetic_dof)
            return value
        if c < 1.5 * R_GAS * (1.0 - 1e-9):
            ctx.fail(table, key, value, f"{c:.4g} J/(mol K) is below the translational 1.5 R = "
                     f"{1.5 * R_GAS:.4g} J/(mol K)", ">= 1.5 R",
                     "an ideal gas has at least the translational heat capacity")
        return value
    if not isinstance(value, dict):
        ctx.fail(table, key, value, "not a heat-capacity specification", _HEAT_CAPACITY_FORMS, "")
    for k in value:
        if k not in HEAT_CAPACITY_DICT_KEYS:
            ctx.fail(table, key, value, f"unknown key '{k}' in the heat-capacity table",
                     _HEAT_CAPACITY_FORMS, suggest(k, HEAT_CAPACITY_DICT_KEYS))
    if "table" in value:
        if set(value) != {"table"} or not isinstance(value["table"], str):
            ctx.fail(table, key, value, "'table' takes a CSV file name and no other key",
                     _HEAT_CAPACITY_FORMS, "")
        return {"table": _heat_capacity_csv(ctx, value["table"], base_dir)}
    return _heat_capacity_polynomial(ctx, value)


def check_quantum(ctx, raw, gas):
    """Refuse statistics and nuclear_spin that do not fit the quantum level or each other.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    raw : dict
        ``[gas]`` as written.
    gas : dict
        ``[gas]`` checked, defaults filled in.
    """
    spin = gas["nuclear_spin"]
    stats = gas["statistics"]
    if gas["quantum"] != "exact":
        for key in ("statistics", "nuclear_spin"):
            if key in raw:
                ctx.fail("gas", key, raw[key], f"applies only with quantum = \"exact\" (quantum "
                         f"is \"{gas['quantum']}\")", "",
                         f'set quantum = "exact" or remove {key}')
        return
    if spin in HYDROGEN_SPIN_ISOMERS:
        if stats != "bose":
            ctx.fail("gas", "statistics", stats, f"nuclear_spin = \"{spin}\" is hydrogen, whose "
                     "molecules are bosons", "", 'write statistics = "bose"')
        return
    twice = int(round(2.0 * float(eval_fraction(spin))))
    if stats == "boltzmann" and "nuclear_spin" in raw and spin != "0":
        ctx.fail("gas", "nuclear_spin", spin, "Boltzmann statistics have no exchange, so the "
                 "nuclear spin plays no part", "", 'choose statistics = "bose" or "fermi", or '
                 "remove nuclear_spin")
    if stats == "bose" and twice % 2:
        ctx.fail("gas", "nuclear_spin", spin, "a half-integer spin belongs to fermions", "",
                 'write statistics = "fermi" (helium-3) or an integer spin')
    if stats == "fermi" and not twice % 2:
        ctx.fail("gas", "nuclear_spin", spin, "fermions (statistics = \"fermi\") have a "
                 "half-integer nuclear spin", "", 'helium-3: nuclear_spin = "1/2"')


def eval_fraction(text):
    """A spin written as "0", "1" or "3/2" as a float."""
    num, _, den = text.partition("/")
    return float(num) / (float(den) if den else 1.0)


# -- the species and their potentials --------------------------------------------------

@dataclasses.dataclass
class _Species:
    """What a pure gas or the species of a mixture give, before the pair matrix."""

    names: list
    fractions: list
    masses: list
    pots: list
    cutoff: float
    k_ij: object = None
    molecules: list = dataclasses.field(default_factory=list)
    c9: float = 0.0
    fitted_range: list = None


def _read_mixture(ctx, doc, gas, pot_raw, base_dir):
    species = gas["species"]
    if not isinstance(species, list) or not species or not all(isinstance(s, dict)
                                                             for s in species):
        ctx.fail("gas", "species", species, "must be an array of tables", "",
                 "write each species as a [[gas.species]] block")
    if "molar_mass" in gas:
        ctx.fail("gas", "molar_mass", doc["gas"]["molar_mass"],
                 "a mixture gives molar_mass per species", "", "move it into each [[gas.species]]")
    mix = check_table(ctx, "potential", pot_raw, SCHEMA["potential"], allowed=MIXING_KEYS)
    out = _Species([], [], [], [], cutoff=mix["cutoff"], fitted_range=mix.get("fitted_range"))
    for k, sp in enumerate(species):
        tname = f"gas.species #{k + 1}"
        vals = check_table(ctx, tname, sp, SCHEMA["species"])
        if vals["name"] in out.names:
            ctx.fail(tname, "name", vals["name"], "duplicate species name", "",
                     "give each species its own name")
        out.names.append(vals["name"])
        out.fractions.append(vals["mole_fraction"])
        out.masses.append(vals["molar_mass"])
        ptable = f"{tname} potential"
        pvals = check_table(ctx, ptable, vals["potential"], SCHEMA["potential"],
                            allowed=set(SCHEMA["potential"]) - {"cutoff", "k_ij",
                                                                "three_body_c9", "fitted_range"})
        _add_potential(ctx, out, ptable, pvals, base_dir, vals["name"], vals["molar_mass"])
    total = sum(out.fractions)
    if abs(total - 1.0) > 1e-6:
        ctx.fail("gas.species", "mole_fraction", out.fractions,
                 f"the mole fractions sum to {total:.8g}", "a sum of 1 within 1e-6", "rescale them")
    if any(x <= 0 for x in out.fractions):
        ctx.fail("gas.species", "mole_fraction", out.fractions, "every mole fraction must be > 0",
                 "0 < x <= 1", "remove species that are absent")
    forms = {p.name for p in out.pots}
    if len(forms) > 1:
        ctx.fail("gas.species", "potential", sorted(forms),
                 "all species of a mixture must use the same potential form", "", "")
    if "k_ij" in mix:
        out.k_ij = check_k_ij(ctx, mix["k_ij"], out.names)
    if "three_body_c9" in mix:
        ctx.fail("potential", "three_body_c9", pot_raw["three_body_c9"],
                 "the Axilrod-Teller term is not yet supported for mixtures", "",
                 "remove it, or study a pure gas")
    return out


def _read_pure(ctx, doc, gas, pot_raw, base_dir):
    if "molar_mass" not in gas:
        ctx.fail("gas", "molar_mass", MISSING, "missing required key", "",
                 'add molar_mass = "39.948 g/mol" (or [[gas.species]] for a mixture)')
    pvals = check_table(ctx, "potential", pot_raw, SCHEMA["potential"])
    if "k_ij" in pvals:
        ctx.fail("potential", "k_ij", pvals["k_ij"], "k_ij applies to mixtures only", "",
                 "remove it for a pure gas")
    if "potential" not in doc:
        ctx.fail("potential", None, MISSING, "missing table", "",
                 'add a [potential] table with form = "lennard-jones", epsilon and sigma')
    out = _Species(names=[gas.get("name") or "gas"], fractions=[1.0],
                   masses=[gas["molar_mass"]], pots=[], cutoff=pvals["cutoff"],
                   fitted_range=pvals.get("fitted_range"))
    _add_potential(ctx, out, "potential", pvals, base_dir, out.names[0], gas["molar_mass"])
    if "three_body_c9" in pvals:
        if out.molecules != [None]:
            ctx.fail("potential", "three_body_c9", pot_raw["three_body_c9"],
                     "the Axilrod-Teller term is for atoms, not rigid molecules", "", "remove it")
        out.c9 = read_c9(ctx, "potential", pot_raw["three_body_c9"])
    return out


def _add_potential(ctx, out, table, pvals, base_dir, name, molar_mass):
    """Append a species' potential (and its molecule, or None for a sphere) to ``out``."""
    if pvals.get("form") == MOLECULE_FORM:
        mol = read_molecule(ctx, table, pvals, name, molar_mass)
        out.molecules.append(mol)
        out.pots.append(mol.sites[0].potential)
    else:
        out.molecules.append(None)
        out.pots.append(build_potential(ctx, table, pvals, base_dir))


def read_gas(ctx, doc, base_dir):
    """The validated gas of a parsed study file.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    doc : dict
        The whole parsed study file.
    base_dir : Path
        The study file's folder (data files are relative to it).

    Returns
    -------
    Gas

    Raises
    ------
    StudyError
        For a missing or bad ``[gas]``, ``[potential]`` or species block.
    """
    if "gas" not in doc:
        ctx.fail("gas", None, MISSING, "missing table", "",
                 "add a [gas] table with molar_mass and ideal_heat_capacity")
    gas = check_table(ctx, "gas", doc["gas"], SCHEMA["gas"])
    pot_raw = doc.get("potential", {})
    if not isinstance(pot_raw, dict):
        ctx.fail("potential", None, pot_raw, "must be a table")
    check_quantum(ctx, doc["gas"], gas)
    read = _read_mixture if "species" in gas else _read_pure
    sp = read(ctx, doc, gas, pot_raw, base_dir)
    try:
        pairs = PairMatrix(sp.pots, sp.cutoff, k_ij=sp.k_ij)
    except StudyError as exc:
        raise StudyError(f"{ctx.where('potential')}: {exc}") from None
    p0 = pairs.pots[0][0]
    molecules = species_molecules(ctx, sp.names, sp.masses, sp.pots, sp.molecules)
    fractions = np.array(sp.fractions, dtype=float)
    kinetic = mean_kinetic_dof(fractions, molecules)
    dof = gas["dof_per_particle"]
    if molecules is not None:
        if gas["quantum"] != "classical":
            ctx.fail("gas", "quantum", gas["quantum"], "not yet supported for rigid molecules",
                     "", "remove it (the rigid N2, O2 and CO2 models are classical)")
        dof = check_dof(ctx, doc["gas"], molecules)
    return Gas(name=gas.get("name") or sp.names[0], species_names=sp.names,
               pairs_K_angstrom=pairs, fractions=fractions,
               molar_masses_kg_mol=np.array(sp.masses, dtype=float),
               quantum=gas["quantum"], statistics=gas["statistics"],
               nuclear_spin=gas["nuclear_spin"],
               ideal_heat_capacity=check_heat_capacity(ctx, gas["ideal_heat_capacity"], base_dir,
                                                       kinetic),
               dof_per_particle=dof,
               units=ReducedUnits(p0.epsilon, p0.sigma * ANGSTROM, sp.masses[0]),
               molecules=molecules, three_body_c9_K_A9=sp.c9,
               fitted_range_K=(None if sp.fitted_range is None
                               else check_fitted_range(ctx, "potential", sp.fitted_range)))

