"""The electron wire: entry and exit, fastest path, bottleneck, gaps, transfer times.

Two transfer times are reported (both model estimates):

* the **summed hop time**, Σ 1/k_forward along the fastest path: what an
  electron needs if it only ever steps forward along that path;
* the **mean first-passage time** (MFPT) from entry to exit over the whole
  connected component, with forward and back hops between every pair within
  the cutoff and the exit absorbing: a master-equation answer that counts back
  steps, detours into side branches and parallel routes. Uphill hops make the
  MFPT longer than the sum; parallel routes can make it shorter.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field

import networkx as nx
import numpy as np

from fescan.core.errors import CofactorNotFound, ConfigError
from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.transfer.graph import Hop
from fescan.transfer.rate_law import mean_first_passage_time, summed_hop_time

__all__ = ["Wire", "parse_selector", "find_cofactor", "choose_endpoints", "trace_wire", "all_pair_paths"]

_SELECTOR = re.compile(r"^\s*([^/\s]+)\s*/\s*(-?\d+)\s*([A-Za-z]?)\s*$")


@dataclass
class Wire:
    """The wire of one structure from entry to exit.

    Attributes
    ----------
    entry, exit : str or None
        Uids of the entry and exit cofactors.
    how_chosen : str
        Why these endpoints (user choice or which default rule).
    path : list of str
        Uids along the fastest path (empty when no path).
    hops : list of Hop
        Hops along the path, in order.
    bottleneck : Hop or None
        The slowest hop of the path.
    gaps : list of Hop
        Hops of the path longer than the gap limit or slower than the threshold.
    isolated : list of str
        Cofactors with no partner inside the gap limit.
    branches : list of dict
        Cofactors connected to the path within the gap limit but not on it,
        with the cofactor they attach to (on the path, or another branch
        cofactor nearer the path) and that edge-to-edge distance.
    groups : list of list of str
        Other groups of two or more cofactors joined within the gap limit but
        not to the path (other copies in the asymmetric unit, other chains).
    summed_hop_time : float or None
        Σ 1/k_forward along the path (s).
    mean_first_passage_time : float or None
        Mean first-passage time entry → exit over the connected component (s).
    notes : list of str
    """

    entry: str | None = None
    exit: str | None = None
    how_chosen: str = ""
    path: list[str] = field(default_factory=list)
    hops: list[Hop] = field(default_factory=list)
    bottleneck: Hop | None = None
    gaps: list[Hop] = field(default_factory=list)
    isolated: list[str] = field(default_factory=list)
    branches: list[dict] = field(default_factory=list)
    groups: list[list[str]] = field(default_factory=list)
    summed_hop_time: float | None = None
    mean_first_passage_time: float | None = None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON-ready record (times in s; ``None`` where undefined, never inf/NaN)."""

        def t(x):
            return None if x is None or not math.isfinite(x) else x

        return {
            "entry": self.entry,
            "exit": self.exit,
            "how_chosen": self.how_chosen,
            "path": list(self.path),
            "hops": [h.to_dict() for h in self.hops],
            "bottleneck": self.bottleneck.to_dict() if self.bottleneck else None,
            "gaps": [h.to_dict() for h in self.gaps],
            "isolated": list(self.isolated),
            "branches": list(self.branches),
            "groups": [list(x) for x in self.groups],
            "summed_hop_time_s": t(self.summed_hop_time),
            "mean_first_passage_time_s": t(self.mean_first_passage_time),
            "connected": bool(self.path),
            "notes": list(self.notes),
        }


def parse_selector(text: str) -> tuple[str, int, str]:
    """Parse ``CHAIN/RESNUM[ICODE]`` into (chain, number, insertion code).

    Examples
    --------
    >>> parse_selector("B/245")
    ('B', 245, '')
    >>> parse_selector("A/52A")
    ('A', 52, 'A')
    """
    m = _SELECTOR.match(text or "")
    if not m:
        raise ConfigError(f"cannot read cofactor selector {text!r}: write CHAIN/RESNUM, e.g. B/245 or A/52A")
    return m.group(1), int(m.group(2)), m.group(3)


def find_cofactor(cofactors: Sequence[Cofactor], selector: str) -> Cofactor:
    """The cofactor a selector names (its naming residue or any residue it spans).

    A part suffix (``A/501#2``, ``A/56#B``) picks one of several cofactors named
    by the same residue; without it the first of them is taken.
    """
    base, _, part = (selector or "").partition("#")
    chain, num, icode = parse_selector(base)
    key = f"{chain}/{num}{icode}"
    for c in cofactors:
        if c.key == (f"{key}#{part.strip()}" if part else key) or (not part and c.key.split("#")[0] == key):
            return c
    for c in cofactors:
        if any(r.split()[0] == key for r in c.residues):
            return c
    avail = ", ".join(f"{c.key} ({c.cls})" for c in cofactors) or "none"
    raise CofactorNotFound(f"no cofactor at {key}; cofactors found: {avail}")


def _undirected_within(g: nx.DiGraph, limit: float) -> nx.Graph:
    u = nx.Graph()
    u.add_nodes_from(g.nodes)
    u.add_edges_from((a, b) for a, b, d in g.edges(data="edge") if d <= limit)
    return u


def _centre(g: nx.DiGraph, n: str) -> np.ndarray:
    return np.asarray(g.nodes[n]["cofactor"].centroid, dtype=float)


def _farthest(u: nx.Graph, g: nx.DiGraph, source: str) -> str | None:
    """Cofactor of the source's component (hops up to the cutoff) whose centre lies farthest away."""
    comp = nx.node_connected_component(u, source) - {source}
    if not comp:
        return None
    src = _centre(g, source)
    return max(sorted(comp), key=lambda n: float(np.linalg.norm(_centre(g, n) - src)))


def choose_endpoints(g: nx.DiGraph, cofactors: Sequence[Cofactor], options: ScanOptions) -> tuple[str | None, str | None, str]:
    """Pick entry and exit: the user's, else a flavin → quinone/heme, else the longest chain.

    Default rules (every hop up to the cutoff counts as a connection here, so a
    relay gap shows up on the path instead of silently shortening the wire):

    1. entry = the first flavin; exit = the quinone reached fastest from it,
       else the heme reached fastest;
    2. a flavin but no reachable quinone or heme: exit = the connected cofactor
       whose centre lies farthest from the flavin;
    3. no flavin: the two cofactors farthest apart (centre to centre) in the
       connected group with the most cofactors.

    Returns
    -------
    entry, exit : str or None
    how : str
        Plain-words reason.
    """
    order = {c.uid: k for k, c in enumerate(cofactors)}
    u = _undirected_within(g, options.cutoff)
    if options.entry or options.exit:
        entry = find_cofactor(cofactors, options.entry).uid if options.entry else None
        exit_ = find_cofactor(cofactors, options.exit).uid if options.exit else None
        if entry and exit_ and entry == exit_:
            raise ConfigError(f"entry and exit name the same cofactor ({options.entry}, {options.exit})")
        if entry and not exit_:
            exit_ = _farthest(u, g, entry)
            return entry, exit_, "entry chosen by the user, farthest connected cofactor as exit"
        if exit_ and not entry:
            entry = _farthest(u, g, exit_)
            return entry, exit_, "exit chosen by the user, farthest connected cofactor as entry"
        return entry, exit_, "chosen by the user"
    if len(cofactors) < 2:
        return None, None, "fewer than two cofactors"
    flavins = [c.uid for c in cofactors if c.category == "flavin"]
    quinones = [c.uid for c in cofactors if c.category == "quinone"]
    hemes = [c.uid for c in cofactors if c.category == "heme"]
    for entry in flavins:
        comp = nx.node_connected_component(u, entry)
        for kind, group in (("quinone", quinones), ("heme", hemes)):
            reach = [x for x in group if x in comp]
            if reach:
                best = min(reach, key=lambda x: (nx.dijkstra_path_length(g, entry, x, weight="hop_time"), order[x]))
                return entry, best, f"default: flavin entry, fastest-reached {kind} exit"
    if flavins:
        entry = flavins[0]
        far = _farthest(u, g, entry)
        if far is not None:
            return entry, far, "default: flavin entry, farthest connected cofactor as exit"
    comps = sorted(nx.connected_components(u), key=lambda c: (-len(c), min(order[n] for n in c)))
    if not comps or len(comps[0]) < 2:
        return None, None, f"no two cofactors within {options.cutoff:g} Å"
    nodes = sorted(comps[0], key=order.__getitem__)
    a, b = max(
        ((x, y) for i, x in enumerate(nodes) for y in nodes[i + 1:]),
        key=lambda p: float(np.linalg.norm(_centre(g, p[0]) - _centre(g, p[1]))),
    )
    return a, b, "default: the two ends of the longest chain"


def _mfpt(g: nx.DiGraph, entry: str, exit_: str) -> float:
    comp = nx.node_connected_component(g.to_undirected(as_view=True), entry)
    if exit_ not in comp:
        return math.inf
    nodes = sorted(comp)
    ix = {n: k for k, n in enumerate(nodes)}
    rates = np.zeros((len(nodes), len(nodes)))
    for a, b, k in g.subgraph(nodes).edges(data="hop"):
        rates[ix[a], ix[b]] = k.k_forward
    return float(mean_first_passage_time(rates, ix[entry], ix[exit_]))


def trace_wire(g: nx.DiGraph, cofactors: Sequence[Cofactor], options: ScanOptions) -> Wire:
    """Trace the wire of one structure (see the module docstring).

    Parameters
    ----------
    g : networkx.DiGraph
        From :func:`fescan.graph.build_cofactor_graph`.
    cofactors : sequence of Cofactor
    options : ScanOptions

    Returns
    -------
    Wire
    """
    w = Wire()
    u = _undirected_within(g, options.gap_limit)
    order = {c.uid: k for k, c in enumerate(cofactors)}
    w.isolated = [n for n in g.nodes if u.degree(n) == 0] if len(g) > 1 else []
    entry, exit_, how = choose_endpoints(g, cofactors, options)
    w.entry, w.exit, w.how_chosen = entry, exit_, how
    if entry is None or exit_ is None or entry == exit_:
        w.notes.append("no wire: " + how)
        w.groups = _groups(u, set(), order)
        return w
    try:
        path = nx.dijkstra_path(g, entry, exit_, weight="hop_time")
    except nx.NetworkXNoPath:
        w.notes.append(f"no chain of hops within {options.cutoff:g} Å joins entry and exit")
        w.mean_first_passage_time = math.inf
        w.groups = _groups(u, {entry, exit_}, order)
        return w
    w.path = path
    w.hops = [g.edges[a, b]["hop"] for a, b in zip(path, path[1:])]
    w.bottleneck = max(w.hops, key=lambda h: h.hop_time)
    w.gaps = [h for h in w.hops if h.gap or h.slow]
    w.summed_hop_time = summed_hop_time([h.k_forward for h in w.hops])
    w.mean_first_passage_time = _mfpt(g, entry, exit_)
    ratio = w.mean_first_passage_time / w.summed_hop_time if w.summed_hop_time > 0 else 1.0
    if ratio > 3.0:
        uphill = [h for h in w.hops if h.dg > 0.01]
        why = (f"{len(uphill)} uphill hop(s) on the path, largest ΔG {max(h.dg for h in uphill):+.2f} eV"
               if uphill else "detours into side branches and parallel routes")
        w.notes.append(f"the mean first-passage time is {ratio:.3g} times the summed hop time ({why}); "
                       "check the potentials used")
    w.branches = _branches(g, u, path, order)
    w.groups = _groups(u, set(path), order)
    w.notes += _caveats(g, w, options)
    return w


def _caveats(g: nx.DiGraph, w: Wire, options: ScanOptions) -> list[str]:
    """Plain-words warnings about what the path rests on."""
    notes = []
    weak = [n for n in w.path if g.nodes[n]["potential"].status == "MEMORY"
            and not g.nodes[n]["potential"].origin.startswith("user")]
    if weak:
        notes.append("potentials given from memory or as placeholders for: " + ", ".join(
            f"{g.nodes[n]['cofactor'].label} ({g.nodes[n]['potential'].e_v:+.3f} V)" for n in weak)
            + "; set measured values in a potentials file")
    fe = [g.nodes[n]["cofactor"].label for n in w.path[1:-1] if g.nodes[n]["cofactor"].cls == "mononuclear Fe"]
    if fe:
        notes.append(f"mononuclear non-heme Fe on the path ({', '.join(fe)}): such sites are often not "
                     "electron carriers; choose the endpoints or set its potential")
    if options.packing == "measured":
        rhos = [h.packing_density for h in w.hops if not h.symmetry]
        if rhos:
            notes.append(f"packing density measured per hop (mean {sum(rhos) / len(rhos):.2f}); fescan's "
                         "measure runs lower than the 0.76 average of Page et al. 1999, so rates come out "
                         "slower than with the default")
        if any(h.symmetry for h in w.hops):
            notes.append("hops to symmetry mates use the default packing density")
    lams = {round(h.reorg, 4) for h in w.hops}
    if lams != {round(options.reorg, 4)}:
        notes.append("reorganisation energies from the user file: per-hop λ is the mean of the two cofactors'")
    return notes


def _branches(g: nx.DiGraph, u: nx.Graph, path: list[str], order: dict[str, int]) -> list[dict]:
    """Cofactors joined to the path within the gap limit, each with its neighbour nearer the path.

    Breadth-first from the path: a cofactor first reached at step k attaches to
    its closest neighbour among those reached at step k - 1 (the path is step 0).
    """
    level = set(path)
    seen = set(path)
    parent: dict[str, tuple[str, float]] = {}
    while level:
        found: dict[str, tuple[str, float]] = {}
        for a in level:
            for b in u.neighbors(a):
                if b in seen:
                    continue
                d = g.edges[a, b]["edge"]
                if b not in found or (d, order[a]) < (found[b][1], order[found[b][0]]):
                    found[b] = (a, d)
        parent.update(found)
        seen.update(found)
        level = set(found)
    return [{"cofactor": n, "attached_to": parent[n][0], "edge_distance": parent[n][1]}
            for n in sorted(parent, key=order.__getitem__)]


def _groups(u: nx.Graph, taken: set[str], order: dict[str, int]) -> list[list[str]]:
    """Connected groups (within the gap limit) of two or more cofactors, none of them in ``taken``."""
    out = []
    for comp in nx.connected_components(u):
        if len(comp) >= 2 and not comp & taken:
            out.append(sorted(comp, key=order.__getitem__))
    return sorted(out, key=lambda c: order[c[0]])


def all_pair_paths(g: nx.DiGraph, options: ScanOptions) -> list[dict]:
    """Fastest path and its summed hop time for every ordered pair joined by hops."""
    out = []
    for src, (times, paths) in nx.all_pairs_dijkstra(g, weight="hop_time"):
        for dst, t in times.items():
            if dst == src:
                continue
            hops = [g.edges[a, b]["hop"] for a, b in zip(paths[dst], paths[dst][1:])]
            out.append({
                "entry": src, "exit": dst, "path": paths[dst], "summed_hop_time_s": t,
                "max_edge_distance": max(h.edge for h in hops),
                "has_gap": any(h.gap for h in hops),
                "has_slow_hop": any(h.slow for h in hops),
            })
    return out
