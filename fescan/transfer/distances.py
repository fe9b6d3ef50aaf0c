"""Distances between cofactors: edge-to-edge and centre-to-centre, with a neighbour grid.

Edge-to-edge is the smallest distance between the redox-active atom sets of two
cofactors; centre-to-centre joins their centroids. A neighbour grid (:class:`fescan.core.neighbours.NeighbourTree`)
over the cofactor centres finds the pairs that can come within the cutoff, and
only those pairs' small redox-atom sets are compared: never all atoms x all atoms. gemmi's neighbour grid is
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

from fescan.core.neighbours import NeighbourTree, pairwise_distances
from fescan.core.records import Cofactor

__all__ = ["EDGE_ATOMS", "EDGE_CONVENTION", "Pair", "edge_atoms", "redox_coordinates", "edge_distance",
           "centre_distance", "pair_distances"]

#: Conventions for the edge of a metal centre (option ``edge_atoms``).
EDGE_ATOMS: tuple[str, ...] = ("core", "core+ligands")
#: Plain words for each convention, shown in every output.
EDGE_CONVENTION: dict[str, str] = {
    "core": "edge = redox-active core atoms (metal ions and bridging S of a cluster, Cu ions, "
            "conjugated rings of hemes, flavins and quinones); first-shell ligands not included",
    "core+ligands": "edge = redox-active core plus the first-shell protein ligand atoms of metal centres "
                    "(Cys S, His N, Met S bound to a metal; hemes keep their macrocycle)",
}
#: Ligand kinds counted as first-shell ligand atoms with ``core+ligands``.
_FIRST_SHELL = ("Cys S", "His N", "Met S")



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


def edge_atoms(cofactor: Cofactor, convention: str = "core") -> list[tuple[str, tuple[float, float, float]]]:
    """Names and coordinates of the atoms that make a cofactor's edge under a convention.

    With ``"core"`` the redox-active atoms; with ``"core+ligands"`` also the
    first-shell Cys S, His N and Met S atoms bound to a metal of a non-heme centre
    (the research behind fescan could not confirm which convention Page et al.
    1999 and Moser et al. 1992 used, so both are offered; see :data:`EDGE_CONVENTION`).
    """
    if convention not in EDGE_ATOMS:
        raise ValueError(f"edge_atoms must be one of {EDGE_ATOMS}, got {convention!r}")
    out = [(a.name, a.xyz) for a in cofactor.redox_atoms]
    if convention == "core+ligands" and cofactor.category != "heme":
        seen = set()
        for lig in cofactor.ligands:
            a = lig.atom
            k = (a.chain, a.seqnum, a.icode, a.name, a.altloc)
            if lig.kind in _FIRST_SHELL and k not in seen:
                seen.add(k)
                out.append((f"{a.resname}{a.seqnum}:{a.name}", a.xyz))
    return out


def redox_coordinates(cofactor: Cofactor, convention: str = "core") -> np.ndarray:
    """Coordinates of a cofactor's edge atoms (see :func:`edge_atoms`), shape (n, 3), Å."""
    return np.asarray([xyz for _, xyz in edge_atoms(cofactor, convention)], dtype=float).reshape(-1, 3)


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
    d, _ = NeighbourTree(np.asarray(b, dtype=float)).query(np.asarray(a, dtype=float), k=1)
    return float(np.min(d))


def centre_distance(a: np.ndarray, b: np.ndarray) -> float:
    """Distance between the centroids of two point sets (Å)."""
    return float(np.linalg.norm(np.mean(a, axis=0) - np.mean(b, axis=0)))


def _closest(coords: list[np.ndarray], cutoff: float):
    """Per pair of cofactors, the closest atom pair within cutoff: dict (i, j) -> (d, ai, aj).

    Pairs whose centres are too far apart to come within the cutoff are skipped;
    for the others the full (small) distance matrix of the two atom sets is used.
    ``ai`` and ``aj`` index the atoms within each cofactor.
    """
    n = len(coords)
    if n < 2:
        return {}
    centres = np.array([c.mean(axis=0) for c in coords])
    radii = np.array([np.max(np.linalg.norm(c - m, axis=1)) for c, m in zip(coords, centres)])
    reach = NeighbourTree(centres).query_pairs(cutoff + 2 * float(radii.max()), output_type="ndarray")
    if not len(reach):
        return {}
    i_all, j_all = np.minimum(reach[:, 0], reach[:, 1]), np.maximum(reach[:, 0], reach[:, 1])
    near = np.linalg.norm(centres[i_all] - centres[j_all], axis=1) <= cutoff + radii[i_all] + radii[j_all]
    partners: dict[int, list[int]] = {}
    for i, j in sorted(zip(i_all[near].tolist(), j_all[near].tolist())):
        partners.setdefault(i, []).append(j)
    out = {}
    for i, js in partners.items():  # one distance matrix from cofactor i to all its partners
        block = np.concatenate([coords[j] for j in js])
        d_all = pairwise_distances(coords[i], block)
        start = 0
        for j in js:
            d = d_all[:, start:start + len(coords[j])]
            start += len(coords[j])
            k = int(np.argmin(d))  # first minimum in atom order: deterministic ties
            a, b = divmod(k, d.shape[1])
            if d[a, b] <= cutoff:
                out[(i, j)] = (float(d[a, b]), a, b)
    return out


def pair_distances(
    cofactors: Sequence[Cofactor],
    cutoff: float = 25.0,
    *,
    cell: object | None = None,
    symmetry_ops: Sequence[object] | None = None,
    edge_convention: str = "core",
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
    edge_convention : {"core", "core+ligands"}, optional
        Which atoms make a metal centre's edge (:func:`edge_atoms`); centres are
        always the mean of the core atoms.

    Returns
    -------
    list of Pair
        Sorted by (i, j); at most one pair per cofactor pair (the shortest
        of the asymmetric-unit and symmetry-mate distances).
    """
    if len(cofactors) < 2 and not symmetry_ops:
        return []
    atoms = [edge_atoms(c, edge_convention) for c in cofactors]
    coords = [np.asarray([xyz for _, xyz in a], dtype=float).reshape(-1, 3) for a in atoms]
    offsets = np.cumsum([0] + [len(c) for c in coords])
    names = [n for a in atoms for n, _ in a]
    centres = np.asarray([redox_coordinates(c).mean(axis=0) for c in cofactors]) if coords else np.zeros((0, 3))
    pairs: dict[tuple[int, int], Pair] = {}
    for (i, j), (d, ia, ib) in _closest(coords, cutoff).items():
        pairs[(i, j)] = Pair(i, j, round(d, 4), round(float(np.linalg.norm(centres[i] - centres[j])), 4),
                             names[offsets[i] + ia], names[offsets[j] + ib])
    if cell is not None and symmetry_ops:
        _add_symmetry_pairs(pairs, coords, offsets, names, cutoff, cell, symmetry_ops)
    return [pairs[k] for k in sorted(pairs)]


def _add_symmetry_pairs(pairs, coords, offsets, names, cutoff, cell, ops) -> None:
    """Add (or shorten) pairs with the nearest image of cofactor j under each operation.

    For every operation and every pair (i, j) the lattice translation is chosen
    that brings the image of j's centre closest to i's centre, wherever the model
    sits in the cell. A cofactor and its own image are not paired (no self-hops).
    """
    frac_of = np.array(cell.frac.mat.tolist(), dtype=float)
    frac_shift = np.array(cell.frac.vec.tolist(), dtype=float)
    orth_of = np.array(cell.orth.mat.tolist(), dtype=float)
    orth_shift = np.array(cell.orth.vec.tolist(), dtype=float)

    def to_frac(x):
        return x @ frac_of.T + frac_shift

    def to_orth(f):
        return f @ orth_of.T + orth_shift

    fracs = [to_frac(c) for c in coords]
    centres = [c.mean(axis=0) for c in coords]
    radii = [float(np.max(np.linalg.norm(c - m, axis=1))) for c, m in zip(coords, centres)]
    trees = [NeighbourTree(c) for c in coords]
    cen_frac = [f.mean(axis=0) for f in fracs]
    n = len(coords)
    for op in ops:
        rot = np.array(op.rot, dtype=float) / op.DEN
        tran = np.array(op.tran, dtype=float) / op.DEN
        identity = op.triplet() == "x,y,z"
        for j in range(n):
            img_frac = fracs[j] @ rot.T + tran
            img_cen = img_frac.mean(axis=0)
            for i in range(n):
                if i == j:
                    continue
                shift = np.round(cen_frac[i] - img_cen)
                if identity and not shift.any():
                    continue  # the asymmetric-unit pair itself
                img = to_orth(img_frac + shift)
                c_img = img.mean(axis=0)
                if np.linalg.norm(c_img - centres[i]) > cutoff + radii[i] + radii[j]:
                    continue
                d, k = trees[i].query(img, k=1, distance_upper_bound=cutoff)
                best = int(np.argmin(d))
                dist = float(d[best])
                if not np.isfinite(dist):
                    continue
                key = (min(i, j), max(i, j))
                cur = pairs.get(key)
                if cur is not None and cur.edge <= dist:
                    continue
                name_i, name_j = names[offsets[i] + int(k[best])], names[offsets[j] + best]
                a_i, a_j = (name_i, name_j) if i < j else (name_j, name_i)
                shift_txt = [int(v) for v in shift]
                pairs[key] = Pair(key[0], key[1], round(dist, 4), round(float(np.linalg.norm(centres[i] - c_img)), 4),
                                  a_i, a_j, symmetry=f"{op.triplet()} {shift_txt}")
