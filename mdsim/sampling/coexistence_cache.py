"""Coexistence points of the Gibbs ensemble: the record and its cache in a run directory.

:class:`CoexistencePoint` holds the coexisting densities, energies and
pressures of a potential at one temperature in reduced units
(:func:`mdsim.sampling.coexistence.coexistence_point` computes it).  The
cache: one JSON file per point under ``cache_dir/POTENTIAL/``, POTENTIAL
the fingerprint of the reduced potential (:func:`potential_fingerprint`),
so one folder serves every epsilon and sigma of a shape and cut-off
(``docs/run-directory.md`` section 15).
"""
import hashlib
import json
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np

from mdsim.files import atomic_write_text

__all__ = ["CoexistencePoint", "TAIL_TREATMENT", "potential_fingerprint", "cache_file",
           "read_cached", "write_cached", "cached_points"]

TAIL_TREATMENT = "truncated at rc, analytic long-range correction per box (g(r) = 1 beyond rc)"
"""How the interaction beyond the cut-off is treated (the same in every route)."""

_CACHE_VERSION = 2
# 2: means and errors over the whole production (version 1 cut a start chosen from the data:
# biased vapour densities at low T); older files are computed again.


@dataclass(frozen=True)
class CoexistencePoint:
    """Coexisting vapour and liquid of one potential at one temperature (reduced units).

    Attributes
    ----------
    T_red : float
        kT / epsilon.
    rho_vap, rho_liq : float
        Coexisting number densities, rho sigma^3.
    u_vap, u_liq : float
        Residual (configurational) energy per particle of each phase,
        truncated pairs plus the tail, in epsilon.
    p_sat : float
        Vapour pressure, p sigma^3 / epsilon, from the virial of the
        vapour box.
    p_liq : float
        Pressure of the liquid box (equal to p_sat within the errors at
        coexistence; a consistency check, much noisier).
    *_err : float
        Standard error of each, from the statistical inefficiency of its
        series (``analysis.stats.mean_and_stderr``).
    n_particles : int
    equilibration_cycles, production_cycles : int
    cutoff_red : float
        rc / sigma.
    tail : str
        The treatment beyond the cut-off (:data:`TAIL_TREATMENT`).
    seed : str
    moves : dict
        Tuned move sizes, move mix and acceptances (``GibbsSampler.settings``).
    """

    T_red: float
    rho_vap: float
    rho_vap_err: float
    rho_liq: float
    rho_liq_err: float
    u_vap: float
    u_vap_err: float
    u_liq: float
    u_liq_err: float
    p_sat: float
    p_sat_err: float
    p_liq: float
    p_liq_err: float
    n_particles: int
    equilibration_cycles: int
    production_cycles: int
    cutoff_red: float
    tail: str = TAIL_TREATMENT
    seed: str = ""
    moves: dict = field(default_factory=dict)


def potential_fingerprint(pairs):
    """A short hash of a reduced potential: its pair parameters, cut-off and form (and table).

    Equal for every epsilon and sigma of one shape and cut-off once reduced
    (the cache folder's name and the check that a table's coexistence grid
    fits a study's potential).

    >>> from mdsim.engine.potentials import LennardJones, PairMatrix
    >>> a = PairMatrix([LennardJones(1.0, 1.0)], 3.0)
    >>> b = PairMatrix([LennardJones(119.8, 3.405)], 3.0).scaled(119.8, 3.405)
    >>> potential_fingerprint(a) == potential_fingerprint(b)
    True
    """
    h = hashlib.sha256()
    h.update(np.ascontiguousarray(pairs.params_ab, dtype=np.float64).tobytes())
    h.update(np.ascontiguousarray(pairs.table, dtype=np.float64).tobytes())
    h.update(str(int(pairs.form)).encode())
    return h.hexdigest()[:16]


def cache_file(cache_dir, pairs, T_red, n_particles, equilibration_cycles, production_cycles,
               sample_interval, seed):
    """The cache file of one coexistence point: ``cache_dir/POTENTIAL/T..._n..._....json``.

    POTENTIAL is a fingerprint of the reduced pair parameters with their
    cut-off (and the table of a tabulated potential); the file name holds
    every setting that changes the numbers.
    """
    name = (f"T{float(T_red):.6f}_n{int(n_particles)}_eq{int(equilibration_cycles)}"
            f"_prod{int(production_cycles)}_every{int(sample_interval)}_seed{seed}.json")
    return Path(cache_dir) / potential_fingerprint(pairs) / name


def read_cached(path):
    """The point of a cache file, or None when it is absent, unreadable or of another version."""
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None   # absent or unreadable: computed again and rewritten
    if not isinstance(data, dict) or data.get("version") != _CACHE_VERSION:
        return None
    try:
        return CoexistencePoint(**data["point"])
    except (KeyError, TypeError):
        return None


def cached_points(cache_dir, pairs):
    """The points of a potential already in a cache folder, one per temperature, by T.

    Where several runs of one temperature are cached (other settings), the
    one with the most production cycles is taken.  Unreadable files are left out.

    Parameters
    ----------
    cache_dir : path-like
    pairs : PairMatrix

    Returns
    -------
    list of CoexistencePoint

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones, PairMatrix
    >>> cached_points("no-such-folder", PairMatrix([LennardJones(1.0, 1.0)], 3.0))
    []
    """
    best = {}
    for path in sorted((Path(cache_dir) / potential_fingerprint(pairs)).glob("*.json")):
        point = read_cached(path)
        if point is None:
            continue
        old = best.get(point.T_red)
        if old is None or point.production_cycles > old.production_cycles:
            best[point.T_red] = point
    return [best[t] for t in sorted(best)]


def write_cached(path, point):
    """Write one point to its cache file (atomically)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_text(path, json.dumps({"version": _CACHE_VERSION, "point": asdict(point)},
                                       indent=1, sort_keys=True) + "\n")
