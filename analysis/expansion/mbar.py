"""MBAR reweighting of canonical energy samples: u_res(T) and c_v,res(T) at one density.

The energy route (:mod:`analysis.expansion.energy`) samples the residual
energy at a few temperatures on the final isochore; from two temperatures
on, this interpolant gives u_res at any temperature between them, so the
energy balance can be solved without another simulation.
"""
import numpy as np
from scipy.special import logsumexp

from analysis import stats
from mdsim.checks import count
from mdsim.errors import ConvergenceError, StudyError
from mdsim.units import R_GAS

__all__ = ["MBARInterpolant", "MIN_NEIGHBOUR_OVERLAP"]

MIN_NEIGHBOUR_OVERLAP = 0.03
"""Reweighting is trusted only where neighbouring sampled temperatures overlap at least
this much (an element of MBAR's overlap matrix; below about 0.03 the free-energy
differences, and so the interpolant between the two, are poorly determined: common
practice in reweighting, no source)."""


class MBARInterpolant:
    """u_res(T) and c_v,res(T) at fixed density by MBAR reweighting.

    Parameters
    ----------
    temperatures_K : sequence of float, length K >= 2
        Temperatures sampled (canonical ensemble, same density and N).
    u_series_J_mol : sequence of array_like
        For each temperature, the residual energy per mole of each sample
        (U_total / N times N_A), a time series.
    n_particles : int
        N of the simulations.

    Notes
    -----
    Each series is cut to its equilibrated part and subsampled to
    uncorrelated samples (pymbar ``timeseries``).  Reduced potentials
    u_kn = U_total(x_n) / (k T_k) = N u_n / (R T_k); pymbar's MBAR gives the
    free energies f_k; the expectation at any T is
    <A>(T) = sum_n A_n w_n(T), w_n ∝ exp(-N u_n / (R T)) / sum_k N_k exp(f_k - u_kn)
    (Shirts and Chodera, J. Chem. Phys. 129, 124105, 2008).  A tail
    correction is a constant at fixed density and cancels in the weights.
    """

    def __init__(self, temperatures_K, u_series_J_mol, n_particles):
        T_k = np.asarray(temperatures_K, dtype=np.float64)
        if T_k.ndim != 1 or T_k.size < 2 or len(u_series_J_mol) != T_k.size:
            raise StudyError("MBAR needs at least two sampled temperatures, each with one "
                             f"energy series; got {T_k.size} temperatures and "
                             f"{len(u_series_J_mol)} series.")
        self.n_particles = count("n_particles", n_particles,
                                 hint="the number of particles simulated")
        pymbar = stats.import_pymbar()
        kept, counts = [], []
        for k, series in enumerate(u_series_J_mol):
            x_t = stats.check_series(series, f"u_series_J_mol[{k}]")
            t0, g, _ = stats.detect_equilibration(x_t)
            x_t = x_t[t0:]
            if np.ptp(x_t) > 0.0:
                idx = pymbar.timeseries.subsample_correlated_data(x_t, g=stats.statistical_inefficiency(x_t))
                x_t = x_t[np.asarray(idx, dtype=int)]
            kept.append(x_t)
            counts.append(x_t.size)
        self.temperatures_K = T_k
        self.u_n = np.concatenate(kept)
        self.N_k = np.asarray(counts, dtype=np.int64)
        self._beta_scale = self.n_particles / R_GAS  # N / R; u_kn = beta_scale * u_n / T
        u_kn = self._beta_scale * self.u_n[None, :] / T_k[:, None]
        shift = u_kn.min()
        self._mbar = _solve_mbar(pymbar, u_kn - shift, self.N_k)
        self.neighbour_overlap_k = _neighbour_overlap(self._mbar, T_k)
        f_k = np.asarray(self._mbar.f_k, dtype=np.float64)
        self._log_denom_n = logsumexp(np.log(self.N_k)[:, None] + f_k[:, None] - (u_kn - shift),
                                      axis=0)
        self._shift = shift

    def _weights(self, T):
        log_w = -(self._beta_scale * self.u_n / T - self._shift) - self._log_denom_n
        return np.exp(log_w - logsumexp(log_w))

    def u_res(self, T):
        """Reweighted <u_res> at T, J/mol."""
        return float(self._weights(T) @ self.u_n)

    def cv_res(self, T):
        """Reweighted residual heat capacity N Var(u) / (R T^2), J/(mol K)."""
        w = self._weights(T)
        mean = w @ self.u_n
        return float(self.n_particles * (w @ (self.u_n - mean) ** 2) / (R_GAS * T * T))

    def u_res_stderr(self, T):
        """MBAR standard error of <u_res> at T, J/mol.

        Raises
        ------
        ConvergenceError
            When pymbar finds the weights at T not normalised (its
            ``ParameterError``: the free energies are not converged).
        """
        from pymbar.utils import ParameterError
        u_ln = self._beta_scale * self.u_n[None, :] / T - self._shift
        try:
            out = self._mbar.compute_expectations(self.u_n, u_kn=u_ln, state_dependent=False)
        except (ParameterError, FloatingPointError, np.linalg.LinAlgError) as exc:
            raise ConvergenceError(f"MBAR: no standard error at {T:.6g} K ({_one_line(exc)})") \
                from None
        return float(np.atleast_1d(out["sigma"])[0])

    def overlap_between(self, T_a, T_b):
        """Smallest neighbour overlap among the sampled temperatures that bracket [T_a, T_b].

        1 means identical distributions; values below :data:`MIN_NEIGHBOUR_OVERLAP`
        mean the samples there say little about each other, and u_res between
        them is an extrapolation rather than a reweighting.
        """
        T_sorted = np.sort(self.temperatures_K)
        lo, hi = min(T_a, T_b), max(T_a, T_b)
        pairs = [k for k in range(T_sorted.size - 1)
                 if T_sorted[k + 1] >= lo and T_sorted[k] <= hi]
        if not pairs:  # outside the sampled range: the overlap of the nearest pair
            pairs = [0] if hi < T_sorted[0] else [T_sorted.size - 2]
        return float(min(self.neighbour_overlap_k[k] for k in pairs))

    def effective_samples(self, T):
        """Kish effective sample size of the weights at T."""
        w = self._weights(T)
        return float(1.0 / np.sum(w * w))


def _one_line(exc):
    return " ".join(str(exc).split())


def _solve_mbar(pymbar, u_kn, N_k):
    """pymbar's MBAR with its default solver, then its robust one; ConvergenceError if both fail."""
    from pymbar.utils import ParameterError
    failures = []
    for protocol in (None, "robust"):
        try:
            mbar = pymbar.MBAR(u_kn, N_k, solver_protocol=protocol)
            # converged free energies give normalised weights (pymbar's own test of them)
            pymbar.utils.check_w_normalized(mbar.W_nk, N_k)
            return mbar
        except (ParameterError, FloatingPointError, np.linalg.LinAlgError,
                pymbar.utils.ConvergenceError) as exc:
            failures.append(f"{protocol or 'default'} solver: {_one_line(exc)}")
    raise ConvergenceError("MBAR did not converge (" + "; ".join(failures) + ")")


def _neighbour_overlap(mbar, T_k):
    """Overlap-matrix elements between temperature neighbours, in temperature order (K - 1)."""
    try:
        O_kl = np.asarray(mbar.compute_overlap()["matrix"], dtype=float)
    except (np.linalg.LinAlgError, FloatingPointError, ValueError):
        return np.zeros(T_k.size - 1)  # an overlap that cannot be computed counts as none
    order = np.argsort(T_k)
    return np.array([O_kl[order[k], order[k + 1]] for k in range(T_k.size - 1)])
