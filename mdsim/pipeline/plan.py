"""Planning: a study's tasks, one per state point and simulation route.

Every task carries everything it needs (state point, route, seed,
settings), so tasks are independent and can run anywhere in any order.
What the schema of the study file cannot know is checked here, before any
work: enough particles for the cut-off, and the assumptions of each route.
"""
import dataclasses
import math

from mdsim.errors import ConvergenceError, StudyError
from mdsim.pipeline.settings import simulation_settings
from mdsim.units import R_GAS

__all__ = ["plan_tasks", "particles_for_cutoff", "check_particles", "check_route_applies",
           "virial_start_guess", "choose_particles", "N_MIN", "N_MAX"]

CUTOFF_BOX_MARGIN = 1.05
"""The box edge is kept 5 % above twice the cut-off (minimum image with room to spare)."""
N_MIN = 128
"""Fewest particles a task chooses by itself."""
N_MAX = 4000
"""Most particles a task chooses by itself (the study's ``particles`` may say more)."""


def particles_for_cutoff(study, density_mol_m3):
    """The fewest particles whose cubic box keeps the cut-off below half its edge.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    density_mol_m3 : float
        The (initial) molar density, mol/m^3.

    Returns
    -------
    n : int
        At least this many particles: N > rho* (2 r_c)^3 x 1.05.
    rc : float
        The largest cut-off of the study's pair potentials, in sigma of species 0.
    """
    rc = float(study.reduced_pairs().rc_max)
    rho_red = study.units.density_to_reduced(density_mol_m3)
    return int(math.floor(rho_red * (2.0 * rc) ** 3 * CUTOFF_BOX_MARGIN)) + 1, rc


def check_particles(study, n, density_mol_m3, state_point_index):
    """Refuse a given particle number too small for the cut-off at this density.

    Raises
    ------
    StudyError
        Naming ``[simulation] particles``, the density and the smallest number allowed.
    """
    n_cut, rc = particles_for_cutoff(study, density_mol_m3)
    if n < n_cut:
        raise StudyError(f"study file '{study.path}', [simulation] key 'particles' = {n}: "
                         f"too few at {density_mol_m3:.6g} mol/m^3 (state point "
                         f"{state_point_index}): the cut-off {rc:g} sigma must stay below half "
                         f"the box edge; use at least {n_cut} particles, or a smaller "
                         "[potential] cutoff")


def virial_start_guess(gas, cv_ig, T_i, r, rho_i):
    """The B2 + B3 virial final temperature and Delta T of a task: its first guesses.

    Parameters
    ----------
    gas : analysis.virial_eos.VirialGas
    cv_ig : ideal-gas heat capacity model
    T_i : float
        Initial temperature, K.
    r : float
        Volume ratio V_f / V_i.
    rho_i : float
        Initial molar density, mol/m^3.

    Returns
    -------
    T_f : float
        K; T_i when the virial series gives no answer.
    dT : float or None
        K; None when the virial series gives no answer.
    note : str or None
        Why there is no virial guess, when there is none.
    """
    from analysis.expansion import virial_expansion
    try:
        v = virial_expansion(gas, cv_ig, T_i, r, rho_i=rho_i, order=3)
    except (StudyError, ConvergenceError) as exc:
        return T_i, None, (f"no virial start guess ({' '.join(str(exc).split())}); the first "
                           "final-state temperature is T_i")
    return float(v.final_temperature_K), float(v.delta_T_K), None


def choose_particles(study, given, rho_i, state_point_index, dT_guess, target_K):
    """The particle number of a task: the study's, or the fewest that keep the bias small.

    The cut-off must stay below half the box edge at the initial density,
    and the O(1/N) finite-size bias of a canonical u_res (the (N - 1)/N of
    the pair sum) must stay below a quarter of the target:
    N >= 4 |Delta T_virial| / target; clipped to [N_MIN, N_MAX].

    Parameters
    ----------
    study : mdsim.study.reader.Study
    given : int or None
        ``[simulation] particles`` (checked against the cut-off), or None to choose.
    rho_i : float
        Initial molar density, mol/m^3.
    state_point_index : int
    dT_guess : float or None
        The virial Delta T, K (:func:`virial_start_guess`).
    target_K : float
        The target standard error of Delta T, K.

    Returns
    -------
    n : int
    warning : str or None
        Set when the bias rule asked for more than N_MAX particles.

    Raises
    ------
    StudyError
        When the study's particles are too few, or the cut-off alone needs more than N_MAX.
    """
    if given is not None:
        check_particles(study, int(given), rho_i, state_point_index)
        return int(given), None
    n_cut, _ = particles_for_cutoff(study, rho_i)
    n_bias = 0 if dT_guess is None else int(math.ceil(4.0 * abs(dT_guess) / target_K))
    n = max(N_MIN, n_cut, n_bias)
    if n <= N_MAX:
        return n, None
    if n_cut > N_MAX:
        raise StudyError(f"the state at {rho_i:.6g} mol/m^3 needs {n_cut} particles for the "
                         f"cut-off to stay below half the box (more than {N_MAX}); give "
                         "[simulation] particles, or a smaller cutoff")
    return N_MAX, (f"{n} particles would keep the finite-size bias below a quarter of the "
                   f"target; using {N_MAX}")


def check_route_applies(study, route, cv_ig, T_i):
    """Refuse a route whose assumptions the study breaks (before any work).

    The direct route simulates atoms or rigid molecules (whose model sets f), not
    spheres with a larger f; the microcanonical route, and the direct route of
    rigid molecules (whose MD has no vibrations), assume the constant classical
    heat capacity c_v_ig = (f/2) R of f kinetic degrees of freedom (of rigid
    molecules the model's, a mixture's the mole-fraction mean), probed at
    T_i / 2, T_i and 3 T_i / 2 (where the model is defined).

    Raises
    ------
    StudyError
        Naming ``[simulation] routes``, the broken assumption and the route to use.
    """
    f = study.gas.dof_per_particle
    if route == "direct" and f != 3 and study.gas.molecules is None:
        raise StudyError(f"study file '{study.path}', [simulation] key 'routes': the direct "
                         f"route simulates atoms (3 degrees of freedom), but [gas] "
                         f"dof_per_particle = {f}; use the energy route for molecules")
    # the rigid molecules' MD has no vibrations: as the microcanonical route, it takes only the
    # model's kinetic (f/2) R
    if route == "microcanonical" or (route == "direct" and study.gas.molecules is not None):
        if study.gas.molecules is not None:
            f = study.gas.kinetic_dof
        want = 0.5 * f * R_GAS
        lo, hi = cv_ig.valid_range
        probes = [T for T in (0.5 * T_i, T_i, 1.5 * T_i) if lo <= T <= hi] or [T_i]
        got = [float(cv_ig.cv(T)) for T in probes]
        if any(abs(c - want) > 1e-6 * want for c in got):
            raise StudyError(
                f"study file '{study.path}', [simulation] key 'routes': the {route} route "
                f"assumes a constant classical c_v_ig = f/2 R = {want:.5g} J/(mol K) (f = "
                f"dof_per_particle = {f}), but [gas] ideal_heat_capacity gives {got[0]:.5g} "
                f"J/(mol K); remove '{route}' from routes and use the energy route, "
                "which takes any c_v_ig(T)")


def plan_tasks(study):
    """The tasks of a study: one per state point and simulation route.

    Parameters
    ----------
    study : mdsim.study.reader.Study

    Returns
    -------
    list of dict
        JSON-ready, in the order of ``study.state_points()`` then of the
        study's routes.  Keys: ``index``, ``state_point`` (the StatePoint
        as a dict), ``route``, ``seed`` ([study seed, index]),
        ``initial_density_mol_m3`` and ``initial_density_from`` (from
        :func:`mdsim.study.statepoints.resolve_initial_density`), ``particles``
        (int or None: chosen at run time), ``target_stderr_K``,
        ``max_cpu_time_s``, ``sampler``.

    Raises
    ------
    StudyError
        Too few particles for the cut-off, or a route whose assumptions the
        study breaks.
    """
    from mdsim.study.molecule import check_simulation_supported
    from mdsim.study.statepoints import ideal_heat_capacity, resolve_initial_density
    settings = simulation_settings(study)
    if settings["routes"]:
        check_simulation_supported(study.gas, f"study file '{study.path}', [simulation] routes = "
                                   f"{list(settings['routes'])}", settings["routes"])
    cv_ig = ideal_heat_capacity(study)
    tasks = []
    for sp in study.state_points():  # checked even when no route simulates
        if not settings["routes"]:
            break
        rho_i, how = resolve_initial_density(study, sp)
        if settings["particles"] is not None:
            check_particles(study, settings["particles"], rho_i, sp.index)
        for route in settings["routes"]:
            check_route_applies(study, route, cv_ig, sp.temperature_K)
            k = len(tasks)
            tasks.append({
                "index": k, "state_point": dataclasses.asdict(sp), "route": route,
                "seed": [settings["seed"], k],
                "initial_density_mol_m3": float(rho_i), "initial_density_from": str(how),
                "particles": settings["particles"],
                "target_stderr_K": settings["target_stderr_K"],
                "max_cpu_time_s": settings["max_cpu_time_s"],
                "sampler": settings["sampler"],
            })
    return tasks
