"""Mo/W-pterin sites: the pterins whose dithiolene S bind a Mo or W atom.

In deposited entries the metal is usually its own residue (``MO``, ``W``,
``6MO``...) and each pterin another (``MGD``, ``MCN``, ``MTE``, ``MD1``); some
codes (``PCD``, ``MSS``) hold the metal inside the pterin residue. Atom names
differ between codes and remediations, so the dithiolene S are found by
distance: an S of a pterin residue within :data:`DITHIOLENE_MAX` Å of the
metal (Mo-S(dithiolene) is about 2.3-2.5 Å; Hille 1996 Chem Rev 96:2757). A
residue is a pterin when the packaged CCD table says so or when ring perception
finds a pterin ring pair in it (:func:`fescan.cofactors.rings.pterin_atoms`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from fescan.cofactors.atoms import AtomArrays
from fescan.cofactors.rings import pterin_atoms
from fescan.core.neighbours import NeighbourTree

__all__ = ["DITHIOLENE_MAX", "PTERIN_METALS", "BoundPterin", "bound_pterins"]

#: Longest metal - dithiolene S distance taken as a bond (Å).
DITHIOLENE_MAX = 2.9
#: Metals that sit in pterin sites.
PTERIN_METALS = frozenset({"MO", "W"})


@dataclass(frozen=True, slots=True)
class BoundPterin:
    """One pterin residue bound to a site's metal.

    Attributes
    ----------
    res_id : int
        Residue id (as in :class:`fescan.cofactors.atoms.AtomArrays`).
    label : str
        ``CHAIN/RESNUM RESNAME`` of the residue.
    ring_rows : tuple of int
        Candidate rows of the pterin ring atoms (empty when the code is known but
        the rings were not found).
    sulfur_rows : tuple of int
        Candidate rows of the dithiolene S bound to the metal.
    """

    res_id: int
    label: str
    ring_rows: tuple[int, ...]
    sulfur_rows: tuple[int, ...]


def bound_pterins(
    cand: AtomArrays,
    by_res: dict[int, np.ndarray],
    metal_rows: list[int],
    pterin_codes: frozenset[str],
    tree: NeighbourTree | None = None,
) -> list[BoundPterin]:
    """Pterin residues whose S atoms lie within bonding distance of the given Mo/W atoms.

    Parameters
    ----------
    cand : AtomArrays
        Atoms of the candidate (non-standard) residues.
    by_res : dict of int to ndarray
        Rows of each candidate residue.
    metal_rows : list of int
        Rows of the site's Mo/W atoms in ``cand``.
    pterin_codes : frozenset of str
        CCD codes the packaged table files as pterins.
    tree : NeighbourTree, optional
        Neighbour search over ``cand.xyz``.

    Returns
    -------
    list of BoundPterin
        In residue order.
    """
    if not metal_rows or len(cand) == 0:
        return []
    tree = tree if tree is not None else NeighbourTree(cand.xyz)
    s_by_res: dict[int, set[int]] = {}
    metals = [int(m) for m in metal_rows]
    for m, hits in zip(metals, tree.query_ball_point(cand.xyz[metals].reshape(-1, 3), r=DITHIOLENE_MAX)):
        for j in hits:
            if cand.element[j] == "S" and np.linalg.norm(cand.xyz[j] - cand.xyz[m]) <= DITHIOLENE_MAX:
                s_by_res.setdefault(int(cand.res_id[j]), set()).add(int(j))
    out = []
    for rid in sorted(s_by_res):
        rows = by_res[rid]
        organic = np.asarray([r for r in rows if cand.element[r] not in PTERIN_METALS], dtype=int)
        ring = pterin_atoms(cand.xyz[organic], cand.element[organic]) if len(organic) >= 10 else None
        code = str(cand.resname[rows[0]])
        if ring is None and code not in pterin_codes:
            continue
        # S bonded to the ring system's carbons or to the metal only: the dithiolene S
        label = f"{cand.chain[rows[0]]}/{cand.seqnum[rows[0]]}{cand.icode[rows[0]]} {code}"
        out.append(BoundPterin(
            res_id=rid,
            label=label,
            ring_rows=tuple(int(organic[i]) for i in ring) if ring is not None else (),
            sulfur_rows=tuple(sorted(s_by_res[rid])),
        ))
    return out
