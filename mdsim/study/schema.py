"""The study-file schema: every table, every key, its kind, range and default.

:data:`SCHEMA` maps a table name to ``{key: Key}``; :mod:`mdsim.study.values`
checks a value against its :class:`Key`.  The defaults of the run tables
(``[simulation]``, ``[cluster]``) live here and nowhere else: the reader
fills them in, so every later layer finds them in ``Study.simulation`` and
``Study.cluster``.  Quantities are bounded in SI (K, Pa, mol/m^3, m,
kg/mol, s); ``unit``/``unit_si`` only say how a range is shown in messages.

Examples
--------
>>> SCHEMA["simulation"]["seed"].default
1
>>> sorted(RENAMED_KEYS["cluster"])
['cores', 'interface', 'jobs', 'memory', 'walltime']
"""
import dataclasses

from mdsim.study.routes import DEFAULT_ROUTES, SIMULATION_ROUTES

__all__ = ["ANGSTROM", "NO_DEFAULT", "Key", "SCHEMA", "TOP_LEVEL", "PIPELINE_TABLES",
           "RENAMED_KEYS", "REMOVED_KEYS", "FORMS", "SITE_FORMS", "QUANTUM_LEVELS", "STATISTICS",
           "NUCLEAR_SPINS", "HEAT_CAPACITY_COUNTS", "SAMPLERS", "QUANTUM_POTENTIALS",
           "CLUSTER_SYSTEMS", "TEMPERATURE_RANGE_K", "PRESSURE_RANGE_PA", "DENSITY_RANGE_MOL_M3",
           "VOLUME_RATIO_MAX", "MAX_SWEEP_VALUES", "SEED_MAX"]

#: One angstrom in metres (potential lengths are kept in angstrom).
ANGSTROM = 1e-10


class _NoDefault:
    def __repr__(self):
        return "NO_DEFAULT"


#: The default of a key that has none: left out of the checked table when absent.
NO_DEFAULT = _NoDefault()


@dataclasses.dataclass(frozen=True)
class Key:
    """One key of a table in the study-file schema.

    Attributes
    ----------
    kind : str
        "string", "bool", "int", "number" (a plain float), "epsilon",
        "routes", "list" (of ``item``), "heat_capacity", "table", "tables",
        "k_ij", "vector" (three numbers), "c9" (an Axilrod-Teller coefficient,
        checked by :mod:`mdsim.study.molecule`), or a quantity kind of :data:`mdsim.units.KINDS` (the value
        is returned in SI).
    required : bool
    default : object
        Filled in when the key is absent (``None`` included: the key is
        then present with value None); :data:`NO_DEFAULT` leaves it out.
        A string default of a quantity is parsed like a written value.
    low, high : float or None
        Bounds in SI for quantities; ``low`` exclusive unless
        ``low_inclusive``, ``high`` inclusive.
    choices : tuple
        The allowed values (strings, ints, route names).
    example, help : str
        Shown in messages: ``key = example`` and what the key means.
    unit, unit_si : str, float
        The unit a range is shown in and its size in SI.
    item : str
        For kind "list": the kind of each item.
    pattern : str
        For kind "string": a regular expression the text must match.
    """

    kind: str
    required: bool = False
    default: object = NO_DEFAULT
    low: float = None
    high: float = None
    low_inclusive: bool = False
    choices: tuple = ()
    example: str = ""
    help: str = ""
    unit: str = ""
    unit_si: float = 1.0
    item: str = ""
    pattern: str = ""


FORMS = ("lennard-jones", "mie", "exp-6", "table", "rigid-molecule")
#: The site forms of a rigid molecule.
SITE_FORMS = ("lennard-jones", "mie")
#: [gas] quantum: the quantum treatment of B2 (analysis.virial_eos.QUANTUM_LEVELS).
QUANTUM_LEVELS = ("classical", "first-order", "second-order", "exact")
#: [gas] statistics (analysis.virial.quantum_exact.STATISTICS).
STATISTICS = ("boltzmann", "bose", "fermi")
#: [gas] nuclear_spin: I as text, or hydrogen's spin-isomer choice.
NUCLEAR_SPINS = ("0", "1/2", "1", "3/2", "2", "5/2", "3", "normal-hydrogen", "para-hydrogen")
#: [gas] ideal_heat_capacity_counts: what the ideal_heat_capacity of rigid molecules holds.
HEAT_CAPACITY_COUNTS = ("vibrations", "all motions")
SAMPLERS = ("auto", "mc", "md")
QUANTUM_POTENTIALS = ("none", "feynman-hibbs")
CLUSTER_SYSTEMS = ("slurm", "pbs")
TEMPERATURE_RANGE_K = (1e-3, 1e5)
PRESSURE_RANGE_PA = (0.0, 1e10)
DENSITY_RANGE_MOL_M3 = (0.0, 1e6)
VOLUME_RATIO_MAX = 1e6
MAX_SWEEP_VALUES = 1000
SEED_MAX = 2 ** 63 - 1

_LENGTH = {"unit": "angstrom", "unit_si": ANGSTROM}
_MASS = {"unit": "g/mol", "unit_si": 1e-3}
_T = {"unit": "K", "unit_si": 1.0}
_P = {"unit": "bar", "unit_si": 1e5}
_RHO = {"unit": "mol/m^3", "unit_si": 1.0}
_TIME = {"unit": "min", "unit_si": 60.0}
_NAME_PATTERN = r"^[A-Za-z0-9_.\-]+$"

_GAS_TABLES = {
    "study": {
        "name": Key("string", required=True, example='"argon-295K"',
                    help="a short name for the study, used in file names"),
        "description": Key("string", default="", example='"argon from 22 bar"'),
    },
    "gas": {
        "name": Key("string", default="", example='"argon"'),
        "molar_mass": Key("molar_mass", low=0.5e-3, high=1.0, example='"39.948 g/mol"', **_MASS),
        "ideal_heat_capacity": Key("heat_capacity", required=True, example='"1.5 R"',
                                   help="the ideal-gas c_v (translation plus internal modes)"),
        "ideal_heat_capacity_counts": Key(
            "string", choices=HEAT_CAPACITY_COUNTS, example='"all motions"',
            help="rigid molecules only: \"vibrations\" when ideal_heat_capacity is the "
            "vibrational part (the model adds its translations and rotations, f/2 R), \"all "
            "motions\" when it is the whole ideal-gas c_v (the tool takes f/2 R off it); "
            "required for non-linear molecules, \"vibrations\" by default for linear ones"),
        "quantum": Key("string", default="classical", choices=QUANTUM_LEVELS,
                       example='"exact"', help="the quantum treatment of B2 in the virial "
                       "routes: classical, first-order or second-order Wigner-Kirkwood, or "
                       "exact (phase shifts)"),
        "statistics": Key("string", default="boltzmann", choices=STATISTICS,
                          example='"bose"', help="exchange statistics for quantum = \"exact\": "
                          "boltzmann, bose (helium-4, hydrogen) or fermi (helium-3)"),
        "nuclear_spin": Key("string", default="0", choices=NUCLEAR_SPINS, example='"1/2"',
                            help="the nuclear spin I for quantum = \"exact\" with bose or "
                            "fermi statistics (helium-3: \"1/2\"), or hydrogen's choice: "
                            "\"normal-hydrogen\" (3:1 ortho:para) or \"para-hydrogen\""),
        "dof_per_particle": Key("int", default=3, choices=(3, 5, 6), example="3",
                                help="3 for atoms, 5 for rigid linear, 6 for rigid non-linear"),
        "species": Key("tables", example="[[gas.species]]"),
    },
    "species": {
        "name": Key("string", required=True, example='"nitrogen"'),
        "mole_fraction": Key("number", required=True, low=0.0, high=1.0 + 1e-12, example="0.78"),
        "molar_mass": Key("molar_mass", required=True, low=0.5e-3, high=1.0,
                          example='"28.0134 g/mol"', **_MASS),
        "potential": Key("table", required=True, example="{ form = \"lennard-jones\", ... }"),
    },
    "potential": {
        "form": Key("string", choices=FORMS, example='"lennard-jones"'),
        "epsilon": Key("epsilon", low=0.01, high=1e5, example='"119.8 K"', unit="K",
                       help="epsilon/k in K or an energy per mole"),
        "sigma": Key("length", low=0.5 * ANGSTROM, high=50 * ANGSTROM, example='"3.405 angstrom"',
                     **_LENGTH),
        "repulsive_exponent": Key("number", low=3.0, high=200.0, example="12.0"),
        "attractive_exponent": Key("number", low=3.0, high=100.0, example="6.0"),
        "r_min": Key("length", low=0.5 * ANGSTROM, high=50 * ANGSTROM, example='"3.86 angstrom"',
                     **_LENGTH),
        "steepness": Key("number", low=6.0, high=100.0, example="14.0"),
        "table_file": Key("string", example='"argon_potential.csv"'),
        "cutoff": Key("number", default=3.0, low=1.5, high=12.0, low_inclusive=True,
                      example="3.0", help="in units of sigma"),
        "k_ij": Key("k_ij", example="0.0"),
        "source": Key("string", default="", example='"second-virial fit, HCB 1954"',
                      help="where the parameters come from (shown in reports)"),
        "fitted_range": Key("list", item="temperature", low=TEMPERATURE_RANGE_K[0],
                            high=TEMPERATURE_RANGE_K[1], example='["80 K", "400 K"]',
                            help="the temperatures the parameters were fitted over; a warning "
                            "when a study or inversion temperature lies far outside", **_T),
        "sites": Key("tables", example="[[potential.sites]]",
                     help="the interaction sites of a rigid molecule"),
        "dipole": Key("dipole_moment", low=0.0, high=1e-28, low_inclusive=True,
                      example='"0 D"', help="point dipole at the molecule's centre, on its "
                      "axis", unit="D", unit_si=3.33564e-30),
        "quadrupole": Key("quadrupole_moment", low=-1e-38, high=1e-38, example='"1.44 D angstrom"',
                          help="point (Buckingham) quadrupole at the molecule's centre, on its "
                          "axis", unit="D angstrom", unit_si=3.33564e-40),
        "three_body_c9": Key("c9", example='"5.32e5 K angstrom^9"',
                             help="Axilrod-Teller coefficient C9 (C9/k in K angstrom^9, or "
                             "hartree bohr^9) for atoms"),
    },
    "site": {
        "form": Key("string", required=True, choices=SITE_FORMS, example='"lennard-jones"'),
        "epsilon": Key("epsilon", required=True, low=0.01, high=1e5, example='"34.897 K"',
                       unit="K"),
        "sigma": Key("length", required=True, low=0.5 * ANGSTROM, high=50 * ANGSTROM,
                     example='"3.3211 angstrom"', **_LENGTH),
        "repulsive_exponent": Key("number", low=3.0, high=200.0, example="12.0"),
        "attractive_exponent": Key("number", low=3.0, high=100.0, example="6.0"),
        "position_angstrom": Key("vector", required=True, example="[0.0, 0.0, -0.5232]",
                                 help="the site's position in the molecule, angstrom"),
        "mass": Key("molar_mass", required=True, low=0.0, high=1.0, low_inclusive=True,
                    example='"14.0067 g/mol"', **_MASS),
        "charge_e": Key("number", default=0.0, low=-10.0, high=10.0, low_inclusive=True,
                        example="0.0", help="point charge in elementary charges"),
    },
}

_STATE_TABLES = {
    "initial": {
        "temperature": Key("temperature", low=TEMPERATURE_RANGE_K[0], high=TEMPERATURE_RANGE_K[1],
                           example='"295.15 K"', help="the temperature before the expansion", **_T),
        "pressure": Key("pressure", low=PRESSURE_RANGE_PA[0], high=PRESSURE_RANGE_PA[1],
                        example='"22 bar"', help="the pressure before the expansion", **_P),
        "density": Key("molar_density", low=DENSITY_RANGE_MOL_M3[0], high=DENSITY_RANGE_MOL_M3[1],
                       example='"500 mol/m^3"', help="the molar density before the expansion",
                       **_RHO),
    },
    "expansion": {
        "volume_ratio": Key("number", low=1.0, high=VOLUME_RATIO_MAX, example="2.0",
                            help="V_final / V_initial, above 1 (2.0: into an equal evacuated "
                            "volume)"),
    },
    "sweep": {
        "temperature": Key("list", item="temperature", low=TEMPERATURE_RANGE_K[0],
                           high=TEMPERATURE_RANGE_K[1], example='["250 K", "295.15 K"]', **_T),
        "pressure": Key("list", item="pressure", low=PRESSURE_RANGE_PA[0],
                        high=PRESSURE_RANGE_PA[1], example='["10 bar", "22 bar"]', **_P),
        "density": Key("list", item="molar_density", low=DENSITY_RANGE_MOL_M3[0],
                       high=DENSITY_RANGE_MOL_M3[1], example='["100 mol/m^3", "500 mol/m^3"]',
                       **_RHO),
        "volume_ratio": Key("list", item="number", low=1.0, high=VOLUME_RATIO_MAX,
                            example="[1.5, 2.0]"),
    },
}

_RUN_TABLES = {
    "simulation": {
        "routes": Key("routes", default=DEFAULT_ROUTES, choices=SIMULATION_ROUTES,
                      example='["energy"]', help="[] runs the virial routes only"),
        # None: the pipeline chooses the number from target_stderr.
        "particles": Key("int", default=None, low=32, high=100000, low_inclusive=True,
                         example="500",
                         help="leave it out to let the tool choose from target_stderr"),
        "target_stderr": Key("temperature", default="0.05 K", low=0.0, high=100.0,
                             example='"0.05 K"',
                             help="the standard error of Delta T to reach (a temperature "
                             "difference in K)", **_T),
        "max_cpu_time": Key("time", default="10 min", low=0.0, high=30 * 86400.0,
                            example='"10 min"', help="CPU budget per task", **_TIME),
        "seed": Key("int", default=1, low=0, high=SEED_MAX, low_inclusive=True, example="1"),
        "sampler": Key("string", default="auto", choices=SAMPLERS, example='"auto"',
                       help="the energy route's NVT sampler: \"auto\" (the cheaper per state, "
                       "from pilots of both), Monte Carlo or thermostatted MD"),
        "quantum_potential": Key("string", default="none", choices=QUANTUM_POTENTIALS,
                                 example='"feynman-hibbs"',
                                 help="the quadratic Feynman-Hibbs effective potential for light "
                                 "gases (energy route, Monte Carlo, pure gas)"),
        "coexistence_table": Key("string", example='"lj_table.h5"',
                                 help="a corresponding-states table file (mdsim table build) "
                                 "with a coexistence grid: a two-phase final state is "
                                 "solved on its Gibbs points, no Gibbs run (relative to the "
                                 "study file)"),
    },
    "cluster": {
        "system": Key("string", choices=CLUSTER_SYSTEMS, example='"slurm"',
                      help="the batch scheduler of the cluster"),
        "partition": Key("string", pattern=_NAME_PATTERN, example='"compute"',
                         help="the scheduler's partition or queue"),
        "cpus_per_job": Key("int", default=1, low=1, high=1024, low_inclusive=True, example="4",
                            help="CPU cores of each batch job"),
        "memory_per_job": Key("string", default="2GB", pattern=r"^\d+(\.\d+)?\s*([KMGT]i?B)$",
                              example='"4GB"',
                              help="memory of each batch job: a number and KB, MB, GB, TB (or "
                              "KiB, MiB, ...)"),
        "time_limit": Key("string", default="01:00:00",
                          pattern=r"^(\d+-)?\d{1,3}:[0-5]\d:[0-5]\d$", example='"02:00:00"',
                          help="the time limit of each batch job, HH:MM:SS or D-HH:MM:SS"),
        "network_interface": Key("string", pattern=_NAME_PATTERN, example='"ib0"',
                                 help="network interface the workers talk over"),
        "batch_jobs": Key("int", default=1, low=1, high=10000, low_inclusive=True, example="4",
                          help="number of batch jobs (Dask workers) to start"),
        "address": Key("string", pattern=r"^(tcp|tls|ucx|inproc|ws|wss)://\S+$",
                       example='"tcp://10.0.0.1:8786"',
                       help="an existing Dask scheduler to use instead of starting one"),
    },
}

# [table]: the grid and sampling of a corresponding-states table (mdsim.cstable.table),
# in reduced units.
_CSTABLE = {
    "temperatures": Key("list", item="number", low=0.3, high=50.0,
                        example="[1.5, 2.0, 3.0]", help="reduced temperatures kT/epsilon"),
    "densities": Key("list", item="number", low=0.0, high=1.2,
                     example="[0.02, 0.05, 0.1, 0.2]",
                     help="reduced densities rho sigma^3 (0 is added: the exact virial limit)"),
    "particles": Key("int", default=256, low=32, high=100000, low_inclusive=True, example="256",
                     help="particles per grid point (raised where the cut-off needs a bigger box)"),
    "equilibration": Key("int", default=1000, low=0, high=10 ** 8, low_inclusive=True,
                         example="1000", help="Monte Carlo sweeps discarded at each point"),
    "samples": Key("int", default=4000, low=20, high=10 ** 8, low_inclusive=True,
                   example="4000", help="production samples (one per sweep) at each point"),
    "seed": Key("int", default=1, low=0, high=SEED_MAX, low_inclusive=True, example="1"),
    "virial_below": Key("number", default=0.02, low=0.0, high=1.0, low_inclusive=True,
                        example="0.02", help="reduced density below which the table is the "
                        "exact B2 + B3 series"),
    "simulation_above": Key("number", default=0.05, low=0.0, high=1.2, example="0.05",
                            help="reduced density above which the table is the simulation "
                            "(smooth blend in between)"),
    "coexistence_temperatures": Key("list", item="number", low=0.3, high=5.0,
                                    example="[0.7, 0.75, 0.8, 0.85, 0.9]",
                                    help="reduced temperatures of an optional grid of "
                                    "vapour-liquid coexistence points (Gibbs ensemble)"),
    "coexistence_particles": Key("int", default=300, low=40, high=100000, low_inclusive=True,
                                 example="300", help="particles of each Gibbs-ensemble run "
                                 "(both boxes)"),
    "coexistence_cycles": Key("int", default=6000, low=200, high=10 ** 8, low_inclusive=True,
                              example="6000", help="production cycles of each Gibbs-ensemble "
                              "run (equilibration: half as many)"),
}

#: table name -> {key: Key}.  "species" is one [[gas.species]] block, "site" one
#: [[potential.sites]] block of a rigid molecule.
SCHEMA = {**_GAS_TABLES, **_STATE_TABLES, **_RUN_TABLES, "table": _CSTABLE}

#: The tables of the pipeline, checked into ``Study.initial`` ... ``Study.cluster``.
PIPELINE_TABLES = ("initial", "expansion", "simulation", "sweep", "cluster")
#: Every table a study file may have.
TOP_LEVEL = ("study", "gas", "potential", "table") + PIPELINE_TABLES

#: Keys that earlier versions of the tool read and that are gone: (table, key) -> what to write.
REMOVED_KEYS = {
    ("gas", "quantum_correction"): 'it became [gas] quantum = "classical" | "first-order" | '
                                   '"second-order" | "exact" (true was "first-order")',
}

#: Keys that earlier versions of the tool read, by table, and their names now.
RENAMED_KEYS = {
    "cluster": {"cores": "cpus_per_job", "memory": "memory_per_job", "walltime": "time_limit",
                "interface": "network_interface", "jobs": "batch_jobs"},
}
