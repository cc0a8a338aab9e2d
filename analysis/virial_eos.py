"""The virial equation of state of a gas or gas mixture, in SI units.

Z = p / (rho R T) = 1 + B rho + C rho^2, truncated after B (``order=2``) or
after C (``order=3``), with the residual (ideal-gas-subtracted) energy,
entropy and heat capacity that follow from it at fixed (T, rho).  B and C
come from :mod:`analysis.virial` for potentials given as u/k in kelvin and
lengths in angstrom.  B is classical, or carries the first- or
second-order Wigner-Kirkwood correction, or is the exact quantum B2
(Beth-Uhlenbeck, like pairs).  C is pairwise additive: classical, plus
its first-order Wigner-Kirkwood term with the second-order and exact B2
of a pure gas (:mod:`analysis.virial.quantum_third`; ``VirialGas.c_note``
says which).

Units: T in K, rho in mol/m^3, p in Pa, B in m^3/mol, C in m^6/mol^2,
molar energies in J/mol, entropies and heat capacities in J/(mol K).
All state functions broadcast over T and rho.
"""
import math

import numpy as np
from analysis import inputs
from analysis import virial
from analysis.virial.quadrature import check_fractions
from analysis.virial.quantum_exact import b2_exact, spin_components
from analysis.virial.quantum_second import b2_second_order
from analysis.virial.quantum_third import b3_quantum_first_order
from analysis.virial.threebody import b3_nonadditive
from mdsim.checks import non_negative, non_negative_array, positive, positive_array
from mdsim.engine.potentials import PairMatrix, PairPotential
from mdsim.errors import StudyError
from mdsim.units import N_A, R_GAS

# Default limit of check_converged: the third-virial term may be at most 5 %
# of the rest of Z.  The next, neglected term D rho^3 is then typically
# below 1 % of Z for simple gases (D rho / C ~ 0.1-0.2 where C rho^2 ~ 0.05).
DEFAULT_CONVERGENCE_LIMIT = 0.05
#: The quantum treatments of B2, from none to the exact phase-shift B2.
QUANTUM_LEVELS = ("classical", "first-order", "second-order", "exact")


class VirialSeriesError(StudyError):
    """The truncated virial series does not describe this state: simulate it."""


def _out(value):
    return float(value) if np.ndim(value) == 0 else value


class VirialGas:
    """A gas described by its second and third virial coefficients.

    Parameters
    ----------
    pairs_K_angstrom : PairMatrix or PairPotential
        Pair potentials with energies as u/k in K and lengths in angstrom;
        a single potential is a one-species gas.
    fractions : array_like, shape=(n_species,)
        Mole fractions (sum 1).
    molar_masses_kg_mol : float or array_like, shape=(n_species,)
        Molar masses in kg/mol (needed for the quantum correction and the
        de Boer check).
    quantum : {"classical", "first-order", "second-order", "exact"}, optional
        The quantum treatment of B (default "classical"): the first- or
        second-order Wigner-Kirkwood terms added, or the exact quantum B2
        of like pairs (unlike pairs: exact with Boltzmann statistics).  A
        ``QuantumCorrectionWarning`` names the level that is enough when
        the one chosen is not (de Boer parameter).
    spin : tuple of SpinComponent, optional
        Exchange statistics of the like pairs for ``quantum="exact"``
        (:func:`analysis.virial.quantum_exact.spin_components`); default
        Boltzmann.
    quantum_correction : bool, optional
        Older spelling: True means ``quantum="first-order"``.
    three_body_c9_K_A9 : float, optional
        Axilrod-Teller coefficient C9/k in K angstrom^9 (default 0: pairwise
        additive).  When positive, C gets the non-additive part of
        :func:`analysis.virial.threebody.b3_nonadditive` (a pure gas only).

    Notes
    -----
    Coefficient methods take ``order`` for uniformity with the state
    functions: B is the same for both orders, C and its derivatives are 0
    for ``order=2``.

    Examples
    --------
    Argon as a Lennard-Jones gas (119.8 K, 3.405 angstrom) at 295 K:

    >>> from mdsim.engine.potentials import LennardJones
    >>> argon = VirialGas(LennardJones(119.8, 3.405), [1.0], 0.039948)
    >>> round(argon.B(295.0) * 1e6, 2)  # cm^3/mol
    -16.49
    >>> round(argon.density_from_pressure(295.0, 20e5, order=3), 2)  # mol/m^3 at 20 bar
    826.12
    >>> round(argon.compressibility(295.0, 800.0, order=3), 5)
    0.98742
    """

    def __init__(self, pairs_K_angstrom, fractions, molar_masses_kg_mol, quantum="classical",
                 spin=None, quantum_correction=None, three_body_c9_K_A9=0.0):
        pairs = pairs_K_angstrom
        if isinstance(pairs, PairPotential):
            pairs = PairMatrix([pairs], cutoff=3.0)  # the cut-off plays no part in virial sums
        if not isinstance(pairs, PairMatrix):
            raise StudyError(f"'pairs_K_angstrom' must be a PairMatrix or a pair potential; got "
                             f"{type(pairs_K_angstrom).__name__}")
        ns = pairs.n_species
        self.pairs = pairs
        self.fractions = check_fractions(fractions, ns)
        masses = np.atleast_1d(np.asarray(molar_masses_kg_mol, dtype=float)).ravel()
        if masses.size == 1 and ns > 1:
            raise StudyError(f"'molar_masses_kg_mol': one value for {ns} species; give one per species")
        if masses.size != ns or not np.all(np.isfinite(masses)) or np.any(masses <= 0.0):
            raise StudyError(f"'molar_masses_kg_mol' = {masses.tolist()}: need {ns} positive molar "
                             "masses in kg/mol (argon: 0.039948)")
        if np.any(masses > 10.0):
            raise StudyError(f"'molar_masses_kg_mol' = {masses.tolist()}: values above 10 kg/mol; "
                             "molar masses are in kg/mol, not g/mol (argon: 0.039948)")
        self.molar_masses_kg_mol = masses
        if quantum_correction is not None:
            quantum = "first-order" if quantum_correction else "classical"
        if quantum not in QUANTUM_LEVELS:
            raise StudyError(f"quantum = {quantum!r}: choose one of {', '.join(QUANTUM_LEVELS)}")
        self.quantum = quantum
        self.quantum_correction = quantum != "classical"
        self.spin = spin_components("boltzmann") if spin is None else tuple(spin)
        # The first-order Wigner-Kirkwood B3 goes with the second-order and exact B2 of
        # a pure gas.
        self._quantum_b3 = quantum in ("second-order", "exact") and ns == 1
        #: What C is, for outputs that print it.
        self.c_note = ("B3 classical + first-order Wigner-Kirkwood" if self._quantum_b3 else
                       "B3 classical (no quantum correction of B3 at this level)"
                       if self.quantum_correction else "B3 classical")
        self.three_body_c9_K_A9 = non_negative("three_body_c9_K_A9", three_body_c9_K_A9,
                                               "an Axilrod-Teller C9/k in K angstrom^9")
        if self.three_body_c9_K_A9 and ns > 1:
            raise StudyError("'three_body_c9_K_A9': the Axilrod-Teller term is not yet supported "
                             "for mixtures (it needs C9 of every species triple); remove it or "
                             "study a pure gas")
        self.de_boer = np.array([
            virial.check_de_boer(pairs.pots[a][a], masses[a] / N_A, quantum,
                                  label=f"species {a}")
            for a in range(ns)])

    # -- coefficients -----------------------------------------------------------
    def _b(self, T):
        T = positive_array("T", T, "a temperature in K")
        x = self.fractions
        ns = self.pairs.n_species
        out = [0.0, 0.0, 0.0]
        m = self.molar_masses_kg_mol / N_A
        for a in range(ns):
            for b in range(a, ns):
                weight = x[a] * x[b] * (1.0 if a == b else 2.0)
                if weight == 0.0:
                    continue
                pot = self.pairs.pots[a][b]
                q = virial.h2_over_mu_K_A2(m[a], m[b])
                if self.quantum == "exact":
                    vals = b2_exact(pot, T, q, self.spin if a == b else None)
                else:
                    vals = virial.b2(pot, T)
                    if self.quantum != "classical":
                        vals = [v + dv for v, dv in zip(vals, virial.b2_quantum(pot, T, q))]
                    if self.quantum == "second-order":
                        vals = [v + dv for v, dv in zip(vals, b2_second_order(pot, T, q))]
                out = [o + weight * v for o, v in zip(out, vals)]
        return [virial.M3_MOL_PER_A3 * np.asarray(o, dtype=float) for o in out]

    def _c(self, T, order):
        T = positive_array("T", T, "a temperature in K")
        if inputs.order(order) == 2:
            return [np.zeros_like(T)] * 3
        vals = virial.b3_mixture(self.pairs, self.fractions, T)
        if self._quantum_b3:
            m = self.molar_masses_kg_mol[0] / N_A
            q = virial.h2_over_mu_K_A2(m, m)
            dC = b3_quantum_first_order(self.pairs.pots[0][0], T, q)
            vals = [v + dv for v, dv in zip(vals, dC)]
        if self.three_body_c9_K_A9:
            extra = b3_nonadditive(self.pairs.pots[0][0], self.three_body_c9_K_A9, T)
            vals = [v + dv for v, dv in zip(vals, extra)]
        return [virial.M6_MOL2_PER_A6 * np.asarray(v, dtype=float) for v in vals]

    def B(self, T, order=3):
        """Second virial coefficient, m^3/mol (with the quantum treatment chosen)."""
        inputs.order(order)
        return _out(self._b(T)[0])

    def dB_dT(self, T, order=3):
        """dB/dT, m^3/(mol K)."""
        inputs.order(order)
        return _out(self._b(T)[1])

    def d2B_dT2(self, T, order=3):
        """d2B/dT2, m^3/(mol K^2)."""
        inputs.order(order)
        return _out(self._b(T)[2])

    def C(self, T, order=3):
        """Third virial coefficient, m^6/mol^2 (0 for order 2)."""
        return _out(self._c(T, order)[0])

    def dC_dT(self, T, order=3):
        """dC/dT, m^6/(mol^2 K) (0 for order 2)."""
        return _out(self._c(T, order)[1])

    def d2C_dT2(self, T, order=3):
        """d2C/dT2, m^6/(mol^2 K^2) (0 for order 2)."""
        return _out(self._c(T, order)[2])

    def _state(self, T, rho, order):
        T = positive_array("T", T, "a temperature in K")
        rho = non_negative_array("rho_mol_m3", rho, "a molar density in mol/m^3")
        B = self._b(T)
        C = self._c(T, order)
        return T, rho, B, C

    # -- state functions --------------------------------------------------------
    def compressibility(self, T, rho_mol_m3, order=3):
        """Z = 1 + B rho + C rho^2 (dimensionless)."""
        T, rho, (B, _, _), (C, _, _) = self._state(T, rho_mol_m3, order)
        return _out(1.0 + B * rho + C * rho * rho)

    def pressure_Pa(self, T, rho_mol_m3, order=3):
        """p = rho R T Z, Pa."""
        T, rho, (B, _, _), (C, _, _) = self._state(T, rho_mol_m3, order)
        return _out(rho * R_GAS * T * (1.0 + B * rho + C * rho * rho))

    def dp_dT_Pa_K(self, T, rho_mol_m3, order=3):
        """(dp/dT) at constant rho, Pa/K: rho R [1 + (B + T B') rho + (C + T C') rho^2]."""
        T, rho, (B, dB, _), (C, dC, _) = self._state(T, rho_mol_m3, order)
        return _out(rho * R_GAS * (1.0 + (B + T * dB) * rho + (C + T * dC) * rho * rho))

    def u_res_J_mol(self, T, rho_mol_m3, order=3):
        """Residual molar internal energy, J/mol: -R T^2 (B' rho + C' rho^2 / 2)."""
        T, rho, (_, dB, _), (_, dC, _) = self._state(T, rho_mol_m3, order)
        return _out(-R_GAS * T * T * (dB * rho + 0.5 * dC * rho * rho))

    def cv_res_J_molK(self, T, rho_mol_m3, order=3):
        """Residual isochoric heat capacity, J/(mol K): d(u_res)/dT at constant rho.

        -R [(2 T B' + T^2 B'') rho + (2 T C' + T^2 C'') rho^2 / 2].
        """
        T, rho, (_, dB, d2B), (_, dC, d2C) = self._state(T, rho_mol_m3, order)
        return _out(-R_GAS * ((2.0 * T * dB + T * T * d2B) * rho
                                 + 0.5 * (2.0 * T * dC + T * T * d2C) * rho * rho))

    def s_res_J_molK(self, T, rho_mol_m3, order=3):
        """Residual molar entropy at fixed (T, rho) against the ideal gas at the same
        (T, rho), J/(mol K): -R [(B + T B') rho + (C + T C') rho^2 / 2]."""
        T, rho, (B, dB, _), (C, dC, _) = self._state(T, rho_mol_m3, order)
        return _out(-R_GAS * ((B + T * dB) * rho + 0.5 * (C + T * dC) * rho * rho))

    # -- inversion of p(rho) ------------------------------------------------------
    def density_from_pressure(self, T, p_Pa, order=3):
        """Molar density (mol/m^3) at which the truncated series gives pressure p.

        The root is taken on the branch that starts at the ideal gas
        (rho = 0) and along which p rises with rho.

        Raises
        ------
        VirialSeriesError
            When p lies above the maximum of the truncated p(rho) on that branch.
        """
        T_arr = positive_array("T", T, "a temperature in K")
        p_arr = positive_array("p_Pa", p_Pa, "a pressure in Pa")
        inputs.order(order)
        T_b, p_b = np.broadcast_arrays(T_arr, p_arr)
        out = np.array([self._density_one(float(t), float(p), order)
                        for t, p in zip(T_b.ravel(), p_b.ravel())]).reshape(T_b.shape)
        return _out(out)

    def _density_one(self, T, p, order):
        from scipy.optimize import brentq
        B = float(self._b(T)[0])
        C = float(self._c(T, order)[0])
        target = p / (R_GAS * T)  # rho Z = target

        def fail(limit_rho):
            p_max = limit_rho * R_GAS * T * (1.0 + B * limit_rho + C * limit_rho ** 2)
            raise VirialSeriesError(
                f"virial series cannot give this pressure; simulation is needed: at T = {T:.6g} K "
                f"the order-{order} series p(rho) peaks at {p_max:.6g} Pa (rho = {limit_rho:.6g} "
                f"mol/m^3), below p = {p:.6g} Pa; lower the pressure or use a simulation route")

        if C == 0.0:
            if B == 0.0:
                return target
            disc = 1.0 + 4.0 * B * target
            if disc < 0.0:
                fail(-0.5 / B)
            return 2.0 * target / (1.0 + math.sqrt(disc))
        # Smallest positive root of d(rho Z)/d rho = 1 + 2 B rho + 3 C rho^2.
        roots = np.roots([3.0 * C, 2.0 * B, 1.0])
        real = roots[np.abs(roots.imag) <= 1e-12 * np.abs(roots)].real
        pos = real[real > 0.0]
        g = lambda rho: rho * (1.0 + B * rho + C * rho * rho) - target  # noqa: E731
        if pos.size:
            hi = float(pos.min())
            if g(hi) < 0.0:
                fail(hi)
        else:
            hi = target
            while g(hi) < 0.0:
                hi *= 2.0
        return brentq(g, 0.0, hi, xtol=1e-14 * hi, rtol=1e-14, maxiter=200)

    # -- where the series holds -------------------------------------------------
    def series_convergence(self, T, rho_mol_m3):
        """Indicators of how well the series has converged at (T, rho).

        Returns
        -------
        dict of float or ndarray
            ``b_term`` B rho; ``c_term`` C rho^2;
            ``z_ratio`` |C rho^2| / |1 + B rho| (the size of the last kept
            term of Z against the rest); ``c_rho_over_b`` |C rho / B| (the
            ratio of successive terms; infinite where B = 0, near the Boyle
            temperature, where it means nothing); ``u_ratio``
            |C' rho / 2| / |B'| (the same for the residual energy; infinite
            at the maximum of B).
        """
        T, rho, (B, dB, _), (C, dC, _) = self._state(T, rho_mol_m3, 3)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = {
                "b_term": B * rho,
                "c_term": C * rho * rho,
                "z_ratio": np.abs(C * rho * rho) / np.abs(1.0 + B * rho),
                "c_rho_over_b": np.where(B == 0.0, np.inf, np.abs(C * rho / np.where(B == 0.0, 1.0, B))),
                "u_ratio": np.where(dB == 0.0, np.inf,
                                    np.abs(0.5 * dC * rho / np.where(dB == 0.0, 1.0, dB))),
            }
        return {k: _out(v) for k, v in out.items()}

    def check_converged(self, T, rho_mol_m3, limit=DEFAULT_CONVERGENCE_LIMIT):
        """Raise when the third-virial term of Z exceeds ``limit`` of the rest.

        Parameters
        ----------
        T : float, K
        rho_mol_m3 : float, mol/m^3
        limit : float, optional
            Largest allowed |C rho^2| / |1 + B rho| (default 0.05).

        Returns
        -------
        dict
            The indicators of :meth:`series_convergence`.

        Raises
        ------
        VirialSeriesError
            Saying that a simulation is needed.
        """
        limit = positive("limit", limit, "a fraction, e.g. 0.05")
        ind = self.series_convergence(T, rho_mol_m3)
        worst = float(np.max(ind["z_ratio"]))
        if worst > limit:
            raise VirialSeriesError(
                f"virial series not converged at T = {T!r} K, rho = {rho_mol_m3!r} mol/m^3: the "
                f"third-virial term is {worst:.3g} of the rest of Z (limit {limit:.3g}); the "
                "truncated series is unreliable here and a simulation is needed (or a lower density)")
        return ind
