"""Sub-classes for the potentials from the company a cofactor keeps (the enzyme around it).

The detection stage gives a structural sub-class (HiPIP-type, ferredoxin-type,
heme ligation...). Some published potentials belong to one enzyme rather than a
fold: complex I clusters, the succinate dehydrogenase / fumarate reductase
clusters, the medial [3Fe-4S] of [NiFe]-hydrogenases, heme a3 and CuB of the
oxidases, QA and QB of photosystem II. These rules recognise such an enzyme from
the cofactors alone (common practice, no source; each rule states its reason):

* **complex I**: an FMN and at least six Fe–S clusters in one group (centres
  joined by steps of at most :data:`GROUP_STEP` Å); the [4Fe-4S] farthest from
  the FMN is N2 (the cluster next to the quinone site; Sazanov & Hinchliffe
  2006, Science 311:1430).
* **SDH/QFR-type**: a FAD with a [2Fe-2S], a [3Fe-4S] and a [4Fe-4S] in one group.
* **[NiFe]-hydrogenase medial**: a [3Fe-4S] in the group of a NiFe site.
* **heme a3 / CuB**: a heme a whose iron lies within :data:`HEME_CU_MAX` Å of a
  single copper (the binuclear centre of heme-copper oxidases).
* **photosystem II QA / QB**: two plastoquinones in one group; QA is the one
  with a tryptophan ring stacked on it (D2-Trp253; the QB site has none, D1
  Phe265/Ser264 instead; Ferreira et al. 2004, Science 303:1831, from memory).

A context sub-class replaces the structural one only for choosing the couple;
the reason is kept beside it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import networkx as nx
import numpy as np

from fescan.core.neighbours import pairwise_distances
from fescan.core.records import Cofactor

__all__ = ["GROUP_STEP", "HEME_CU_MAX", "TRP_STACK_MAX", "cofactor_groups", "context_subclasses"]

#: Largest centre-to-centre step (Å) joining two cofactors of one group.
GROUP_STEP: float = 22.0
#: Largest quinone ring … Trp side-chain distance (Å) counted as stacking (common practice, no source).
TRP_STACK_MAX: float = 4.5
#: Largest heme a Fe … Cu distance (Å) of a binuclear centre (about 4.5-5 Å in oxidases; common practice).
HEME_CU_MAX: float = 6.0
_FES = ("[2Fe-2S]", "[4Fe-4S]", "[3Fe-4S]")


def _centre(c: Cofactor) -> np.ndarray:
    return np.asarray(c.centroid, dtype=float)


def cofactor_groups(cofactors: Sequence[Cofactor], step: float = GROUP_STEP) -> list[list[int]]:
    """Groups of cofactor indices joined by centre-to-centre steps of at most *step* Å."""
    g = nx.Graph()
    g.add_nodes_from(range(len(cofactors)))
    if len(cofactors) > 1:
        xyz = np.array([_centre(c) for c in cofactors])
        d = np.linalg.norm(xyz[:, None] - xyz[None], axis=-1)
        i, j = np.nonzero(np.triu(d <= step, 1))
        g.add_edges_from(zip(i.tolist(), j.tolist()))
    return [sorted(c) for c in sorted(nx.connected_components(g), key=min)]


def _metal_xyz(c: Cofactor, element: str) -> np.ndarray:
    pts = [a.xyz for a in c.atoms if a.element == element]
    return np.asarray(pts, dtype=float).reshape(-1, 3)


def context_subclasses(
    cofactors: Sequence[Cofactor], landmarks: Mapping[str, np.ndarray] | None = None
) -> dict[str, tuple[str, str]]:
    """Sub-class by context for the cofactors an enzyme rule recognises.

    Parameters
    ----------
    cofactors : sequence of Cofactor
    landmarks : mapping of str to ndarray, optional
        Coordinates of residues fescan does not model but the rules use
        (``"trp_side_chain"``: side-chain atoms of tryptophans, shape (n, 3)).

    Returns
    -------
    dict of uid to (subclass, reason)
    """
    out: dict[str, tuple[str, str]] = {}
    landmarks = landmarks or {}
    for group in cofactor_groups(cofactors):
        cofs = [cofactors[i] for i in group]
        by_cls: dict[str, list[Cofactor]] = {}
        for c in cofs:
            by_cls.setdefault(c.cls, []).append(c)
        fes = [c for c in cofs if c.cls in ("[2Fe-2S]", "[4Fe-4S]")]
        fmn = by_cls.get("FMN", [])
        if fmn and len(fes) >= 6:
            f = fmn[0]
            why = f"by context: FMN with {len(fes)} Fe-S clusters in one chain (complex I)"
            out[f.uid] = ("complex I", why)
            cubanes = by_cls.get("[4Fe-4S]", [])
            n2 = max(cubanes, key=lambda c: float(np.linalg.norm(_centre(c) - _centre(f))), default=None)
            for c in fes:
                if c.cls == "[2Fe-2S]":
                    out[c.uid] = ("complex I (N1a/N1b)", why)
                elif c is n2:
                    out[c.uid] = ("complex I N2", why + "; the [4Fe-4S] farthest from the FMN is N2")
                else:
                    out[c.uid] = ("complex I (N3, N4, N5, N6a, N6b)", why)
        if by_cls.get("FAD") and all(by_cls.get(k) for k in _FES):
            why = "by context: FAD with [2Fe-2S], [3Fe-4S] and [4Fe-4S] in one group (SDH/QFR)"
            for k in (*_FES, "FAD"):
                for c in by_cls[k]:
                    out[c.uid] = ("SDH/QFR-type", why)
        if by_cls.get("[3Fe-4S]") and any(c.cls == "NiFe" or c.cls.startswith("NiFe") for c in cofs):
            for c in by_cls["[3Fe-4S]"]:
                out.setdefault(c.uid, ("[NiFe]-hydrogenase medial", "by context: [3Fe-4S] in the group of a NiFe site"))
        coppers = [c for c in cofs if c.cls == "Cu"]
        for h in by_cls.get("heme a", []):
            fe = _metal_xyz(h, "FE")
            for cu in coppers:
                cxyz = _metal_xyz(cu, "CU")
                if len(fe) and len(cxyz) and float(np.min(np.linalg.norm(fe[:, None] - cxyz[None], axis=-1))) <= HEME_CU_MAX:
                    why = f"by context: heme a iron within {HEME_CU_MAX:g} Å of a copper (binuclear centre)"
                    out[h.uid] = ("heme a3", why)
                    out[cu.uid] = ("CuB", why)
        pq = by_cls.get("plastoquinone", [])
        trp = landmarks.get("trp_side_chain") if len(pq) == 2 else None  # read only when the rule applies
        if trp is not None and len(trp):
            def trp_distance(c: Cofactor) -> float:
                xyz = np.asarray([a.xyz for a in c.redox_atoms or c.atoms], dtype=float).reshape(-1, 3)
                return float(np.min(pairwise_distances(xyz, trp))) if len(xyz) else np.inf
            near_trp = {c.uid: trp_distance(c) for c in pq}
            qa, qb = sorted(pq, key=lambda c: near_trp[c.uid])
            da, db = near_trp[qa.uid], near_trp[qb.uid]
            if da <= TRP_STACK_MAX < db:
                out[qa.uid] = ("photosystem II QA", f"by context: the plastoquinone with a Trp ring stacked on it "
                                                    f"({da:.1f} Å; D2-Trp253 at QA)")
                out[qb.uid] = ("photosystem II QB", f"by context: the other plastoquinone (nearest Trp {db:.1f} Å)")
    return out
