"""The engine's rigid linear-molecule pair kernel (mdsim.engine.rigid_pair).

Checked against the analysis layer's NumPy pair energy
(analysis.molecules.pair_energy, itself checked against a hand-written
site sum and Gray and Gubbins' quadrupole formula), and forces and torques
against finite differences of the energy: the force is -dU/dd, the torque
component along a unit vector x is -dU/dphi under a rotation of the axis by
phi about x (Goldstein, Classical Mechanics, chapter 5).
"""
import numpy as np
import pytest

from analysis.molecules.pair_energy import pair_energy
from analysis.molecules.reduced import reduced_linear_type
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.engine.rigid_pair import forces_half
# reduced units of nitrogen's site (Vrabec et al. 2001, from memory, conftest.py)
EPS_K, SIGMA_A = 34.897, 3.3211


def random_unit(rng):
    v = rng.normal(size=3)
    return v / np.linalg.norm(v)


def rotate(v, x, phi):
    """v rotated by phi about the unit vector x (Rodrigues' formula)."""
    return (v * np.cos(phi) + np.cross(x, v) * np.sin(phi)
            + x * (x @ v) * (1 - np.cos(phi)))


def _model(molecules, cutoff, shifted=False):
    return LinearPairModel([reduced_linear_type(m, EPS_K, SIGMA_A) for m in molecules], cutoff,
                           shifted)


@pytest.mark.parametrize("names", [("N2", "N2"), ("CO2", "CO2"), ("N2", "O2")])
def test_energy_matches_the_analysis_pair_energy(names, nitrogen, co2, oxygen):
    mols = {"N2": nitrogen, "CO2": co2, "O2": oxygen}
    a, b = (mols[n] for n in names)
    model = _model([a, b], cutoff=20.0)
    rng = np.random.default_rng(7)
    checked = 0
    for _ in range(40):
        d = random_unit(rng) * rng.uniform(2.5, 9.0)  # angstrom
        ea, eb = random_unit(rng), random_unit(rng)
        want = float(pair_energy(a, b, d, ea, eb))
        if not np.isfinite(want):
            continue
        u = model.pair(d / SIGMA_A, ea, eb, 0, 1)[0] * EPS_K
        assert u == pytest.approx(want, rel=1e-10, abs=1e-10 * EPS_K)
        checked += 1
    assert checked >= 20


def _pair_energy(model, d, ea, eb):
    return model.pair(d, ea, eb)[0]


@pytest.mark.parametrize("shifted", [False, True])
def test_force_and_torques_are_derivatives_of_the_energy(co2, shifted):
    # CO2: the longest molecule and the largest quadrupole of the three
    model = _model([co2], cutoff=3.0, shifted=shifted)
    rng = np.random.default_rng(11)
    h = 1e-6
    for _ in range(10):
        d = random_unit(rng) * rng.uniform(1.3, 2.9)
        ea, eb = random_unit(rng), random_unit(rng)
        u, force_b, torque_a, torque_b = model.pair(d, ea, eb)
        scale = max(1.0, abs(u))
        for x in np.eye(3):
            du = (_pair_energy(model, d + h * x, ea, eb)
                  - _pair_energy(model, d - h * x, ea, eb)) / (2 * h)
            assert force_b @ x == pytest.approx(-du, abs=2e-6 * scale)
            du = (_pair_energy(model, d, rotate(ea, x, h), eb)
                  - _pair_energy(model, d, rotate(ea, x, -h), eb)) / (2 * h)
            assert torque_a @ x == pytest.approx(-du, abs=2e-6 * scale)
            du = (_pair_energy(model, d, ea, rotate(eb, x, h))
                  - _pair_energy(model, d, ea, rotate(eb, x, -h))) / (2 * h)
            assert torque_b @ x == pytest.approx(-du, abs=2e-6 * scale)
        # Newton's third law for rigid bodies: no net torque about the origin,
        # d x F_b + tau_a + tau_b = 0 (force on a is -F_b by construction)
        assert np.cross(d, force_b) + torque_a + torque_b == pytest.approx(
            np.zeros(3), abs=1e-11 * scale)


def test_shifted_energy_vanishes_at_the_cutoff_and_keeps_the_virial(nitrogen):
    plain = _model([nitrogen], cutoff=2.5)
    shifted = _model([nitrogen], cutoff=2.5, shifted=True)
    rng = np.random.default_rng(3)
    for _ in range(5):
        n, ea, eb = random_unit(rng), random_unit(rng), random_unit(rng)
        # u(d) - u(rc n) -> 0 as |d| -> rc from below (module docstring of rigid_pair)
        assert abs(shifted.pair(2.5 * (1 - 1e-9) * n, ea, eb)[0]) < 1e-9
        d = 1.7 * n
        # the shift term is constant along d: the pair virial d . F_b is unchanged
        assert d @ shifted.pair(d, ea, eb)[1] == pytest.approx(d @ plain.pair(d, ea, eb)[1],
                                                                rel=1e-12)
    assert plain.pair(2.5 * (1 + 1e-12) * n, ea, eb)[0] == 0.0  # at and beyond the cut-off: nothing


def _slow_system(molecules_t, type_n, centre_ni, axis_ni, box_i, rc):
    """Total energy of a periodic box by the analysis layer's pair energy, all pairs, epsilon."""
    i_p, j_p = np.triu_indices(len(centre_ni), 1)
    d_pi = centre_ni[j_p] - centre_ni[i_p]
    d_pi -= box_i * np.rint(d_pi / box_i)
    u = 0.0
    for ta, mol_a in enumerate(molecules_t):
        for tb, mol_b in enumerate(molecules_t):
            pick = (type_n[i_p] == ta) & (type_n[j_p] == tb) & ((d_pi ** 2).sum(-1) < rc * rc)
            u += pair_energy(mol_a, mol_b, d_pi[pick] * SIGMA_A, axis_ni[i_p[pick]],
                             axis_ni[j_p[pick]]).sum()
    return u / EPS_K


def random_start(rng, box_i, n):
    """n random centres in a periodic box, every pair at least 1.1 sigma apart."""
    while True:
        centre_ni = rng.uniform(0, 1, (n, 3)) * box_i
        diff = centre_ni[:, None] - centre_ni[None]
        diff -= box_i * np.rint(diff / box_i)
        if (np.sqrt((diff ** 2).sum(-1)) + 10 * np.eye(n)).min() > 1.1:
            return centre_ni


def random_box(seed, box_i, n, n_types):
    """Centres (random_start), random axes and types 0, 1, .. in turn of n molecules."""
    rng = np.random.default_rng(seed)
    centre_ni = random_start(rng, box_i, n)
    axis_ni = np.array([random_unit(rng) for _ in range(n)])
    return centre_ni, axis_ni, np.arange(n, dtype=np.int64) % n_types


def test_box_kernel_against_a_slow_numpy_sum(nitrogen, oxygen):
    # 10 molecules (two types) in a periodic box: energy against the NumPy pair
    # energy; forces and torques against finite differences of that energy
    box_i = np.array([4.0, 4.5, 5.0])
    n, rc = 10, 2.2
    centre_ni, axis_ni, type_n = random_box(5, box_i, n, 2)
    mols = [nitrogen, oxygen]
    model = _model([nitrogen, oxygen], cutoff=rc)
    nb_nj = np.array([[j for j in range(i + 1, n)] + [0] * (i + 1) for i in range(n)],
                     dtype=np.int32)
    count_n = np.arange(n - 1, -1, -1, dtype=np.int32)
    force_ni, torque_ni = np.zeros((n, 3)), np.zeros((n, 3))
    u, w = model.forces(centre_ni, axis_ni, type_n, box_i, nb_nj, count_n, force_ni, torque_ni)
    assert u == pytest.approx(_slow_system(mols, type_n, centre_ni, axis_ni, box_i, rc), rel=1e-10)
    h = 1e-6
    for i in (0, 3, 8):
        for x in np.eye(3):
            c_p, c_m = centre_ni.copy(), centre_ni.copy()
            c_p[i] += h * x
            c_m[i] -= h * x
            du = (_slow_system(mols, type_n, c_p, axis_ni, box_i, rc)
                  - _slow_system(mols, type_n, c_m, axis_ni, box_i, rc)) / (2 * h)
            assert force_ni[i] @ x == pytest.approx(-du, abs=1e-5 * max(1.0, abs(u)))
            a_p, a_m = axis_ni.copy(), axis_ni.copy()
            a_p[i], a_m[i] = rotate(axis_ni[i], x, h), rotate(axis_ni[i], x, -h)
            du = (_slow_system(mols, type_n, centre_ni, a_p, box_i, rc)
                  - _slow_system(mols, type_n, centre_ni, a_m, box_i, rc)) / (2 * h)
            assert torque_ni[i] @ x == pytest.approx(-du, abs=1e-5 * max(1.0, abs(u)))
    assert force_ni.sum(axis=0) == pytest.approx(np.zeros(3), abs=1e-10 * max(1.0, abs(u)))
    # the virial against the pair sum of d . F_b from the one-pair wrapper
    w_pairs = 0.0
    for i in range(n):
        for j in range(i + 1, n):
            d = centre_ni[j] - centre_ni[i]
            d -= box_i * np.rint(d / box_i)
            w_pairs += d @ model.pair(d, axis_ni[i], axis_ni[j], type_n[i], type_n[j])[1]
    assert w == pytest.approx(w_pairs, rel=1e-12)
    # the raw kernel with the same arrays gives the same numbers (the interface the MD calls)
    f2, t2 = np.zeros((n, 3)), np.zeros((n, 3))
    assert forces_half(centre_ni, axis_ni, type_n, box_i, *model.arrays(), nb_nj, count_n,
                       f2, t2) == (u, w)


def test_mixture_of_molecules_and_an_atom_in_the_monte_carlo_kernels(nitrogen, oxygen,
                                                                      argon_atom):
    # air's three kinds (2CLJQ N2 and O2, LJ Ar; conftest.py) in one periodic box: the Monte
    # Carlo cell kernels' total energy and one molecule's energy against the analysis
    # layer's pair energy summed over pairs (unlike sites by Lorentz-Berthelot there too,
    # the quadrupole energy only between N2 and O2), to round-off (1e-10)
    from mdsim.engine.rigid_mc import RigidMCSampler
    from mdsim.engine.rigid_mc_kernels import molecule_energy
    rng = np.random.default_rng(11)
    box_i = np.array([5.0, 5.5, 6.0])
    n, rc = 15, 2.4
    centre_ni = random_start(rng, box_i, n)
    axis_ni = np.array([random_unit(rng) for _ in range(n)])
    type_n = np.array([0, 1, 2] * 5, dtype=np.int64)
    mols = [nitrogen, oxygen, argon_atom]
    model = _model(mols, cutoff=rc)
    assert model.rotates_t.tolist() == [1, 1, 0]
    mc = RigidMCSampler(model, centre_ni, axis_ni, type_n, box_i, temperature=2.0, seed=1)
    u, _ = mc.energy_and_virial()
    assert u == pytest.approx(_slow_system(mols, type_n, centre_ni, axis_ni, box_i, rc),
                              rel=1e-10)
    cells = np.empty((2 * mc.ncell_i[3] + 1) ** 3, dtype=np.int64)
    for i in (2, 4):  # an argon atom and an oxygen molecule against all others
        c, e = centre_ni[i], axis_ni[i]
        u_i = molecule_energy(i, type_n[i], c[0], c[1], c[2], e[0], e[1], e[2], mc.centre_ni,
                              mc.axis_ni, type_n, box_i, mc.ncell_i, mc.head_c, mc.next_n,
                              *model.arrays()[:5], rc, 0.0, cells)
        others = np.arange(n) != i
        d = centre_ni[others] - c
        d -= box_i * np.rint(d / box_i)
        near = (d ** 2).sum(-1) < rc * rc
        want = sum(float(pair_energy(mols[type_n[i]], mols[t], dv * SIGMA_A, e, ev))
                   for t, dv, ev in zip(type_n[others][near], d[near], axis_ni[others][near]))
        assert u_i == pytest.approx(want / EPS_K, rel=1e-10)
