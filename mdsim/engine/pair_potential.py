"""The interface every pair potential offers: NumPy views of the one formula, tails, units.

A potential object (:mod:`mdsim.engine.potentials`, :mod:`mdsim.engine.tabulated`)
fills a parameter row ``params`` and, for tables, a spline array ``table``
(layout in :mod:`mdsim.engine.forms`); the vectorised ``energy`` and
``dudr`` evaluate them through the same scalar kernel the engine uses.

Units are whatever the caller chooses, used consistently: energies in one
unit (for example epsilon/k in kelvin, or 1 in reduced units), lengths in
another (angstrom, or sigma).  ``scaled`` returns the same potential in
other units, which is how the engine obtains reduced Lennard-Jones units.
"""
import abc

import numpy as np

from mdsim.engine.forms import EPS, N_PARAM, RCORE, SIG, eval_many

__all__ = ["PairPotential", "NO_TABLE"]

#: the ``table`` argument of the kernels for the analytic forms (never read)
NO_TABLE = np.zeros((1, 4))


class PairPotential(abc.ABC):
    """Base class: a spherical pair potential u(r) in the caller's units.

    Subclasses set ``form`` and fill ``params`` (and ``table``).  The
    attributes ``epsilon`` (well depth) and ``sigma`` (zero crossing) exist
    for every form; they define reduced units.
    """

    form = -1
    name = ""

    def __init__(self):
        self.params = np.zeros(N_PARAM)
        self.table = NO_TABLE

    # -- NumPy views of the one formula -------------------------------------
    def _eval(self, r):
        r_r = np.ascontiguousarray(np.atleast_1d(np.asarray(r, dtype=float)).ravel())
        if np.any(r_r <= 0.0):
            raise ValueError("pair distances must be positive")
        u = np.empty_like(r_r)
        du = np.empty_like(r_r)
        eval_many(self.form, self.params, self.table, r_r, u, du)
        shape = np.shape(r)
        return u.reshape(shape), du.reshape(shape)

    def energy(self, r):
        """u(r), vectorised; +inf inside a hard core."""
        return self._eval(r)[0]

    def dudr(self, r):
        """du/dr, vectorised (+inf inside a hard core is returned as -inf)."""
        return self._eval(r)[1]

    @property
    def epsilon(self):
        return float(self.params[EPS])

    @property
    def sigma(self):
        return float(self.params[SIG])

    @property
    def core_radius(self):
        """Below this distance u = +inf (0 when the form has no hard core)."""
        return float(self.params[RCORE])

    # -- long-range tail ------------------------------------------------------
    @abc.abstractmethod
    def tail_integrals(self, rc):
        """Integrals for the long-range corrections beyond a cut-off.

        Returns
        -------
        I_u : float
            int_rc^inf u(r) r^2 dr
        I_w : float
            int_rc^inf r u'(r) r^2 dr

        Notes
        -----
        With mole fractions x_a, number density rho:
        U_tail / N = 2 pi rho sum_ab x_a x_b I_u,ab and
        P_tail = -(2 pi / 3) rho^2 sum_ab x_a x_b I_w,ab
        (Allen and Tildesley, Computer Simulation of Liquids, section 2.8).
        """

    @abc.abstractmethod
    def scaled(self, energy_unit, length_unit):
        """The same potential with energies divided by ``energy_unit`` and
        lengths by ``length_unit`` (for example reduced LJ units)."""

    def describe(self):
        """Plain-words dictionary of the parameters (for files and reports)."""
        return {"form": self.name, "epsilon": self.epsilon, "sigma": self.sigma}

    def __repr__(self):
        args = ", ".join(f"{k}={v!r}" for k, v in self.describe().items() if k != "form")
        return f"{type(self).__name__}({args})"
