"""The entropy a route generates, from canonical runs with insertions at its own end states.

After a route has found T_f, two short canonical Monte Carlo runs with
test-particle insertions (:mod:`mdsim.engine.insertion`) sample the two end
states: (T_i, rho_i) continuing from the last configuration of the route's
initial chain, and (T_f, rho_f) continuing from the last configuration of
its final-density chain (the energy route's guess nearest T_f, the
microcanonical run, the direct route's relaxed box), at T_f itself
(docs/physics.md section 6.2).  :func:`analysis.sampled_entropy.residual_entropy`
turns each into s_res, :func:`analysis.sampled_entropy.route_entropy` into
Delta s.  A gas of rigid molecules inserts test molecules (centre uniform in
the box, axis uniform on the sphere) of each type in the rigid Monte Carlo
(method ``rigid-mc-nvt-insertion``; test bodies turned uniformly over the
rotations, ``rigid-body-mc-nvt-insertion``, for non-linear molecules) from the
last configuration of the route's rigid chain, Monte Carlo or MD alike
(docs/physics.md sections 6.3 and 7a.6).
Where insertion does not serve (a dense liquid), Delta s is
reported as not available with the reason; it is never replaced by the
virial value.

Stage files ``insertion-initial-*`` and ``insertion-final-*``; their CPU
time is booked in the task's ledger like every stage.
"""
import math

from mdsim.errors import ConvergenceError, StudyError
from mdsim.pipeline.chain import MIN_STAGE_SAMPLES, SAFETY, mean_se
from mdsim.pipeline.stage_names import INSERTION_FINAL, INSERTION_INITIAL, stage_name
from mdsim.units import R_GAS

__all__ = ["sample_route_entropy", "reuse_or_clear_stage", "MAX_SAMPLE_SHARE",
           "ENTROPY_STDERR_FLOOR_RED", "EQUILIBRATION_SWEEPS", "MAX_INSERTION_SAMPLES"]

MAX_SAMPLE_SHARE = 0.25
"""An end state's insertion run takes at most this share of the samples of the chain it
continues (at least the minimum stage), so the entropy costs a fraction of the route."""
ENTROPY_STDERR_FLOOR_RED = 0.002
"""No end state is sampled for a standard error of s_res below this (k per particle,
0.017 J/(mol K)): a tight Delta T target would otherwise make the entropy cost as much
as the route, for a precision of Delta s far beyond what a free expansion asks of it."""
EQUILIBRATION_SWEEPS = 100
MAX_INSERTION_SAMPLES = 1000
"""Most samples (sweeps) of one insertion run: at a dense liquid, where insertion fails
anyway, a quarter of a long MD chain's samples as Monte Carlo sweeps cost more than the
route (13 s of a 67 s direct-route task at T* = 10, rho* = 0.9); the error reached is
reported, whatever it is."""
"""Sweeps before the first sample: the start configuration is already at the density, and
at T_f or close to it; equilibration detection drops any transient left."""


def _unavailable(reason):
    return {"value": None, "stderr": None, "unavailable": reason}


def _samples_needed(source, T_red, target_s_red):
    """Samples of the insertion run: the source chain's energy error scaled to the target.

    u / kT carries about the error of s_res, so the run is sized on the source chain's
    energy series, between :data:`MIN_STAGE_SAMPLES` and :data:`MAX_SAMPLE_SHARE` of its
    samples.
    """
    n_source = source.n_samples()
    cap = max(MIN_STAGE_SAMPLES, min(MAX_INSERTION_SAMPLES, int(MAX_SAMPLE_SHARE * n_source)))
    _, se = mean_se(source, "u_full")
    if not (math.isfinite(se) and se > 0.0):
        return cap
    wanted = math.ceil(n_source * (se / (T_red * target_s_red)) ** 2)
    return int(min(cap, max(MIN_STAGE_SAMPLES, wanted)))


def reuse_or_clear_stage(job, name, T_red, n_samples):
    """The samples of the stage ``name`` to ask for: those of a finished file at ``T_red``
    (read back as it is), else ``n_samples``.

    A stage file or checkpoint left at another temperature or length (the task's sampling
    was extended since, which moves T_f and the sizes) is removed, so that the stage runs
    again for the end state the route now reports.
    """
    from mdsim.sampling import store
    path = job.stage_path(name)
    for p in (path, store.part_path(path)):
        if not p.is_file():
            continue
        try:
            attrs = store.read_attrs(p)
            same_T = float(attrs["temperature_red"]) == float(T_red)
            n_file = int(attrs["n_samples"])
        except (OSError, KeyError, ValueError):
            continue  # a damaged file: the sampler moves it aside
        if same_T and p == path:
            return n_file
        if not same_T or n_file != n_samples:
            p.unlink()
    return n_samples


def _end_state(job, label, chain_id, source, T_red, target_s_red):
    """s_res (:class:`analysis.sampled_entropy.ResidualEntropy`) and the stage at one end state.

    One stage file ``LABEL-00``: canonical Monte Carlo with insertions from the last
    configuration of the ``source`` chain (same density), :data:`EQUILIBRATION_SWEEPS`
    sweeps, then one sample per sweep.  ``target_s_red``: the standard error of s_res
    (k per particle) the run is sized for.
    """
    from analysis.sampled_entropy import residual_entropy
    last = source.results[-1] if source.results else source.pilot
    system = source.continue_system(last)
    method, fractions_a, tails_a = _insertion_kind(job, system)
    name = stage_name(label, 0)
    n = reuse_or_clear_stage(job, name, T_red, _samples_needed(source, T_red, target_s_red))
    stage = job.stage(name, system, method, T_red, n_eq=EQUILIBRATION_SWEEPS,
                      n_samples=n, interval=1, seed=job.stage_seed(chain_id, 1))
    res = residual_entropy(stage.samples, T_red, system.density, fractions_a, tails_a,
                           system.n_particles)
    return res, stage


def _insertion_kind(job, system):
    """The insertion stage's method, the species' mole fractions in the box and the tail
    energy of one inserted particle of each: test particles for spheres
    (:mod:`mdsim.engine.insertion`), test molecules of each type, turned at random, for
    rigid molecules and the atoms of their mixtures
    (:mod:`mdsim.sampling.rigid_insertion_stage`), test bodies turned uniformly over the
    rotations for a gas with non-linear molecules (:mod:`mdsim.sampling.body_insertion_stage`)."""
    if job.study.gas.molecules is not None:
        from mdsim.sampling.body_insertion_stage import BODY_INSERTION_METHOD
        from mdsim.sampling.rigid_insertion_stage import METHOD, insertion_tails
        bodies = getattr(system, "quat_nq", None) is not None  # a BodySystem
        return (BODY_INSERTION_METHOD if bodies else METHOD), system.fractions_t, \
            insertion_tails(system)
    from mdsim.engine.insertion import METHOD, insertion_tail
    return METHOD, system.fractions_a, [insertion_tail(system, a)
                                        for a in range(system.pairs.n_species)]


def sample_route_entropy(job, res):
    """Delta s of a finished route from its end states, as the task result reports it.

    Parameters
    ----------
    job : mdsim.pipeline.task.RunningTask
        Its ``initial_chain`` and ``final_chain`` set by the route.
    res : analysis.expansion result
        The route's solver result (``final_temperature_K`` and its stderr).

    Returns
    -------
    dict
        ``value`` and ``stderr`` in J/(mol K), ``method``
        ("test-particle insertion"), and the parts ``ideal_gas_J_molK``,
        ``residual_initial_J_molK``, ``residual_final_J_molK``,
        ``mu_res_initial_J_mol``, ``mu_res_final_J_mol``; or ``value`` and
        ``stderr`` None with ``unavailable`` (why).

    Notes
    -----
    Each end state is sized for the standard error SAFETY x c_v_ig(T_i) x
    target / T_i / sqrt(2) of s_res, the entropy counterpart of the target
    of Delta T, but not below :data:`ENTROPY_STDERR_FLOOR_RED`, and capped at
    :data:`MAX_SAMPLE_SHARE` of the samples of the chain it continues
    (:func:`_samples_needed`); the error reached is reported, whatever it is.
    """
    if job.initial_chain is None or job.final_chain is None:
        return _unavailable("the route kept no chain at one of its end states")
    if job.feynman_hibbs:
        return _unavailable("the Feynman-Hibbs potential depends on temperature, and the "
                            "test-particle estimate of the residual entropy is not built for "
                            "such a potential yet")
    T_f = float(res.final_temperature_K)
    T_f_err = float(res.final_temperature_stderr_K)
    if not (math.isfinite(T_f) and T_f > 0.0 and math.isfinite(T_f_err)):
        return _unavailable(f"the route gave no final temperature (T_f = {T_f!r} K)")
    try:
        job.cv_ig.check_temperature(T_f, "final temperature")
    except StudyError as exc:
        return _unavailable(str(exc))
    u = job.units
    target_s = max(ENTROPY_STDERR_FLOOR_RED, SAFETY * float(job.cv_ig.cv(job.T_i)) / R_GAS
                   * job.target_K / job.T_i / math.sqrt(2.0))
    try:
        ini, _ = _end_state(job, INSERTION_INITIAL, 50, job.initial_chain,
                            u.temperature_to_reduced(job.T_i), target_s)
        fin, fin_stage = _end_state(job, INSERTION_FINAL, 51, job.final_chain,
                                    u.temperature_to_reduced(T_f), target_s)
    except ConvergenceError as exc:
        return _unavailable(f"an end state's insertion run did not settle: {exc}")
    for where, state in (("initial", ini), ("final", fin)):
        if not state.available:
            return _unavailable(f"{where} state (rho* = {state.density_red:.4g}): "
                                f"{state.reason}")
    return _entry(job, res, ini, fin, fin_stage)


def _entry(job, res, ini, fin, fin_stage):
    """The result entry of two available end states."""
    from analysis.sampled_entropy import route_entropy
    u = job.units
    cv_res = fin_stage.summary.get("c_v_res")  # empty summary: the energy still drifted
    cv_res_f = u.heat_capacity_to_J_molK(cv_res.value) \
        if cv_res is not None and cv_res.available else 0.0
    rs = route_entropy(job.cv_ig, job.T_i, res.final_temperature_K,
                       res.final_temperature_stderr_K, job.r, ini, fin, cv_res_f)
    job.notes.extend(rs.notes)
    return {"value": rs.entropy_generated_J_molK, "stderr": rs.entropy_generated_stderr_J_molK,
            "method": "test-particle insertion",
            "ideal_gas_J_molK": rs.ideal_gas_J_molK,
            "residual_initial_J_molK": rs.residual_initial_J_molK,
            "residual_final_J_molK": rs.residual_final_J_molK,
            "mu_res_initial_J_mol": u.energy_to_J_mol(ini.mu_res_red),
            "mu_res_final_J_mol": u.energy_to_J_mol(fin.mu_res_red)}
