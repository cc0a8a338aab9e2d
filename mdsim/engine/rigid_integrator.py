"""Symplectic splitting for linear rigid molecules: the numba kernels, the thermostat, the step.

State of molecule n: centre of mass ``r_ni``, velocity ``v_ni``, unit axis
``e_ni`` and angular momentum ``l_ni`` (perpendicular to the axis: a linear
rotor has no spin about its own axis), mass ``mass_n`` and the one moment of
inertia ``inertia_n`` of a linear rotor.  An atom of a mixture (one site at
its centre, no multipole) has ``inertia_n`` = 0: no rotational degrees of
freedom, its angular momentum stays zero (it feels no torque) and its axis
is never turned.  Reduced units throughout.

One step of length dt splits H = K_trans + K_rot + U into exactly solved
parts, in the symmetric (Strang) order

1. half kick: v += (dt/2) F / m, L += (dt/2) tau_perp (U's flow, axes fixed);
2. drift and free rotation: r += dt v; e turns about L/|L| through the angle
   |L| dt / I (the exact flow of K_trans + K_rot = sum m v^2/2 + |L|^2/(2I));
3. forces and torques at the new configuration, half kick again.

Each part is the exact flow of a piece of H, so the step is symplectic and
time reversible, and the energy error is O(dt^2) with no drift beyond
round-off (the splitting of Dullweber, Leimkuhler and McLachlan,
J. Chem. Phys. 107, 5840, 1997, for the case of a linear rotor, where the
free rotation is a plane rotation and needs no further splitting).
tau_perp is the torque with its axial part projected out, the part that
acts on the two rotational degrees of freedom; torques from sites on the
axis or from axial multipoles have none anyway.

Free rotation of a linear rotor (Goldstein, Classical Mechanics, ch. 5):
with omega = L / I perpendicular to e,

    e(t) = e cos(|omega| t) + (omega/|omega| x e) sin(|omega| t),   L(t) = L.

Thermostat (equilibration): stochastic velocity rescaling (Bussi, Donadio
and Parrinello, J. Chem. Phys. 126, 014101, 2007) applied to two groups
separately, the translations with nf = 3N - 3 (total momentum removed at
the start and conserved) and the rotations with nf = 2 N_rot (the N_rot
linear rotors; atoms have none).  Rescaling each
group towards its own canonical kinetic-energy distribution samples the
canonical product distribution and brings translation and rotation to the
target temperature on their own, which a gas with rare collisions would do
slowly.  The energy the thermostat adds is accumulated so that the
conserved energy stays constant in NVT runs too.

:func:`rigid_block` runs whole steps with the pair forces of
:mod:`mdsim.engine.rigid_pair`, stopping when the Verlet list goes stale
(the sampler is :class:`mdsim.engine.rigid_md.RigidMDSampler`).

Array suffixes: ``_n`` molecule, ``_i`` Cartesian coordinate.
"""
import math

import numpy as np
from numba import njit

from mdsim.engine import rng as _rng
from mdsim.engine.integrator import csvr_scale, maxwell_boltzmann
from mdsim.engine.rigid_pair import forces_half

__all__ = ["ROTATIONAL_DOF", "kick", "drift_rotate", "kinetic_parts", "thermostat_groups",
           "draw_angular_momenta", "draw_axes", "start_momenta", "translational_dof",
           "rotational_dof", "rigid_block"]

#: Rotational degrees of freedom of a linear rotor.
ROTATIONAL_DOF = 2


def translational_dof(n_molecules):
    """3N - 3: the total momentum is removed at the start and conserved.

    >>> translational_dof(100)
    297
    """
    return 3 * int(n_molecules) - 3


def rotational_dof(inertia_n):
    """2 N_rot: two per linear rotor (``inertia_n`` > 0), none for an atom (``inertia_n`` = 0).

    >>> rotational_dof(np.array([0.025, 0.025, 0.0]))
    4
    """
    return ROTATIONAL_DOF * int(np.count_nonzero(np.asarray(inertia_n) > 0.0))


@njit(cache=True)
def kick(half_dt, v_ni, l_ni, f_ni, torque_ni, e_ni, mass_n):
    """Half kick: v += h F / m and L += h tau_perp, the axial torque projected out.

    Parameters
    ----------
    half_dt : float
        dt / 2, reduced time.
    v_ni, l_ni : ndarray, shape=(n, 3), float64, in/out
        Velocities and angular momenta.
    f_ni, torque_ni : ndarray, shape=(n, 3), float64
        Forces on the centres and torques about them.
    e_ni : ndarray, shape=(n, 3), float64
        Unit axes.
    mass_n : ndarray, shape=(n,), float64
    """
    for n in range(v_ni.shape[0]):
        a = half_dt / mass_n[n]
        ex, ey, ez = e_ni[n, 0], e_ni[n, 1], e_ni[n, 2]
        tx, ty, tz = torque_ni[n, 0], torque_ni[n, 1], torque_ni[n, 2]
        axial = tx * ex + ty * ey + tz * ez
        v_ni[n, 0] += a * f_ni[n, 0]
        v_ni[n, 1] += a * f_ni[n, 1]
        v_ni[n, 2] += a * f_ni[n, 2]
        l_ni[n, 0] += half_dt * (tx - axial * ex)
        l_ni[n, 1] += half_dt * (ty - axial * ey)
        l_ni[n, 2] += half_dt * (tz - axial * ez)


@njit(cache=True)
def drift_rotate(dt, r_ni, v_ni, e_ni, l_ni, inertia_n, r_ref_ni):
    """Drift of the centres and exact free rotation of the axes over dt.

    Parameters
    ----------
    dt : float
    r_ni : ndarray, shape=(n, 3), float64, in/out
        Centres (not wrapped here).
    v_ni, l_ni : ndarray, shape=(n, 3), float64
    e_ni : ndarray, shape=(n, 3), float64, in/out
        Unit axes, turned about L/|L| through |L| dt / I.
    inertia_n : ndarray, shape=(n,), float64
        Moment of inertia of each linear rotor; 0 for an atom (never turned).
    r_ref_ni : ndarray, shape=(n, 3), float64
        Centres at the last neighbour-list build.

    Returns
    -------
    float
        Largest squared displacement of a centre since the list build.

    Notes
    -----
    e' = e cos(w dt) + (l x e) sin(w dt), l = L/|L|, w = |L|/I.  Round-off
    is kept from accumulating: e' is renormalised and L's axial part (zero
    in exact arithmetic, since e' stays in the plane normal to L) removed.
    """
    moved = 0.0
    for n in range(r_ni.shape[0]):
        d2 = 0.0
        for d in range(3):
            r_ni[n, d] += dt * v_ni[n, d]
            x = r_ni[n, d] - r_ref_ni[n, d]
            d2 += x * x
        moved = max(moved, d2)
        lx, ly, lz = l_ni[n, 0], l_ni[n, 1], l_ni[n, 2]
        lnorm = math.sqrt(lx * lx + ly * ly + lz * lz)
        if lnorm == 0.0 or inertia_n[n] == 0.0:
            continue
        angle = lnorm * dt / inertia_n[n]
        c, s = math.cos(angle), math.sin(angle)
        ux, uy, uz = lx / lnorm, ly / lnorm, lz / lnorm
        ex, ey, ez = e_ni[n, 0], e_ni[n, 1], e_ni[n, 2]
        nx = c * ex + s * (uy * ez - uz * ey)
        ny = c * ey + s * (uz * ex - ux * ez)
        nz = c * ez + s * (ux * ey - uy * ex)
        inv = 1.0 / math.sqrt(nx * nx + ny * ny + nz * nz)
        nx, ny, nz = nx * inv, ny * inv, nz * inv
        e_ni[n, 0], e_ni[n, 1], e_ni[n, 2] = nx, ny, nz
        axial = lx * nx + ly * ny + lz * nz
        l_ni[n, 0] = lx - axial * nx
        l_ni[n, 1] = ly - axial * ny
        l_ni[n, 2] = lz - axial * nz
    return moved


@njit(cache=True)
def kinetic_parts(v_ni, l_ni, mass_n, inertia_n):
    """Translational and rotational kinetic energy: sum m |v|^2 / 2 and sum |L|^2 / (2 I).

    Atoms (I = 0) have no rotational term.

    Returns
    -------
    (float, float)
        K_trans, K_rot (reduced energy, the whole system).
    """
    kt = 0.0
    kr = 0.0
    for n in range(mass_n.size):
        kt += 0.5 * mass_n[n] * (v_ni[n, 0] ** 2 + v_ni[n, 1] ** 2 + v_ni[n, 2] ** 2)
        if inertia_n[n] > 0.0:
            kr += 0.5 * (l_ni[n, 0] ** 2 + l_ni[n, 1] ** 2 + l_ni[n, 2] ** 2) / inertia_n[n]
    return kt, kr


@njit(cache=True)
def thermostat_groups(v_ni, l_ni, kin_trans, kin_rot, kT, nf_trans, nf_rot, c, s):
    """Stochastic velocity rescaling of translations and rotations, each group on its own.

    Parameters
    ----------
    v_ni, l_ni : ndarray, shape=(n, 3), float64, in/out
        Scaled by the group's factor.
    kin_trans, kin_rot : float
        Current kinetic energies of the groups (> 0).
    kT : float
        Target temperature.
    nf_trans, nf_rot : int
        Degrees of freedom of the groups (3N - 3, 2 N_rot); no rotations (nf_rot = 0), no
        rescaling of them.
    c : float
        exp(-dt / tau_thermostat).
    s : ndarray, shape=(4,), uint64
        Random state, advanced.

    Returns
    -------
    (float, float)
        The new K_trans and K_rot.
    """
    a = csvr_scale(kin_trans, 0.5 * nf_trans * kT, nf_trans, c, s)
    b = csvr_scale(kin_rot, 0.5 * nf_rot * kT, nf_rot, c, s) if nf_rot > 0 else 1.0
    v_ni *= a
    l_ni *= b
    return a * a * kin_trans, b * b * kin_rot


@njit(cache=True)
def draw_axes(s, e_ni):
    """Unit axes drawn uniformly on the sphere (normalised 3-d normal vectors)."""
    for n in range(e_ni.shape[0]):
        norm = 0.0
        while norm < 1e-12:
            for d in range(3):
                e_ni[n, d] = _rng.normal(s)
            norm = math.sqrt(e_ni[n, 0] ** 2 + e_ni[n, 1] ** 2 + e_ni[n, 2] ** 2)
        for d in range(3):
            e_ni[n, d] /= norm


@njit(cache=True)
def draw_angular_momenta(s, inertia_n, e_ni, kT, l_ni):
    """Canonical angular momenta of linear rotors at kT, exactly 2 N_rot kT / 2 in total.

    Each L is an isotropic normal 3-vector of variance I kT with its axial
    part projected out: an isotropic normal in the plane normal to the axis
    (the canonical distribution of a linear rotor's two rotational degrees
    of freedom).  The draw is then scaled so that K_rot = N_rot kT exactly.
    Atoms (I = 0) get L = 0.
    """
    n_rot = 0
    kin = 0.0
    for n in range(inertia_n.size):
        if inertia_n[n] == 0.0:
            l_ni[n, 0] = l_ni[n, 1] = l_ni[n, 2] = 0.0
            continue
        n_rot += 1
        sd = math.sqrt(inertia_n[n] * kT)
        axial = 0.0
        for d in range(3):
            l_ni[n, d] = sd * _rng.normal(s)
            axial += l_ni[n, d] * e_ni[n, d]
        for d in range(3):
            l_ni[n, d] -= axial * e_ni[n, d]
            kin += 0.5 * l_ni[n, d] ** 2 / inertia_n[n]
    if n_rot > 0:
        l_ni *= math.sqrt(0.5 * ROTATIONAL_DOF * n_rot * kT / kin)


def start_momenta(s, mass_n, inertia_n, e_ni, kT):
    """Velocities and angular momenta at kT: Maxwell-Boltzmann, total momentum removed.

    Parameters
    ----------
    s : ndarray, shape=(4,), uint64
        Random state, advanced.
    mass_n, inertia_n : ndarray, shape=(n,), float64
        Masses, and moments of inertia (0 for an atom).
    e_ni : ndarray, shape=(n, 3), float64
        Unit axes.
    kT : float
        Reduced temperature.

    Returns
    -------
    v_ni, l_ni : ndarray, shape=(n, 3), float64
        With K_trans = (3N - 3) kT / 2 and K_rot = 2 N_rot kT / 2 exactly.

    Examples
    --------
    >>> from mdsim.engine.rng import make_state
    >>> e = np.tile([0.0, 0.0, 1.0], (4, 1))
    >>> v, l = start_momenta(make_state(1), np.ones(4), np.full(4, 0.1), e, 1.5)
    >>> kt, kr = kinetic_parts(v, l, np.ones(4), np.full(4, 0.1))
    >>> round(kt, 12), round(kr, 12), float(np.abs(l[:, 2]).max())
    (6.75, 6.0, 0.0)
    """
    n = mass_n.size
    v_ni = np.zeros((n, 3))
    l_ni = np.zeros((n, 3))
    maxwell_boltzmann(s, mass_n, kT, v_ni)
    draw_angular_momenta(s, inertia_n, e_ni, kT, l_ni)
    return v_ni, l_ni


@njit(cache=True)
def rigid_block(n_steps, resume, dt, r_ni, v_ni, e_ni, l_ni, f_ni, tau_ni, mass_n, inertia_n,
                r_ref_ni, half_skin2, type_n, box_i, site_start_t, site_z_k, params_kk, form,
                elec_tm, rc, shifted, nb_nj, count_n, thermostat, kT, nf_trans, nf_rot, c, s,
                obs):
    """Up to ``n_steps`` rigid-body steps; stop early when the list is stale.

    Parameters
    ----------
    n_steps : int
    resume : bool
        The previous call stopped after the drift of a step (status 1):
        finish that step first (forces, second half kick, thermostat).
    dt : float
    r_ni, v_ni, e_ni, l_ni, f_ni, tau_ni : ndarray, shape=(n, 3), float64, in/out
        Centres, velocities, unit axes, angular momenta, forces, torques.
    mass_n, inertia_n : ndarray, shape=(n,), float64
    r_ref_ni : ndarray, shape=(n, 3)
        Centres at the last list build.
    half_skin2 : float
        (skin / 2)^2.
    type_n, box_i, site_start_t, site_z_k, params_kk, form, elec_tm, rc, shifted, nb_nj, count_n
        The arguments of :func:`mdsim.engine.rigid_pair.forces_half`.
    thermostat : bool
    kT : float
    nf_trans, nf_rot : int
        Degrees of freedom of the two thermostat groups.
    c : float
        exp(-dt / tau_thermostat).
    s : ndarray, shape=(4,), uint64
    obs : ndarray, shape=(5,), float64, in/out
        Model energy and virial of the latest force evaluation, minus the
        energy the thermostat has added (accumulated), K_trans, K_rot.

    Returns
    -------
    done : int
        Completed steps.
    status : int
        0 all done; 1 a centre moved more than skin/2: rebuild the list and
        call again with ``resume=True``; 2 the energy is not finite.
    """
    half = 0.5 * dt
    done = 0
    while done < n_steps:
        if not resume:
            kick(half, v_ni, l_ni, f_ni, tau_ni, e_ni, mass_n)
            if drift_rotate(dt, r_ni, v_ni, e_ni, l_ni, inertia_n, r_ref_ni) > half_skin2:
                return done, 1
        resume = False
        u, w = forces_half(r_ni, e_ni, type_n, box_i, site_start_t, site_z_k, params_kk, form,
                           elec_tm, rc, shifted, nb_nj, count_n, f_ni, tau_ni)
        obs[0], obs[1] = u, w
        if not np.isfinite(u):
            return done, 2
        kick(half, v_ni, l_ni, f_ni, tau_ni, e_ni, mass_n)
        kt, kr = kinetic_parts(v_ni, l_ni, mass_n, inertia_n)
        if thermostat:
            kt_new, kr_new = thermostat_groups(v_ni, l_ni, kt, kr, kT, nf_trans, nf_rot, c, s)
            obs[2] -= kt_new + kr_new - kt - kr
            kt, kr = kt_new, kr_new
        obs[3], obs[4] = kt, kr
        done += 1
    return done, 0
