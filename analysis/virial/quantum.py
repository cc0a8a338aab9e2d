"""Quantum corrections to B2: the first-order Wigner-Kirkwood term and the de Boer check.

:func:`b2_quantum` adds the leading quantum term of the series in the de
Boer parameter Lambda* = h / (sigma sqrt(m epsilon)); :func:`check_de_boer`
warns when a gas is too quantum for the treatment chosen.
"""
import math
import warnings

import numpy as np

from analysis.virial.quadrature import (DEFAULT_NODES_B2, b2_layout, check_nodes, check_pot,
                                        check_temperature, mayer, register, shape_out)
from analysis.virial.si import ANGSTROM_M
from mdsim.checks import non_negative, positive
from mdsim.units import K_B, PLANCK

__all__ = ["DE_BOER_FIRST_ORDER_LIMIT", "DE_BOER_NEGLIGIBLE", "DE_BOER_SECOND_ORDER_LIMIT",
           "level_enough", "QuantumCorrectionWarning",
           "b2_quantum", "h2_over_mu_K_A2", "de_boer_parameter", "check_de_boer"]

# Above this de Boer parameter the first-order Wigner-Kirkwood term is not
# enough (see check_de_boer); below DE_BOER_NEGLIGIBLE omitting it is fine.
DE_BOER_FIRST_ORDER_LIMIT = 1.0
DE_BOER_NEGLIGIBLE = 0.3
# Above this the second-order term is not enough either (the h^4 term of
# helium near T = epsilon/k is as large as the h^2 term): exact B2 needed.
DE_BOER_SECOND_ORDER_LIMIT = 1.5
_LEVEL_LIMIT = {"classical": DE_BOER_NEGLIGIBLE, "first-order": DE_BOER_FIRST_ORDER_LIMIT,
                "second-order": DE_BOER_SECOND_ORDER_LIMIT, "exact": math.inf}


class QuantumCorrectionWarning(UserWarning):
    """The gas is too quantum for the classical or first-order virial result."""


def b2_quantum(pot, T, h2_over_mu, n_nodes=DEFAULT_NODES_B2):
    """First-order Wigner-Kirkwood correction to B2 and its T-derivatives.

    Parameters
    ----------
    pot : PairPotential
    T : float or ndarray, energy unit of ``pot``
    h2_over_mu : float
        h^2 / (mu k) in (energy unit) x (length unit)^2, mu the reduced mass
        of the pair (m/2 for a like pair).  In reduced LJ units of a like
        pair it is 2 Lambda*^2; for kelvin and angstrom use
        :func:`h2_over_mu_K_A2`.

    Returns
    -------
    dB, d_dB_dT, d2_dB_dT2 : float or ndarray shaped like T
        Per molecule, length^3.

    Notes
    -----
    Delta B = h^2 / (48 pi mu k^3 T^3) int_0^inf exp(-u/kT) (du/dr)^2 r^2 dr,
    which for a like pair (mu = m/2) is the h^2 / (24 pi m ...) form of
    Hirschfelder, Curtiss and Bird (1954), chapter 6.  The correction is
    the first term of a series in Lambda*^2; see :func:`check_de_boer`.
    """
    check_pot(pot)
    T_t = check_temperature(T).ravel()
    q = non_negative("h2_over_mu", h2_over_mu, "h^2 / (mu k) in energy x length^2")
    n = check_nodes(n_nodes, "n_nodes")
    r, w, u, dudr = b2_layout(register(pot), n)
    with np.errstate(over="ignore", invalid="ignore"):
        g = dudr * dudr * r * r * w
    # Inside a core, or where du/dr overflows, exp(-u/T) is 0 at any T.
    g = np.where(np.isfinite(g) & np.isfinite(u), g, 0.0)
    f, d1, d2 = mayer(u[None, :], T_t[:, None])
    # e^{-u/T} = f + 1 and its T-derivatives are those of f.
    J0, J1, J2 = (f + 1.0) @ g, d1 @ g, d2 @ g
    c = q / (48.0 * math.pi)
    val = c * J0 / T_t ** 3
    der1 = c * (J1 / T_t ** 3 - 3.0 * J0 / T_t ** 4)
    der2 = c * (J2 / T_t ** 3 - 6.0 * J1 / T_t ** 4 + 12.0 * J0 / T_t ** 5)
    return shape_out((val, der1, der2), T)


def h2_over_mu_K_A2(mass_a_kg, mass_b_kg):
    """h^2 / (mu k) in K angstrom^2 for a pair of molecular masses (kg)."""
    hint = "kg per molecule: divide the molar mass in kg/mol by N_A"
    ma, mb = positive("mass_a_kg", mass_a_kg, hint), positive("mass_b_kg", mass_b_kg, hint)
    mu = ma * mb / (ma + mb)
    return PLANCK ** 2 / (mu * K_B) / ANGSTROM_M ** 2


def de_boer_parameter(pot_K_A, mass_kg):
    """Lambda* = h / (sigma sqrt(m epsilon)) for a potential in kelvin and angstrom.

    Parameters
    ----------
    pot_K_A : PairPotential
        epsilon as u/k in K, sigma in angstrom.
    mass_kg : float
        Molecular mass (kg per molecule).

    Returns
    -------
    float
        About 2.6 for helium, 1.7 for H2, 0.6 for neon, 0.19 for argon.
    """
    check_pot(pot_K_A, "pot_K_A")
    m = positive("mass_kg", mass_kg, "a molecular mass in kg")
    eps_J = pot_K_A.epsilon * K_B
    sigma_m = pot_K_A.sigma * ANGSTROM_M
    return PLANCK / (sigma_m * math.sqrt(m * eps_J))


def level_enough(de_boer):
    """The cheapest quantum treatment of B2 that is enough at this de Boer parameter.

    >>> level_enough(0.19), level_enough(0.6), level_enough(2.6)
    ('classical', 'first-order', 'exact')
    """
    for level, limit in _LEVEL_LIMIT.items():
        if de_boer <= limit:
            return level
    return "exact"


def check_de_boer(pot_K_A, mass_kg, quantum_correction, label="gas"):
    """Warn when the quantum treatment chosen is not enough for this gas.

    Parameters
    ----------
    pot_K_A : PairPotential (kelvin, angstrom)
    mass_kg : float
    quantum_correction : bool or str
        The quantum treatment: "classical", "first-order", "second-order"
        or "exact" (True means "first-order", False "classical").
    label : str
        Name used in the message.

    Returns
    -------
    float
        The de Boer parameter.

    Notes
    -----
    The first-order term is Lambda*^2 b_I(T*) sigma^3 with b_I(1) ~ 0.87,
    against |B2| ~ 5.3 sigma^3 classically at T* = 1 (LJ): about
    16 Lambda*^2 percent.  The Wigner-Kirkwood series is a series in
    Lambda*^2, so the neglected second-order part is of the order of the
    square of that fraction: a few percent of B2 at Lambda* = 1 and growing
    quickly above (H2 ~1.7, He ~2.6, where the series is no longer useful
    near T* = 1).  Hence the limit Lambda* > 1 for the first-order result,
    and Lambda* > 0.3 (correction above ~1.5 % of B2 at T* = 1; neon 0.6)
    for omitting the correction altogether.
    """
    lam = de_boer_parameter(pot_K_A, mass_kg)
    level = quantum_correction
    if isinstance(level, bool) or level is None:
        level = "first-order" if level else "classical"
    enough = level_enough(lam)
    if lam > _LEVEL_LIMIT.get(level, math.inf):
        what = ("quantum effects change B2 by more than about 1 % near T = epsilon/k"
                if level == "classical" else
                f"the {level} Wigner-Kirkwood correction is not enough for so quantum a gas "
                "near and below T = epsilon/k")
        warnings.warn(
            f"{label}: de Boer parameter Lambda* = {lam:.3g} > {_LEVEL_LIMIT[level]}: {what}; "
            f"use quantum = \"{enough}\" (levels: classical up to {DE_BOER_NEGLIGIBLE}, "
            f"first-order up to {DE_BOER_FIRST_ORDER_LIMIT}, second-order up to "
            f"{DE_BOER_SECOND_ORDER_LIMIT}, exact beyond)",
            QuantumCorrectionWarning, stacklevel=3)
    return lam
