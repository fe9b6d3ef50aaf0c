"""The grid neighbour search answers as scipy's cKDTree does (the reference library).

Reference: ``scipy.spatial.cKDTree`` (SciPy, a registry package), on random point
clouds (seeded) at the densities of protein atoms and of residue centres, with
radii from a bond (1.9 Å) to a residue reach (12.5 Å), and on the atoms of a real
entry (1KF6, ../shared/structures).
"""

from __future__ import annotations

import gemmi
import numpy as np
import pytest
from scipy.spatial import cKDTree

from fescan.core.neighbours import NeighbourTree, atom_distance
from tests.datafiles import entry_path, requires_shared


def _cloud(n, side, seed):
    return np.random.default_rng(seed).uniform(-side / 2, side / 2, size=(n, 3))


CASES = [(2000, 30.0, 1.9), (3000, 60.0, 3.0), (500, 80.0, 12.5), (50, 10.0, 5.0), (1, 5.0, 2.0)]


@pytest.mark.parametrize(("n", "side", "r"), CASES)
def test_pairs_balls_and_nearest_match_the_kd_tree(n, side, r):
    data = _cloud(n, side, n)
    queries = _cloud(97, side * 1.2, n + 1)  # some outside the cloud's box
    mine, ref = NeighbourTree(data), cKDTree(data)
    want = np.asarray(sorted(ref.query_pairs(r)), dtype=int).reshape(-1, 2)
    assert np.array_equal(mine.query_pairs(r), want)
    assert mine.query_pairs(r, output_type="set") == ref.query_pairs(r)
    for got, exp in zip(mine.query_ball_point(queries, r), ref.query_ball_point(queries, r)):
        assert got == sorted(exp)
    assert mine.query_ball_point(queries[0], r) == sorted(ref.query_ball_point(queries[0], r))
    d, i = mine.query(queries, k=1)
    d_ref, i_ref = ref.query(queries, k=1)
    assert np.allclose(d, d_ref, atol=1e-9)
    assert np.array_equal(i, i_ref)
    d, i = mine.query(queries, k=1, distance_upper_bound=r)
    d_ref, i_ref = ref.query(queries, k=1, distance_upper_bound=r)
    assert np.array_equal(np.isinf(d), np.isinf(d_ref))
    assert np.allclose(d[np.isfinite(d)], d_ref[np.isfinite(d_ref)], atol=1e-9)
    assert np.array_equal(i, i_ref)
    ds, js = mine.query(queries[3], k=1)
    assert (ds, js) == pytest.approx(tuple(float(v) for v in ref.query(queries[3], k=1)))


def test_empty_sets():
    empty = NeighbourTree(np.zeros((0, 3)))
    assert empty.query_pairs(2.0).shape == (0, 2)
    assert empty.query_ball_point(np.zeros((2, 3)), 2.0) == [[], []]
    d, i = empty.query(np.zeros((2, 3)), k=1)
    assert np.isinf(d).all() and (i == 0).all()
    tree = NeighbourTree(np.zeros((1, 3)))
    assert tree.query_ball_point(np.zeros((0, 3)), 1.0) == []


@requires_shared
def test_real_atoms_of_1kf6():
    st = gemmi.read_structure(str(entry_path("1KF6")))
    xyz = np.array([a.pos.tolist() for ch in st[0] for res in ch for a in res])
    mine, ref = NeighbourTree(xyz), cKDTree(xyz)
    want = np.asarray(sorted(ref.query_pairs(1.9)), dtype=int)
    assert np.array_equal(mine.query_pairs(1.9), want)
    probes = xyz[::500]
    for got, exp in zip(mine.query_ball_point(probes, 6.0), ref.query_ball_point(probes, 6.0)):
        assert got == sorted(exp)


@pytest.mark.parametrize("r", [1.9, 3.0, 6.0, 12.5])
def test_compact_queries_match_the_kd_tree(r):
    """A site's atoms (a tight group of points) against a large cloud: the bounding-box path."""
    data = _cloud(20000, 70.0, 7)
    rng = np.random.default_rng(8)
    mine, ref = NeighbourTree(data), cKDTree(data)
    for size in (1, 5, 43, 120):
        centre = rng.uniform(-30, 30, size=3)
        queries = centre + rng.normal(scale=2.5, size=(size, 3))
        for got, exp in zip(mine.query_ball_point(queries, r), ref.query_ball_point(queries, r)):
            assert got == sorted(exp)
        d, i = mine.query(queries, k=1, distance_upper_bound=r)
        d_ref, i_ref = ref.query(queries, k=1, distance_upper_bound=r)
        assert np.array_equal(i, i_ref)


def test_distinct_equals_numpy_unique():
    # fescan.core.arrays.distinct stands for np.unique (without its masked-array import)
    from fescan.core.arrays import distinct

    rng = np.random.default_rng(3)
    for values in (rng.integers(0, 50, 500), rng.normal(size=200).round(1), np.array([], dtype=np.int64),
                   np.array([b"SF4", b"FES", b"SF4", b"HEM"]), np.array([3.0, np.nan, 1.0, np.nan])):
        assert np.array_equal(distinct(values), np.unique(values), equal_nan=values.dtype.kind == "f")


def test_atom_distance_is_numpy_norm_of_the_difference():
    """Window lengths keep ``np.linalg.norm``'s arithmetic exactly (sqrt of the dot product): bit-equal."""
    rng = np.random.default_rng(17)
    a = np.round(rng.uniform(-300, 300, (5000, 3)), 3)  # PDB-like 3-decimal coordinates
    b = a + np.round(rng.normal(0, 2.5, (5000, 3)), 3)
    for x, y in zip(a, b):
        assert atom_distance(x, y) == float(np.linalg.norm(x - y))
