"""Velocity Verlet with stochastic velocity rescaling: the numba kernels and the time step.

Thermostat: stochastic velocity rescaling (Bussi, Donadio and Parrinello,
J. Chem. Phys. 126, 014101, 2007).  After each step the kinetic energy K is
replaced by a draw from the canonical kinetic-energy distribution relaxing
with time constant tau,

    K' = c K + (1 - c) K_t (R_1^2 + S_{nf-1}) / nf + 2 R_1 sqrt(c (1 - c) K K_t / nf),

c = exp(-dt / tau), K_t = nf T / 2, R_1 a standard normal, S_{nf-1} a sum
of nf - 1 squared standard normals (drawn as 2 Gamma((nf - 1)/2)); the
velocities are scaled by sqrt(K'/K).  The energy the thermostat puts in is
accumulated, so the conserved energy of :class:`mdsim.engine.md.MDSampler`
is conserved in NVT runs too.

Degrees of freedom: nf = 3N - 3 (total momentum is removed at the start
and conserved by the dynamics and the thermostat).

Array suffixes: ``_n`` particle, ``_i`` coordinate, ``_k`` neighbour slot.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.forces import forces_half
from mdsim.errors import StudyError

__all__ = ["BASE_TIME_STEP", "default_time_step", "energy_drift", "gamma_variate", "csvr_scale",
           "maxwell_boltzmann", "kinetic_energy", "kick_drift", "kick_thermostat",
           "verlet_block", "run_in_blocks"]

#: default time step at T* <= 1 and unit mass (reduced), common practice for LJ fluids
BASE_TIME_STEP = 0.005


@njit(cache=True)
def gamma_variate(s, shape):
    """Gamma(shape, 1) variate (Marsaglia and Tsang, ACM TOMS 26, 363, 2000)."""
    boost = 1.0
    if shape < 1.0:
        # Gamma(a) = Gamma(a + 1) U^(1/a)
        u = _rng.uniform(s)
        while u <= 0.0:
            u = _rng.uniform(s)
        boost = u ** (1.0 / shape)
        shape += 1.0
    d = shape - 1.0 / 3.0
    c = 1.0 / math.sqrt(9.0 * d)
    while True:
        x = _rng.normal(s)
        v = 1.0 + c * x
        if v <= 0.0:
            continue
        v = v * v * v
        u = _rng.uniform(s)
        if u > 0.0 and math.log(u) < 0.5 * x * x + d - d * v + d * math.log(v):
            return d * v * boost


@njit(cache=True)
def csvr_scale(kinetic, kinetic_target, nf, c, s):
    """Velocity scale factor of one stochastic-velocity-rescaling step.

    Parameters
    ----------
    kinetic : float
        Current kinetic energy K (> 0).
    kinetic_target : float
        nf T / 2.
    nf : int
        Degrees of freedom.
    c : float
        exp(-dt / tau).
    s : ndarray, shape=(4,), uint64
        Random state, advanced.

    Returns
    -------
    alpha : float
        Multiply all velocities by alpha (K' = alpha^2 K).
    """
    r1 = _rng.normal(s)
    rest = 2.0 * gamma_variate(s, 0.5 * (nf - 1)) if nf > 1 else 0.0
    k_new = (c * kinetic + (1.0 - c) * kinetic_target * (r1 * r1 + rest) / nf
             + 2.0 * r1 * math.sqrt(c * (1.0 - c) * kinetic * kinetic_target / nf))
    alpha = math.sqrt(k_new / kinetic)
    # sign as in the paper's appendix (matters only for time correlations)
    if r1 + math.sqrt(c * nf * kinetic / ((1.0 - c) * kinetic_target)) < 0.0:
        alpha = -alpha
    return alpha


@njit(cache=True)
def maxwell_boltzmann(s, mass_n, kT, v_ni):
    """Draw velocities at temperature kT, remove the total momentum, and scale
    them so that the kinetic temperature over 3N - 3 dof is exactly kT."""
    n = mass_n.size
    _rng.fill_normal(s, v_ni)
    p = np.zeros(3)
    m_tot = 0.0
    for k in range(n):
        sd = math.sqrt(kT / mass_n[k])
        for d in range(3):
            v_ni[k, d] *= sd
            p[d] += mass_n[k] * v_ni[k, d]
        m_tot += mass_n[k]
    kin = 0.0
    for k in range(n):
        for d in range(3):
            v_ni[k, d] -= p[d] / m_tot
            kin += 0.5 * mass_n[k] * v_ni[k, d] ** 2
    scale = math.sqrt(0.5 * (3 * n - 3) * kT / kin)
    v_ni *= scale


@njit(cache=True)
def kinetic_energy(v_ni, mass_n):
    k = 0.0
    for n in range(mass_n.size):
        k += 0.5 * mass_n[n] * (v_ni[n, 0] ** 2 + v_ni[n, 1] ** 2 + v_ni[n, 2] ** 2)
    return k


@njit(cache=True)
def kick_drift(dt, r_ni, v_ni, f_ni, mass_n, r_ref_ni):
    """First half of a velocity-Verlet step: half kick, drift.

    Returns
    -------
    float
        Largest squared displacement since the list build (positions are
        not wrapped between builds, so a plain difference).
    """
    half = 0.5 * dt
    moved = 0.0
    for k in range(r_ni.shape[0]):
        a = half / mass_n[k]
        d2 = 0.0
        for d in range(3):
            v_ni[k, d] += a * f_ni[k, d]
            r_ni[k, d] += dt * v_ni[k, d]
            x = r_ni[k, d] - r_ref_ni[k, d]
            d2 += x * x
        moved = max(moved, d2)
    return moved


@njit(cache=True)
def kick_thermostat(dt, v_ni, f_ni, mass_n, thermostat, kT, nf, c_thermostat, s, obs):
    """Second half of a step: half kick, then the thermostat if on.

    ``obs[3]`` accumulates minus the energy the thermostat adds; ``obs[4]``
    receives the kinetic energy.
    """
    half = 0.5 * dt
    kin = 0.0
    for k in range(v_ni.shape[0]):
        a = half / mass_n[k]
        for d in range(3):
            v_ni[k, d] += a * f_ni[k, d]
        kin += 0.5 * mass_n[k] * (v_ni[k, 0] ** 2 + v_ni[k, 1] ** 2 + v_ni[k, 2] ** 2)
    if thermostat:
        alpha = csvr_scale(kin, 0.5 * nf * kT, nf, c_thermostat, s)
        v_ni *= alpha
        k_new = alpha * alpha * kin
        obs[3] -= k_new - kin
        kin = k_new
    obs[4] = kin


@njit(cache=True)
def verlet_block(n_steps, resume, dt, r_ni, v_ni, f_ni, mass_n, r_ref_ni, half_skin2, box_i,
                 species_n, params_ab, form, table, nb_nk, count_n,
                 thermostat, kT, nf, c_thermostat, s, obs):
    """Up to ``n_steps`` velocity-Verlet steps with the serial force kernel;
    stop early when the list is stale.

    The parallel force kernel is not called from here: a jitted function
    calling a cached ``parallel=True`` function crashed (segmentation fault)
    when one of the two came from the cache and the other was freshly
    compiled; the parallel path loops in Python instead (see
    ``MDSampler._advance``).

    Parameters
    ----------
    n_steps : int
    resume : bool
        The previous call stopped after the drift of a step (status 1);
        finish that step first (forces, second half kick, thermostat).
    dt : float
    r_ni, v_ni, f_ni : ndarray, shape=(n, 3), float64, in/out
    mass_n : ndarray, shape=(n,)
    r_ref_ni : ndarray, shape=(n, 3)
        Positions at the last list build.
    half_skin2 : float
        (skin / 2)^2.
    thermostat : bool
    kT, nf, c_thermostat : float, int, float
        Target temperature, degrees of freedom, exp(-dt / tau).
    s : ndarray, shape=(4,), uint64
    obs : ndarray, shape=(5,), float64, in/out
        u_trunc, shift_sum, virial (of the latest force evaluation), energy
        given to the thermostat (accumulated, negative when the thermostat
        heats), kinetic energy.

    Returns
    -------
    done : int
        Completed steps.
    status : int
        0 all done; 1 a particle moved more than skin/2: rebuild the list
        and call again with ``resume=True``; 2 the energy is not finite.
    """
    done = 0
    while done < n_steps:
        if not resume:
            if kick_drift(dt, r_ni, v_ni, f_ni, mass_n, r_ref_ni) > half_skin2:
                return done, 1
        resume = False
        u, sh, w = forces_half(r_ni, box_i, species_n, params_ab, form, table,
                               nb_nk, count_n, f_ni)
        obs[0], obs[1], obs[2] = u, sh, w
        if not np.isfinite(u):
            return done, 2
        kick_thermostat(dt, v_ni, f_ni, mass_n, thermostat, kT, nf, c_thermostat, s, obs)
        done += 1
    return done, 0


# --- Python side -----------------------------------------------------------------------

def run_in_blocks(n_steps, block, rebuild):
    """Drive a step-block kernel, rebuilding the neighbour list when it stops for it.

    Parameters
    ----------
    n_steps : int
    block : callable
        ``block(left, resume) -> (done, status)``, a kernel such as
        :func:`verlet_block`: status 0 all done, 1 the list is stale (the
        interrupted step is finished by the next call with ``resume=True``),
        2 the energy is not finite.
    rebuild : callable
        Rebuilds the list (no arguments).

    Returns
    -------
    done : int
        Completed steps.
    status : int
        0, or 2 when the energy stopped being finite.
    """
    left, resume, steps = int(n_steps), False, 0
    while left > 0 or resume:
        done, status = block(left, resume)
        left -= done
        steps += done
        resume = False
        if status == 1:
            rebuild()
            resume = True  # the interrupted step is still counted in `left`
        elif status == 2:
            return steps, 2
    return steps, 0


def energy_drift(e_conserved_t, interval, time_step):
    """Drift of the conserved energy: least-squares slope per unit time.

    Parameters
    ----------
    e_conserved_t : ndarray, shape=(n_samples,)
        ``run(...)["e_conserved"]``, per particle, epsilon.
    interval : int
        Steps between samples.
    time_step : float
        Reduced time step.

    Returns
    -------
    float
        d e_conserved / dt, epsilon per particle per reduced time unit.
    """
    e = np.asarray(e_conserved_t, dtype=float)
    if e.size < 2:
        raise StudyError(f"energy drift needs at least 2 samples, got {e.size}")
    t = np.arange(e.size) * interval * time_step
    return float(np.polyfit(t, e, 1)[0])


def default_time_step(temperature, masses_a):
    """0.005 at T* <= 1 for unit mass, shortened as 1/sqrt(T*) above (the
    closing speed of a collision grows as sqrt(T), the wall stays as steep)
    and as sqrt(m) for light species."""
    t = 1.0 if temperature is None else float(temperature)
    return BASE_TIME_STEP * math.sqrt(float(np.min(masses_a))) * min(1.0, 1.0 / math.sqrt(t))
