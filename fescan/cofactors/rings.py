"""Ring perception on one residue: isoalloxazine, quinone ring, porphyrin macrocycle.

Works from coordinates and elements only, so it finds the redox-active atoms
whatever the atom names are (predicted or hand-built models rename atoms).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator

import numpy as np

from fescan.core.arrays import distinct
from fescan.core.neighbours import NeighbourTree, pairwise_distances

__all__ = [
    "BondGraph",
    "bond_graph",
    "small_rings",
    "isoalloxazine_atoms",
    "pterin_atoms",
    "quinone_ring_atoms",
    "quinone_kind",
    "porphyrin_atoms",
]

_ORGANIC = frozenset({"C", "N", "O", "S", "P", "SE"})
_MAX_BOND = 1.9  # Å between heavy organic atoms (C-S 1.82 is the longest we need)
_HEAVY = frozenset({"S", "P", "SE"})  # bonds to these reach 1.9 Å
_DENSE_MAX = 400  # atoms: up to this, all distances of a residue are computed at once


class BondGraph:
    """Undirected graph of the bonds of one residue: node → set of bonded nodes.

    The few graph questions ring perception asks (``nodes``, ``edges``,
    ``neighbors``, ``degree``), with the names networkx uses, on plain dicts and
    sets: building a networkx graph per residue cost more than the perception.

    Parameters
    ----------
    nodes : iterable of int
        Row indices of the atoms (kept in this order).
    """

    __slots__ = ("adj",)

    def __init__(self, nodes: Iterable[int] = ()) -> None:
        self.adj: dict[int, set[int]] = {int(n): set() for n in nodes}

    @property
    def nodes(self) -> list[int]:
        """Nodes in the order given."""
        return list(self.adj)

    @property
    def edges(self) -> list[tuple[int, int]]:
        """Every bond once, as ``(u, v)`` with ``u`` before ``v`` in node order."""
        seen: set[int] = set()
        out = []
        for u, nb in self.adj.items():
            out.extend((u, v) for v in nb if v not in seen)
            seen.add(u)
        return out

    def neighbors(self, n: int) -> Iterator[int]:
        """Nodes bonded to ``n``."""
        return iter(self.adj[n])

    def degree(self, n: int) -> int:
        """Number of bonds of ``n``."""
        return len(self.adj[n])


def _bonds(xyz: np.ndarray, element: np.ndarray) -> tuple[list[int], np.ndarray, np.ndarray]:
    """Organic atom rows and their bonds ``(rows[a[k]], rows[b[k]])``, ``a < b`` (see :func:`bond_graph`)."""
    idx = [i for i, e in enumerate(element) if e in _ORGANIC]
    if len(idx) < 2:
        empty = np.zeros(0, dtype=np.intp)
        return idx, empty, empty
    rows = np.asarray(idx, dtype=np.intp)
    sub = np.asarray(xyz, dtype=float)[rows]
    heavy = np.fromiter((element[i] in _HEAVY for i in idx), dtype=bool, count=len(idx))
    if len(rows) <= _DENSE_MAX:  # every distance at once (the same arithmetic as a norm along x, y, z)
        d = pairwise_distances(sub, sub)
        limit = np.where(heavy[:, None] | heavy[None, :], 1.9, 1.75)
        a, b = np.nonzero(np.triu((d < limit) & (d > 0.9), k=1))
    else:
        pairs = NeighbourTree(sub).query_pairs(_MAX_BOND)
        a, b = pairs[:, 0], pairs[:, 1]
        d = np.linalg.norm(sub[a] - sub[b], axis=1)
        ok = (d < np.where(heavy[a] | heavy[b], 1.9, 1.75)) & (d > 0.9)
        a, b = a[ok], b[ok]
    return idx, a, b


def _graph(idx: list[int], a: np.ndarray, b: np.ndarray) -> BondGraph:
    g = BondGraph(idx)
    adj = g.adj
    rows = np.asarray(idx, dtype=np.intp)
    for u, v in zip(rows[a].tolist(), rows[b].tolist()):
        adj[u].add(v)
        adj[v].add(u)
    return g


def bond_graph(xyz: np.ndarray, element: np.ndarray) -> BondGraph:
    """Covalent bond graph of organic heavy atoms (metals left out).

    Parameters
    ----------
    xyz : ndarray, shape=(n, 3)
        Coordinates in Å.
    element : ndarray of str, shape=(n,)
        Upper-case element symbols.

    Returns
    -------
    BondGraph
        Nodes are row indices of organic atoms; an edge joins atoms closer than
        a distance that depends on the pair (1.9 Å with S or P, 1.75 Å otherwise).
    """
    return _graph(*_bonds(xyz, element))


def _two_oxo_ring_carbons(element: np.ndarray, idx: list[int], a: np.ndarray, b: np.ndarray) -> bool:
    """Whether two unbonded carbons carrying a terminal O could be para on a six-carbon ring.

    A para-quinone/quinol ring of six carbons needs that: each O-bearing ring carbon
    is bonded to its two ring neighbours, carbons that themselves have two carbon
    neighbours; the two O-bearing carbons (para) are not bonded and are joined by
    two paths of three C-C bonds. A residue without such a pair holds no quinone
    ring (an ester's carbonyl carbon has one carbon neighbour; the hydroxyl carbons
    of a sugar ring are not joined twice through carbons), so its rings are never
    searched.
    """
    if not len(a):
        return False
    el = np.asarray(element, dtype=object)[np.asarray(idx, dtype=np.intp)]
    n = len(idx)
    ends = np.concatenate((a, b))
    other = np.concatenate((b, a))
    degree = np.bincount(ends, minlength=n)
    is_c = el == "C"
    terminal_o = (el[ends] == "O") & (degree[ends] == 1) & is_c[other]
    carriers = distinct(other[terminal_o])
    if len(carriers) < 2:
        return False
    c_neighbours = np.bincount(ends[is_c[other]], minlength=n)
    ring_like = is_c & (c_neighbours >= 2)  # a carbon that could sit in an all-carbon ring
    ring_neighbours = np.bincount(ends[ring_like[other]], minlength=n)
    carriers = carriers[ring_neighbours[carriers] >= 2].tolist()
    if len(carriers) < 2:
        return False
    bonded = set(zip(a.tolist(), b.tolist()))
    pairs = [(u, v) for k, u in enumerate(carriers) for v in carriers[k + 1:] if (u, v) not in bonded]
    if not pairs or n > _DENSE_MAX:
        return bool(pairs)
    # para carbons of a six-carbon ring are joined by two paths of three C-C bonds (one each
    # way round); with u and v not bonded every 3-step walk from u to v is such a path
    cc = is_c[a] & is_c[b]
    adj = np.zeros((n, n), dtype=np.int64)
    adj[a[cc], b[cc]] = 1
    adj[b[cc], a[cc]] = 1
    us = sorted({u for u, _ in pairs})
    walks = adj[us] @ adj @ adj  # 3-step walks from each u
    row = {u: k for k, u in enumerate(us)}
    return any(walks[row[u], v] >= 2 for u, v in pairs)


def _ring_distance(g: BondGraph, ring: frozenset[int], a: int, b: int) -> int | None:
    """Bonds between ``a`` and ``b`` along the ring's own bonds (None when not joined)."""
    seen, frontier, steps = {a}, [a], 0
    while frontier:
        if b in seen:
            return steps
        nxt = [n for x in frontier for n in g.adj[x] if n in ring and n not in seen]
        seen.update(nxt)
        frontier, steps = nxt, steps + 1
    return None


def small_rings(g: BondGraph, sizes: tuple[int, ...] = (5, 6),
                through: set[int] | None = None) -> list[frozenset[int]]:
    """Smallest ring through each bond, kept when its size is in ``sizes``.

    For every edge (u, v) a breadth-first search from u to v that avoids the
    edge itself finds the smallest ring containing it; every ring of a fused
    system (naphthalene, isoalloxazine, pyrroles of a porphyrin) is found.
    With ``through``, only the bonds of those atoms are searched (the rings
    holding them).
    """
    max_size = max(sizes)
    rings: set[frozenset[int]] = set()
    adj = {n: set(g.neighbors(n)) for n in g.nodes}
    # rings lie in the 2-core: strip chain ends (tails of lipids, side groups) first
    ends = [n for n, nb in adj.items() if len(nb) <= 1]
    while ends:
        n = ends.pop()
        for m in adj.pop(n, ()):
            nb = adj[m]
            nb.discard(n)
            if len(nb) == 1:
                ends.append(m)
    edges = [(u, v) for u, nb in adj.items() for v in nb if u < v]
    if through is not None:
        edges = [(u, v) for u, v in edges if u in through or v in through]
    for u, v in edges:
        parent = {u: None}
        frontier = [u]
        found = None
        for _depth in range(max_size - 1):
            nxt = []
            for a in frontier:
                for b in adj[a]:
                    if a == u and b == v:
                        continue
                    if b in parent:
                        continue
                    parent[b] = a
                    if b == v:
                        found = b
                        break
                    nxt.append(b)
                if found is not None:
                    break
            if found is not None or not nxt:
                break
            frontier = nxt
        if found is None:
            continue
        ring = []
        node = found
        while node is not None:
            ring.append(node)
            node = parent[node]
        if len(ring) in sizes:
            rings.add(frozenset(ring))
    return sorted(rings, key=lambda r: sorted(r))


def _count(element: np.ndarray, ring: frozenset[int], el: str) -> int:
    return sum(1 for i in ring if element[i] == el)


def isoalloxazine_atoms(xyz: np.ndarray, element: np.ndarray) -> list[int] | None:
    """Atoms of an isoalloxazine (flavin) ring system with its two carbonyl O.

    The ring system is three fused six-membered rings in a row: a carbocycle
    (six C: the benzo ring), a ring with two N (pyrazine) and a ring with two N
    (pyrimidine) bearing exocyclic oxygens. A pyranopterin (molybdopterin) has
    the same pyrazine-pyrimidine pair but its third ring holds an O, so it is no
    isoalloxazine (see :func:`pterin_atoms`).

    Returns
    -------
    list of int or None
        Sorted row indices (14 ring atoms + carbonyl O), or None when absent.
    """
    g = bond_graph(xyz, element)
    rings = small_rings(g, (6,))
    for mid in rings:
        if _count(element, mid, "N") != 2:
            continue
        fused = [r for r in rings if r is not mid and len(r & mid) == 2]
        benzo = [r for r in fused if _count(element, r, "C") == 6]
        pyrim = [r for r in fused if _count(element, r, "N") == 2]
        for a in benzo:
            for c in pyrim:
                if a & c:
                    continue
                system = set(a | mid | c)
                oxy = {
                    nb
                    for i in c
                    for nb in g.neighbors(i)
                    if element[nb] == "O" and nb not in system and g.degree(nb) == 1
                }
                if len(oxy) >= 1:
                    return sorted(system | oxy)
    return None


def pterin_atoms(xyz: np.ndarray, element: np.ndarray) -> list[int] | None:
    """Atoms of a pterin (pteridine) ring pair that is not part of an isoalloxazine.

    A pterin is a six-membered ring with two N (pyrimidine, bearing an exocyclic
    O or N) fused to a six-membered ring with two N (pyrazine), with no
    all-carbon ring fused to the pyrazine (that would make an isoalloxazine,
    i.e. a flavin). The pyran ring of molybdopterin (five C and one O) fused to
    the pyrazine is included with the pterin atoms when present.

    Returns
    -------
    list of int or None
        Sorted row indices of the pterin rings (with the pyran ring and the
        exocyclic O/N of the pyrimidine), or None when there is no pterin.
    """
    g = bond_graph(xyz, element)
    rings = small_rings(g, (6,))
    for mid in rings:
        if _count(element, mid, "N") != 2:
            continue
        fused = [r for r in rings if r is not mid and len(r & mid) == 2]
        if any(_count(element, r, "C") == 6 for r in fused):
            continue  # benzo ring: isoalloxazine
        pyrim = [r for r in fused if _count(element, r, "N") == 2]
        for c in pyrim:
            exo = {
                nb
                for i in c
                for nb in g.neighbors(i)
                if element[nb] in ("O", "N") and nb not in c and nb not in mid and g.degree(nb) == 1
            }
            if not exo:
                continue
            system = set(mid | c) | exo
            for r in fused:
                if r is not c and not (r & c) and _count(element, r, "O") == 1 and _count(element, r, "N") == 0:
                    system |= r  # pyran ring of a pyranopterin
            return sorted(system)
    return None


def quinone_kind(xyz: np.ndarray, element: np.ndarray) -> tuple[str, list[int]] | None:
    """Recognise a para-quinone/quinol ring and say whether it is a naphthoquinone.

    A quinone ring here is six ring carbons of which two in para position (1,4)
    each carry a terminal O (carbonyl or hydroxyl). When an all-carbon six-ring
    is fused to it the group is a naphthoquinone (menaquinone, phylloquinone),
    otherwise a benzoquinone (ubiquinone, plastoquinone).

    Returns
    -------
    tuple of (str, list of int) or None
        ``("naphthoquinone" | "benzoquinone", redox rows)`` where the redox rows are
        the quinone ring carbons and their two O; None when absent.
    """
    bonds = _bonds(xyz, element)
    if not _two_oxo_ring_carbons(element, *bonds):
        return None
    g = _graph(*bonds)
    rings = small_rings(g, (6,))
    for ring in rings:
        if _count(element, ring, "C") != 6:
            continue
        o_of = {}
        for i in ring:
            for nb in g.neighbors(i):
                if element[nb] == "O" and nb not in ring and g.degree(nb) == 1:
                    o_of[i] = nb
        carriers = list(o_of)
        para = None
        for a in carriers:
            for b in carriers:
                if a < b and _ring_distance(g, ring, a, b) == 3:
                    para = (a, b)
        if para is None:
            continue
        redox = sorted(set(ring) | {o_of[para[0]], o_of[para[1]]})
        fused = [r for r in rings if r is not ring and len(r & ring) == 2 and _count(element, r, "C") == 6]
        return ("naphthoquinone" if fused else "benzoquinone"), redox
    return None


def quinone_ring_atoms(xyz: np.ndarray, element: np.ndarray) -> list[int] | None:
    """Atoms of a quinone/quinol ring: the six ring carbons and their terminal O.

    Terminal O means an oxygen bonded to nothing but the ring carbon (carbonyl or
    hydroxyl); methoxy oxygens are left out.

    Returns
    -------
    list of int or None
        Sorted row indices, or None when no six-carbon ring carries two such O.
    """
    g = bond_graph(xyz, element)
    best: list[int] | None = None
    for ring in small_rings(g, (6,)):
        if _count(element, ring, "C") != 6:
            continue
        oxy = {
            nb
            for i in ring
            for nb in g.neighbors(i)
            if element[nb] == "O" and nb not in ring and g.degree(nb) == 1
        }
        if len(oxy) >= 2 and (best is None or len(oxy) + 6 > len(best)):
            best = sorted(set(ring) | oxy)
    return best


def porphyrin_atoms(xyz: np.ndarray, element: np.ndarray, metal: int) -> list[int] | None:
    """Atoms of the porphyrin macrocycle around a metal, with the metal.

    The macrocycle is the four five-membered rings whose N binds the metal plus
    the meso carbons that bridge them (24 atoms for a porphyrin).

    Returns
    -------
    list of int or None
        Sorted row indices including ``metal``, or None with fewer than 4 pyrroles.
    """
    xyz = np.asarray(xyz, dtype=float)
    g = bond_graph(xyz, element)
    near_n = {i for i in g.nodes if element[i] == "N" and np.linalg.norm(xyz[i] - xyz[metal]) < 2.6}
    def pyrroles_of(rings: list[frozenset[int]]) -> list[frozenset[int]]:
        out = []
        for ring in rings:
            ns = [i for i in ring if element[i] == "N"]
            if len(ns) == 1 and ns[0] in near_n:
                out.append(ring)
        return out

    # a pyrrole holds its N: the N's bonds are searched first; when a smaller ring shares a bond
    # of an N (a badly modelled heme, overlapping conformations) every bond is searched
    pyrroles = pyrroles_of(small_rings(g, (5,), through=near_n))
    if len(pyrroles) < 4:
        pyrroles = pyrroles_of(small_rings(g, (5,)))
    if len(pyrroles) < 4:
        return None
    ring_atoms = set().union(*pyrroles)
    rings_of: dict[int, set[int]] = {}
    for k, r in enumerate(pyrroles):
        for i in r:
            rings_of.setdefault(i, set()).add(k)
    meso = set()
    for i in g.nodes:
        if i in ring_atoms or element[i] != "C":
            continue
        touched = set().union(*(rings_of.get(nb, ()) for nb in g.adj[i]))
        if len(touched) >= 2:
            meso.add(i)
    return sorted(ring_atoms | meso | {metal})
