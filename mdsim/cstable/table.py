"""Corresponding-states tables: u_res*(T*, rho*) of one potential shape, built once.

For a pair potential whose shape is fixed (Lennard-Jones; Mie with fixed
exponents), u(r) = epsilon phi(r / sigma): every (epsilon, sigma) maps onto
one reduced problem, so the reduced residual properties
u_res*(T*, rho*), Z(T*, rho*) and c_v,res*(T*, rho*) computed once on a grid
serve every parameter set.  A check or a fit then evaluates thousands of
expansions in milliseconds instead of running simulations.

The build (:func:`build_table`) samples every grid point by NVT Monte Carlo
(:func:`mdsim.sampling.state_point.sample_state_point`, full potential: cut-off plus the
analytic tail), one run file per point in ``OUT.points/`` so that an
interrupted build resumes (complete points are skipped, a half-written point
continues from its checkpoint); the points run on a local process pool or a
Dask cluster.  :func:`assemble_table` then writes one HDF5 file with the
grid, the values and standard errors, the exact B2 and B3 of the reduced
potential and the provenance, and measures the interpolation error by
holding grid points out.

Reduced units throughout: T* = kT / epsilon, rho* = rho sigma^3, u* per
particle in epsilon, c_v* per particle in k, Z = p / (rho k T).  Array
suffixes: ``_t`` grid temperatures, ``_d`` grid densities (the first is 0),
``_td`` a value per grid point, ``_v`` the fine temperature nodes of the
virial coefficients, ``_q`` query points.

Notes
-----
The table holds q(T, rho) = q_vir(T, rho) + w(rho) D_q(T, rho), where
q_vir is the B2 + B3 virial series of the same potential,

    u_vir = -T^2 (B' rho + C' rho^2 / 2),
    Z_vir = 1 + B rho + C rho^2,
    cv_vir = -(2 T B' + T^2 B'') rho - (2 T C' + T^2 C'') rho^2 / 2

(B = B2, C = B3 per molecule, primes d/dT*; Hirschfelder, Curtiss and Bird,
1954, chapter 3), D_q is a tensor-product interpolating spline (cubic where
four or more nodes allow; in ln T* and rho*) of the simulated departures
from the series (exactly 0 at rho* = 0), and w(rho) is a smooth step from 0
below ``virial_below`` to 1 above ``simulation_above``.  Below
``virial_below`` the table is therefore the exact low-density series.  The
spline is linear in its data, so the standard error of any interpolated
value (and the covariance of two) follows exactly from the per-point
standard errors, which are independent.
"""
import concurrent.futures as cf
import datetime
import json
import math
import os
import sys
import time
from pathlib import Path

import numpy as np

from mdsim.errors import StudyError
from mdsim.files import atomic_write_text

FORMAT_NAME = "mdsim-corresponding-states-table"
FORMAT_VERSION = 1
SHAPE_FORMS = ("lennard-jones", "mie")
QUANTITIES = ("u_res", "Z", "cv_res")
METHOD = "mc-nvt"
EXECUTORS = ("local", "dask")
# Fine temperature nodes of the stored virial coefficients: enough that a
# cubic Hermite interpolant of B(T) is exact to ~1e-9 relative.
N_VIRIAL_NODES = 160
VIRIAL_T_MARGIN = 1.3
CHECKPOINT_EVERY = 500
# A box edge at least this factor times twice the cut-off.
BOX_MARGIN = 1.02
RANDOM_START_MAX_DENSITY = 0.1


# -- configuration --------------------------------------------------------------

def _potential_shape(study):
    """(form, shape dict, reduced PairMatrix, reduced like-pair potential)."""
    gas = study.gas
    if gas.n_species != 1:
        raise StudyError(f"study '{study.path}': a corresponding-states table needs a pure gas; "
                         f"this one has {gas.n_species} species; write a study with one "
                         "[potential] table")
    pairs = study.reduced_pairs()
    pot = pairs.pots[0][0]
    from mdsim.engine.potentials import FORM_NAMES
    form = FORM_NAMES.get(pot.form, str(pot.form))
    if form not in SHAPE_FORMS:
        raise StudyError(f"[potential] form = {form!r}: a corresponding-states table needs a "
                         f"potential of fixed shape ({', '.join(SHAPE_FORMS)}); the other forms "
                         "do not reduce to one problem for every epsilon and sigma")
    shape = {}
    if form == "mie":
        shape = {"repulsive_exponent": float(pot.repulsive),
                 "attractive_exponent": float(pot.attractive)}
    return form, shape, pairs, pot


def table_settings(study):
    """The validated [table] settings of a study (reduced grid, sampling).

    Returns
    -------
    dict
        ``temperatures`` (sorted list), ``densities`` (sorted, positive),
        ``particles``, ``equilibration``, ``samples``, ``seed``,
        ``virial_below``, ``simulation_above``, plus ``form``, ``shape``,
        ``cutoff``.
    """
    from mdsim.study.reader import SCHEMA, _Context, _check_table
    raw = study.raw.get("table")
    if raw is None:
        raise StudyError(f"study '{study.path}' has no [table]; add one with "
                         "temperatures = [1.5, 2.0, 3.0] and densities = [0.05, 0.1, 0.2] "
                         "(reduced units; see configs/table_lj.toml)")
    ctx = _Context(study.path)
    s = _check_table(ctx, "table", raw, SCHEMA["table"])
    for key in ("temperatures", "densities"):
        if key not in s:
            ctx.fail("table", key, "<missing>", "missing required key", "",
                     f"add {key} = {SCHEMA['table'][key].example}")
    T_t = sorted(float(t) for t in s["temperatures"])
    rho_d = sorted(float(r) for r in s["densities"] if r > 0.0)
    if len(T_t) < 2:
        ctx.fail("table", "temperatures", s["temperatures"], "too few values",
                 "at least 2 (4 or more for cubic interpolation)", "add temperatures")
    if len(rho_d) < 1:
        ctx.fail("table", "densities", s["densities"], "no positive density",
                 "at least one value above 0", "add densities such as [0.05, 0.1]")
    if s["simulation_above"] <= s["virial_below"]:
        ctx.fail("table", "simulation_above", s["simulation_above"],
                 f"not above virial_below = {s['virial_below']}",
                 "simulation_above > virial_below", "raise simulation_above")
    form, shape, pairs, _ = _potential_shape(study)
    s.update(temperatures=T_t, densities=rho_d, form=form, shape=shape,
             cutoff=float(pairs.cutoff))
    return s


def _plan(settings):
    """One entry per simulated grid point: index, i_t, i_d, T*, rho*, N, seed."""
    rc = settings["cutoff"]
    points = []
    n_d = len(settings["densities"])
    for i, T in enumerate(settings["temperatures"]):
        for j, rho in enumerate(settings["densities"]):
            n_min = int(math.ceil(rho * (2.0 * rc * BOX_MARGIN) ** 3))
            points.append({"index": i * n_d + j, "i_t": i, "i_d": j + 1,
                           "temperature_red": T, "density_red": rho,
                           "particles": max(int(settings["particles"]), n_min),
                           "seed": [int(settings["seed"]), i, j]})
    return points


# -- one grid point -----------------------------------------------------------------

def _point_path(points_dir, index):
    return Path(points_dir) / f"{int(index):04d}.h5"


def _system_for(plan, point):
    from mdsim.engine.potentials import LennardJones, Mie, PairMatrix
    from mdsim.engine.system import System
    if plan["form"] == "mie":
        pot = Mie(1.0, 1.0, plan["shape"]["repulsive_exponent"],
                  plan["shape"]["attractive_exponent"])
    else:
        pot = LennardJones(1.0, 1.0)
    pairs = PairMatrix([pot], plan["cutoff"])
    system = System.cubic(pairs, [point["particles"]], point["density_red"])
    seed = int(np.sum(np.asarray(point["seed"]) * np.array([1000003, 1009, 1])))
    if point["density_red"] < RANDOM_START_MAX_DENSITY:
        system.place_at_random(seed)
    else:
        system.place_on_lattice(seed)
    return system


def run_point(points_dir, index, progress=None):
    """Sample grid point ``index`` of the plan in ``points_dir`` (idempotent, resumable).

    Returns the path of the complete run file.
    """
    from mdsim.sampling.state_point import sample_state_point
    plan = json.loads((Path(points_dir) / "plan.json").read_text(encoding="utf-8"))
    point = plan["points"][int(index)]
    path = _point_path(points_dir, index)
    system = _system_for(plan, point)
    attrs = {"table_form": plan["form"], "table_point": int(index),
             "table_shape": json.dumps(plan["shape"])}
    sample_state_point(system, METHOD, point["temperature_red"],
                       n_equilibration=plan["equilibration"], n_samples=plan["samples"],
                       interval=1, seed=point["seed"], path=path, attrs=attrs,
                       checkpoint_every=min(CHECKPOINT_EVERY, plan["samples"]),
                       progress=progress)
    return str(path)


def _guarded_point(points_dir, index):
    """For pools: None on success, else the error text of a user-facing error."""
    from mdsim.errors import ConvergenceError, SimulationError
    import numba
    threads = numba.get_num_threads()
    numba.set_num_threads(1)  # one point per core; restored for an in-process caller
    try:
        run_point(points_dir, index)
        return None
    except (StudyError, SimulationError, ConvergenceError) as exc:
        return str(exc)
    finally:
        numba.set_num_threads(threads)


# -- the build -------------------------------------------------------------------------

def points_dir_for(out_path):
    """The directory of per-point run files that belongs to table file ``out_path``."""
    out_path = Path(out_path)
    return out_path.with_name(out_path.name + ".points")


def _write_plan(points_dir, settings, study):
    plan = {k: settings[k] for k in ("form", "shape", "cutoff", "particles", "equilibration",
                                     "samples", "seed", "temperatures", "densities",
                                     "virial_below", "simulation_above")}
    plan["points"] = _plan(settings)
    plan["study_name"] = study.name
    plan["study_file"] = str(study.path)
    points_dir.mkdir(parents=True, exist_ok=True)
    path = points_dir / "plan.json"
    if path.exists():
        old = json.loads(path.read_text(encoding="utf-8"))
        keys = [k for k in plan if k not in ("study_name", "study_file")]
        changed = [k for k in keys if old.get(k) != plan[k]]
        if changed:
            raise StudyError(f"'{points_dir}' holds a table build with other settings "
                             f"({', '.join(changed)} differ); give another --out or delete "
                             "that directory")
    else:
        atomic_write_text(path, json.dumps(plan, indent=1))
    return plan


def _complete(points_dir, index):
    from mdsim.sampling.store import is_complete
    path = _point_path(points_dir, index)
    return path.exists() and is_complete(path)


def build_table(study, out_path, executor="local", workers=None, progress=True,
                dask_address=None):
    """Build (or finish) the corresponding-states table of a study.

    Parameters
    ----------
    study : Study or str or Path
        A study with a pure gas of fixed-shape potential and a [table].
    out_path : str or Path
        The table file ``NAME.h5``; the per-point run files go to
        ``NAME.h5.points/``.
    executor : {"local", "dask"}
        A local process pool (default) or a Dask cluster (a LocalCluster of
        ``workers`` processes unless ``dask_address`` names a scheduler).
    workers : int, optional
        Worker processes (default: the number of cores, at most the points).
    progress : bool
        A line on stderr as each point finishes.

    Returns
    -------
    Path
        The table file.

    Raises
    ------
    SimulationError
        When some points failed (the others are kept; run again to retry).
    """
    from mdsim.errors import SimulationError
    from mdsim.study.reader import Study, read_study
    if not isinstance(study, Study):
        study = read_study(study)
    if executor not in EXECUTORS:
        raise StudyError(f"option --executor = {executor!r}: allowed {', '.join(EXECUTORS)}")
    settings = table_settings(study)
    out_path = Path(out_path).absolute()
    if out_path.suffix != ".h5":
        raise StudyError(f"option --out = '{out_path}': a table file ends in .h5")
    points_dir = points_dir_for(out_path)
    plan = _write_plan(points_dir, settings, study)
    n_points = len(plan["points"])
    todo = [p["index"] for p in plan["points"] if not _complete(points_dir, p["index"])]
    t0 = time.time()
    done = [n_points - len(todo)]

    def say(text):
        if progress:
            print(f"table: {text}", file=sys.stderr, flush=True)

    say(f"{n_points} grid points, {done[0]} already complete, {len(todo)} to run "
        f"({executor} executor)")

    def on_done(index, err):
        done[0] += 1
        pt = plan["points"][index]
        state = "done" if err is None else f"FAILED: {err}"
        say(f"point {done[0]}/{n_points} (T* = {pt['temperature_red']:g}, rho* = "
            f"{pt['density_red']:g}, N = {pt['particles']}) {state} [{time.time() - t0:.0f} s]")

    if todo:
        if executor == "dask":
            errors = _run_dask(points_dir, todo, workers, dask_address, on_done)
        else:
            errors = _run_local(points_dir, todo, workers, on_done)
        failed = {k: e for k, e in errors.items() if e is not None}
        if failed:
            first = min(failed)
            raise SimulationError(f"{len(failed)} of {n_points} table points failed (point "
                                  f"{first}: {failed[first]}); the others are kept in "
                                  f"'{points_dir}'; run the same command again to retry")
    path = assemble_table(points_dir, out_path)
    say(f"wrote {path}")
    return path


def _run_local(points_dir, indices, workers, on_done):
    cores = os.cpu_count() or 1
    workers = min(int(workers or cores), len(indices))
    if workers < 1:
        raise StudyError(f"option --workers = {workers}: must be at least 1")
    outcome = {}
    if workers == 1:
        for k in indices:
            outcome[k] = err = _guarded_point(str(points_dir), k)
            on_done(k, err)
        return outcome
    import multiprocessing as mp
    ctx = mp.get_context("spawn")
    with cf.ProcessPoolExecutor(max_workers=workers, mp_context=ctx) as pool:
        futures = {pool.submit(_guarded_point, str(points_dir), k): k for k in indices}
        for fut in cf.as_completed(futures):
            k = futures[fut]
            try:
                err = fut.result()
            except cf.process.BrokenProcessPool as exc:
                err = f"worker process failed: {exc!r}"
            outcome[k] = err
            on_done(k, err)
    return outcome


def _run_dask(points_dir, indices, workers, address, on_done):
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise StudyError("the dask executor needs the 'cluster' extra: "
                         "python -m pip install -e '.[cluster]'") from None
    cluster = None
    if address:
        client = Client(address)
    else:
        cluster = LocalCluster(n_workers=int(workers or 2), threads_per_worker=1,
                               processes=True, dashboard_address=None)
        client = Client(cluster)
    outcome = {}
    try:
        futures = [client.submit(_guarded_point, str(points_dir), k, pure=False, retries=2,
                                 key=f"cstable-{k:04d}-{os.getpid()}") for k in indices]
        index_of = {f.key: k for f, k in zip(futures, indices)}
        for fut in as_completed(futures):
            k = index_of[fut.key]
            try:
                err = fut.result()
            except Exception as exc:  # a worker died more often than the retries
                err = f"dask task failed: {exc!r}"
            outcome[k] = err
            on_done(k, err)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    return outcome


# -- virial limit -----------------------------------------------------------------------

def _virial_nodes(pot, T_min, T_max):
    """B2, B3 and their T-derivatives on fine nodes: dict of arrays, shape=(N_VIRIAL_NODES,)."""
    from analysis.virial import b2, b3
    T_v = np.geomspace(T_min / VIRIAL_T_MARGIN, T_max * VIRIAL_T_MARGIN, N_VIRIAL_NODES)
    B = b2(pot, T_v)
    C = b3(pot, T_v)
    return {"temperature_red": T_v, "B2": B[0], "dB2_dT": B[1], "d2B2_dT2": B[2],
            "B3": C[0], "dB3_dT": C[1], "d2B3_dT2": C[2]}


class _VirialSeries:
    """q_vir(T, rho) from stored B2, B3 nodes (cubic Hermite in T, value and slope exact)."""

    def __init__(self, nodes):
        from scipy.interpolate import CubicHermiteSpline
        T = np.asarray(nodes["temperature_red"])
        self.T_range = (float(T[0]), float(T[-1]))
        self._s = {}
        for name in ("B2", "B3"):
            v, d1, d2 = (np.asarray(nodes[k]) for k in (name, f"d{name}_dT", f"d2{name}_dT2"))
            self._s[name] = (CubicHermiteSpline(T, v, d1), CubicHermiteSpline(T, d1, d2))

    def coefficients(self, T):
        """(B, B', B'', C, C', C'') at T, each shaped like T."""
        out = []
        for name in ("B2", "B3"):
            s0, s1 = self._s[name]
            out += [s0(T), s1(T), s1(T, 1)]
        return out

    def __call__(self, quantity, T, rho, derivative=0):
        B, dB, d2B, C, dC, d2C = self.coefficients(T)
        if quantity == "u_res":
            if derivative == 1:
                return -(2 * T * dB + T * T * d2B) * rho - (2 * T * dC + T * T * d2C) * rho ** 2 / 2
            return -T * T * (dB * rho + dC * rho ** 2 / 2)
        if quantity == "Z":
            return 1.0 + B * rho + C * rho ** 2
        if quantity == "cv_res":
            return -(2 * T * dB + T * T * d2B) * rho - (2 * T * dC + T * T * d2C) * rho ** 2 / 2
        raise ValueError(quantity)


def _blend(rho, lo, hi):
    """Smooth step w(rho): 0 below lo, 1 above hi, C1 in between; and dw/drho."""
    x = np.clip((np.asarray(rho, dtype=float) - lo) / (hi - lo), 0.0, 1.0)
    return x * x * (3.0 - 2.0 * x)


# -- cardinal spline bases --------------------------------------------------------------

def _basis(nodes):
    """A vector-valued BSpline whose component j interpolates the unit vector e_j."""
    from scipy.interpolate import make_interp_spline
    n = len(nodes)
    k = min(3, n - 1)
    return make_interp_spline(np.asarray(nodes, dtype=float), np.eye(n), k=k)


# -- assembly ---------------------------------------------------------------------------

def _read_point(points_dir, index, T):
    from mdsim.sampling.estimates import summarise
    from mdsim.sampling.store import read_attrs, read_samples
    path = _point_path(points_dir, index)
    samples = read_samples(path)
    attrs = read_attrs(path)
    s = summarise(samples, METHOD, attrs["n_particles"], attrs["volume_red"], T)
    rho = attrs["n_particles"] / attrs["volume_red"]
    u, p, cv = s["u_full"], s["pressure"], s["c_v_res"]
    return {"u_res": (u.value, u.stderr), "Z": (p.value / (rho * T), p.stderr / (rho * T)),
            "cv_res": (cv.value, cv.stderr), "g": u.g, "n_particles": int(attrs["n_particles"])}


def assemble_table(points_dir, out_path):
    """Gather the complete point files of a build into the table file (atomic write).

    Returns the table path.
    """
    import h5py
    from mdsim.sampling.store import package_versions
    points_dir = Path(points_dir)
    plan = json.loads((points_dir / "plan.json").read_text(encoding="utf-8"))
    T_t = np.asarray(plan["temperatures"], dtype=float)
    rho_d = np.concatenate([[0.0], np.asarray(plan["densities"], dtype=float)])
    missing = [p["index"] for p in plan["points"] if not _complete(points_dir, p["index"])]
    if missing:
        raise StudyError(f"table build in '{points_dir}': {len(missing)} points are not complete "
                         f"(first: {missing[0]}); run 'mdsim table build' again to finish them")
    from mdsim.engine.potentials import LennardJones, Mie
    pot = (Mie(1.0, 1.0, plan["shape"]["repulsive_exponent"], plan["shape"]["attractive_exponent"])
           if plan["form"] == "mie" else LennardJones(1.0, 1.0))
    vir_nodes = _virial_nodes(pot, T_t[0], T_t[-1])
    series = _VirialSeries(vir_nodes)
    shape = (len(T_t), len(rho_d))
    data = {q: np.zeros(shape) for q in QUANTITIES}
    err = {q: np.zeros(shape) for q in QUANTITIES}
    g_td = np.full(shape, np.nan)
    n_td = np.zeros(shape, dtype=np.int64)
    for i, T in enumerate(T_t):
        for q in QUANTITIES:
            data[q][i, 0] = series(q, T, 0.0)
    for pt in plan["points"]:
        i, j = pt["i_t"], pt["i_d"]
        r = _read_point(points_dir, pt["index"], pt["temperature_red"])
        for q in QUANTITIES:
            data[q][i, j], err[q][i, j] = r[q]
        g_td[i, j] = r["g"]
        n_td[i, j] = r["n_particles"]
    table = CorrespondingStatesTable(T_t, rho_d, data, err, vir_nodes, plan["form"],
                                     plan["shape"], plan["cutoff"], plan["virial_below"],
                                     plan["simulation_above"], {})
    holdout = table.hold_out()
    out_path = Path(out_path)
    tmp = out_path.with_name(out_path.name + ".part")
    with h5py.File(tmp, "w") as f:
        attrs = {
            "format": FORMAT_NAME, "format_version": FORMAT_VERSION,
            "form": plan["form"], "shape": json.dumps(plan["shape"]),
            "cutoff_sigma": float(plan["cutoff"]), "tail_corrections": "analytic, beyond the cut-off",
            "method": METHOD, "particles_requested": int(plan["particles"]),
            "equilibration_sweeps": int(plan["equilibration"]),
            "samples": int(plan["samples"]), "seed": int(plan["seed"]),
            "virial_below": float(plan["virial_below"]),
            "simulation_above": float(plan["simulation_above"]),
            "study_name": plan["study_name"], "study_file": plan["study_file"],
            "versions": json.dumps(package_versions()),
            "created": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
            "interpolation": "u = u_vir(B2+B3) + w(rho) * tensor spline (ln T*, rho*) of the "
                             "simulated departures; degree min(3, nodes - 1) per axis",
            "units": "reduced: T* = kT/eps, rho* = rho sigma^3, u_res per particle / eps, "
                     "cv_res per particle / k, Z = p/(rho k T)",
            "interpolation_error": json.dumps(holdout["summary"]),
        }
        f.attrs.update(attrs)
        f["temperature_red"] = T_t
        f["density_red"] = rho_d
        for q in QUANTITIES:
            f[q] = data[q]
            f[f"{q}_stderr"] = err[q]
        f["u_res_inefficiency"] = g_td
        f["particles"] = n_td
        v = f.create_group("virial")
        for k, a in vir_nodes.items():
            v[k] = a
        h = f.create_group("holdout")
        for k, a in holdout["points"].items():
            h[k] = a
    os.replace(tmp, out_path)
    return out_path


# -- the table --------------------------------------------------------------------------

class CorrespondingStatesTable:
    """Reduced residual properties of one potential shape on a (T*, rho*) grid.

    Use :meth:`load` to read a table file.  All methods take reduced
    temperatures and densities (scalars or arrays of one shape) and return
    ``(value, stderr)`` with that shape.

    Attributes
    ----------
    temperature_red : ndarray, shape=(n_t,)
    density_red : ndarray, shape=(n_d,), the first 0
    form : str
    shape : dict
        Mie exponents (empty for LJ).
    cutoff_red : float
    interpolation_error : dict
        Hold-out summary per quantity: ``rms_abs``, ``max_abs`` (reduced),
        ``rms_z`` (error over the combined standard error), ``n``.
    provenance : dict
        The file's attributes.
    """

    def __init__(self, temperature_red, density_red, data, stderr, virial_nodes, form, shape,
                 cutoff_red, virial_below, simulation_above, provenance):
        self.temperature_red = np.asarray(temperature_red, dtype=float)
        self.density_red = np.asarray(density_red, dtype=float)
        self.form = form
        self.shape = dict(shape)
        self.cutoff_red = float(cutoff_red)
        self.virial_below = float(virial_below)
        self.simulation_above = float(simulation_above)
        self.provenance = dict(provenance)
        self.interpolation_error = json.loads(provenance["interpolation_error"]) \
            if "interpolation_error" in provenance else {}
        self._series = _VirialSeries(virial_nodes)
        self._x_t = np.log(self.temperature_red)
        self._bx = _basis(self._x_t)
        self._bxd = self._bx.derivative()
        self._by = _basis(self.density_red)
        self.data = {q: np.asarray(data[q], dtype=float) for q in QUANTITIES}
        self.stderr = {q: np.asarray(stderr[q], dtype=float) for q in QUANTITIES}
        self._dep = {}
        for q in QUANTITIES:
            vir = self._series(q, self.temperature_red[:, None], self.density_red[None, :])
            self._dep[q] = self.data[q] - vir
        self._var = {q: self.stderr[q] ** 2 for q in QUANTITIES}

    # -- reading ----------------------------------------------------------------------
    @classmethod
    def load(cls, path):
        """Read a table file written by :func:`assemble_table`."""
        import h5py
        path = Path(path)
        if not path.is_file():
            raise StudyError(f"table file '{path}' does not exist; build one with "
                             "'mdsim table build STUDY --out FILE.h5'")
        try:
            f = h5py.File(path, "r")
        except OSError as exc:
            raise StudyError(f"table file '{path}' is not an HDF5 file ({exc})") from None
        with f:
            attrs = {k: (v.decode() if isinstance(v, bytes) else v) for k, v in f.attrs.items()}
            if attrs.get("format") != FORMAT_NAME:
                raise StudyError(f"table file '{path}' is not a corresponding-states table "
                                 f"(format {attrs.get('format')!r}); build one with "
                                 "'mdsim table build'")
            if int(attrs.get("format_version", -1)) > FORMAT_VERSION:
                raise StudyError(f"table file '{path}' has format version "
                                 f"{attrs['format_version']}, newer than this tool reads "
                                 f"({FORMAT_VERSION}); update the tool")
            data = {q: f[q][()] for q in QUANTITIES}
            err = {q: f[f"{q}_stderr"][()] for q in QUANTITIES}
            vir = {k: f["virial"][k][()] for k in f["virial"]}
            table = cls(f["temperature_red"][()], f["density_red"][()], data, err, vir,
                        attrs["form"], json.loads(attrs["shape"]), attrs["cutoff_sigma"],
                        attrs["virial_below"], attrs["simulation_above"], attrs)
            table.path = path
        return table

    # -- ranges -------------------------------------------------------------------------
    @property
    def T_range(self):
        return float(self.temperature_red[0]), float(self.temperature_red[-1])

    @property
    def rho_range(self):
        return float(self.density_red[0]), float(self.density_red[-1])

    def covers(self, T_red, rho_red):
        """True where (T*, rho*) lies inside the grid (bool or bool array)."""
        T = np.asarray(T_red, dtype=float)
        rho = np.asarray(rho_red, dtype=float)
        lo, hi = self.T_range
        out = (T >= lo) & (T <= hi) & (rho >= 0.0) & (rho <= self.rho_range[1])
        return bool(out) if out.ndim == 0 else out

    def _check(self, T, rho):
        inside = np.asarray(self.covers(T, rho))
        if not np.all(inside):
            k = np.flatnonzero(~inside.ravel())[0]
            t, r = np.broadcast_to(T, inside.shape).ravel()[k], np.broadcast_to(rho, inside.shape).ravel()[k]
            raise StudyError(
                f"state T* = {t:.6g}, rho* = {r:.6g} is outside the corresponding-states table "
                f"(T* {self.T_range[0]:g} to {self.T_range[1]:g}, rho* 0 to "
                f"{self.rho_range[1]:g}); build a table with a wider [table] grid or use a "
                "simulation route")

    # -- weights ------------------------------------------------------------------------
    def weights(self, T_red, rho_red, derivative=0):
        """Interpolation weights of the grid data, shape=(n_q, n_t, n_d).

        The table value of a quantity q at the query points is
        q_vir + sum_td W_qtd (q_td - q_vir_td); ``derivative=1`` gives the
        weights of d/dT*.
        """
        T = np.atleast_1d(np.asarray(T_red, dtype=float)).ravel()
        rho = np.atleast_1d(np.asarray(rho_red, dtype=float)).ravel()
        x = np.log(T)
        if derivative == 1:
            Lx = self._bxd(x) / T[:, None]
        else:
            Lx = self._bx(x)
        My = self._by(rho) * _blend(rho, self.virial_below, self.simulation_above)[:, None]
        return Lx[:, :, None] * My[:, None, :]

    def _evaluate(self, q, T_red, rho_red, derivative=0):
        T = np.asarray(T_red, dtype=float)
        rho = np.asarray(rho_red, dtype=float)
        T, rho = np.broadcast_arrays(T, rho)
        self._check(T, rho)
        W = self.weights(T, rho, derivative)
        value = self._series(q, T.ravel(), rho.ravel(), derivative) \
            + np.einsum("qtd,td->q", W, self._dep[q])
        se = np.sqrt(np.einsum("qtd,td->q", W * W, self._var[q]))
        if T.ndim == 0:
            return float(value[0]), float(se[0])
        return value.reshape(T.shape), se.reshape(T.shape)

    def u_res(self, T_red, rho_red, derivative=0):
        """Residual energy per particle / epsilon (full potential), and its standard error.

        ``derivative=1``: d u_res*/dT* (the residual heat capacity per
        particle in k implied by the energies) and its standard error.
        """
        if derivative not in (0, 1):
            raise StudyError(f"setting 'derivative' = {derivative!r}: allowed 0 or 1")
        return self._evaluate("u_res", T_red, rho_red, derivative)

    def cv_res(self, T_red, rho_red):
        """Residual heat capacity per particle / k from the energy fluctuations."""
        return self._evaluate("cv_res", T_red, rho_red)

    def compressibility(self, T_red, rho_red):
        """Z = p / (rho k T) and its standard error."""
        return self._evaluate("Z", T_red, rho_red)

    def u_res_difference(self, T1, rho1, T2, rho2):
        """u_res*(T2, rho2) - u_res*(T1, rho1) and its standard error (covariance included)."""
        self._check(np.asarray([T1, T2]), np.asarray([rho1, rho2]))
        W = self.weights([T1, T2], [rho1, rho2])
        v = self._series("u_res", np.array([T1, T2]), np.array([rho1, rho2]))
        u = v + np.einsum("qtd,td->q", W, self._dep["u_res"])
        dW = W[1] - W[0]
        return float(u[1] - u[0]), float(np.sqrt(np.sum(dW * dW * self._var["u_res"])))

    def density_from_pressure(self, T_red, p_red):
        """The gas-branch rho* with rho T Z(T, rho) = p* (reduced), and its standard error."""
        from scipy.optimize import brentq
        T = float(T_red)
        p = float(p_red)
        self._check(T, 0.0)
        rho_grid = np.linspace(0.0, self.rho_range[1], 8 * len(self.density_red))
        Z, _ = self.compressibility(np.full_like(rho_grid, T), rho_grid)
        f = rho_grid * T * Z - p
        k = np.flatnonzero((f[:-1] <= 0.0) & (f[1:] > 0.0))
        if p <= 0.0 or not len(k):
            raise StudyError(
                f"initial pressure p* = {p:.6g} at T* = {T:.6g} is not reached inside the "
                f"corresponding-states table (rho* up to {self.rho_range[1]:g} gives p* up to "
                f"{np.nanmax(rho_grid * T * Z):.4g}); give the initial density instead or "
                "build a table reaching higher densities")
        a, b = rho_grid[k[0]], rho_grid[k[0] + 1]
        rho = brentq(lambda r: r * T * self.compressibility(T, r)[0] - p, a, b, xtol=1e-14,
                     rtol=1e-13)
        Z0, sZ = self.compressibility(T, rho)
        # d rho / d Z at fixed p: rho_i = p / (T Z) to first order.
        return float(rho), float(rho * sZ / Z0)

    # -- hold-out ---------------------------------------------------------------------------
    def hold_out(self):
        """Leave each interior grid node out along each axis and predict it from the rest.

        Returns
        -------
        dict
            ``points``: arrays ``quantity`` (index into QUANTITIES), ``axis`` (0 T, 1 rho),
            ``i_t``, ``i_d``, ``predicted``, ``actual``, ``stderr`` (combined);
            ``summary``: per quantity {rms_abs, max_abs, rms_z, n}.  Holding a node out
            doubles the local spacing, so these overstate the error of the full table.
        """
        from scipy.interpolate import make_interp_spline
        rows = []
        n_t, n_d = len(self.temperature_red), len(self.density_red)
        for qi, q in enumerate(QUANTITIES):
            D, V = self._dep[q], self._var[q]
            for axis, coords, n in ((0, self._x_t, n_t), (1, self.density_red, n_d)):
                if n < 3:
                    continue
                for k in range(1, n - 1):
                    keep = np.array([m for m in range(n) if m != k])
                    basis = make_interp_spline(coords[keep], np.eye(len(keep)),
                                               k=min(3, len(keep) - 1))(coords[k])
                    others = range(1, n_d) if axis == 0 else range(n_t)
                    for o in others:
                        i, j = (k, o) if axis == 0 else (o, k)
                        if j == 0:
                            continue
                        line = D[keep, j] if axis == 0 else D[i, keep]
                        lvar = V[keep, j] if axis == 0 else V[i, keep]
                        pred = float(basis @ line)
                        se = math.sqrt(float(basis ** 2 @ lvar) + V[i, j])
                        rows.append((qi, axis, i, j, pred, D[i, j], se))
        arr = np.array(rows, dtype=float).reshape(-1, 7)
        points = {name: arr[:, c] for c, name in enumerate(
            ("quantity", "axis", "i_t", "i_d", "predicted", "actual", "stderr"))}
        summary = {}
        for qi, q in enumerate(QUANTITIES):
            sel = arr[:, 0] == qi
            if not np.any(sel):
                summary[q] = {"n": 0}
                continue
            d = arr[sel, 4] - arr[sel, 5]
            z = d / np.where(arr[sel, 6] > 0, arr[sel, 6], np.inf)
            summary[q] = {"n": int(sel.sum()), "rms_abs": float(np.sqrt(np.mean(d * d))),
                          "max_abs": float(np.max(np.abs(d))),
                          "rms_z": float(np.sqrt(np.mean(z * z)))}
        return {"points": points, "summary": summary}

    def describe(self):
        """A few lines for `mdsim table show`."""
        lines = [f"corresponding-states table: {self.form} {self.shape or ''}".rstrip(),
                 f"  cut-off {self.cutoff_red:g} sigma (analytic tail beyond)",
                 f"  T* {len(self.temperature_red)} nodes: "
                 + ", ".join(f"{t:g}" for t in self.temperature_red),
                 f"  rho* {len(self.density_red)} nodes: "
                 + ", ".join(f"{r:g}" for r in self.density_red),
                 f"  exact B2 + B3 series below rho* = {self.virial_below:g}, simulation above "
                 f"{self.simulation_above:g}"]
        p = self.provenance
        if p:
            lines.append(f"  built {p.get('created', '?')} from study {p.get('study_name', '?')}: "
                         f"{p.get('method')}, N >= {p.get('particles_requested')}, "
                         f"{p.get('equilibration_sweeps')} + {p.get('samples')} sweeps, "
                         f"seed {p.get('seed')}")
        for q, s in self.interpolation_error.items():
            if s.get("n"):
                lines.append(f"  hold-out error {q}: rms {s['rms_abs']:.2g}, max {s['max_abs']:.2g}"
                             f" (reduced), rms z {s['rms_z']:.2g} over {s['n']} held-out nodes")
        return "\n".join(lines)


# -- the expansion through the table ----------------------------------------------------

def _heat_capacity(cv_ig):
    from analysis.heatcapacity import ConstantHeatCapacity, IdealGasHeatCapacity
    if isinstance(cv_ig, IdealGasHeatCapacity):
        return cv_ig
    if isinstance(cv_ig, (int, float)) and not isinstance(cv_ig, bool) and cv_ig > 0:
        return ConstantHeatCapacity(float(cv_ig))
    raise StudyError(f"setting 'cv_ig' = {cv_ig!r}: give an ideal-gas heat capacity model "
                     "(analysis.heatcapacity) or a positive number in J/(mol K)")


def _positive(name, value, unit, example):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise StudyError(f"setting '{name}' = {value!r}: must be a number in {unit} "
                         f"(for example {example})") from None
    if not math.isfinite(v) or v <= 0.0:
        raise StudyError(f"setting '{name}' = {value!r}: must be positive and finite, in {unit} "
                         f"(for example {example})")
    return v


def table_delta_T_full(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                       volume_ratio, p_i_Pa=None, rho_i_mol_m3=None):
    """Free expansion at constant U through a corresponding-states table.

    Parameters
    ----------
    table : CorrespondingStatesTable
    epsilon_K : float
        epsilon / k, K.
    sigma_angstrom : float
    molar_mass_kg_mol : float
        Checked for the de Boer parameter (the table is classical).
    cv_ig : IdealGasHeatCapacity or float
        Ideal-gas c_v(T), J/(mol K).
    T_i_K : float
    volume_ratio : float
        V_f / V_i > 1.
    p_i_Pa, rho_i_mol_m3 : float
        Exactly one: the initial pressure (rho_i from the tabulated Z) or
        the initial molar density.

    Returns
    -------
    dict
        ``delta_T_K``, ``delta_T_stderr_K``, ``T_f_K``, ``rho_i_mol_m3``,
        ``rho_f_mol_m3``, ``p_i_Pa``, and the reduced states.

    Notes
    -----
    Solves U_ig(T_f) + R eps u_res*(T_f/eps, rho_f*) = U_ig(T_i) + R eps
    u_res*(T_i/eps, rho_i*) by a bracketed root search.  The standard error
    is that of the table difference u_res*(f) - u_res*(i) (shared grid nodes
    correlated), times R eps / C_v(T_f, rho_f), with the error of rho_i
    from the tabulated Z added in quadrature through d(Delta T)/d(rho_i).
    """
    from scipy.optimize import brentq
    from mdsim.units import K_B, N_A, R_GAS
    eps = _positive("epsilon_K", epsilon_K, "K", "119.8")
    sig_m = _positive("sigma_angstrom", sigma_angstrom, "angstrom", "3.405") * 1e-10
    M = _positive("molar_mass_kg_mol", molar_mass_kg_mol, "kg/mol", "0.039948")
    T_i = _positive("T_i_K", T_i_K, "K", "295.15")
    r = _positive("volume_ratio", volume_ratio, "", "2.0")
    if r <= 1.0:
        raise StudyError(f"setting 'volume_ratio' = {volume_ratio!r}: must be above 1 "
                         "(V_final / V_initial; 2.0 for an equal evacuated volume)")
    if (p_i_Pa is None) == (rho_i_mol_m3 is None):
        raise StudyError("give exactly one of p_i_Pa or rho_i_mol_m3 for the initial state")
    cv = _heat_capacity(cv_ig)
    lam = 6.62607015e-34 / (sig_m * math.sqrt(M / N_A * K_B * eps))
    if lam > 1.0:
        import warnings
        warnings.warn(f"de Boer parameter {lam:.2f} > 1: quantum effects are large and the "
                      "classical table does not include them", stacklevel=2)
    to_rho_red = N_A * sig_m ** 3
    T_ir = T_i / eps
    if rho_i_mol_m3 is None:
        p = _positive("p_i_Pa", p_i_Pa, "Pa", "22e5")
        p_red = p * sig_m ** 3 / (K_B * eps)
        rho_ir, s_rho = table.density_from_pressure(T_ir, p_red)
    else:
        rho_ir = _positive("rho_i_mol_m3", rho_i_mol_m3, "mol/m^3", "900") * to_rho_red
        s_rho = 0.0
        table._check(T_ir, rho_ir)
        p = None
    scale = R_GAS * eps  # J/mol per reduced energy

    def solve(rho_i_red):
        rho_f = rho_i_red / r
        u_i = table.u_res(T_ir, rho_i_red)[0]
        target = cv.u(T_i) + scale * u_i
        lo = max(table.T_range[0] * eps, cv.valid_range[0])
        hi = min(table.T_range[1] * eps, cv.valid_range[1])

        def balance(T):
            return cv.u(T) + scale * table.u_res(T / eps, rho_f)[0] - target
        f_lo, f_hi = balance(lo), balance(hi)
        if f_lo * f_hi > 0.0:
            raise StudyError(
                f"the final state (rho* = {rho_f:.4g}) has no temperature inside the table "
                f"(T* {table.T_range[0]:g} to {table.T_range[1]:g}) with U_f = U_i; build a "
                "table over a wider temperature range or use a simulation route")
        T_f = brentq(balance, lo, hi, xtol=1e-10 * T_i, rtol=1e-13)
        return T_f, rho_f

    T_f, rho_fr = solve(rho_ir)
    du, s_du = table.u_res_difference(T_ir, rho_ir, T_f / eps, rho_fr)
    c_f = float(cv.cv(T_f)) + R_GAS * table.u_res(T_f / eps, rho_fr, derivative=1)[0]
    se = scale * s_du / c_f
    if s_rho > 0.0:
        h = 1e-4 * rho_ir
        T_f2, _ = solve(rho_ir + h)
        se = math.hypot(se, (T_f2 - T_f) / h * s_rho)
    if p is None:
        Z, _ = table.compressibility(T_ir, rho_ir)
        p = rho_ir * T_ir * Z * K_B * eps / sig_m ** 3
    return {"delta_T_K": T_f - T_i, "delta_T_stderr_K": se, "T_f_K": T_f,
            "rho_i_mol_m3": rho_ir / to_rho_red, "rho_f_mol_m3": rho_fr / to_rho_red,
            "p_i_Pa": float(p), "T_i_red": T_ir, "rho_i_red": rho_ir,
            "T_f_red": T_f / eps, "rho_f_red": rho_fr}


def table_delta_T(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                  volume_ratio, p_i_Pa=None, rho_i_mol_m3=None):
    """(delta_T_K, stderr_K) of a free expansion through the table.

    See :func:`table_delta_T_full` for the parameters and the method.
    """
    out = table_delta_T_full(table, epsilon_K, sigma_angstrom, molar_mass_kg_mol, cv_ig, T_i_K,
                             volume_ratio, p_i_Pa, rho_i_mol_m3)
    return out["delta_T_K"], out["delta_T_stderr_K"]
