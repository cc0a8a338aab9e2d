"""The study's quantum-corrected pair potential: ``[simulation] quantum_potential``.

"none" keeps the classical pair potential; "feynman-hibbs" replaces it in
every simulation by the quadratic Feynman-Hibbs effective potential at the
temperature sampled (:mod:`mdsim.engine.feynman_hibbs`; ``docs/physics.md``,
"Quantum-corrected simulation").  The virial routes are not affected: their
quantum treatment is the gas's own.
"""
import math

from mdsim.errors import SettingError
from mdsim.study.schema import ANGSTROM
from mdsim.units import N_A

__all__ = ["uses_feynman_hibbs", "feynman_hibbs_q_reduced", "pairs_at_temperature",
           "feynman_hibbs_validity"]


def uses_feynman_hibbs(study):
    """True when the study asks for the Feynman-Hibbs simulation."""
    return study.simulation.get("quantum_potential", "none") == "feynman-hibbs"


def feynman_hibbs_q_reduced(gas):
    """q = hbar^2 / (24 mu) of the like pair of species 0, in reduced units.

    Returns
    -------
    float
        q / (epsilon sigma^2) = Lambda*^2 / (48 pi^2), Lambda* the de Boer
        parameter h / (sigma sqrt(m epsilon)) (mu = m / 2).

    Notes
    -----
    hbar^2 / (24 mu) = (h^2 / mu) / (96 pi^2); h^2 / (mu k) in K angstrom^2
    is :func:`analysis.virial.h2_over_mu_K_A2`.
    """
    from analysis.virial import h2_over_mu_K_A2
    m = float(gas.molar_masses_kg_mol[0]) / N_A
    u = gas.units
    sigma_A = u.sigma_m / ANGSTROM
    return h2_over_mu_K_A2(m, m) / (96.0 * math.pi ** 2) / (u.epsilon_K * sigma_A ** 2)


def pairs_at_temperature(study, pairs_red, temperature_K, cache):
    """The reduced pair matrix the simulations of a study use at a temperature.

    Parameters
    ----------
    study : mdsim.study.reader.Study
    pairs_red : PairMatrix
        The classical pair matrix in reduced units.
    temperature_K : float or None
        Needed (and only used) with the Feynman-Hibbs potential.
    cache : dict
        Matrices already built, by reduced temperature.

    Returns
    -------
    PairMatrix
    """
    if not uses_feynman_hibbs(study):
        return pairs_red
    if temperature_K is None:
        raise SettingError("temperature_K", None,
                           "the study's [simulation] quantum_potential = 'feynman-hibbs' makes "
                           "the pair potential depend on temperature, and this calculation has "
                           "none (a fixed-energy method, or a calculation for the classical "
                           "potential only); use canonical Monte Carlo at a temperature, or "
                           "remove the key")
    from mdsim.engine.feynman_hibbs import feynman_hibbs_pairs
    T_red = study.units.temperature_to_reduced(float(temperature_K))
    if T_red not in cache:
        cache[T_red] = feynman_hibbs_pairs(pairs_red, feynman_hibbs_q_reduced(study.gas), T_red)
    return cache[T_red]


def feynman_hibbs_validity(study, temperature_K):
    """A note on the quadratic Feynman-Hibbs potential at a temperature, and a warning when
    it is not enough there (else None).

    Returns
    -------
    note : str
        The next-order ratio (:func:`mdsim.engine.feynman_hibbs.next_order_ratio`).
    warning : str or None
        When the ratio exceeds ``NEXT_ORDER_LIMIT``.
    """
    from mdsim.engine.feynman_hibbs import NEXT_ORDER_LIMIT, next_order_ratio
    T_K = float(temperature_K)
    ratio = next_order_ratio(study.reduced_pairs().pots[0][0],
                             feynman_hibbs_q_reduced(study.gas),
                             study.units.temperature_to_reduced(T_K))
    note = (f"Feynman-Hibbs next-order ratio {ratio:.2g} at {T_K:.4g} K (the quadratic form is "
            f"enough up to {NEXT_ORDER_LIMIT})")
    if ratio <= NEXT_ORDER_LIMIT:
        return note, None
    return note, (f"at {T_K:.4g} K the quadratic Feynman-Hibbs potential is not enough: its "
                  f"next (quartic) term is {ratio:.2f} of the quadratic one at the closest "
                  f"thermal approach (limit {NEXT_ORDER_LIMIT}); treat the simulated Delta T "
                  "as indicative (docs/physics.md)")
