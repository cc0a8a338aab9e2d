"""The virial equation of state of a gas or mixture of rigid molecules and atoms.

:class:`MolecularVirialGas` offers every state function of
:class:`analysis.virial_eos.VirialGas` (SI units), with B from the
orientation quadrature of :mod:`analysis.molecules.second` (over both
molecules' rotations, :mod:`analysis.molecules.second_rotations`, for a
non-linear molecule) and C from the
Monte Carlo integration of :mod:`analysis.molecules.third`, whose standard
error :meth:`MolecularVirialGas.C_stderr` gives.
"""
import warnings

import numpy as np

from analysis.molecules.second import (DEFAULT_ORIENTATION_NODES, DEFAULT_RADIAL_NODES,
                                       pair_grid)
from analysis.molecules.rotations import SPHERE_DEGREES, sphere_rule
from analysis.molecules.second_rotations import DEFAULT_ROTATION_DEGREE
from analysis.molecules.third import DEFAULT_DRAWS, TripletDraws
from analysis import inputs
from analysis.virial.quadrature import check_fractions
from analysis.virial.si import M3_MOL_PER_A3, M6_MOL2_PER_A6
from analysis.virial_eos import VirialGas
from mdsim.checks import positive_array
from mdsim.errors import StudyError
from mdsim.units import R_GAS

__all__ = ["MolecularVirialGas", "ROTATION_DEGREE_TOLERANCE"]

# Scalar temperatures whose coefficients are kept (cleared when full).
_MEMO_SIZE = 256
#: Relative change of B2 from the rotation degree to the next above which a charged non-linear
#: pair's quadrature is reported as not converged (about a tenth of the few-percent accuracy of
#: such models' B2, tests/analysis/molecules/test_dimethyl_ether.py).
ROTATION_DEGREE_TOLERANCE = 5e-3


class MolecularVirialGas(VirialGas):
    """A gas of rigid molecules described by B (quadrature) and C (Monte Carlo).

    Parameters
    ----------
    molecules : list of RigidMolecule
        One per species (molecules of any shape, or atoms).
    fractions : array_like, shape=(n_species,)
        Mole fractions (sum 1).
    n_draws : int, optional
        Monte Carlo draws of the B3 integral.
    seed : int, optional
        Seed of the draws (fixed: the same gas gives the same numbers).
    n_orientation, n_radial : int, optional
        Quadrature nodes of B2 of linear molecules
        (:class:`analysis.molecules.second.OrientationGrid`).
    rotation_degree : int, optional
        Lebedev degree of B2 of a pair with a non-linear molecule
        (:class:`analysis.molecules.second_rotations.RotationGrid`).
    convergence_temperature_K : float, optional, K
        Where a non-linear molecule carries site charges, B2 of each of its
        pairs is computed at this temperature with ``rotation_degree`` and
        with the next Lebedev degree, and a warning names every pair whose
        B2 moves by more than :data:`ROTATION_DEGREE_TOLERANCE` (such pairs
        converge slowly in the degree, docs/physics.md section 7a.2).  Give
        the lowest temperature of interest; left out, a warning says that
        the convergence was not measured.

    Notes
    -----
    Classical: no quantum correction (the rigid models of N2, O2, CO2 are
    used where it is negligible) and no three-body term.  The state
    functions and their formulas are those of :class:`VirialGas`.

    Examples
    --------
    A one-site molecule is the Lennard-Jones argon of :class:`VirialGas`:

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> ar = RigidMolecule("Ar", [Site(LennardJones(119.8, 3.405), (0, 0, 0), 0.039948)])
    >>> gas = MolecularVirialGas([ar], [1.0], n_draws=20000)
    >>> round(gas.B(295.0) * 1e6, 2)  # cm^3/mol
    -16.49
    """

    def __init__(self, molecules, fractions, n_draws=DEFAULT_DRAWS, seed=1,
                 n_orientation=DEFAULT_ORIENTATION_NODES, n_radial=DEFAULT_RADIAL_NODES,
                 rotation_degree=DEFAULT_ROTATION_DEGREE, convergence_temperature_K=None):
        self.molecules = list(molecules)
        if not self.molecules:
            raise StudyError("'molecules': give at least one molecule")
        ns = len(self.molecules)
        self.fractions = check_fractions(fractions, ns)
        self.molar_masses_kg_mol = np.array([m.molar_mass_kg_mol for m in self.molecules])
        self.quantum = "classical"
        self.quantum_correction = False
        self.c_note = "B3 classical"
        self.three_body_c9_K_A9 = 0.0
        self.pairs = None
        self.de_boer = np.zeros(ns)
        if any(m.is_nonlinear for m in self.molecules):
            sphere_rule(rotation_degree, "rotation_degree")  # a bad degree is refused now
        self._grid_settings = (n_orientation, n_radial, rotation_degree)
        self._draw_settings = (n_draws, seed)
        self._grids = {}
        self._draws = None
        self._memo = {}
        self._warn_unconverged_rotations(convergence_temperature_K)

    def _charged_nonlinear_pairs(self):
        """Species pairs (a, b), a <= b, of which one is a non-linear molecule with charges."""
        charged = [m.is_nonlinear and bool(np.any(m.charge_s != 0.0)) for m in self.molecules]
        ns = len(self.molecules)
        return [(a, b) for a in range(ns) for b in range(a, ns) if charged[a] or charged[b]]

    def _warn_unconverged_rotations(self, T):
        """The warning of ``convergence_temperature_K`` (class docstring)."""
        pairs = self._charged_nonlinear_pairs()
        if not pairs:
            return
        n_orientation, n_radial, degree = self._grid_settings
        names = [f"{self.molecules[a].name}-{self.molecules[b].name}" for a, b in pairs]
        if T is None:
            warnings.warn(
                f"{', '.join(names)}: B2 of a non-linear molecule with site charges converges "
                f"slowly in the rotation degree ({degree} here; docs/physics.md section 7a.2), "
                "and its convergence was not measured (give convergence_temperature_K)",
                UserWarning, stacklevel=3)
            return
        T = float(positive_array("convergence_temperature_K", T, "a temperature in K"))
        finer = min((d for d in SPHERE_DEGREES if d > degree), default=None)
        if finer is None:
            return
        for (a, b), name in zip(pairs, names):
            b2 = self._grid(a, b).b2(T)[0]
            b2_finer = pair_grid(self.molecules[a], self.molecules[b], n_orientation, n_radial,
                                 finer).b2(T)[0]
            change = abs(b2_finer - b2) / abs(b2_finer)
            if change > ROTATION_DEGREE_TOLERANCE:
                warnings.warn(
                    f"{name}: B2 at {T:.6g} K moves by {100 * change:.2g} % from rotation "
                    f"degree {degree} to {finer}: the quadrature of this charged non-linear "
                    "pair is not converged (docs/physics.md section 7a.2); its B2, B3 and every "
                    "number that follows may be off by about that much", UserWarning,
                    stacklevel=3)

    def _grid(self, a, b):
        if (a, b) not in self._grids:
            self._grids[(a, b)] = pair_grid(self.molecules[a], self.molecules[b],
                                            *self._grid_settings)
        return self._grids[(a, b)]

    def well_depths_K(self):
        """The depth of each species pair's energy minimum on the quadrature grid, K (> 0)."""
        ns = len(self.molecules)
        return [-float(np.min(self._grid(a, b).u_ro)) for a in range(ns) for b in range(a, ns)]

    def triplet_draws(self):
        """The Monte Carlo draws of the B3 integral (made on first use)."""
        if self._draws is None:
            n, seed = self._draw_settings
            self._draws = TripletDraws(self.molecules, n_draws=n, seed=seed)
        return self._draws

    def _b(self, T):
        T = positive_array("T", T, "a temperature in K")
        key = ("b", float(T)) if T.ndim == 0 else None
        if key in self._memo:
            return self._memo[key]
        x = self.fractions
        out = np.zeros((3,) + T.shape)
        for a in range(len(self.molecules)):
            for b in range(a, len(self.molecules)):
                weight = x[a] * x[b] * (1.0 if a == b else 2.0)
                if weight:
                    out += weight * np.array(self._grid(a, b).b2(T)).reshape(out.shape)
        return self._remember(key, [M3_MOL_PER_A3 * o for o in out])

    def _remember(self, key, value):
        """Keep the coefficients of a scalar T (root finders ask for one T several times)."""
        if key is not None:
            if len(self._memo) > _MEMO_SIZE:
                self._memo.clear()
            self._memo[key] = value
        return value

    def _c_with_error(self, T):
        T = positive_array("T", T, "a temperature in K")
        key = ("c", float(T)) if T.ndim == 0 else None
        if key in self._memo:
            return self._memo[key]
        draws = self.triplet_draws()
        vals = np.zeros((3,) + T.shape)
        errs = np.zeros((3,) + T.shape)
        for idx, t in np.ndenumerate(T):
            v, e = draws.b3(self.fractions, float(t))
            vals[(slice(None),) + idx] = v
            errs[(slice(None),) + idx] = e
        return self._remember(key, (M6_MOL2_PER_A6 * vals, M6_MOL2_PER_A6 * errs))

    def _c(self, T, order):
        T = positive_array("T", T, "a temperature in K")
        if inputs.order(order) == 2:
            return [np.zeros_like(T)] * 3
        return list(self._c_with_error(T)[0])

    def delta_T_stderr_K(self, T_i, rho_i, T_f, rho_f, cv_ig):
        """Standard error of a B2 + B3 Delta T from the Monte Carlo error of dB3/dT, K.

        Parameters
        ----------
        T_i, T_f : float, K
        rho_i, rho_f : float, mol/m^3
        cv_ig : IdealGasHeatCapacity

        Notes
        -----
        First-order propagation: u_res carries -R T^2 C' rho^2 / 2, so the
        balance moves by R/2 (T_i^2 s_i rho_i^2 - T_f^2 s_f rho_f^2), s the
        standard errors of C' at T_i and T_f (one set of draws: fully
        correlated), divided by c_v = c_v_ig + c_v_res at T_f.  The error
        of C itself, through the initial density solved from a pressure,
        is left out (below 1e-3 of rho for N2 at 100 bar).
        """
        s_i = self.C_stderr(T_i)[1]
        s_f = self.C_stderr(T_f)[1]
        du = 0.5 * R_GAS * abs(T_i ** 2 * s_i * rho_i ** 2 - T_f ** 2 * s_f * rho_f ** 2)
        cv = float(cv_ig.cv(T_f)) + float(self.cv_res_J_molK(T_f, rho_f, 3))
        return du / cv

    def C_stderr(self, T):
        """Standard errors of C, dC/dT and d2C/dT2 (m^6/mol^2, /K, /K^2) from the draws."""
        errs = self._c_with_error(T)[1]
        return tuple(float(e) if np.ndim(e) == 0 else e for e in errs)
