"""Distances between cofactors: edge-to-edge and centre-to-centre, with a KD-tree.

Edge-to-edge is the smallest distance between the redox-active atom sets of two
cofactors; centre-to-centre joins their centroids. All atoms of all redox sets
go into one KD-tree (scipy's cKDTree), so the cost grows with the number of
close atom pairs, never with all atoms x all atoms. gemmi's neighbour grid is
not used here: its grid spans the unit cell or bounding box, which can take
gigabytes for a sparse box (a cryo-EM map box or a huge P1 cell).

Crystal symmetry (optional): each cofactor is also compared with the images
of the others under the space-group operations and the 27 nearest lattice
translations, and the shortest image distance is kept with its operator.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from fescan.model import Cofactor

__all__ = ["Pair", "redox_coordinates", "edge_distance", "centre_distance", "pair_distances"]


@dataclass(frozen=True, slots=True)
class Pair:
    """Distances between two cofactors (indices into the cofactor list).

    Attributes
    ----------
    i, j : int
        Cofactor indices, ``i < j``.
    edge : float
        Edge-to-edge distance (Å).
    centre : float
        Centre-to-centre distance (Å).
    atom_i, atom_j : str
        Names of the two closest atoms.
    symmetry : str
        Empty for the asymmetric unit, else the operator (``"-x,y+1/2,-z [0,1,0]"``)
        applied to ``j``.
    """

    i: int
    j: int
    edge: float
    centre: float
    atom_i: str
    atom_j: str
    symmetry: str = ""


def redox_coordinates(cofactor: Cofactor) -> np.ndarray:
    """Coordinates of a cofactor's redox-active atoms, shape (n, 3), Å."""
    return np.asarray([a.xyz for a in cofactor.redox_atoms], dtype=float).reshape(-1, 3)


def edge_distance(a: np.ndarray, b: np.ndarray) -> float:
    """Smallest distance between two point sets (Å).

    Parameters
    ----------
    a, b : ndarray, shape=(n, 3) and (m, 3)

    Returns
    -------
    float

    Examples
    --------
    >>> edge_distance(np.zeros((1, 3)), np.array([[3.0, 4.0, 0.0], [9.0, 0, 0]]))
    5.0
    """
    d, _ = cKDTree(np.asarray(b, dtype=float)).query(np.asarray(a, dtype=float), k=1)
    return float(np.min(d))


def centre_distance(a: np.ndarray, b: np.ndarray) -> float:
    """Distance between the centroids of two point sets (Å)."""
    return float(np.linalg.norm(np.mean(a, axis=0) - np.mean(b, axis=0)))


def _closest(xyz: np.ndarray, owner: np.ndarray, cutoff: float):
    """Per pair of owners, the closest atom pair within cutoff: dict (i, j) -> (d, ai, aj)."""
    tree = cKDTree(xyz)
    sdm = tree.sparse_distance_matrix(tree, cutoff, output_type="coo_matrix")
    best: dict[tuple[int, int], tuple[float, int, int]] = {}
    oi, oj = owner[sdm.row], owner[sdm.col]
    keep = oi < oj
    for a, b, d, ia, ib in zip(oi[keep], oj[keep], sdm.data[keep], sdm.row[keep], sdm.col[keep]):
        key = (int(a), int(b))
        cur = best.get(key)
        if cur is None or d < cur[0]:
            best[key] = (float(d), int(ia), int(ib))
    return best


def pair_distances(
    cofactors: Sequence[Cofactor],
    cutoff: float = 25.0,
    *,
    cell: object | None = None,
    symmetry_ops: Sequence[object] | None = None,
) -> list[Pair]:
    """Edge-to-edge and centre-to-centre distances of every cofactor pair within a cutoff.

    Parameters
    ----------
    cofactors : sequence of Cofactor
    cutoff : float, optional
        Largest edge-to-edge distance kept (Å), default 25.
    cell : gemmi.UnitCell, optional
        Unit cell; with ``symmetry_ops`` enables hops to symmetry mates.
    symmetry_ops : sequence of gemmi.Op, optional
        Space-group operations (identity included).

    Returns
    -------
    list of Pair
        Sorted by (i, j); at most one pair per cofactor pair (the shortest
        of the asymmetric-unit and symmetry-mate distances).
    """
    if len(cofactors) < 2 and not symmetry_ops:
        return []
    coords = [redox_coordinates(c) for c in cofactors]
    owner = np.concatenate([np.full(len(c), k) for k, c in enumerate(coords)]) if coords else np.zeros(0)
    xyz = np.concatenate(coords) if coords else np.zeros((0, 3))
    offsets = np.cumsum([0] + [len(c) for c in coords])
    names = [a.name for c in cofactors for a in c.redox_atoms]
    centres = np.asarray([c.mean(axis=0) for c in coords]) if coords else np.zeros((0, 3))
    pairs: dict[tuple[int, int], Pair] = {}
    for (i, j), (d, ia, ib) in _closest(xyz, owner, cutoff).items():
        pairs[(i, j)] = Pair(i, j, round(d, 4), round(float(np.linalg.norm(centres[i] - centres[j])), 4),
                             names[ia], names[ib])
    if cell is not None and symmetry_ops:
        _add_symmetry_pairs(pairs, coords, offsets, names, cutoff, cell, symmetry_ops)
    return [pairs[k] for k in sorted(pairs)]


def _add_symmetry_pairs(pairs, coords, offsets, names, cutoff, cell, ops) -> None:
    """Add (or shorten) pairs with images of cofactor j under non-identity operations."""
    import gemmi  # local: only needed with symmetry

    xyz = np.concatenate(coords)
    owner = np.concatenate([np.full(len(c), k) for k, c in enumerate(coords)])
    frac = np.array([cell.fractionalize(gemmi.Position(*p)).tolist() for p in xyz])
    tree = cKDTree(xyz)
    shifts = [(a, b, c) for a in (-1, 0, 1) for b in (-1, 0, 1) for c in (-1, 0, 1)]
    for op in ops:
        rot = np.array(op.rot, dtype=float) / op.DEN
        tran = np.array(op.tran, dtype=float) / op.DEN
        img_frac = frac @ rot.T + tran
        for s in shifts:
            if op.triplet() == "x,y,z" and s == (0, 0, 0):
                continue
            moved = img_frac + np.asarray(s, dtype=float)
            img = np.array([cell.orthogonalize(gemmi.Fractional(*f)).tolist() for f in moved])
            d, k = tree.query(img, k=1, distance_upper_bound=cutoff)
            for src, (dist, tgt) in enumerate(zip(d, k)):
                if not np.isfinite(dist):
                    continue
                j, i = int(owner[src]), int(owner[tgt])  # image of j close to original i
                if i == j:
                    continue
                key = (min(i, j), max(i, j))
                cur = pairs.get(key)
                if cur is not None and cur.edge <= dist:
                    continue
                ci = coords[i].mean(axis=0)
                cj = img[offsets[j]:offsets[j + 1]].mean(axis=0)
                a_i, a_j = (names[tgt], names[src]) if i < j else (names[src], names[tgt])
                pairs[key] = Pair(key[0], key[1], round(float(dist), 4),
                                  round(float(np.linalg.norm(ci - cj)), 4), a_i, a_j,
                                  symmetry=f"{op.triplet()} {list(s)}")
