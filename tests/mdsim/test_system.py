"""Periodic system set-up, start configurations and the random stream."""
import numpy as np
import pytest

from mdsim.engine import rng
from mdsim.errors import StudyError
from mdsim.engine.potentials import Exp6, LennardJones, PairMatrix
from mdsim.engine.system import System


@pytest.fixture
def lj_pairs():
    return PairMatrix([LennardJones(1.0, 1.0)], 3.0)


def min_image_distances(r, box):
    d = r[:, None, :] - r[None, :, :]
    d -= box * np.round(d / box)
    dist = np.sqrt((d ** 2).sum(-1))
    return dist[np.triu_indices(len(r), 1)]


@pytest.mark.parametrize("density", [0.0005, 0.05, 0.3])
def test_random_start_has_no_overlaps(lj_pairs, density):
    s = System.cubic(lj_pairs, [300], density).place_at_random(seed=3)
    assert s.density == pytest.approx(density, rel=1e-12)
    assert np.all((s.r_ni >= 0) & (s.r_ni < s.box_i))
    assert min_image_distances(s.r_ni, s.box_i).min() >= 0.9


@pytest.mark.parametrize("density", [0.5, 0.8442, 0.9])
def test_lattice_start_dense(lj_pairs, density):
    s = System.cubic(lj_pairs, [500], density).place_on_lattice(seed=1)
    # a cubic lattice at rho* = 0.9 has spacing 0.9^(-1/3) = 1.036 sigma (geometry)
    assert min_image_distances(s.r_ni, s.box_i).min() == pytest.approx(
        (s.box_i[0] / np.ceil(500 ** (1 / 3))), rel=1e-9)
    s.check_overlaps()


def test_mixture_counts_and_orthorhombic_box():
    pm = PairMatrix([LennardJones(1.0, 1.0), LennardJones(0.8, 0.9), LennardJones(1.2, 0.95)], 2.5)
    s = System(pm, [78, 21, 1], [8.0, 9.0, 10.0]).place_on_lattice(seed=2)
    assert s.n_particles == 100
    assert np.bincount(s.species_n).tolist() == [78, 21, 1]
    assert s.volume == pytest.approx(720.0)
    np.testing.assert_allclose(s.fractions_a, [0.78, 0.21, 0.01])


def test_bad_settings_raise(lj_pairs):
    with pytest.raises(StudyError, match="density"):
        System.cubic(lj_pairs, [100], -0.1)
    with pytest.raises(StudyError, match="close packing"):
        System.cubic(lj_pairs, [100], 2.0)
    with pytest.raises(StudyError, match="particles"):
        System.cubic(lj_pairs, [1], 0.1)
    with pytest.raises(StudyError, match="half the box"):
        System.cubic(lj_pairs, [50], 0.8)
    s = System.cubic(lj_pairs, [200], 0.3)
    r = np.random.default_rng(0).random((200, 3)) * s.box_i
    r[1] = r[0] + 0.1
    with pytest.raises(StudyError, match="overlap"):
        s.set_positions(r)


def test_exp6_core_is_respected_by_random_start():
    e6 = Exp6(1.0, 1.12, 14.0)
    s = System.cubic(PairMatrix([e6], 3.0), [200], 0.05).place_at_random(seed=5)
    assert min_image_distances(s.r_ni, s.box_i).min() > e6.core_radius


def test_rng_is_reproducible_and_uniform():
    a, b = rng.make_state(42), rng.make_state(42)
    xa = np.array([rng.uniform(a) for _ in range(20000)])
    xb = np.array([rng.uniform(b) for _ in range(20000)])
    assert np.array_equal(xa, xb)
    assert not np.array_equal(rng.make_state(42), rng.make_state(43))
    # mean of U(0,1): 0.5 +- 1/sqrt(12 n); 5 sigma
    assert abs(xa.mean() - 0.5) < 5 / np.sqrt(12 * xa.size)
    z = np.empty(20000)
    rng.fill_normal(a, z)
    assert abs(z.mean()) < 5 / np.sqrt(z.size)
    assert abs(z.var() - 1) < 5 * np.sqrt(2 / z.size)


def _xoshiro_python(state, n):
    """Plain-integer rewrite of Blackman and Vigna's published xoshiro256**."""
    mask = (1 << 64) - 1
    rotl = lambda x, k: ((x << k) | (x >> (64 - k))) & mask  # noqa: E731
    s = list(state)
    out = []
    for _ in range(n):
        out.append(rotl((s[1] * 5) & mask, 7) * 9 & mask)
        t = (s[1] << 17) & mask
        s[2] ^= s[0]
        s[3] ^= s[1]
        s[1] ^= s[2]
        s[0] ^= s[3]
        s[2] ^= t
        s[3] = rotl(s[3], 45)
    return out


def test_rng_known_output():
    # xoshiro256** from state (1, 2, 3, 4): first outputs 11520, 0, 1509978240,
    # 1215971899390074240 (Blackman and Vigna's reference generator; from memory)
    s = np.array([1, 2, 3, 4], dtype=np.uint64)
    out = [int(rng.next_u64(s)) for _ in range(1000)]
    assert out[:4] == [11520, 0, 1509978240, 1215971899390074240]
    assert out == _xoshiro_python([1, 2, 3, 4], 1000)
