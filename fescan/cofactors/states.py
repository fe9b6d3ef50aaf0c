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
from scipy.spatial import cKDTree

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


def _residue_arrays(residues, rid: int) -> tuple[np.ndarray, float, str, tuple]:
    cname, res = residues[rid]
    xyz = np.asarray([a.pos.tolist() for a in res], dtype=float).reshape(-1, 3)
    occ = float(np.mean([a.occ for a in res])) if len(res) else 1.0
    label = f"{res.name} {cname}/{res.seqid.num}{res.seqid.icode.strip()}"
    metals = frozenset(a.element.name.upper() for a in res) & _METALS
    kind = (metals,) if metals else (metals, res.name)  # metal-free twins must share their code
    return xyz, occ, label, kind


def find_alternative_states(residues, candidate_ids) -> dict[int, list[AlternativeState]]:
    """Group overlapping partial-occupancy residues into alternative states.

    Parameters
    ----------
    residues : list of (str, gemmi.Residue)
        :attr:`fescan.cofactors.atoms.ModelIndex.residues`.
    candidate_ids : iterable of int
        Indices of the non-standard residues to examine.

    Returns
    -------
    dict of int to list of AlternativeState
        Kept residue → every state of the group (the kept one first); a residue
        with no twin is absent.
    """
    ids = [int(r) for r in candidate_ids]
    data = {}
    for rid in ids:
        xyz, occ, label, kind = _residue_arrays(residues, rid)
        if len(xyz) and occ <= _OCC_PARTIAL:
            data[rid] = (xyz, occ, label, kind)
    if len(data) < 2:
        return {}
    keys = list(data)
    centres = np.asarray([data[k][0].mean(axis=0) for k in keys])
    extent = max(float(np.max(np.linalg.norm(data[k][0] - centres[n], axis=1))) for n, k in enumerate(keys))
    tree = cKDTree(centres)
    parent = {k: k for k in keys}

    def find(k: int) -> int:
        while parent[k] != k:
            parent[k] = parent[parent[k]]
            k = parent[k]
        return k

    for a, b in sorted(tree.query_pairs(r=2 * extent + OVERLAP_MAX)):
        ka, kb = keys[a], keys[b]
        xa, oa, _, kind_a = data[ka]
        xb, ob, _, kind_b = data[kb]
        if kind_a != kind_b or not _OCC_SUM[0] <= oa + ob <= _OCC_SUM[1]:
            continue
        small, big = (xa, xb) if len(xa) <= len(xb) else (xb, xa)
        d, _ = cKDTree(big).query(small, k=1)
        if np.mean(d <= OVERLAP_MAX) >= _OVERLAP_FRACTION:
            parent[find(kb)] = find(ka)
    groups: dict[int, list[int]] = {}
    for k in keys:
        groups.setdefault(find(k), []).append(k)
    out = {}
    for members in groups.values():
        if len(members) < 2:
            continue
        members.sort(key=lambda k: (-data[k][1], k))
        out[members[0]] = [AlternativeState(k, f"{data[k][2]} occ {data[k][1]:.2f}", data[k][1]) for k in members]
    return out
