"""The rigid-rotor splitting against exact solutions, without the molecular pair kernel.

Checks: a free linear rotor keeps |L| and e.L = 0 and turns at the exact
rate |L|/I (Goldstein, Classical Mechanics, ch. 5); a dipole pendulum in a
uniform field plus a harmonic trap on the centre (both written here)
conserves energy with a second-order error, so halving dt divides it by
about 4 (a property of any symmetric second-order splitting, Hairer,
Lubich and Wanner, Geometric Numerical Integration, 2006, ch. II); the
kick against a slow NumPy version; the start momenta and the thermostat
against the canonical distribution.
"""
import math

import numpy as np
import pytest

from mdsim.engine.rigid_integrator import (draw_axes, drift_rotate, kick, kinetic_parts,
                                           start_momenta, thermostat_groups)
from mdsim.engine.rng import make_state


def _kick_numpy(half_dt, v, l, f, tau, e, m):
    """The obvious version: v += h F/m, L += h (tau - (tau.e) e)."""
    axial = np.sum(tau * e, axis=1, keepdims=True)
    return v + half_dt * f / m[:, None], l + half_dt * (tau - axial * e)


def test_kick_matches_numpy_reference():
    rng = np.random.default_rng(3)
    n = 7
    v, l, f, tau = (rng.normal(size=(n, 3)) for _ in range(4))
    e = rng.normal(size=(n, 3))
    e /= np.linalg.norm(e, axis=1)[:, None]
    m = rng.uniform(0.5, 2.0, n)
    v_ref, l_ref = _kick_numpy(0.01, v, l, f, tau, e, m)
    kick(0.01, v, l, f, tau, e, m)
    np.testing.assert_allclose(v, v_ref, rtol=0, atol=1e-15)
    np.testing.assert_allclose(l, l_ref, rtol=0, atol=1e-15)
    # the axial part of a torque does not reach L (only 2 rotational dof)
    np.testing.assert_allclose(np.sum((l - l_ref) * e, axis=1), 0.0, atol=1e-15)


def test_free_rotor_turns_at_the_exact_rate():
    inertia = np.array([0.3, 0.05])
    e = np.array([[1.0, 0.0, 0.0], [0.0, 0.6, 0.8]])
    l = np.array([[0.0, 0.0, 0.7], [1.1, 0.0, 0.0]])  # perpendicular to e
    e0, l0 = e.copy(), l.copy()
    r = np.zeros((2, 3))
    v = np.zeros((2, 3))
    dt, n_steps = 0.013, 5000
    for _ in range(n_steps):
        drift_rotate(dt, r, v, e, l, inertia, r.copy())
    t = dt * n_steps
    for k in range(2):
        w = np.linalg.norm(l0[k]) / inertia[k]
        u = l0[k] / np.linalg.norm(l0[k])
        exact = e0[k] * math.cos(w * t) + np.cross(u, e0[k]) * math.sin(w * t)
        # exact flow, only round-off: 5000 steps of ~1e-16 each
        np.testing.assert_allclose(e[k], exact, atol=1e-11)
        assert abs(np.linalg.norm(l[k]) - np.linalg.norm(l0[k])) < 1e-13
        assert abs(np.dot(e[k], l[k])) < 1e-14
        assert abs(np.linalg.norm(e[k]) - 1.0) < 1e-14


def _pendulum_energy(r, v, e, l, mass, inertia, mu_field, k_trap):
    kt, kr = kinetic_parts(v, l, mass, inertia)
    return kt + kr - mu_field * e[:, 2].sum() + 0.5 * k_trap * np.sum(r * r)


def _pendulum_max_error(dt, t_end=6.0):
    """Largest |E(t) - E(0)| of a dipole pendulum in a field along z plus a harmonic trap."""
    mass, inertia = np.array([1.0]), np.array([0.2])
    mu_field, k_trap = 2.0, 3.0  # U = -mu E e_z + k |r|^2 / 2
    r = np.array([[0.3, -0.2, 0.1]])
    v = np.array([[0.0, 0.5, 0.2]])
    e = np.array([[math.sin(2.0), 0.0, math.cos(2.0)]])  # 115 degrees from the field
    l = np.array([[0.0, 0.4, 0.0]])  # e.L = 0
    field = np.array([0.0, 0.0, mu_field])

    def forces():
        return -k_trap * r, np.cross(e, field)  # tau = e x (mu E)
    e0 = _pendulum_energy(r, v, e, l, mass, inertia, mu_field, k_trap)
    f, tau = forces()
    worst = 0.0
    for _ in range(int(round(t_end / dt))):
        kick(0.5 * dt, v, l, f, tau, e, mass)
        drift_rotate(dt, r, v, e, l, inertia, r.copy())
        f, tau = forces()
        kick(0.5 * dt, v, l, f, tau, e, mass)
        err = abs(_pendulum_energy(r, v, e, l, mass, inertia, mu_field, k_trap) - e0)
        worst = max(worst, err)
    return worst


def test_dipole_pendulum_energy_error_is_second_order():
    big, small = _pendulum_max_error(0.02), _pendulum_max_error(0.01)
    # second order: ratio 4 as dt -> 0 (measured 4.0006); +-0.2 leaves room for the next order
    assert 3.8 < big / small < 4.2, (big, small)
    assert big < 5e-3  # the error is small at all, not only convergent (energy scale ~ 2)


def test_start_momenta_are_canonical():
    n = 4000
    s = make_state(11)
    e = np.empty((n, 3))
    draw_axes(s, e)
    mass = np.full(n, 1.0)
    inertia = np.full(n, 0.25)
    v, l = start_momenta(s, mass, inertia, e, 1.3)
    kt, kr = kinetic_parts(v, l, mass, inertia)
    assert kt == pytest.approx(0.5 * (3 * n - 3) * 1.3, rel=1e-12)
    assert kr == pytest.approx(0.5 * 2 * n * 1.3, rel=1e-12)
    np.testing.assert_allclose(v.sum(axis=0), 0.0, atol=1e-10)
    assert np.max(np.abs(np.sum(l * e, axis=1))) < 1e-13
    # uniform axes: <e_z^2> = 1/3, sd of the mean of e_z^2 = sqrt(4/45 / n) = 0.0047
    assert abs(np.mean(e[:, 2] ** 2) - 1.0 / 3.0) < 4 * math.sqrt(4.0 / 45.0 / n)
    # a component of L normal to the axis: variance I kT; <L_perp^2> = 2 I kT exactly by the scaling
    assert np.mean(np.sum(l * l, axis=1)) == pytest.approx(2 * 0.25 * 1.3, rel=1e-12)


def test_thermostat_groups_sample_the_canonical_kinetic_energy():
    """Repeated rescaling alone (no forces) samples K of each group from the Gamma(nf/2, kT)
    distribution: mean nf kT/2, variance nf kT^2/2 (Bussi et al., J. Chem. Phys. 126, 014101)."""
    n = 20
    s = make_state(5)
    e = np.empty((n, 3))
    draw_axes(s, e)
    mass, inertia = np.ones(n), np.full(n, 0.1)
    v, l = start_momenta(s, mass, inertia, e, 0.5)  # start away from the target 1.0
    nf_t, nf_r = 3 * n - 3, 2 * n
    kt, kr = kinetic_parts(v, l, mass, inertia)
    c = math.exp(-0.5)  # fast relaxation, nearly independent draws
    samples = np.empty((20000, 2))
    for k in range(samples.shape[0]):
        kt, kr = thermostat_groups(v, l, kt, kr, 1.0, nf_t, nf_r, c, s)
        samples[k] = kt, kr
    samples = samples[200:]
    kt_chk, kr_chk = kinetic_parts(v, l, mass, inertia)
    assert kt_chk == pytest.approx(kt, rel=1e-12) and kr_chk == pytest.approx(kr, rel=1e-12)
    for col, nf in ((0, nf_t), (1, nf_r)):
        mean, var = samples[:, col].mean(), samples[:, col].var()
        # sd of the mean: sqrt(var / n_eff), n_eff >= n / 4 for c = 0.61 (AR(1), tau = (1+c)/(1-c))
        se = math.sqrt(0.5 * nf * 4.0 / samples.shape[0])
        assert abs(mean - 0.5 * nf) < 4 * se, (col, mean)
        assert var == pytest.approx(0.5 * nf, rel=0.1), (col, var)  # relative error of var ~3%
