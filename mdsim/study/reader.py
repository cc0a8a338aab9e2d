"""Study files: a TOML description of a gas, its pair potential and the runs.

A study file is read with ``tomllib`` (data only; nothing in it is
evaluated) and checked against the schema below: every key has a type, a
dimension where it is a physical quantity, and a range.  An unknown key is an
error that suggests the nearest valid one.  Every error names the file, the
table, the key, the value, what is allowed and what to do.

Tables read here:

``[study]``
    ``name`` (required; letters, digits, ``-``, ``_``, ``.``), ``description``.
``[gas]``
    ``name``; ``molar_mass`` ("39.948 g/mol"); ``ideal_heat_capacity`` (the
    ideal-gas c_v: "1.5 R", "20.8 J/(mol K)", a table
    ``{ polynomial = [a0, a1, ...], unit = "J/(mol K)" }`` meaning
    sum a_k (T/K)^k, or the name of a CSV file with header
    ``temperature_K, cv_J_molK``; kept raw for the analysis package);
    ``quantum`` (classical, first-order, second-order, exact; default classical),
    ``statistics`` and ``nuclear_spin`` (for exact); ``dof_per_particle``
    (kinetic degrees of freedom per molecule for the microcanonical route:
    3 atoms, 5 rigid linear molecules, 6 rigid non-linear; default 3);
    ``[[gas.species]]`` for mixtures, each with ``name``, ``mole_fraction``,
    ``molar_mass`` and its own ``potential`` sub-table.
``[potential]``
    ``form`` ("lennard-jones", "mie", "exp-6", "table"); ``epsilon`` (epsilon/k
    as a temperature "119.8 K", or an energy per mole "996 J/mol");
    ``sigma`` ("3.405 angstrom"); Mie: ``repulsive_exponent``,
    ``attractive_exponent``; exp-6: ``r_min`` (or ``sigma``, from which r_min
    is solved) and ``steepness``; table: ``table_file`` (relative to the
    study file; two columns r, u with a header naming the units, such as
    ``r_angstrom, u_K`` or ``r_angstrom, u_J_mol``); ``cutoff`` in units of
    sigma (default 3.0); ``k_ij`` for mixtures (a number for two species or
    a symmetric matrix); ``source`` (text: where the parameters come
    from, shown in reports).  For a mixture, ``[potential]`` holds only
    ``cutoff``, ``k_ij`` and ``source``.
``[initial]``
    ``temperature`` ("295.15 K") and exactly one of ``pressure`` ("22 bar")
    or ``density`` (a MOLAR density, "500 mol/m^3"; a mass density such as
    "1.8 kg/m^3" is refused with the molar value it corresponds to).  A key
    swept in ``[sweep]`` is left out here.
``[expansion]``
    ``volume_ratio`` (V_f / V_i, a plain number > 1).
``[simulation]``
    ``routes`` (any of "energy", "microcanonical", "direct"; default
    ["energy"]; [] for the virial routes only), ``particles`` (optional:
    chosen by the tool from the target when absent), ``target_stderr``
    ("0.05 K"), ``max_cpu_time`` ("10 min"), ``seed`` (int, default 1),
    ``sampler`` ("auto", "mc" or "md": the energy route's NVT sampler),
    ``quantum_potential`` ("none" or "feynman-hibbs": the quantum-corrected
    simulation, :mod:`mdsim.study.quantum_potential`).
``[sweep]``
    Lists over ``temperature``, ``pressure`` or ``density`` (not both), and
    ``volume_ratio``; every combination is a state point
    (:mod:`mdsim.study.statepoints`).
``[cluster]``
    For the dask and array executors: ``system`` ("slurm", "pbs"),
    ``partition``, ``cpus_per_job``, ``memory_per_job`` ("4GB"), ``time_limit``
    ("HH:MM:SS" or "D-HH:MM:SS"), ``network_interface``, ``batch_jobs``, ``address``
    (an existing Dask scheduler, "tcp://host:8786").

The run tables are validated (:mod:`mdsim.study.runtables`) and kept as
dictionaries of converted values in SI (K, Pa, mol/m^3, s), with every default filled in:
``Study.initial``, ``.expansion``, ``.simulation``, ``.sweep`` (lists),
``.cluster``.  Absent ``[initial]``/``[expansion]`` tables are allowed
(``mdsim sample`` needs neither); :meth:`Study.state_points` then says what
to add.

File paths (``table_file``, heat-capacity CSV files) are relative to the
study file's folder and must stay inside it (:mod:`mdsim.study.datafiles`);
their content is only ever read as numbers, never evaluated.

Potentials are built with energies as u/k in kelvin and lengths in angstrom
(``Gas.pairs_K_angstrom``); :meth:`Study.system` rescales them to the reduced
units of species 0.

The reading is split along its ideas: :mod:`mdsim.study.schema` (every key,
its kind, range and default), :mod:`mdsim.study.values` (checking a value,
the error messages), :mod:`mdsim.study.datafiles` (data files kept in the
study's folder), :mod:`mdsim.study.potential` (the pair potentials),
:mod:`mdsim.study.gas` (the gas and its potentials),
:mod:`mdsim.study.heat_capacity_spec` (its ideal-gas heat capacity),
:mod:`mdsim.study.runtables` (the run tables checked together) and this
module (:class:`Study`, :func:`read_study`).
"""
import dataclasses
import os
import re
import tomllib
from pathlib import Path

import numpy as np

from mdsim.checks import count
from mdsim.errors import SettingError, StudyError
from mdsim.study.gas import Gas, close_packed_density_mol_m3, read_gas
from mdsim.study.quantum_potential import pairs_at_temperature
from mdsim.study.molecule import check_simulation_supported
from mdsim.study.runtables import read_run_tables
from mdsim.study.statepoints import state_points
from mdsim.study.schema import ANGSTROM, SCHEMA, TOP_LEVEL, Key
from mdsim.study.values import MISSING, Context, check_table, suggest

__all__ = ["read_study", "Study", "RANDOM_START_MAX_DENSITY_RED",
           # defined in the modules above; importable from here for the callers of the
           # single reader module
           "Gas", "close_packed_density_mol_m3", "SCHEMA", "Key", "Context", "check_table"]

# Below this reduced density the default start is random placement, above it
# a lattice (random insertion gets slow and a lattice melts quickly when dense).
RANDOM_START_MAX_DENSITY_RED = 0.1

_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.\-]*$")


# -- the study ---------------------------------------------------------------------

@dataclasses.dataclass
class Study:
    """A validated study file.

    Attributes
    ----------
    path : Path
        The study file (absolute).
    name, description : str
    gas : Gas
    initial : dict
        ``temperature`` (K) and ``pressure`` (Pa) or ``density``
        (mol/m^3), those given and not swept; empty without [initial].
    expansion : dict
        ``volume_ratio`` (V_f / V_i) unless swept; empty without
        [expansion].
    simulation : dict
        Always every key, validated once, defaults from
        :data:`mdsim.study.schema.SCHEMA` filled in; later layers use
        these values as they are:

        - ``routes`` : list of str -- simulation routes of
          :data:`mdsim.study.routes.SIMULATION_ROUTES`, distinct, in the
          order written (default ``["energy"]``; ``[]``: the virial
          routes only);
        - ``particles`` : int or None -- particles per simulation, 32 to
          100000; None when the file leaves it to the tool;
        - ``target_stderr`` : float -- standard error of Delta T to reach,
          K, > 0 (default 0.05);
        - ``max_cpu_time`` : float -- CPU budget per task, s, > 0
          (default 600);
        - ``seed`` : int -- >= 0 (default 1);
        - ``sampler`` : str -- "auto", "mc" or "md" (default "auto": the cheaper per state);
        - ``quantum_potential`` : str -- "none" or "feynman-hibbs" (default
          "none").
    sweep : dict
        Lists of SI values for the swept keys (``temperature``,
        ``pressure`` or ``density``, ``volume_ratio``).
    cluster : dict
        Scheduler settings; ``cpus_per_job`` (int), ``memory_per_job``
        ("2GB"), ``time_limit`` ("HH:MM:SS") and ``batch_jobs`` (int)
        always present, ``system``, ``partition``, ``network_interface``
        and ``address`` when given.
    raw : dict
        The whole parsed file.
    """

    path: Path
    name: str
    description: str
    gas: Gas
    initial: dict
    expansion: dict
    simulation: dict
    sweep: dict
    cluster: dict
    raw: dict
    #: Feynman-Hibbs pair matrices already built, by reduced temperature
    effective_pairs: dict = dataclasses.field(default_factory=dict, init=False, repr=False,
                                              compare=False)

    @property
    def units(self):
        """Reduced units of the reference species (species 0)."""
        return self.gas.units

    def state_points(self):
        """The state points of the study, in the order of :mod:`mdsim.study.statepoints`.

        Returns
        -------
        list of StatePoint

        Raises
        ------
        StudyError
            When the file has no initial temperature, pressure or density,
            or no volume ratio.
        """
        return state_points(self)

    def counts(self, n_particles):
        """Particles per species for a total, by largest remainders of N x_a."""
        n = int(n_particles)
        x = self.gas.fractions
        exact = n * x
        counts = np.floor(exact).astype(np.int64)
        order = np.argsort(-(exact - counts), kind="stable")
        for k in order[: n - int(counts.sum())]:
            counts[k] += 1
        return counts

    def reduced_pairs(self):
        """The pair matrix in reduced units of species 0."""
        u = self.gas.units
        return self.gas.pairs_K_angstrom.scaled(u.epsilon_K, u.sigma_m / ANGSTROM)

    def system(self, n_particles, density_mol_m3, start="auto", seed=0, temperature_K=None):
        """A System in reduced units at a molar density, with a start configuration.

        Parameters
        ----------
        n_particles : int
            Total number of particles (>= 2; typically 200 to 4000).
        density_mol_m3 : float
            Molar density, mol/m^3.
        start : {"auto", "lattice", "random"}
            "auto": random placement below reduced density
            ``RANDOM_START_MAX_DENSITY_RED``, a lattice above it.
        seed : int
            Seed for the start configuration.
        temperature_K : float, optional
            The temperature the system will be sampled at; needed with
            ``[simulation] quantum_potential = "feynman-hibbs"``, whose pair
            potential depends on it (:mod:`mdsim.study.quantum_potential`).

        Returns
        -------
        System
        """
        from mdsim.engine.system import System
        check_simulation_supported(self.gas, f"study file '{self.path}'")
        count("particles", n_particles, minimum=2, hint="typically 200 to 4000")
        if start not in ("auto", "lattice", "random"):
            raise SettingError("start", start, "allowed 'auto', 'lattice', 'random'")
        rho_red = self.units.density_to_reduced(float(density_mol_m3))
        counts = self.counts(n_particles)
        if np.any(counts == 0):
            raise SettingError("particles", n_particles, f"too few for the mixture (counts "
                               f"{counts.tolist()}); use more particles")
        masses = self.gas.molar_masses_kg_mol / self.gas.molar_masses_kg_mol[0]
        pairs = pairs_at_temperature(self, self.reduced_pairs(), temperature_K,
                                     self.effective_pairs)
        system = System.cubic(pairs, counts, rho_red, masses_a=masses,
                              dof_per_particle=self.gas.dof_per_particle)
        if start == "auto":
            start = "random" if rho_red < RANDOM_START_MAX_DENSITY_RED else "lattice"
        if start == "random":
            system.place_at_random(seed)
        else:
            system.place_on_lattice(seed)
        return system


# -- reading a file ------------------------------------------------------------------

def _load_toml(path):
    """The parsed TOML document of a study file, or a StudyError naming the file."""
    if not path.exists():
        raise StudyError(f"study file '{path}' does not exist; check the path "
                         "(example studies are in configs/)")
    if path.is_dir():
        raise StudyError(f"study file '{path}' is a directory; give the path of a .toml file")
    if not path.is_file():  # a device or pipe (/dev/zero) would be read for ever
        raise StudyError(f"study file '{path}' is not a regular file; give the path of a .toml "
                         "file")
    try:
        text = path.read_bytes().decode("utf-8")
    except UnicodeDecodeError as exc:
        raise StudyError(f"study file '{path}' is not UTF-8 text (byte {exc.start}); "
                         "save it as UTF-8") from None
    except OSError as exc:
        raise StudyError(f"study file '{path}' cannot be read ({exc.strerror})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(f"study file '{path}' is not valid TOML ({exc}); "
                         "check quotes, brackets and '=' signs") from None


def read_study(path):
    """Read and validate a study file.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    Study
        With every state point checked (when the file defines any).

    Raises
    ------
    StudyError
        For a missing, unreadable or invalid file (the message names the
        file, table, key, value, what is allowed and a hint).

    Examples
    --------
    A study of argon from 22 bar, written into a temporary folder:

    >>> import pathlib, tempfile
    >>> text = '''
    ... [study]
    ... name = "argon"
    ... [gas]
    ... molar_mass = "39.948 g/mol"
    ... ideal_heat_capacity = "1.5 R"
    ... [potential]
    ... form = "lennard-jones"
    ... epsilon = "119.8 K"
    ... sigma = "3.405 angstrom"
    ... [initial]
    ... temperature = "295.15 K"
    ... pressure = "22 bar"
    ... [expansion]
    ... volume_ratio = 2.0
    ... '''
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = pathlib.Path(folder) / "argon.toml"
    ...     _ = path.write_text(text, encoding="utf-8")
    ...     study = read_study(path)
    >>> study.initial
    {'temperature': 295.15, 'pressure': 2200000.0}
    >>> study.simulation
    {'routes': ['energy'], 'particles': None, 'target_stderr': 0.05, 'max_cpu_time': 600.0,
     'seed': 1, 'sampler': 'auto', 'quantum_potential': 'none'}
    >>> study.state_points()[0].label()
    'T = 295.15 K, p = 22 bar, r = 2'
    >>> study.units.epsilon_K, study.gas.species_names
    (119.8, ['gas'])
    """
    path = Path(os.fspath(path)).expanduser().absolute()
    doc = _load_toml(path)
    ctx = Context(path)
    for key, value in doc.items():
        if key not in TOP_LEVEL:
            ctx.fail(key, None, value, "unknown table", ", ".join(TOP_LEVEL),
                     suggest(key, TOP_LEVEL))
        if not isinstance(value, dict):
            ctx.fail(key, None, value, "must be a table", f"[{key}] followed by key = value lines")
    if "study" not in doc:
        ctx.fail("study", None, MISSING, "missing table", "", 'add [study] with name = "..."')
    st = check_table(ctx, "study", doc["study"], SCHEMA["study"])
    if not _NAME_RE.match(st["name"]):
        ctx.fail("study", "name", st["name"], "not usable in file names",
                 "letters, digits, '-', '_' and '.', starting with a letter or digit", "")
    gas = read_gas(ctx, doc, path.parent)
    tables = read_run_tables(ctx, doc, gas)
    study = Study(path=path, name=st["name"], description=st["description"], gas=gas,
                  raw=doc, **tables)
    if tables["initial"] or tables["sweep"] or tables["expansion"]:
        study.state_points()  # every state point checked before any work starts
    return study
