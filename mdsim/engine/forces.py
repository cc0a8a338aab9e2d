"""Forces, energy and virial over a half Verlet list.

Every pair goes through :func:`mdsim.engine.forms.pair_eval`, the one pair
formula of the project, with the parameter row of its species pair
``params_ab[s_i, s_j]``.  Pairs beyond their cut-off are masked without a
branch.  The kernels return the truncated energy sum (not shifted), the sum
of the shifts u(rc) over the pairs inside the cut-off (so the
truncated-and-shifted model energy is ``u_trunc - shift_sum``) and the
virial sum ``W = sum_pairs r * (-du/dr)``, from which the configurational
pressure is ``W / (3 V)``.

Forces are those of the truncated (equivalently truncated-and-shifted)
potential: the shift is a constant and changes no force.

A pair inside a hard core (exp-6 guard, below a table's first point) gives
u = +inf; the kernels pass it through and the wrapper :func:`compute_forces`
raises :class:`~mdsim.errors.SimulationError`.

Array suffixes: ``_n`` particle, ``_i`` coordinate, ``_k`` neighbour slot,
``_c`` chunk of particles (parallel kernel).
"""
import numpy as np
from numba import njit, prange

from mdsim.errors import SimulationError
from mdsim.engine.forms import FORM_EXP6, FORM_LJ, FORM_MIE, FORM_TABLE, RC2, SHIFT, pair_eval


@njit(cache=True, inline="always")
def _rows_form(form, single, lo, hi, r_ni, box_i, species_n, params_ab, table, nb_nk, count_n,
               f_ni):
    """Rows ``lo:hi`` of the list: add forces to ``f_ni``, return (u, shift, virial) sums.

    Called with ``form`` and ``single`` (one species) compile-time constants
    (see :func:`_rows`), so that the form branches of ``pair_eval`` fold away
    after inlining (three times faster) and a one-species system takes its
    parameter row once, not once per pair or row (rows of a dilute gas hold
    three or four pairs: per-row overhead matters there).
    """
    # scalars, not array reads: the stores into f_ni would force reloads
    bx, by, bz = box_i[0], box_i[1], box_i[2]
    ibx, iby, ibz = 1.0 / bx, 1.0 / by, 1.0 / bz
    p0 = params_ab[0, 0]
    u_sum = s_sum = w_sum = 0.0
    n_inside = 0
    for i in range(lo, hi):
        xi, yi, zi = r_ni[i, 0], r_ni[i, 1], r_ni[i, 2]
        si = species_n[i]
        fxi = fyi = fzi = 0.0
        for k in range(count_n[i]):
            j = nb_nk[i, k]
            dx = xi - r_ni[j, 0]
            dy = yi - r_ni[j, 1]
            dz = zi - r_ni[j, 2]
            dx -= bx * np.rint(dx * ibx)
            dy -= by * np.rint(dy * iby)
            dz -= bz * np.rint(dz * ibz)
            r2 = dx * dx + dy * dy + dz * dz
            p = p0 if single else params_ab[si, species_n[j]]
            u, fr = pair_eval(form, p, table, r2)
            inside = r2 < p[RC2]
            # branch-free cut-off: a masked pair adds exact zeros
            u = u if inside else 0.0
            fr = fr if inside else 0.0
            u_sum += u
            if single:
                n_inside += inside  # one shift value: count, multiply once
            else:
                s_sum += p[SHIFT] if inside else 0.0
            w_sum += fr * r2
            fx, fy, fz = fr * dx, fr * dy, fr * dz
            fxi += fx
            fyi += fy
            fzi += fz
            f_ni[j, 0] -= fx
            f_ni[j, 1] -= fy
            f_ni[j, 2] -= fz
        f_ni[i, 0] += fxi
        f_ni[i, 1] += fyi
        f_ni[i, 2] += fzi
    if single:
        s_sum = n_inside * p0[SHIFT]
    return u_sum, s_sum, w_sum


@njit(cache=True)
def _rows(lo, hi, r_ni, box_i, species_n, params_ab, form, table, nb_nk, count_n, f_ni):
    """Dispatch rows ``lo:hi`` to the variant specialised for the form."""
    if params_ab.shape[0] == 1:
        if form == FORM_LJ:
            return _rows_form(FORM_LJ, True, lo, hi, r_ni, box_i, species_n, params_ab,
                              table, nb_nk, count_n, f_ni)
        elif form == FORM_MIE:
            return _rows_form(FORM_MIE, True, lo, hi, r_ni, box_i, species_n, params_ab,
                              table, nb_nk, count_n, f_ni)
        elif form == FORM_EXP6:
            return _rows_form(FORM_EXP6, True, lo, hi, r_ni, box_i, species_n, params_ab,
                              table, nb_nk, count_n, f_ni)
        return _rows_form(FORM_TABLE, True, lo, hi, r_ni, box_i, species_n, params_ab,
                          table, nb_nk, count_n, f_ni)
    if form == FORM_LJ:
        return _rows_form(FORM_LJ, False, lo, hi, r_ni, box_i, species_n, params_ab,
                          table, nb_nk, count_n, f_ni)
    elif form == FORM_MIE:
        return _rows_form(FORM_MIE, False, lo, hi, r_ni, box_i, species_n, params_ab,
                          table, nb_nk, count_n, f_ni)
    elif form == FORM_EXP6:
        return _rows_form(FORM_EXP6, False, lo, hi, r_ni, box_i, species_n, params_ab,
                          table, nb_nk, count_n, f_ni)
    return _rows_form(FORM_TABLE, False, lo, hi, r_ni, box_i, species_n, params_ab,
                      table, nb_nk, count_n, f_ni)


@njit(cache=True)
def forces_half(r_ni, box_i, species_n, params_ab, form, table, nb_nk, count_n, f_ni):
    """Serial forces over a half list.

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64
        Positions (within one box length of the list build's), sigma.
    box_i : ndarray, shape=(3,), float64
    species_n : ndarray, shape=(n,), int64
    params_ab : ndarray, shape=(n_species, n_species, N_PARAM), float64
    form : int
    table : ndarray, shape=(n_intervals, 4), float64
    nb_nk : ndarray, shape=(n, width), int32
    count_n : ndarray, shape=(n,), int32
    f_ni : ndarray, shape=(n, 3), float64, out
        Overwritten with the forces, epsilon/sigma.

    Returns
    -------
    u_trunc, shift_sum, virial : float
        Sums over pairs inside their cut-off, epsilon.
    """
    f_ni[:] = 0.0
    return _rows(0, r_ni.shape[0], r_ni, box_i, species_n, params_ab, form, table,
                 nb_nk, count_n, f_ni)


@njit(cache=True, parallel=True)
def forces_half_parallel(r_ni, box_i, species_n, params_ab, form, table, nb_nk, count_n,
                         f_ni, f_cni):
    """Parallel forces over a half list, race free.

    The rows are split into ``n_chunks = f_cni.shape[0]`` contiguous chunks;
    each chunk accumulates into its own force buffer ``f_cni[c]`` and the
    buffers are summed per particle afterwards.  The result depends on the
    number of chunks (summation order), not on the number of threads.

    Parameters are those of :func:`forces_half`, plus
    f_cni : ndarray, shape=(n_chunks, n, 3), float64, scratch
    """
    n = r_ni.shape[0]
    n_chunks = f_cni.shape[0]
    u_c = np.zeros(n_chunks)
    s_c = np.zeros(n_chunks)
    w_c = np.zeros(n_chunks)
    for c in prange(n_chunks):
        fc = f_cni[c]
        fc[:] = 0.0
        lo = (c * n) // n_chunks
        hi = ((c + 1) * n) // n_chunks
        u_c[c], s_c[c], w_c[c] = _rows(lo, hi, r_ni, box_i, species_n, params_ab, form,
                                       table, nb_nk, count_n, fc)
    for i in prange(n):
        for d in range(3):
            acc = 0.0
            for c in range(n_chunks):
                acc += f_cni[c, i, d]
            f_ni[i, d] = acc
    u_t = s_t = w_t = 0.0
    for c in range(n_chunks):
        u_t += u_c[c]
        s_t += s_c[c]
        w_t += w_c[c]
    return u_t, s_t, w_t


def check_finite(u_trunc, where=""):
    """Raise SimulationError if a pair came inside a hard core (u = +inf) or worse."""
    if not np.isfinite(u_trunc):
        kind = "+inf" if u_trunc == np.inf else "not a number"
        raise SimulationError(
            f"configurational energy is {kind}{where}: two particles came inside the hard core "
            "of the potential (the exp-6 short-range guard or below the first point of a "
            "table). Use a smaller time step, a lower temperature, or a table that starts at "
            "a shorter distance")


def compute_forces(r_ni, box_i, species_n, pairs, nlist, f_ni=None, f_cni=None):
    """Forces, truncated energy, shift sum and virial of a configuration.

    Parameters
    ----------
    r_ni : ndarray, shape=(n, 3), float64
        Positions in the list's sorted order, sigma.
    box_i : ndarray, shape=(3,), float64
    species_n : ndarray, shape=(n,), int64
    pairs : mdsim.engine.potentials.PairMatrix
    nlist : mdsim.engine.neighbours.NeighbourList
        Built for these positions (within skin/2).
    f_ni : ndarray, shape=(n, 3), optional
        Output buffer.
    f_cni : ndarray, shape=(n_chunks, n, 3), optional
        If given, the parallel kernel is used with this many chunks.

    Returns
    -------
    f_ni : ndarray, shape=(n, 3)
    u_trunc, shift_sum, virial : float
        Sums over pairs (not per particle), epsilon.

    Raises
    ------
    SimulationError
        If a pair is inside a hard core.
    """
    r_ni = np.ascontiguousarray(r_ni, dtype=float)
    n = r_ni.shape[0]
    if f_ni is None:
        f_ni = np.empty((n, 3))
    box_i = np.ascontiguousarray(box_i, dtype=float)
    species_n = np.ascontiguousarray(species_n, dtype=np.int64)
    if f_cni is None:
        u, s, w = forces_half(r_ni, box_i, species_n, pairs.params_ab, pairs.form, pairs.table,
                              nlist.nb_nk, nlist.count_n, f_ni)
    else:
        u, s, w = forces_half_parallel(r_ni, box_i, species_n, pairs.params_ab, pairs.form,
                                       pairs.table, nlist.nb_nk, nlist.count_n, f_ni, f_cni)
    check_finite(u)
    return f_ni, u, s, w
