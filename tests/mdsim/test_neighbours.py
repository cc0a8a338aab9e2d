"""Neighbour lists: exactly the pairs within reach, after moves and rebuilds."""
import numpy as np
import pytest

from mdsim.errors import StudyError
from mdsim.engine.neighbours import NeighbourList, choose_skin


def brute_pairs(r_ni, box_i, r_cut):
    """Set of pairs (i < j) closer than r_cut, minimum image, all pairs."""
    n = r_ni.shape[0]
    i, j = np.triu_indices(n, 1)
    d = r_ni[i] - r_ni[j]
    d -= box_i * np.round(d / box_i)
    close = (d * d).sum(axis=1) < r_cut ** 2
    return set(zip(i[close].tolist(), j[close].tolist()))


def listed_pairs(nl):
    out = set()
    for a in range(nl.n):
        for b in nl.nb_nk[a, :nl.count_n[a]]:
            out.add((min(a, int(b)), max(a, int(b))))
    return out


def build(nl, r_ni):
    r = r_ni.copy()
    order = nl.sort_order(r)
    r = np.ascontiguousarray(r[order])
    nl.build(r)
    return r


@pytest.mark.parametrize("n, box_scale", [(120, (1.0, 1.0, 1.0)),     # all-pairs path
                                          (900, (1.0, 1.0, 1.0)),     # cell path
                                          (900, (1.0, 1.6, 0.9))])    # orthorhombic cells
def test_list_holds_exactly_the_pairs_within_list_radius(n, box_scale):
    rng = np.random.default_rng(11)
    box = np.array(box_scale) * (n / 0.8) ** (1 / 3)
    r = rng.random((n, 3)) * box
    nl = NeighbourList(n, box, 2.5, 0.3)
    r = build(nl, r)
    pairs = listed_pairs(nl)
    assert nl.n_listed == len(pairs)  # each pair once (a half list)
    assert pairs == brute_pairs(r, box, 2.8)
    assert nl.use_cells == (n == 900)


def test_sorted_by_cell_and_same_pairs_after_moves_and_rebuild():
    n = 1000
    rng = np.random.default_rng(5)
    box = np.full(3, (n / 0.6) ** (1 / 3))
    nl = NeighbourList(n, box, 2.5, 0.4)
    r = build(nl, rng.random((n, 3)) * box)
    cell = np.floor(r / (box / nl.ncell_i)).astype(int)
    key = (cell[:, 0] * nl.ncell_i[1] + cell[:, 1]) * nl.ncell_i[2] + cell[:, 2]
    assert np.all(np.diff(key) >= 0)
    # moves below skin/2 in any direction: every pair within rc is still listed
    step = rng.normal(size=(n, 3))
    step *= (0.199 / np.linalg.norm(step, axis=1))[:, None]
    moved = r + step
    assert not nl.needs_rebuild(moved)
    assert brute_pairs(moved, box, 2.5) <= listed_pairs(nl)
    # one particle beyond skin/2 triggers a rebuild, which is exact again
    moved[17] += [0.25, 0.0, 0.0]
    assert nl.needs_rebuild(moved)
    r2 = build(nl, moved)
    assert listed_pairs(nl) == brute_pairs(r2, box, 2.9)


def test_moves_across_the_boundary_keep_pairs():
    n = 800
    rng = np.random.default_rng(8)
    box = np.full(3, (n / 0.8) ** (1 / 3))
    nl = NeighbourList(n, box, 2.5, 0.3)
    r = build(nl, rng.random((n, 3)) * box)
    moved = r + rng.uniform(-0.08, 0.08, size=r.shape)  # some leave [0, L)
    assert np.any(moved < 0) or np.any(moved >= box)
    assert not nl.needs_rebuild(moved)
    assert brute_pairs(moved, box, 2.5) <= listed_pairs(nl)


def test_overflowing_rows_grow_and_rebuild():
    n = 900
    rng = np.random.default_rng(2)
    box = np.full(3, (n / 0.8) ** (1 / 3))
    nl = NeighbourList(n, box, 2.5, 0.3)
    r = build(nl, rng.random((n, 3)) * box)
    expected = listed_pairs(nl)
    nl.nb_nk = np.zeros((n, 3), dtype=np.int32)  # far too narrow
    nl.build(r)
    assert nl.nb_nk.shape[1] >= nl.count_n.max()
    assert listed_pairs(nl) == expected


def test_skin_follows_the_state_point():
    # dense liquid about 0.3 sigma, hot dilute gas about 1 sigma
    # (the values the task set from an earlier prototype; common practice, no source)
    assert choose_skin(0.8442, 0.72, 2.5) == pytest.approx(0.3, abs=0.03)
    assert choose_skin(0.03, 2.0, 3.0) == pytest.approx(1.0, abs=0.1)
    assert choose_skin(0.2, 1.5, 3.0) > choose_skin(0.8, 1.5, 3.0)


def test_bad_skin_is_refused():
    with pytest.raises(StudyError, match="skin"):
        NeighbourList(10, [10.0, 10.0, 10.0], 2.5, -0.1)
