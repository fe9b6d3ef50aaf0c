"""Neighbour search among points in 3-D: pairs within a distance, points near others, nearest point.

Three ways, chosen by size, every step a whole-array numpy operation: a tiny
query computes every distance; a compact one (the atoms of one site) those to the
points in its bounding box (an x-sorted slab, widened by a hair so a point at
exactly the radius is never lost to rounding); any other looks at the 27 cells
around each query point of a uniform grid of cubic cells (one cell size per
search radius, built on first use and kept). It answers the few questions the analysis asks,
with the call names of a k-d tree (``query_pairs``, ``query_ball_point``,
``query``) so either can stand behind the same code, and it loads nothing beyond
numpy, which keeps a one-structure scan quick to start.

Results are exact (every distance is computed; the grid only chooses which).
Distances equal to the radius count as within it, as for a k-d tree.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["NeighbourTree", "atom_distance", "pairwise_distances"]

_BRUTE_CELLS = 4_000_000  # query x point distances computed at once by the unbounded nearest search
_BRUTE_PAIRS = 200_000  # below this many query x point pairs, no grid is built
_SMALL_PAIRS = 4_096  # below this many, not even the bounding box is looked for
_BOX_SLACK = 1e-9  # relative widening of a query's bounding box (the distance test itself stays exact)
_OFFSETS = np.array([(i, j, k) for i in (-1, 0, 1) for j in (-1, 0, 1) for k in (-1, 0, 1)], dtype=np.int64)


def pairwise_distances(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Every distance between the rows of ``a`` and of ``b``, shape ``(len(a), len(b))``.

    Axis by axis (no ``(m, n, 3)`` temporary); the sum runs x, y, z in that order,
    as ``((a - b) ** 2).sum(axis=-1)`` does, so the values are the same.
    """
    d2 = np.subtract.outer(a[:, 0], b[:, 0])
    d2 *= d2
    for k in (1, 2):
        t = np.subtract.outer(a[:, k], b[:, k])
        t *= t
        d2 += t
    return np.sqrt(d2, out=d2)


def atom_distance(a: np.ndarray, b: np.ndarray) -> float:
    """Distance of two points (Å), as every length judged against a window is measured.

    Bond, ligand, clash and metal-link lengths all take this one arithmetic
    (``np.linalg.norm`` of the difference), so a value at a window's edge is judged
    alike wherever it is computed; the neighbour searches only choose the pairs.
    """
    d = a - b
    return math.sqrt(d.dot(d))  # np.linalg.norm of a vector, without its checks: the same two operations


class _Grid:
    """Points sorted by cell, for one cell size."""

    __slots__ = ("cell", "origin", "dims", "keys", "first", "count", "order")

    def __init__(self, data: np.ndarray, cell: float) -> None:
        self.cell = cell
        self.origin = data.min(axis=0) - cell
        ijk = np.floor((data - self.origin) / cell).astype(np.int64)
        self.dims = ijk.max(axis=0) + 2
        key = self._key(ijk)
        self.order = np.argsort(key, kind="stable")
        self.keys, self.first, self.count = np.unique(key[self.order], return_index=True, return_counts=True)

    def _key(self, ijk: np.ndarray) -> np.ndarray:
        return (ijk[:, 0] * self.dims[1] + ijk[:, 1]) * self.dims[2] + ijk[:, 2]

    def candidates(self, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(query index, point index) of every point in the 27 cells around each query point."""
        ijk = np.floor((points - self.origin) / self.cell).astype(np.int64)
        qs, ps = [], []
        for off in _OFFSETS:
            cell = ijk + off
            inside = np.all((cell >= 0) & (cell < self.dims), axis=1)
            q = np.flatnonzero(inside)
            if not len(q):
                continue
            key = self._key(cell[q])
            pos = np.minimum(np.searchsorted(self.keys, key), len(self.keys) - 1)
            hit = self.keys[pos] == key
            q, pos = q[hit], pos[hit]
            if not len(q):
                continue
            n = self.count[pos]
            total = int(n.sum())
            base = np.repeat(self.first[pos] - (np.cumsum(n) - n), n)
            qs.append(np.repeat(q, n))
            ps.append(self.order[base + np.arange(total)])
        if not qs:
            return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
        return np.concatenate(qs), np.concatenate(ps)


class NeighbourTree:
    """Points to search among.

    Parameters
    ----------
    data : array_like, shape=(n, 3)
        Coordinates (Å).
    """

    def __init__(self, data) -> None:
        self.data = np.asarray(data, dtype=float).reshape(-1, 3)
        self.n = len(self.data)
        self._grids: dict[float, _Grid] = {}
        self._xorder: np.ndarray | None = None  # point indices sorted by x (for compact queries)
        self._xsorted: np.ndarray | None = None

    def _grid(self, r: float) -> _Grid:
        cell = max(float(r), 1.0)  # a cell wider than r still holds every neighbour; never a fine grid
        grid = self._grids.get(cell)
        if grid is None:
            grid = self._grids[cell] = _Grid(self.data, cell)
        return grid

    def _box(self, points: np.ndarray, r: float) -> np.ndarray:
        """Sorted indices of the points inside the query points' bounding box widened by ``r``."""
        if self._xorder is None:
            self._xorder = np.argsort(self.data[:, 0], kind="stable")
            self._xsorted = self.data[self._xorder, 0]
        reach = r + _BOX_SLACK * (1.0 + r)  # a little wider: a point at exactly r must not fall outside by rounding
        lo, hi = points.min(axis=0) - reach, points.max(axis=0) + reach
        first = int(np.searchsorted(self._xsorted, lo[0], side="left"))
        last = int(np.searchsorted(self._xsorted, hi[0], side="right"))
        slab = self._xorder[first:last]
        yz = self.data[slab, 1:]
        inside = np.all((yz >= lo[1:]) & (yz <= hi[1:]), axis=1)
        return np.sort(slab[inside])

    def _within(self, points: np.ndarray, r: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(query index, point index, distance) of every pair closer than or at ``r``, by query then point."""
        if not self.n or not len(points) or not r >= 0:
            empty = np.zeros(0, dtype=np.intp)
            return empty, empty, np.zeros(0)
        if len(points) * self.n <= _SMALL_PAIRS:  # tiny: every distance at once
            dist = pairwise_distances(points, self.data)
            q, p = np.nonzero(dist <= r)  # by query, then point
            return q, p, dist[q, p]
        near = self._box(points, r) if np.isfinite(points).all() else np.arange(self.n)
        if len(points) * len(near) <= _BRUTE_PAIRS:  # compact query (one site): distances to the atoms of its box
            dist = pairwise_distances(points, self.data[near])
            q, p = np.nonzero(dist <= r)  # by query, then point (``near`` is sorted)
            return q, near[p], dist[q, p]
        q, p = self._grid(r).candidates(points)
        d = np.sqrt(((points[q] - self.data[p]) ** 2).sum(axis=1))
        keep = d <= r
        q, p, d = q[keep], p[keep], d[keep]
        order = np.lexsort((p, q))
        return q[order], p[order], d[order]

    def within(self, x, r: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Every (query, point) pair closer than or at ``r``, with its distance.

        Parameters
        ----------
        x : array_like, shape=(m, 3)
        r : float

        Returns
        -------
        (query index, point index, distance)
            Three arrays, sorted by query, then point.
        """
        return self._within(np.asarray(x, dtype=float).reshape(-1, 3), r)

    def query_pairs(self, r: float, output_type: str = "ndarray") -> np.ndarray:
        """Index pairs ``(i, j)``, ``i < j``, of points within ``r`` of each other.

        Parameters
        ----------
        r : float
        output_type : {"ndarray", "set"}
            An ``(m, 2)`` integer array (sorted by ``i``, then ``j``) or a set of tuples.
        """
        q, p, _ = self._within(self.data, r)
        keep = q < p
        pairs = np.stack([q[keep], p[keep]], axis=1) if keep.any() else np.zeros((0, 2), dtype=np.intp)
        if output_type == "set":
            return {(int(a), int(b)) for a, b in pairs}  # type: ignore[return-value]
        return pairs

    def query_ball_point(self, x, r: float) -> list:
        """Indices of the points within ``r`` of each query point (sorted).

        Parameters
        ----------
        x : array_like, shape=(3,) or (m, 3)
        r : float

        Returns
        -------
        list of int for a single point, else a list of such lists (one per query point).
        """
        pts = np.asarray(x, dtype=float)
        single = pts.ndim == 1
        pts = pts.reshape(-1, 3)
        q, p, _ = self._within(pts, r)
        bounds = np.searchsorted(q, np.arange(len(pts) + 1))
        plist = p.tolist()
        out = [plist[bounds[k]:bounds[k + 1]] for k in range(len(pts))]
        return out[0] if single else out

    def query(self, x, k: int = 1, distance_upper_bound: float = math.inf) -> tuple:
        """Nearest point to each query point.

        Parameters
        ----------
        x : array_like, shape=(3,) or (m, 3)
        k : int
            Only 1 (the nearest) is supported.
        distance_upper_bound : float, optional
            Points farther than this are not looked for; a query with none gets
            distance ``inf`` and index ``n``.

        Returns
        -------
        (distances, indices)
            Arrays of shape (m,), or scalars for a single query point. Of points at
            the same distance the lowest index is given.
        """
        if k != 1:
            raise ValueError("only the nearest point (k=1) is supported")
        pts = np.asarray(x, dtype=float)
        single = pts.ndim == 1
        pts = pts.reshape(-1, 3)
        d = np.full(len(pts), math.inf)
        idx = np.full(len(pts), self.n, dtype=np.intp)
        if self.n and len(pts):
            if math.isfinite(distance_upper_bound):
                q, p, dist = self._within(pts, float(distance_upper_bound))
                if len(q):
                    order = np.lexsort((p, dist, q))  # per query: nearest, then lowest index
                    q, p, dist = q[order], p[order], dist[order]
                    first = np.flatnonzero(np.r_[True, q[1:] != q[:-1]])
                    d[q[first]] = dist[first]
                    idx[q[first]] = p[first]
            else:
                step = max(1, _BRUTE_CELLS // self.n)
                for lo in range(0, len(pts), step):
                    block = pts[lo:lo + step]
                    dd = ((block[:, None, :] - self.data[None, :, :]) ** 2).sum(axis=2)
                    j = np.argmin(dd, axis=1)
                    d[lo:lo + step] = np.sqrt(dd[np.arange(len(block)), j])
                    idx[lo:lo + step] = j
        if single:
            return float(d[0]), int(idx[0])
        return d, idx
