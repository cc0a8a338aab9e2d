"""The Axilrod-Teller term's first-order effect on a simulated free expansion.

Configurations are sampled with the pair potential alone (canonical Monte
Carlo, :class:`mdsim.engine.MCSampler`) and the three-body energy U3
(:func:`mdsim.engine.threebody.three_body_energy`) is evaluated on each.
To first order in U3 the internal energy of the gas with the three-body term
differs from the pair-only one by

    dU = d(beta <U3>_0) / d(beta) = <U3>_0 - beta Cov_0(U0, U3)

(the first-order free energy is <U3>_0, Zwanzig, J. Chem. Phys. 22, 1420
(1954); U = d(beta A)/d(beta)), U0 the pair energy; the covariance is the
change of the sampled configurations that the term would cause, and it is
not small (measured: it adds about a third to <U3> for argon at 100 bar).
Per particle (u = U / N): du = <u3> - N Cov(u0, u3) / T.  The neglected
second-order terms are of order beta N Var(u3) per particle (measured: about
1 % of du for argon at 100 bar).

The free-expansion balance u_ig(T_f) + u_res(T_f, rho_f) = u_ig(T_i) +
u_res(T_i, rho_i) then moves T_f by

    d(Delta T) = (du_i - du_f) / (c_v_ig + c_v_res(T_f, rho_f))

to first order, with du_f taken at the pair-only final temperature (the
error of that is second order too).  This is a check of the B2 + B3 route's
non-additive C (docs/physics.md section 7a.4) at densities where the
virial series is not exact, not a route of the pipeline.

Everything in reduced units (``docs/units.md``); C9 in epsilon sigma^9.
"""
from collections import namedtuple

import numpy as np

from analysis.stats import MIN_SAMPLES, mean_and_stderr, variance_and_stderr
from mdsim.checks import count, positive
from mdsim.engine.montecarlo import MCSampler
from mdsim.engine.threebody import three_body_energy
from mdsim.errors import SettingError

__all__ = ["ThreeBodyShift", "three_body_energy_shift", "three_body_delta_T_shift"]

ThreeBodyShift = namedtuple("ThreeBodyShift", "du du_stderr u3 u3_stderr cv_res cv_res_stderr "
                                              "temperature density n_samples")
ThreeBodyShift.__doc__ = """First-order three-body energy change at one state (reduced, per atom).

du, du_stderr : the energy change <u3> - N Cov(u0, u3) / T and its standard error
u3, u3_stderr : <u3>, the mean three-body energy per particle
cv_res, cv_res_stderr : the pair-only residual heat capacity N Var(u0) / T^2, per particle / k
temperature, density : the state sampled
n_samples : configurations evaluated
"""


def three_body_energy_shift(system, temperature, c9, cutoff, *, seed, samples=200, interval=4,
                            equilibration=200):
    """Sample a state with the pair potential and return the first-order three-body energy.

    Parameters
    ----------
    system : mdsim.engine.System
        Atoms with positions, in a cubic box (one species).
    temperature : float
        kT / epsilon.
    c9 : float
        Axilrod-Teller coefficient, epsilon sigma^9.
    cutoff : float
        Three-body cut-off, sigma (:func:`mdsim.engine.threebody.three_body_energy`).
    seed : int
    samples, interval, equilibration : int, optional
        Configurations evaluated, sweeps between them, and sweeps before the first.

    Returns
    -------
    ThreeBodyShift

    Notes
    -----
    du = <u3> - N Cov(u0, u3) / T is the mean of the per-sample values
    u3_t - N (u0_t - <u0>)(u3_t - <u3>) / T, whose standard error counts the
    correlation between samples (:func:`analysis.stats.mean_and_stderr`).
    """
    box_i = np.asarray(system.box_i, dtype=float)
    if system.counts_a.size != 1 or not np.allclose(box_i, box_i[0]):
        raise SettingError("system", f"{system.counts_a.size} species, box {box_i.tolist()}",
                           "the three-body energy needs one species of atoms in a cubic box")
    T = positive("temperature", temperature, "reduced kT/epsilon")
    samples = count("samples", samples, MIN_SAMPLES, "configurations, typically 100 to 1000")
    sampler = MCSampler(system, temperature=T, seed=seed)
    sampler.equilibrate(equilibration)
    n = system.n_particles
    u0_t = np.empty(samples)
    u3_t = np.empty(samples)
    for t in range(samples):
        u0_t[t] = sampler.run(1, interval)["u_full"][0]
        u3_t[t] = three_body_energy(sampler.r_ni, box_i[0], c9, cutoff) / n
    x_t = u3_t - n * (u0_t - u0_t.mean()) * (u3_t - u3_t.mean()) / T
    du = mean_and_stderr(x_t, discard_equilibration=False)
    u3 = mean_and_stderr(u3_t, discard_equilibration=False)
    var = variance_and_stderr(u0_t, discard_equilibration=False)
    scale = n / (T * T)
    return ThreeBodyShift(du.mean, du.stderr, u3.mean, u3.stderr, scale * var.value,
                          scale * var.stderr, T, system.density, samples)


def three_body_delta_T_shift(initial, final, cv_ig):
    """First-order change of Delta T from the three-body energy at both end states.

    Parameters
    ----------
    initial, final : ThreeBodyShift
        At (T_i, rho_i) and at (T_f, rho_f) of the pair-only expansion.
    cv_ig : float
        Ideal-gas heat capacity per particle / k (1.5 for atoms).

    Returns
    -------
    shift, stderr : float
        d(Delta T) in reduced temperature (multiply by epsilon/k for K).

    Notes
    -----
    d(Delta T) = (du_i - du_f) / (c_v_ig + c_v_res(T_f, rho_f)) (module notes).

    Examples
    --------
    >>> a = ThreeBodyShift(0.004, 1e-4, 0.006, 1e-4, 0.1, 0.01, 2.5, 0.1, 200)
    >>> b = ThreeBodyShift(0.001, 1e-4, 0.0015, 1e-4, 0.05, 0.01, 2.3, 0.05, 200)
    >>> [round(x, 5) for x in three_body_delta_T_shift(a, b, 1.5)]
    [0.00194, 9e-05]
    """
    cv = positive("cv_ig", cv_ig, "per particle / k, 1.5 for atoms") + final.cv_res
    shift = (initial.du - final.du) / cv
    stderr = float(np.hypot(initial.du_stderr, final.du_stderr)) / cv
    return shift, stderr
