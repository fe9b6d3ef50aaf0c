"""The electron wire: entry and exit, fastest path, bottleneck, gaps, transfer times.

Times reported (model estimates):

* the **mean first-passage time** (MFPT) of one electron entering an oxidised
  chain at the entry until it reaches the exit, over the relays connected to the
  path, with forward and back hops between every pair within the cutoff and the
  exit absorbing: it counts back steps, detours and parallel routes;
* the **sum of forward hop times** Σ 1/k_forward along the fastest path, kept
  under that plain name: it ignores back hops and is not a transit time.

A "gap" is a hop longer than the gap limit; a hop within it but slower than the
rate threshold is "slow". The bottleneck is the hop with the largest
flux-control coefficient of the steady-state model when that is solved, else the
slowest forward hop (``bottleneck_basis`` says which); the slowest forward hop is
always kept as ``slowest_hop``. Structural and ion cofactors never carry an
electron, and catalytic sites are endpoints only (:func:`routable`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import networkx as nx
import numpy as np

from fescan.core.errors import CofactorNotFound, ConfigError
from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.transfer.graph import Hop
from fescan.transfer.rate_law import mean_first_passage_time, summed_hop_time
from fescan.transfer.reservoirs import default_reservoirs, wire_steady_state

__all__ = ["Wire", "parse_selector", "find_cofactor", "choose_endpoints", "routable", "trace_wire", "all_pair_paths",
           "mark_crystal_contacts"]

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
        The hop that limits the flux: the largest flux-control coefficient of the
        steady-state model when it was solved, else the slowest forward hop
        (``bottleneck_basis`` says which).
    bottleneck_basis : str
    slowest_hop : Hop or None
        The hop with the smallest forward rate.
    gaps : list of Hop
        Hops of the path longer than the gap limit.
    slow_hops : list of Hop
        Hops of the path within the gap limit but slower than the rate threshold.
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
        Sum of forward hop times Σ 1/k_forward along the path (s): ignores back
        hops, not a transit time.
    mean_first_passage_time : float or None
        Mean first-passage time of one electron entering an oxidised chain at the
        entry, until it reaches the exit (s), over the connected relays.
    steady_state : dict or None
        Steady-state flux between reservoirs (``flux_per_s``, ``occupancy``,
        ``control``, ``sensitivity``...), when solved.
    copies : list of dict
        The wires of the other copies of the same set of cofactors in the file
        (each copy of a complex in the asymmetric unit gets its own wire).
    notes : list of str
    """

    entry: str | None = None
    exit: str | None = None
    how_chosen: str = ""
    path: list[str] = field(default_factory=list)
    hops: list[Hop] = field(default_factory=list)
    bottleneck: Hop | None = None
    bottleneck_basis: str = ""
    slowest_hop: Hop | None = None
    gaps: list[Hop] = field(default_factory=list)
    slow_hops: list[Hop] = field(default_factory=list)
    isolated: list[str] = field(default_factory=list)
    branches: list[dict] = field(default_factory=list)
    groups: list[list[str]] = field(default_factory=list)
    summed_hop_time: float | None = None
    mean_first_passage_time: float | None = None
    steady_state: dict | None = None
    copies: list[dict] = field(default_factory=list)
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
            "bottleneck_basis": self.bottleneck_basis,
            "slowest_hop": self.slowest_hop.to_dict() if self.slowest_hop else None,
            "gaps": [h.to_dict() for h in self.gaps],
            "slow_hops": [h.to_dict() for h in self.slow_hops],
            "isolated": list(self.isolated),
            "branches": list(self.branches),
            "groups": [list(x) for x in self.groups],
            "summed_hop_time_s": t(self.summed_hop_time),
            "sum_of_forward_hop_times_s": t(self.summed_hop_time),
            "mean_first_passage_time_s": t(self.mean_first_passage_time),
            "mean_first_passage_time_meaning": "one electron entering an oxidised chain at the entry, until it "
                                               "reaches the exit (model estimate)",
            "steady_state": self.steady_state,
            "copies": list(self.copies),
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


_HYDROGENASE = ("NiFe", "H-cluster")
_ROUTE_ROLES = ("relay",)


def _params(g: nx.DiGraph, n: str):
    return g.nodes[n].get("parameters")


def _subclass(g: nx.DiGraph, n: str) -> str:
    p = _params(g, n)
    return p.subclass if p is not None else g.nodes[n]["cofactor"].subclass


def _role(g: nx.DiGraph, n: str) -> str:
    p = _params(g, n)
    if p is not None and p.role:
        return p.role
    return g.nodes[n]["cofactor"].role


def _potential(g: nx.DiGraph, n: str) -> float:
    e = g.nodes[n]["potential"].e_v
    return e if math.isfinite(e) else 0.0


def _fastest(g: nx.DiGraph, entry: str, targets: list[str], order: dict[str, int]) -> str | None:
    best, best_t = None, math.inf
    for x in sorted(targets, key=order.__getitem__):
        try:
            t = nx.dijkstra_path_length(g, entry, x, weight="hop_time")
        except nx.NetworkXNoPath:
            continue
        if t < best_t:
            best, best_t = x, t
    return best


def _chemistry_rules(g: nx.DiGraph, cofactors: Sequence[Cofactor], u: nx.Graph,
                     order: dict[str, int]) -> tuple[str | None, str | None, str]:
    """Default entry and exit from the cofactors' chemistry (see :func:`choose_endpoints`)."""
    nodes = [c.uid for c in cofactors if c.uid in u]

    def comp(n: str) -> set[str]:
        return nx.node_connected_component(u, n)

    def kind(pred) -> list[str]:
        return [n for n in nodes if pred(g.nodes[n]["cofactor"])]

    quinones = kind(lambda c: c.category == "quinone")
    hemes = kind(lambda c: c.category == "heme")
    flavins = kind(lambda c: c.category == "flavin")

    def downstream(entry: str) -> tuple[str | None, str]:
        reach = comp(entry) - {entry}
        for label, group in (("quinone", quinones), ("heme", hemes)):
            x = _fastest(g, entry, [q for q in group if q in reach], order)
            if x is not None:
                return x, f"fastest-reached {label} as exit"
        far = _farthest(u, g, entry)
        return far, "farthest connected cofactor as exit"

    for n in nodes:  # hydrogenase or Mo/W site -> relays -> quinone
        c = g.nodes[n]["cofactor"]
        if c.cls in _HYDROGENASE or c.cls.startswith("NiFe") or c.category == "pterin":
            exit_, how = downstream(n)
            if exit_ is not None:
                site = "hydrogenase site (H2 oxidation)" if c.category != "pterin" else "Mo/W-pterin site (substrate oxidation)"
                return n, exit_, f"chemistry: {site} as entry, {how}; electrons leave the active site through the relays"
    cua = kind(lambda c: c.cls == "CuA")
    if cua:
        reach = comp(cua[0])
        a3 = [n for n in hemes if n in reach and _subclass(g, n) == "heme a3"]
        target = a3 or [n for n in hemes if n in reach]
        x = _fastest(g, cua[0], target, order)
        if x is not None:
            return cua[0], x, ("chemistry: heme-copper oxidase, cytochrome c -> CuA -> heme a -> "
                               f"{'heme a3-CuB' if a3 else 'heme'} (O2 reduction)")
    qa = [n for n in quinones if _subclass(g, n) == "photosystem II QA"]
    for a in qa:
        qb = [n for n in quinones if _subclass(g, n) == "photosystem II QB" and n in comp(a)]
        if qb:
            return a, qb[0], "chemistry: photosystem II, QA -> QB (QA never takes a second electron)"
    for f in flavins:
        group = comp(f)
        mk = [n for n in quinones if g.nodes[n]["cofactor"].cls == "menaquinone" and n in group]
        fes = [n for n in group if g.nodes[n]["cofactor"].category == "iron-sulfur"]
        if mk and fes:
            return mk[0], f, ("chemistry: flavoprotein with Fe-S relays and a menaquinone: menaquinol -> "
                              "clusters -> flavin (fumarate reduction, as in quinol:fumarate reductase)")
        sdh = [n for n in fes if _subclass(g, n) == "SDH/QFR-type"]
        f3s = [n for n in sdh if g.nodes[n]["cofactor"].cls == "[3Fe-4S]"]
        if f3s and not any(n in group for n in hemes):
            q = [n for n in quinones if n in group]
            start = q[0] if q else f3s[0]
            where = "the quinone" if q else "the [3Fe-4S] next to the (unmodelled) quinol site"
            return start, f, ("chemistry: succinate dehydrogenase/fumarate reductase family without heme "
                              "(type D, a quinol:fumarate reductase; Lemos et al. 2002 Biochim Biophys Acta "
                              f"1553:158, from memory): quinol -> clusters -> flavin, starting at {where}")
    for f in flavins:
        exit_, how = downstream(f)
        if exit_ is not None:
            return f, exit_, f"chemistry: substrate-oxidising flavin as entry, {how}"
    comps = sorted(nx.connected_components(u), key=lambda c: (-len(c), min(order[n] for n in c)))
    if not comps or len(comps[0]) < 2:
        return None, None, "no two cofactors within the cutoff"
    members = sorted(comps[0], key=order.__getitem__)
    a, b = max(
        ((x, y) for i, x in enumerate(members) for y in members[i + 1:]),
        key=lambda p: float(np.linalg.norm(_centre(g, p[0]) - _centre(g, p[1]))),
    )
    if _potential(g, b) < _potential(g, a):
        a, b = b, a
    return a, b, ("default: the two ends of the longest chain, from the lower to the higher "
                  "potential (electrons run downhill)")


def choose_endpoints(g: nx.DiGraph, cofactors: Sequence[Cofactor], options: ScanOptions) -> tuple[str | None, str | None, str]:
    """Pick entry and exit: the user's, else by the cofactors' chemistry.

    Default rules, first that applies (every hop up to the cutoff counts as a
    connection, so a relay gap shows up on the path; structural and ion cofactors
    are never endpoints):

    1. a hydrogenase (NiFe, H-cluster) or Mo/W-pterin site → the fastest-reached
       quinone, else heme, else the farthest relay (H2 or substrate oxidation);
    2. CuA → heme a3 (heme a next to a copper), else the fastest-reached heme
       (heme-copper oxidase: cytochrome c → CuA → heme a → heme a3–CuB);
    3. photosystem II QA → QB;
    4. a flavin with Fe–S relays and a menaquinone, or with SDH/QFR-type
       clusters and no heme (type D of the family, a quinol:fumarate
       reductase): quinone (else the [3Fe-4S] next to the quinol site) → flavin;
    5. a flavin (substrate-oxidising) → the fastest-reached quinone, else heme,
       else the farthest connected cofactor;
    6. otherwise the two ends of the longest chain, from the lower to the
       higher potential.

    ``options.reverse`` swaps the default entry and exit.

    Returns
    -------
    entry, exit : str or None
    how : str
        Which rule, and why, in plain words.
    """
    order = {c.uid: k for k, c in enumerate(cofactors)}
    usable = [c.uid for c in cofactors if _role(g, c.uid) in ("relay", "catalytic")]
    u = _undirected_within(g.subgraph(usable), options.cutoff)
    if options.entry or options.exit:
        entry = find_cofactor(cofactors, options.entry).uid if options.entry else None
        exit_ = find_cofactor(cofactors, options.exit).uid if options.exit else None
        if entry and exit_ and entry == exit_:
            raise ConfigError(f"entry and exit name the same cofactor ({options.entry}, {options.exit})")
        if entry and not exit_:
            exit_ = _farthest(u, g, entry) if entry in u else None
            return entry, exit_, "entry chosen by the user, farthest connected cofactor as exit"
        if exit_ and not entry:
            entry = _farthest(u, g, exit_) if exit_ in u else None
            return entry, exit_, "exit chosen by the user, farthest connected cofactor as entry"
        return entry, exit_, "chosen by the user"
    if len(usable) < 2:
        return None, None, "fewer than two relay or catalytic cofactors"
    entry, exit_, how = _chemistry_rules(g, cofactors, u, order)
    if options.reverse and entry is not None and exit_ is not None:
        return exit_, entry, how + "; reversed on request (--reverse)"
    if entry is not None:
        how += "; the other direction: --reverse"
    return entry, exit_, how


def routable(g: nx.DiGraph, entry: str, exit_: str) -> nx.DiGraph:
    """The part of the graph a wire may use: relays, plus the entry and exit.

    Catalytic sites may be an endpoint but never an interior node; structural
    and ion cofactors never carry an electron.
    """
    keep = [n for n in g.nodes if n in (entry, exit_) or _role(g, n) in _ROUTE_ROLES]
    return g.subgraph(keep)


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


def trace_wire(
    g: nx.DiGraph,
    cofactors: Sequence[Cofactor],
    options: ScanOptions,
    endpoints: tuple[str | None, str | None, str] | None = None,
    reservoirs: Mapping[str, float] | None = None,
    reservoirs_file: str = "",
    *,
    copies: bool = True,
) -> Wire:
    """Trace the wire of one structure (see the module docstring).

    Parameters
    ----------
    g : networkx.DiGraph
        From :func:`fescan.transfer.graph.build_cofactor_graph`.
    cofactors : sequence of Cofactor
    options : ScanOptions
    endpoints : (entry, exit, how), optional
        Already chosen endpoints (:func:`choose_endpoints`); chosen here when omitted.
    reservoirs : mapping, optional
        User reservoir potentials (``source``, ``sink``, V) from *reservoirs_file*;
        defaults by role otherwise (:mod:`fescan.transfer.reservoirs`).
    copies : bool, optional
        With default endpoints, also trace the wire of every other copy of the
        same set of cofactors (connected within the cutoff) into ``Wire.copies``.

    Returns
    -------
    Wire
    """
    w = Wire()
    u = _undirected_within(g, options.gap_limit)
    order = {c.uid: k for k, c in enumerate(cofactors)}
    w.isolated = [n for n in g.nodes if u.degree(n) == 0] if len(g) > 1 else []
    entry, exit_, how = endpoints if endpoints is not None else choose_endpoints(g, cofactors, options)
    w.entry, w.exit, w.how_chosen = entry, exit_, how
    if entry is None or exit_ is None or entry == exit_:
        w.notes.append("no wire: " + how)
        w.groups = _groups(u, set(), order)
        return w
    r = routable(g, entry, exit_)
    try:
        path = nx.dijkstra_path(r, entry, exit_, weight="hop_time")
    except nx.NetworkXNoPath:
        w.notes.append(f"no chain of relay hops within {options.cutoff:g} Å joins entry and exit")
        w.mean_first_passage_time = math.inf
        w.groups = _groups(u, {entry, exit_}, order)
        return w
    w.path = path
    w.hops = [g.edges[a, b]["hop"] for a, b in zip(path, path[1:])]
    w.slowest_hop = max(w.hops, key=lambda h: h.hop_time)
    w.bottleneck = w.slowest_hop
    w.bottleneck_basis = "slowest forward hop (no steady-state solution)"
    w.gaps = [h for h in w.hops if h.gap]
    w.slow_hops = [h for h in w.hops if h.slow and not h.gap]
    w.summed_hop_time = summed_hop_time([h.k_forward for h in w.hops])
    w.mean_first_passage_time = _mfpt(r, entry, exit_)
    ratio = w.mean_first_passage_time / w.summed_hop_time if w.summed_hop_time > 0 else 1.0
    if ratio > 3.0:
        uphill = [h for h in w.hops if h.dg > 0.01]
        why = (f"{len(uphill)} uphill hop(s) on the path, largest ΔG {max(h.dg for h in uphill):+.2f} eV"
               if uphill else "detours into side branches and parallel routes")
        w.notes.append(f"the mean first-passage time is {ratio:.3g} times the sum of forward hop times ({why}); "
                       "check the potentials used")
    w.branches = _branches(g, u, path, order)
    w.groups = _groups(u, set(path), order)
    _steady(g, w, options, reservoirs, reservoirs_file)
    w.notes += _caveats(g, w, options)
    if any(h.crystal_contact for h in w.hops):
        w.notes.append("the path crosses between copies of the complex that no biological assembly of the "
                       "file joins: possible crystal contact, not a physiological route")
    if copies and not (options.entry or options.exit):
        w.copies = _other_copies(g, cofactors, options, w, reservoirs, reservoirs_file)
    return w


def _other_copies(g, cofactors, options, w: Wire, reservoirs, reservoirs_file) -> list[dict]:
    """Wires of the other groups holding the same classes as the wire's group (other copies)."""
    usable = [c.uid for c in cofactors if _role(g, c.uid) in ("relay", "catalytic")]
    u = nx.Graph()
    u.add_nodes_from(usable)
    u.add_edges_from((a, b) for a, b, d in g.subgraph(usable).edges(data="hop")
                     if d.edge <= options.cutoff and not d.crystal_contact and not d.symmetry)
    if w.entry not in u:
        return []
    main = nx.node_connected_component(u, w.entry)

    def sig(comp):
        return sorted(g.nodes[n]["cofactor"].cls for n in comp)

    order = {c.uid: k for k, c in enumerate(cofactors)}
    out = []
    for comp in sorted(nx.connected_components(u), key=lambda c: min(order[n] for n in c)):
        if comp is main or comp == main or sig(comp) != sig(main):
            continue
        sub = g.subgraph(comp).copy()  # a plain graph: the views trace_wire takes of it stay one level deep
        cofs = [c for c in cofactors if c.uid in comp]
        cw = trace_wire(sub, cofs, options, choose_endpoints(sub, cofs, options), reservoirs, reservoirs_file,
                        copies=False)
        ss = cw.steady_state or {}
        out.append({"entry": cw.entry, "exit": cw.exit, "how_chosen": cw.how_chosen, "path": list(cw.path),
                    "bottleneck": [cw.bottleneck.donor, cw.bottleneck.acceptor] if cw.bottleneck else None,
                    "bottleneck_basis": cw.bottleneck_basis,
                    "mean_first_passage_time_s": cw.mean_first_passage_time
                    if cw.mean_first_passage_time is not None and math.isfinite(cw.mean_first_passage_time) else None,
                    "flux_per_s": ss.get("flux_per_s"), "transit_time_s": ss.get("transit_time_s")})
    return out


def mark_crystal_contacts(g: nx.DiGraph, assemblies: Sequence[set[str]]) -> int:
    """Flag hops between copies of the complex that no biological assembly joins.

    Parameters
    ----------
    g : networkx.DiGraph
        The cofactor graph (edges replaced in place).
    assemblies : sequence of set of str
        Author chain names of each biological assembly of the file.

    Returns
    -------
    int
        Number of directed hops flagged. The copies are the smallest assemblies
        (those holding no other); a hop whose two cofactors lie in different copies
        is a possible crystal contact unless one assembly holds both chains. Without
        two or more copies nothing is flagged.
    """
    sets = [frozenset(a) for a in assemblies if a]
    copies = [a for a in sets if not any(b < a for b in sets)]
    if len(copies) < 2:
        return 0
    def copy_of(chain: str) -> int | None:
        return next((k for k, a in enumerate(copies) if chain in a), None)
    n = 0
    for a, b, hop in list(g.edges(data="hop")):
        ca, cb = g.nodes[a]["cofactor"].chain, g.nodes[b]["cofactor"].chain
        ka, kb = copy_of(ca), copy_of(cb)
        if ka is None or kb is None or ka == kb or any(ca in s and cb in s for s in sets if s not in copies):
            continue
        new = replace(hop, crystal_contact=True)
        g.edges[a, b]["hop"] = new
        n += 1
    return n


def _steady(g: nx.DiGraph, w: Wire, options: ScanOptions, reservoirs: Mapping[str, float] | None,
            reservoirs_file: str) -> None:
    """Solve the steady state between reservoirs; the bottleneck becomes the largest flux control."""
    src, snk = default_reservoirs(g, w.entry, w.exit, reservoirs, reservoirs_file)
    missing = [f"{k} (no default pool for {g.nodes[n]['cofactor'].label})"
               for k, r, n in (("source", src, w.entry), ("sink", snk, w.exit)) if r is None]
    if missing:
        w.notes.append("steady state not solved: give the reservoir potential(s) " + ", ".join(missing)
                       + " in a potentials file ([reservoirs] source = ..., sink = ... in V)")
        return
    try:
        w.steady_state = wire_steady_state(g, w.path, w.hops, options.temperature, src, snk)
    except ImportError:  # the steady-state engine is not installed in this tree
        w.notes.append("steady state not solved: the steady-state engine is not available")
        return
    except ConfigError as exc:
        w.notes.append(f"steady state not solved: {exc}")
        return
    flux = w.steady_state.get("flux_per_s")
    if flux is not None and flux < 0:
        w.notes.append(f"the steady-state flux is negative ({flux:.3g} electrons/s): between these reservoirs "
                       "electrons run from the exit back to the entry, so the physiological direction is the reverse")
    ctrl = {(c["donor"], c["acceptor"]): c["coefficient"] for c in w.steady_state["control"]}
    scored = [(ctrl.get((h.donor, h.acceptor)), h) for h in w.hops]
    scored = [(c, h) for c, h in scored if c is not None and math.isfinite(c)]
    if scored:
        c, h = max(scored, key=lambda x: x[0])
        w.bottleneck = h
        w.bottleneck_basis = f"largest flux-control coefficient of the steady state ({c:.2f})"
        top = max(ctrl.items(), key=lambda x: -math.inf if x[1] is None else x[1])
        if top[0][0] == "source" or top[0][1] == "sink":
            w.notes.append("the exchange with a reservoir controls the flux more than any hop")


def _caveats(g: nx.DiGraph, w: Wire, options: ScanOptions) -> list[str]:
    """Plain-words warnings about what the path rests on."""
    notes = []
    weak = [n for n in w.path if g.nodes[n]["potential"].status == "from memory"]
    if weak:
        notes.append("packaged defaults given from memory (not measured for this protein) for: " + ", ".join(
            f"{g.nodes[n]['cofactor'].label} ({g.nodes[n]['potential'].e_v:+.3f} V)" for n in weak)
            + "; set measured values in a potentials file")
    unknown = [g.nodes[n]["cofactor"].label for n in w.path if not g.nodes[n]["potential"].determined]
    if unknown:
        notes.append("potential undetermined for " + ", ".join(unknown) + ": hops to and from it assume "
                     "ΔG = 0; give its potential in a potentials file")
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
