"""B3 of rigid molecules (and atoms, and their mixtures) by Monte Carlo integration.

B3 = -(1/3) int int <f12 f13 f23> d r12 d r13, averaged over the
orientations of the three molecules.  Molecule 1 sits at the origin; the
centres of 2 and 3 are drawn in all space, direction uniform on the sphere,
distance from the density p(r) = (3 / (2 R_c^3)) r^2 for r < R_c and
(3 / (2 R_c^3)) R_c^6 / r^4 beyond (half the draws inside the contact
distance R_c, the rest spread like the r^-6 tail of f; weight
4 pi r^2 / p(r)), every axis uniform on the sphere.  When a molecule is
non-linear, each of the three also gets a rotation drawn uniformly from all
rotations (after the axes, so a gas of linear molecules keeps its numbers),
and every species triple with a non-linear molecule takes its energies from
the rotations.  The draws are made once, from a fixed seed, and
their energies kept, so B3(T) and its T-derivatives are smooth functions of
T (one set of draws at every T) with a standard error from the scatter of
the draws (the tests check it on the Lennard-Jones atom against the exact
quadrature of :mod:`analysis.virial.third`).

Units: T in K, lengths in angstrom, B3 per molecule^2 in angstrom^6.
Array suffixes: ``_n`` draws, ``_v`` Cartesian components, ``_k``
derivative order in T.
"""
import itertools
import math

import numpy as np

from analysis.molecules.pair_energy import pair_energy, pair_energy_rotated
from analysis.molecules.rotations import random_rotations
from analysis.virial.quadrature import check_fractions, check_temperature, mayer
from mdsim.checks import count

__all__ = ["DEFAULT_DRAWS", "R_CONTACT_SIGMA", "TripletDraws", "product_derivatives"]

#: Draws of (r12, r13, three axes) (tests: the standard error of B3 for N2 at
#: 300 K is then about 1 % of B3).
DEFAULT_DRAWS = 200_000
#: The contact distance of the radial density: R_c = R_CONTACT_SIGMA * sigma_max + the extent.
R_CONTACT_SIGMA = 1.2


def _unit_vectors(rng, n):
    v = rng.normal(size=(n, 3))
    return v / np.linalg.norm(v, axis=1)[:, None]


def _radii(rng, r_c, n):
    """Distances drawn from p(r) (module docstring) and their weights 4 pi r^2 / p(r)."""
    inside = rng.random(n) < 0.5
    v = rng.random(n)
    r = np.where(inside, r_c * np.cbrt(v), r_c / np.cbrt(1.0 - v))
    norm = 2.0 * r_c ** 3 / 3.0
    weight = 4.0 * math.pi * norm * np.where(inside, 1.0, (r / r_c) ** 6)
    return r, weight


def product_derivatives(f1, f2, f3):
    """(P, dP/dT, d2P/dT2) of P = f1 f2 f3, each f a triple (f, f', f'')."""
    (a, da, d2a), (b, db, d2b), (c, dc, d2c) = f1, f2, f3
    p = a * b * c
    dp = da * b * c + a * db * c + a * b * dc
    d2p = (d2a * b * c + a * d2b * c + a * b * d2c
           + 2.0 * (da * db * c + da * b * dc + a * db * dc))
    return p, dp, d2p


class TripletDraws:
    """Random triangles of three molecules, with their pair energies per species triple.

    Parameters
    ----------
    molecules : list of RigidMolecule
        The species (molecules of any shape, or atoms).
    n_draws : int, optional
    seed : int, optional

    Examples
    --------
    B3 of the Lennard-Jones atom at T* = 2 from 20000 draws, within four
    standard errors of the quadrature of :func:`analysis.virial.b3`:

    >>> from mdsim.engine.potentials import LennardJones
    >>> from analysis.molecules.model import RigidMolecule, Site
    >>> from analysis.virial import b3
    >>> lj = LennardJones(1.0, 1.0)
    >>> draws = TripletDraws([RigidMolecule("LJ", [Site(lj, (0, 0, 0), 0.04)])], n_draws=20000)
    >>> value_k, stderr_k = draws.b3([1.0], 2.0)
    >>> bool(abs(value_k[0] - b3(lj, 2.0)[0]) < 4.0 * stderr_k[0])
    True
    """

    def __init__(self, molecules, n_draws=DEFAULT_DRAWS, seed=1):
        self.molecules = list(molecules)
        n = count("n_draws", n_draws, 1000, "Monte Carlo draws, e.g. 200000")
        rng = np.random.default_rng(count("seed", seed, 0))
        sigma = max(s.potential.sigma for m in self.molecules for s in m.sites)
        ext = max(m.extent_angstrom for m in self.molecules)
        self.r_contact = R_CONTACT_SIGMA * sigma + 2.0 * ext
        r2, w2 = _radii(rng, self.r_contact, n)
        r3, w3 = _radii(rng, self.r_contact, n)
        self.d12_nv = r2[:, None] * _unit_vectors(rng, n)
        self.d13_nv = r3[:, None] * _unit_vectors(rng, n)
        self.e_nv = [_unit_vectors(rng, n) for _ in range(3)]
        self.rot_nvv = None
        if any(m.is_nonlinear for m in self.molecules):
            self.rot_nvv = [random_rotations(rng, n) for _ in range(3)]
        self.weight_n = w2 * w3
        self._energies = {}

    @property
    def n_draws(self):
        """The number of draws."""
        return self.weight_n.size

    def energies(self, a, b, c):
        """(u12, u13, u23) of the draws with molecules of species a, b, c, K."""
        key = (a, b, c)
        if key not in self._energies:
            m = self.molecules
            if not any(m[k].is_nonlinear for k in key):
                energy, (o1, o2, o3) = pair_energy, self.e_nv
            else:
                energy, (o1, o2, o3) = pair_energy_rotated, self.rot_nvv
            self._energies[key] = (energy(m[a], m[b], self.d12_nv, o1, o2),
                                   energy(m[a], m[c], self.d13_nv, o1, o3),
                                   energy(m[b], m[c], self.d13_nv - self.d12_nv, o2, o3))
        return self._energies[key]

    def integrand(self, fractions, T):
        """Per-draw estimates of B3 of the mixture and its T-derivatives, shape (3, n_draws).

        Each species triple enters once, sorted, with its number of orderings.
        """
        x = check_fractions(fractions, len(self.molecules))
        T = float(check_temperature(T))
        total = np.zeros((3, self.n_draws))
        for abc in itertools.combinations_with_replacement(range(len(self.molecules)), 3):
            weight = math.prod(x[i] for i in abc) * len(set(itertools.permutations(abc)))
            if weight == 0.0:
                continue
            f12, f13, f23 = (mayer(u, T) for u in self.energies(*abc))
            total += weight * np.array(product_derivatives(f12, f13, f23))
        return -total * self.weight_n / 3.0

    def b3(self, fractions, T):
        """B3 of a mixture and its first two T-derivatives, with their standard errors.

        Parameters
        ----------
        fractions : array_like, shape=(n_species,)
        T : float, K

        Returns
        -------
        value_k, stderr_k : ndarray, shape=(3,)
            B3 (angstrom^6), dB3/dT (angstrom^6/K), d2B3/dT2
            (angstrom^6/K^2) and the standard error of each (the draws are
            independent: the standard deviation over sqrt(n_draws)).

        Notes
        -----
        B3 = -(1/3) int int f12 f13 f23 dr12 dr13 (Hirschfelder, Curtiss and
        Bird, Molecular Theory of Gases and Liquids, 1954, eq. 3.6-7), with
        the orientational average for rigid molecules (Gray and Gubbins,
        Theory of Molecular Fluids, vol. 1, 1984, section 3.2); for a
        mixture B3 = sum_abc x_a x_b x_c B_abc.
        """
        g_kn = self.integrand(fractions, T)
        return g_kn.mean(axis=1), g_kn.std(axis=1, ddof=1) / math.sqrt(self.n_draws)
