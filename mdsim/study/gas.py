"""The gas of a study: its species, pair potentials and ideal-gas heat capacity.

:func:`read_gas` checks ``[gas]`` and ``[potential]`` (a pure gas) or the
``[[gas.species]]`` blocks with the mixing keys of ``[potential]`` (a
mixture) and returns a :class:`Gas`.  The ideal-gas heat capacity is
checked by :mod:`mdsim.study.heat_capacity_spec` and kept as written.
"""
import dataclasses
import math

import numpy as np

from mdsim.errors import StudyError
from mdsim.engine.potentials import PairMatrix
from mdsim.study.fitted_range import check_fitted_range
from mdsim.study.heat_capacity_spec import check_heat_capacity, heat_capacity_counts
from mdsim.study.molecule import (MOLECULE_FORM, check_dof, mean_kinetic_dof, read_c9,
                                  read_molecule, species_molecules)
from mdsim.study.potential import MIXING_KEYS, build_potential, check_k_ij
from mdsim.study.schema import ANGSTROM, SCHEMA
from mdsim.study.values import MISSING, check_table
from mdsim.units import N_A, ReducedUnits

__all__ = ["Gas", "read_gas", "check_quantum", "eval_fraction", "HYDROGEN_SPIN_ISOMERS",
           "close_packed_density_mol_m3", "CLOSE_PACKED_DENSITY_RED"]

#: Hydrogen's spin-isomer choices of [gas] nuclear_spin and their ortho fractions.
HYDROGEN_SPIN_ISOMERS = {"normal-hydrogen": 0.75, "para-hydrogen": 0.0}
#: Densest state accepted: close-packed spheres of diameter sigma, rho sigma^3 = sqrt(2).
CLOSE_PACKED_DENSITY_RED = math.sqrt(2.0)


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
    ideal_heat_capacity_counts : str or None
        Rigid molecules: "vibrations" (``ideal_heat_capacity`` is the
        vibrational part) or "all motions" (the whole c_v_ig); None for
        spheres (always the whole c_v_ig).
    ideal_heat_capacity_counts_given : bool
        Whether the study gave ``ideal_heat_capacity_counts`` (else the
        default of linear molecules, "vibrations").
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
    ideal_heat_capacity_counts: str = None
    ideal_heat_capacity_counts_given: bool = False

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

    def describe_heat_capacity_counts(self):
        """One line: what ideal_heat_capacity holds for rigid molecules ("" for spheres)."""
        counts = self.ideal_heat_capacity_counts
        if counts is None:
            return ""
        how = ("given" if self.ideal_heat_capacity_counts_given
               else "the default for linear molecules")
        kinetic = f"{self.kinetic_dof:.4g}/2 R"
        if counts == "all motions":
            return (f'ideal_heat_capacity_counts = "all motions" ({how}): the study gives the '
                    "whole c_v_ig, of which the model's translations and rotations carry "
                    f"{kinetic}")
        return (f'ideal_heat_capacity_counts = "vibrations" ({how}): the study gives the '
                f"vibrational part, to which the tool adds the model's {kinetic} of translations "
                "and rotations")

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


# -- the quantum treatment ------------------------------------------------------------

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
    counts, counts_given = heat_capacity_counts(ctx, doc["gas"], molecules)
    return Gas(name=gas.get("name") or sp.names[0], species_names=sp.names,
               pairs_K_angstrom=pairs, fractions=fractions,
               molar_masses_kg_mol=np.array(sp.masses, dtype=float),
               quantum=gas["quantum"], statistics=gas["statistics"],
               nuclear_spin=gas["nuclear_spin"],
               ideal_heat_capacity=check_heat_capacity(ctx, gas["ideal_heat_capacity"], base_dir,
                                                       kinetic, counts),
               ideal_heat_capacity_counts=counts, ideal_heat_capacity_counts_given=counts_given,
               dof_per_particle=dof,
               units=ReducedUnits(p0.epsilon, p0.sigma * ANGSTROM, sp.masses[0]),
               molecules=molecules, three_body_c9_K_A9=sp.c9,
               fitted_range_K=(None if sp.fitted_range is None
                               else check_fitted_range(ctx, "potential", sp.fitted_range)))

