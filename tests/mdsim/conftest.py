"""Shared fixtures for the engine tests: small systems and a slow, obvious
NumPy all-pairs reference for the force kernels."""
import numpy as np
import pytest

from mdsim.engine.potentials import RC, SHIFT, Exp6, LennardJones, Mie, PairMatrix, Tabulated
from mdsim.engine.system import System


def _allpairs(r_ni, box_i, species_n, pairs):
    """Forces, truncated energy, shift sum and virial by looping over all pairs.

    Minimum image, each pair once.  Lennard-Jones is written out here in
    closed form (independent of the product's pair function); the other
    forms use the potentials' vectorised NumPy views.
    """
    r_ni = np.asarray(r_ni, dtype=float)
    n = r_ni.shape[0]
    i, j = np.triu_indices(n, 1)
    d = r_ni[i] - r_ni[j]
    d -= box_i * np.round(d / box_i)
    r = np.sqrt((d * d).sum(axis=1))
    f_ni = np.zeros((n, 3))
    u_sum = s_sum = w_sum = 0.0
    for a in range(pairs.n_species):
        for b in range(pairs.n_species):
            if a > b:
                continue
            sel = ((species_n[i] == a) & (species_n[j] == b)) | \
                  ((species_n[i] == b) & (species_n[j] == a))
            rc = pairs.params_ab[a, b, RC]
            sel &= r < rc
            rr = r[sel]
            pot = pairs.pots[a][b]
            if type(pot) is LennardJones:
                e, s = pot.epsilon, pot.sigma
                u = 4 * e * ((s / rr) ** 12 - (s / rr) ** 6)
                dudr = 4 * e * (-12 * s ** 12 / rr ** 13 + 6 * s ** 6 / rr ** 7)
            else:
                u = pot.energy(rr)
                dudr = pot.dudr(rr)
            u_sum += u.sum()
            s_sum += sel.sum() * pairs.params_ab[a, b, SHIFT]
            w_sum += (-dudr * rr).sum()
            fvec = (-dudr / rr)[:, None] * d[sel]
            np.add.at(f_ni, i[sel], fvec)
            np.add.at(f_ni, j[sel], -fvec)
    return f_ni, u_sum, s_sum, w_sum


@pytest.fixture
def allpairs_reference():
    """The NumPy all-pairs reference ``f(r_ni, box_i, species_n, pairs)``."""
    return _allpairs


def _table_lj():
    r = np.linspace(0.6, 3.2, 300)
    return Tabulated(r, 4 * (r ** -12 - r ** -6), source="LJ sampled for tests")


@pytest.fixture
def pair_matrices():
    """One pair matrix of every form; mixtures where the form allows them."""
    return {
        "lj-mixture": PairMatrix([LennardJones(1.0, 1.0), LennardJones(0.6, 0.85)], 2.5),
        "mie-mixture": PairMatrix([Mie(1.0, 1.0, 14.0, 6.0), Mie(0.8, 0.9, 12.0, 6.0)], 2.5),
        "exp6-mixture": PairMatrix([Exp6(1.0, 1.12, 14.0), Exp6(0.7, 1.0, 13.0)], 2.5),
        "table": PairMatrix([_table_lj()], 2.5),
        "lj": PairMatrix([LennardJones(1.0, 1.0)], 2.5),
    }


def jittered_lattice(pairs, counts, density, seed, amplitude=0.08):
    """A lattice start with seeded random displacements (a liquid-like configuration)."""
    s = System.cubic(pairs, counts, density).place_on_lattice(seed)
    r = s.r_ni + np.random.default_rng(seed).normal(0.0, amplitude, s.r_ni.shape)
    s.r_ni = np.mod(r, s.box_i)
    return s


@pytest.fixture
def make_config():
    """``make_config(pairs, counts, density, seed, amplitude=0.08)`` -> System."""
    return jittered_lattice


@pytest.fixture
def lj_liquid_256():
    """256 LJ particles at rho* = 0.8442 on a lattice, rc = 2.5 sigma."""
    pairs = PairMatrix([LennardJones(1.0, 1.0)], 2.5)
    return System.cubic(pairs, [256], 0.8442).place_on_lattice(3)


@pytest.fixture(scope="session")
def thol_coexistence_cache(thol_lj):
    """``fill(cache_dir, pairs, temperatures_red)``: the Gibbs-ensemble cache of
    :func:`mdsim.sampling.coexistence.coexistence_point` (settings
    :data:`mdsim.pipeline.coexistence_route.GIBBS_SETTINGS`) pre-filled with the
    coexistence of the Lennard-Jones reference EOS of Thol et al., J. Phys. Chem.
    Ref. Data 45, 023101 (2016), through teqp (test-only), in place of runs.

    The EOS is of the full potential, the product's of the truncated one with
    its tail: these points test the wiring, not the Gibbs ensemble.  Standard
    errors are invented (0.002 on rho_l* and the energies, 0.0002 on rho_v*).
    The files are written by the sampler's own cache writer.
    """
    from mdsim.pipeline.coexistence_route import GIBBS_SETTINGS
    from mdsim.sampling.coexistence_cache import CoexistencePoint, cache_file, write_cached

    def fill(cache_dir, pairs, temperatures_red):
        for t in temperatures_red:
            t = round(float(t), 6)
            rl, rv = thol_lj.saturation(t)
            p = rv * t * (1.0 + thol_lj.model.get_Ar01(t, rv, np.array([1.0])))
            point = CoexistencePoint(
                T_red=t, rho_vap=rv, rho_vap_err=2e-4, rho_liq=rl, rho_liq_err=2e-3,
                u_vap=thol_lj.u_res(t, rv), u_vap_err=2e-3, u_liq=thol_lj.u_res(t, rl),
                u_liq_err=2e-3, p_sat=p, p_sat_err=0.0, p_liq=p, p_liq_err=0.0,
                n_particles=GIBBS_SETTINGS["n_particles"],
                equilibration_cycles=GIBBS_SETTINGS["equilibration_cycles"],
                production_cycles=GIBBS_SETTINGS["production_cycles"],
                cutoff_red=float(pairs.rc_max), seed="thol-2016-eos")
            write_cached(cache_file(cache_dir, pairs, t, **GIBBS_SETTINGS), point)
    return fill
