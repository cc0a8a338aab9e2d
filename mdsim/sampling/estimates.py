"""Summary numbers of a sampled state point: means with standard errors, or why they are missing.

All numbers are reduced units of the system (energies per particle in
epsilon, pressure in epsilon/sigma^3, kT/epsilon, heat capacity per particle
in k).  The statistics of correlated series (statistical inefficiency,
standard errors) are those of :mod:`analysis.stats`.
"""
import dataclasses
import math

import numpy as np

from mdsim.errors import ConvergenceError

__all__ = ["Estimate", "summarise", "CANONICAL"]

#: methods with a set temperature (the canonical ensemble)
CANONICAL = ("mc-nvt", "md-nvt", "mc-nvt-insertion", "rigid-mc-nvt", "rigid-mc-nvt-insertion",
             "rigid-body-mc-nvt", "rigid-body-mc-nvt-insertion", "rigid-body-md-nvt",
             "rigid-md-nvt")


@dataclasses.dataclass(frozen=True)
class Estimate:
    """A summary number with its standard error, or the reason it is missing.

    Attributes
    ----------
    value, stderr : float
        NaN when unavailable.
    g : float
        Statistical inefficiency of the series behind it (NaN if none).
    reason : str
        Empty when available; otherwise why the number cannot be given.
    """

    value: float
    stderr: float
    g: float = math.nan
    reason: str = ""

    @property
    def available(self):
        return not self.reason

    @classmethod
    def missing(cls, reason):
        return cls(math.nan, math.nan, math.nan, reason)

    def as_dict(self):
        out = {"value": self.value, "stderr": self.stderr}
        if self.reason:
            out["unavailable"] = self.reason
        return out


#: Canonical MD methods: they always record a pressure.
_MD_CANONICAL = ("md-nvt", "rigid-md-nvt", "rigid-body-md-nvt")


def summarise(samples, method, n_particles, volume, temperature=None, dof_per_particle=3):
    """Means and standard errors of a run's observables.

    Parameters
    ----------
    samples : dict of ndarray
        Protocol observables ("u_full", "pressure", "pressure_conf", and
        "kinetic" for mc-nve, "temperature_inst" for MD).
    method : str
    n_particles : int
    volume : float
        Box volume, sigma^3.
    temperature : float, optional
        The set kT for canonical methods.
    dof_per_particle : int
        f for the microcanonical estimator (mc-nve).

    Returns
    -------
    dict of Estimate
        "u_full", "pressure", "c_v_res", "temperature".

    Notes
    -----
    c_v_res = N Var(u_full) / T^2 per particle in k (canonical fluctuation
    formula, Var of the per-particle energy).  With a Feynman-Hibbs
    potential u_FH = u + beta c (samples carry "u_effective", the mean of
    u_FH, and "u_full" is the thermodynamic estimator e = u + 2 beta c per
    particle) the derivative of <E> = <e> in T has one more term:
    c_v_res = [N Var(e) - 2 T <u_FH - u>] / T^2, from
    d<e>/d(beta) = <de/d(beta)> - Cov(e, d(beta U_FH)/d(beta)) with
    d(beta U_FH)/d(beta) = e and de/d(beta) = 2 c (``docs/physics.md``,
    "Quantum-corrected simulation").  For mc-nve the temperature
    is 1/kT = (F/2 - 1) <1/(E - U)> (Ray, Phys. Rev. A 44, 4061, 1991), its
    error by the delta method; the pressure is rho kT + <p_conf> with the two
    errors added in quadrature (their covariance neglected).  The canonical
    fluctuation formula does not hold at fixed energy, so c_v_res is
    reported unavailable for the NVE methods.
    """
    from analysis.stats import mean_and_stderr, variance_and_stderr
    n = int(n_particles)
    rho = n / float(volume)
    out = {}
    try:
        u = mean_and_stderr(samples["u_full"])
    except ConvergenceError as exc:
        raise ConvergenceError(f"energy: {exc}", partial=exc.partial) from None
    out["u_full"] = Estimate(u.mean, u.stderr, u.g)
    if method in CANONICAL:
        T = float(temperature)
        out["temperature"] = Estimate(T, 0.0, math.nan)
        if method in _MD_CANONICAL or np.all(np.isfinite(samples["pressure"])):
            p = mean_and_stderr(samples["pressure"])
            out["pressure"] = Estimate(p.mean, p.stderr, p.g)
        var = variance_and_stderr(samples["u_full"])
        c_v, s_c = n * var.value / T ** 2, n * var.stderr / T ** 2
        if "u_effective" in samples:  # Feynman-Hibbs: minus 2 <sum c> / (N T^2) (Notes)
            d = mean_and_stderr(np.asarray(samples["u_full"]) - samples["u_effective"])
            c_v, s_c = c_v - 2.0 * d.mean / T, math.hypot(s_c, 2.0 * d.stderr / T)
        out["c_v_res"] = Estimate(c_v, s_c, var.g)
    elif method in ("md-nve", "rigid-md-nve"):
        t = mean_and_stderr(samples["temperature_inst"])
        out["temperature"] = Estimate(t.mean, t.stderr, t.g)
        p = mean_and_stderr(samples["pressure"])
        out["pressure"] = Estimate(p.mean, p.stderr, p.g)
        out["c_v_res"] = Estimate.missing(
            "the canonical fluctuation formula does not apply at constant energy; sample this "
            "state point with md-nvt or mc-nvt for the heat capacity")
    else:  # mc-nve
        f_total = float(dof_per_particle) * n
        inv = mean_and_stderr(1.0 / (n * np.asarray(samples["kinetic"], dtype=float)))
        T = 1.0 / ((0.5 * f_total - 1.0) * inv.mean)
        sT = T * inv.stderr / inv.mean
        out["temperature"] = Estimate(T, sT, inv.g)
        pc = mean_and_stderr(samples["pressure_conf"])
        out["pressure"] = Estimate(rho * T + pc.mean, math.hypot(rho * sT, pc.stderr), pc.g)
        out["c_v_res"] = Estimate.missing(
            "the canonical fluctuation formula does not apply at constant energy; sample this "
            "state point with mc-nvt or md-nvt for the heat capacity")
    return out
