"""Rigid molecules from a study file: ``[potential] form = "rigid-molecule"`` and its sites.

A molecule's ``[potential]`` (or a species' ``potential``) table names its
published parameter set in ``source``, gives optional point ``dipole`` and
``quadrupole`` moments (at the centre, on the axis) and one
``[[potential.sites]]`` block per interaction site: ``form``
("lennard-jones" or "mie"), ``epsilon``, ``sigma`` (and the Mie
exponents), ``position_angstrom``, ``mass``, ``charge_e``.  The result is
an :class:`analysis.molecules.RigidMolecule` in K and angstrom.  The
Axilrod-Teller coefficient of atoms (``three_body_c9``) is read here too.
"""
import math
import numbers

from analysis.molecules import RigidMolecule, Site
from mdsim.engine.potentials import LennardJones, Mie
from mdsim.errors import StudyError
from mdsim.study.schema import ANGSTROM, SCHEMA
from mdsim.study.values import MISSING, check_table
from mdsim.units import K_B, parse_quantity

__all__ = ["MOLECULE_FORM", "read_molecule", "read_c9", "species_molecules", "check_dof",
           "mean_kinetic_dof", "check_simulation_supported", "MOLECULE_ROUTES", "E_C_PER_E",
           "MOLAR_MASS_TOLERANCE"]

#: The [potential] form of a rigid molecule.
MOLECULE_FORM = "rigid-molecule"
# The keys a rigid molecule's potential table may hold.
_MOLECULE_KEYS = {"form", "sites", "dipole", "quadrupole", "source", "cutoff", "k_ij"}
#: The elementary charge in C (moments are read in C m and C m^2).
E_C_PER_E = 1.602176634e-19
#: Largest relative difference between [gas] molar_mass and the sum of the site masses.
MOLAR_MASS_TOLERANCE = 1e-3


def _position(ctx, table, value):
    ok = (isinstance(value, list) and len(value) == 3
          and all(isinstance(x, numbers.Real) and not isinstance(x, bool) and math.isfinite(x)
                  for x in value))
    if not ok:
        ctx.fail(table, "position_angstrom", value, "must be three numbers (x, y, z) in angstrom",
                 "", "for example position_angstrom = [0.0, 0.0, -0.5232]")
    return tuple(float(x) for x in value)


def _site(ctx, table, raw):
    vals = check_table(ctx, table, raw, SCHEMA["site"])
    eps, sigma = vals["epsilon"], vals["sigma"] / ANGSTROM
    if vals["form"] == "mie":
        for key in ("repulsive_exponent", "attractive_exponent"):
            if key not in vals:
                ctx.fail(table, key, MISSING, "missing; a mie site needs both exponents", "",
                         f"add {key} = {SCHEMA['site'][key].example}")
        pot = Mie(eps, sigma, vals["repulsive_exponent"], vals["attractive_exponent"])
    else:
        for key in ("repulsive_exponent", "attractive_exponent"):
            if key in vals:
                ctx.fail(table, key, vals[key], "does not apply to a lennard-jones site", "",
                         'use form = "mie" for other exponents')
        pot = LennardJones(eps, sigma)
    return Site(pot, _position(ctx, table, vals["position_angstrom"]), vals["mass"],
                vals["charge_e"])


def read_molecule(ctx, table, values, name, molar_mass_kg_mol):
    """The rigid molecule of a checked potential table of form "rigid-molecule".

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    table : str
        The potential table's name ("potential", "gas.species #1 potential").
    values : dict
        The table checked against ``SCHEMA["potential"]`` (SI values).
    name : str
        The gas or species name.
    molar_mass_kg_mol : float
        The molar mass the study gives; the site masses must sum to it.

    Returns
    -------
    analysis.molecules.RigidMolecule

    Raises
    ------
    StudyError
        For missing or bad sites, a molar mass that differs from the sum of
        the site masses, multipoles on a molecule that is not linear, or a
        net charge.
    """
    extra = sorted(set(values) - _MOLECULE_KEYS)
    if extra:
        ctx.fail(table, extra[0], values[extra[0]], f"does not apply to the {MOLECULE_FORM} form",
                 "", "a rigid molecule takes sites, dipole, quadrupole and source; site "
                 "parameters go in each [[potential.sites]] block")
    sites_raw = values.get("sites")
    if not isinstance(sites_raw, list) or not sites_raw or not all(
            isinstance(s, dict) for s in sites_raw):
        ctx.fail(table, "sites", sites_raw if sites_raw is not None else MISSING,
                 "a rigid molecule needs its sites", "",
                 "add one [[potential.sites]] block per site (form, epsilon, sigma, "
                 "position_angstrom, mass)")
    sites = [_site(ctx, f"{table} site #{k + 1}", s) for k, s in enumerate(sites_raw)]
    total = sum(s.mass_kg_mol for s in sites)
    if abs(total - molar_mass_kg_mol) > MOLAR_MASS_TOLERANCE * molar_mass_kg_mol:
        ctx.fail(table, "sites", f"masses summing to {total * 1e3:.6g} g/mol",
                 f"the site masses do not add up to the molar mass "
                 f"{molar_mass_kg_mol * 1e3:.6g} g/mol", "", "make the site masses sum to it")
    try:
        return RigidMolecule(name, sites,
                             dipole_e_angstrom=values.get("dipole", 0.0) / (E_C_PER_E * ANGSTROM),
                             quadrupole_e_angstrom2=values.get("quadrupole", 0.0)
                             / (E_C_PER_E * ANGSTROM ** 2),
                             source=values.get("source", ""))
    except StudyError as exc:  # the model's own checks: say where
        ctx.fail(table, "sites", f"{len(sites)} sites", str(exc), "", "")


def read_c9(ctx, table, value):
    """An Axilrod-Teller coefficient as C9/k in K angstrom^9.

    ``value`` is written as an energy times length^9 ("518 hartree bohr^9")
    or as C9/k ("5.32e5 K angstrom^9").
    """
    where = ctx.where(table, "three_body_c9")
    try:
        c9 = parse_quantity(value, "c9_over_k", where)
    except StudyError:
        c9 = parse_quantity(value, "c9", where) / K_B * 1e90
    if c9 < 0.0:
        ctx.fail(table, "three_body_c9", value, "must be >= 0", "C9 >= 0",
                 "argon: about 518 hartree bohr^9")
    return c9


def species_molecules(ctx, names, masses, pots, molecules):
    """Every species as a rigid molecule (atoms as one site) when any is one; else None.

    ``molecules`` holds each species' molecule or None (a spherical potential).
    """
    if all(m is None for m in molecules):
        return None
    out = []
    for name, mass, pot, mol in zip(names, masses, pots, molecules):
        if mol is None:
            if not isinstance(pot, Mie):
                ctx.fail("gas.species", "potential", pot.name, f"species '{name}' mixes with rigid "
                         "molecules, which needs lennard-jones or mie atoms", "", "")
            mol = RigidMolecule(name, [Site(pot, (0.0, 0.0, 0.0), mass)])
        out.append(mol)
    return out


def check_dof(ctx, gas_raw, molecules):
    """dof_per_particle of a gas of rigid molecules: the model's, and a given one must agree."""
    kinds = sorted({m.kinetic_dof for m in molecules})
    if "dof_per_particle" in gas_raw and [gas_raw["dof_per_particle"]] != kinds:
        ctx.fail("gas", "dof_per_particle", gas_raw["dof_per_particle"],
                 f"the rigid-molecule model has {' and '.join(map(str, kinds))} kinetic degrees of "
                 "freedom per molecule (3 translations plus its rotations)", "",
                 "remove dof_per_particle: the model sets it")
    return max(kinds)


def mean_kinetic_dof(fractions, molecules):
    """Kinetic degrees of freedom per molecule, the mole-fraction mean (3 without molecules)."""
    if molecules is None:
        return 3.0
    return float(sum(x * m.kinetic_dof for x, m in zip(fractions, molecules)))


#: The simulation routes that take rigid molecules (docs/physics.md, "Rigid molecules").
MOLECULE_ROUTES = ("energy", "microcanonical", "direct")


def check_simulation_supported(gas, where, routes=None):
    """Raise for a simulation the engine cannot run for a gas of rigid molecules.

    A gas of rigid molecules (linear molecules with site Lennard-Jones or
    Mie, site charges or an axial point dipole and quadrupole, one kind or a
    mixture with atoms) is simulated by the energy route (canonical Monte
    Carlo, or thermostatted molecular dynamics with ``sampler = "md"``), the
    microcanonical route (its final state by fixed-energy molecular
    dynamics) and the direct route (molecular dynamics of the expansion);
    so is a gas with non-linear molecules (every species a rigid body, site
    Lennard-Jones or Mie with optional site charges, plain Coulomb inside
    the molecular cut-off as for linear molecules: docs/physics.md section
    7b.4), one kind or a mixture of them with atoms and linear molecules, by
    the same routes and samplers with its rigid-body stages
    ("rigid-body-mc-nvt", "rigid-body-md-nvt", "rigid-body-md-nve"; in MD 3
    rotations per non-linear molecule, 2 per linear one, none for an atom),
    with the energy route's entropy from test-body insertion
    (docs/physics.md section 7a.1).  Point multipoles in a gas with a
    non-linear molecule are refused (they sit on a linear molecule's axis,
    which a rigid body's kernels do not have), and site charges together
    with point multipoles.  Spheres pass.

    Parameters
    ----------
    gas : mdsim.study.gas.Gas
    where : str
        What asked for a simulation, for the message.
    routes : sequence of str, optional
        The simulation routes asked for; None for a simulation of spheres
        (which a gas of molecules cannot give).

    Raises
    ------
    StudyError
        Naming what is not supported for rigid molecules, why, and what to use.
    """
    if gas.molecules is None:
        return
    if routes is None:
        raise StudyError(f"{where}: this simulation takes spherical potentials, not rigid "
                         'molecules (form = "rigid-molecule"); rigid molecules are simulated by '
                         'the energy, microcanonical and direct routes, [simulation] routes = '
                         '["energy"]')
    other = [r for r in routes if r not in MOLECULE_ROUTES]
    if other:
        what = f"the {' and '.join(other)} route{'s are' if len(other) > 1 else ' is'}"
        raise StudyError(f"{where}: {what} not yet supported for rigid-molecule potentials "
                         '(form = "rigid-molecule"); use routes = ["energy", "microcanonical", '
                         '"direct"] or the virial routes, routes = []')
    nonlinear = [m.name for m in gas.molecules if m.is_nonlinear]
    # with a non-linear molecule every species is a rigid body: site charges, no axial multipoles
    axial = [m.name for m in gas.molecules if m.has_multipoles]
    if nonlinear and axial:
        who = ("is not linear and carries" if axial[0] in nonlinear else
               f"is mixed with the non-linear '{nonlinear[0]}' and carries")
        raise StudyError(f"{where}: molecule '{axial[0]}' {who} a point dipole or quadrupole, "
                         "which sits on a linear molecule's axis; with a non-linear molecule "
                         "every species is simulated as a rigid body, which has none: describe "
                         "its electrostatics by site charges (charge_e), or use the virial "
                         "routes, [simulation] routes = []")
    charged = [m.name for m in gas.molecules if m.has_charges]
    polar = [m.name for m in gas.molecules if m.has_multipoles]
    if charged and polar:  # site charges and axial multipoles: no charge-multipole energy
        who = (f"molecule '{charged[0]}' carries site charges and point multipoles"
               if charged[0] == polar[0] else f"molecule '{charged[0]}' carries site charges "
               f"and '{polar[0]}' point multipoles")
        raise StudyError(f"{where}: {who}; the simulation has no charge-multipole "
                         "energy (nor have the virial routes): describe every molecule by site "
                         "charges, or every molecule by point dipoles and quadrupoles")
