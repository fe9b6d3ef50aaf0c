"""Alternative states: two cofactor residues modelled on top of each other.

Depositors model a cofactor seen in two states (the P-cluster in its PN and
P(OX) forms, a flavin in two orientations, a metal in two positions) either
with altloc labels inside one residue, which the reader resolves, or as two
residues with different numbers or codes and partial occupancies. The second
way is found here: two non-standard residues whose atoms overlap (most atoms of
the smaller one within :data:`OVERLAP_MAX` Å of an atom of the other) and whose
occupancies are partial and sum to about one are one cofactor in two states.
The residue with the higher occupancy is analysed; the other is kept out of the
analysis (so it raises no clash with its twin and its metal is never bonded to
the twin's metal into a false multinuclear site) and named in
:attr:`fescan.core.records.Cofactor.states`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fescan.core.arrays import distinct
from fescan.core.groups import Components
from fescan.core.neighbours import NeighbourTree, pairwise_distances

__all__ = ["OVERLAP_MAX", "AlternativeState", "find_alternative_states"]

#: Atoms of two states closer than this (Å) are the same atom moved.
OVERLAP_MAX = 1.6
_OVERLAP_FRACTION = 0.5
_OCC_PARTIAL = 0.95
_OCC_SUM = (0.7, 1.3)


@dataclass(frozen=True, slots=True)
class AlternativeState:
    """One residue of a group of overlapping alternative states.

    Attributes
    ----------
    res_id : int
        Residue index in :class:`fescan.cofactors.atoms.ModelIndex`.
    label : str
        ``"CLF A/501 occ 0.60"``.
    occupancy : float
        Mean occupancy of its atoms.
    """

    res_id: int
    label: str
    occupancy: float


_METALS = frozenset({"FE", "NI", "MO", "V", "W", "CU", "MN", "CO", "ZN"})
_DENSE_PAIRS = 250_000  # atom pairs of two states compared with one distance matrix


def find_alternative_states(atoms) -> dict[int, list[AlternativeState]]:
    """Group overlapping partial-occupancy residues into alternative states.

    Parameters
    ----------
    atoms : fescan.cofactors.atoms.AtomArrays
        The atoms of the non-standard residues to examine (for example
        :meth:`fescan.cofactors.atoms.ModelIndex.candidates`); rows of one residue
        share ``res_id``.

    Returns
    -------
    dict of int to list of AlternativeState
        Kept residue → every state of the group (the kept one first); a residue
        with no twin is absent.
    """
    if not len(atoms):
        return {}
    res_id = np.asarray(atoms.res_id, dtype=np.intp)
    order = np.argsort(res_id, kind="stable")
    ids, first, counts = np.unique(res_id[order], return_index=True, return_counts=True)
    occ = np.add.reduceat(np.asarray(atoms.occ, dtype=float)[order], first) / counts
    keep = occ <= _OCC_PARTIAL
    if int(keep.sum()) < 2:
        return {}
    sel = np.flatnonzero(keep)
    starts, sizes = first[sel], counts[sel]
    offsets = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    rows_all = order[np.repeat(starts - offsets, sizes) + np.arange(int(sizes.sum()))]
    xyz_all = np.asarray(atoms.xyz, dtype=float)[rows_all]
    centres = np.add.reduceat(xyz_all, offsets, axis=0) / sizes[:, None]
    spread = np.linalg.norm(xyz_all - np.repeat(centres, sizes, axis=0), axis=1)
    extent = float(spread.max())
    keys = [int(ids[k]) for k in sel]
    tree = NeighbourTree(centres)
    reach = np.maximum.reduceat(spread, offsets)  # each residue's own extent around its centre
    pairs = tree.query_pairs(r=2 * extent + OVERLAP_MAX, output_type="ndarray")
    if len(pairs):
        pa, pb = pairs[:, 0], pairs[:, 1]
        occ_sel = occ[sel]
        near = np.linalg.norm(centres[pa] - centres[pb], axis=1) <= reach[pa] + reach[pb] + OVERLAP_MAX
        summed = occ_sel[pa] + occ_sel[pb]
        pairs = pairs[near & (summed >= _OCC_SUM[0]) & (summed <= _OCC_SUM[1])]
    if not len(pairs):
        return {}
    involved = distinct(pairs)  # only residues of a candidate pair are described
    data = {}
    for n in involved.tolist():
        key = keys[n]
        lo, hi = int(offsets[n]), int(offsets[n] + sizes[n])
        r0 = int(rows_all[lo])
        name = str(atoms.resname[r0])
        label = f"{name} {atoms.chain[r0]}/{int(atoms.seqnum[r0])}{str(atoms.icode[r0]).strip()}"
        metals = frozenset(str(e) for e in atoms.element[rows_all[lo:hi]].tolist()) & _METALS
        kind = (metals,) if metals else (metals, name)  # metal-free twins must share their code
        data[key] = (xyz_all[lo:hi], float(occ[sel[n]]), label, kind)
    twins = Components(data)

    for a, b in sorted(map(tuple, pairs.tolist())):
        ka, kb = keys[a], keys[b]
        xa, oa, _, kind_a = data[ka]
        xb, ob, _, kind_b = data[kb]
        if kind_a != kind_b or not _OCC_SUM[0] <= oa + ob <= _OCC_SUM[1]:
            continue
        small, big = (xa, xb) if len(xa) <= len(xb) else (xb, xa)
        if len(small) * len(big) <= _DENSE_PAIRS:  # nearest atom of the other state: all distances at once
            d = pairwise_distances(small, big).min(axis=1)
        else:
            d, _ = NeighbourTree(big).query(small, k=1)
        if np.mean(d <= OVERLAP_MAX) >= _OVERLAP_FRACTION:
            twins.join(ka, kb)
    out = {}
    for group in twins.components():
        if len(group) < 2:
            continue
        members = sorted(group, key=lambda k: (-data[k][1], k))
        out[members[0]] = [AlternativeState(k, f"{data[k][2]} occ {data[k][1]:.2f}", data[k][1]) for k in members]
    return out
