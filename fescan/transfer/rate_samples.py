"""Rate samples of a wire's connected group: the inputs of the rate law, perturbed.

A :class:`RateSample` is one set of hop rates over the connected group of
cofactors that holds the wire's entry (every hop within the cutoff, both
directions, as the scan's mean first-passage time uses). Any "wire → number"
function (:data:`Quantity`) can be evaluated on it: the mean first-passage time,
one hop's rate, or a steady-state flux built from :meth:`RateSample.graph`.

:func:`build_component` collects, once per scan, what the samples vary: for
every cofactor pair its edge-to-edge distance R and the σ_R of that distance
(σ_R² = σ_a² + σ_b², the per-axis errors of the two closest atoms from
:mod:`fescan.transfer.coordinate_error`); for every directed hop its ΔG, λ and ρ.
Distances of different pairs are drawn independently (pairs sharing a cofactor
are in truth correlated; not modelled). Rates are estimates from the empirical
Moser–Dutton law, not measurements.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Any

import networkx as nx
import numpy as np

from fescan.core.neighbours import NeighbourTree
from fescan.transfer.coordinate_error import CoordinateError
from fescan.transfer.rate_law import log10_hop_rate

__all__ = ["Component", "RateSample", "Quantity", "build_component", "mfpt_of", "summed_path_time_of"]


@dataclass(frozen=True, eq=False)
class Component:
    """What a wire's rates depend on (arrays indexed by directed edge ``e`` or pair ``p``).

    Attributes
    ----------
    nodes : tuple of str
        Cofactor uids of the connected group, sorted.
    src, dst : ndarray of int
        Node indices of each directed edge.
    pair : ndarray of int
        Pair index of each directed edge (both directions share one distance).
    distance, sigma_distance : ndarray
        R and σ_R of each pair (Å).
    closest_atoms : tuple of str
        ``"FE1-S3"`` names of the two atoms defining R, per pair.
    sigma_atoms : ndarray, shape (n_pairs, 2)
        σ(x) of those two atoms (Å).
    dg, reorg, rho : ndarray
        ΔG (eV), λ (eV) and ρ of each directed edge, as scanned.
    default_reorg : ndarray of bool
        Whether the edge's λ is the scan's default (λ scenarios replace only these).
    potentials : dict
        uid → Potential used.
    entry, exit : str or None
    path : tuple of str
        The wire's path.
    temperature : float
    graph : networkx.DiGraph
        The scan's graph (for :meth:`RateSample.graph`).
    """

    nodes: tuple[str, ...]
    src: np.ndarray
    dst: np.ndarray
    pair: np.ndarray
    distance: np.ndarray
    sigma_distance: np.ndarray
    closest_atoms: tuple[str, ...]
    sigma_atoms: np.ndarray
    dg: np.ndarray
    reorg: np.ndarray
    rho: np.ndarray
    default_reorg: np.ndarray
    potentials: Mapping[str, Any]
    entry: str | None
    exit: str | None
    path: tuple[str, ...]
    temperature: float
    graph: nx.DiGraph

    @cached_property
    def index(self) -> dict[str, int]:
        """uid → node index."""
        return {u: i for i, u in enumerate(self.nodes)}

    @cached_property
    def _edges(self) -> dict[tuple[str, str], int]:
        return {(self.nodes[s], self.nodes[d]): e for e, (s, d) in enumerate(zip(self.src, self.dst))}

    def edge(self, donor: str, acceptor: str) -> int:
        """Directed edge index of a hop (KeyError when absent)."""
        try:
            return self._edges[(donor, acceptor)]
        except KeyError:
            raise KeyError(f"no hop {donor} > {acceptor}") from None

    def log10_k(self, distance: np.ndarray, dg: np.ndarray, reorg: np.ndarray) -> np.ndarray:
        """log10 k of every edge; ``distance`` per pair, the others per edge (leading axes broadcast)."""
        r = np.asarray(distance)[..., self.pair]
        return np.asarray(log10_hop_rate(r, dg, reorg, self.rho, temperature=self.temperature))


@dataclass(frozen=True, eq=False)
class RateSample:
    """One set of rates over a :class:`Component`.

    Attributes
    ----------
    component : Component
    log10_k : ndarray
        log10 k (s⁻¹) of every directed edge.
    dg : ndarray
        ΔG (eV) of every directed edge in this sample.
    reorg : ndarray
        λ (eV) of every directed edge in this sample.
    distance : ndarray
        R (Å) of every pair in this sample.
    law_shift : float
        log10 units added to every rate (the law's scatter bound; 0 otherwise).
    potential_shift : ndarray or None
        Shift (V) of each node's potential from the one used (potential sensitivities),
        ``None`` for none.

    A quantity that rebuilds its own kinetic model (e.g. a steady-state flux from
    potentials and distances) reads :meth:`distance_of`, :meth:`reorg_of`,
    :meth:`potential_shift_of` and :attr:`law_shift` and must add ``law_shift`` to
    its log10 rates.
    """

    component: Component
    log10_k: np.ndarray
    dg: np.ndarray
    reorg: np.ndarray
    distance: np.ndarray
    law_shift: float = 0.0
    potential_shift: np.ndarray | None = None

    def distance_of(self, a: str, b: str) -> float:
        """R (Å) of the pair a–b in this sample."""
        c = self.component
        return float(self.distance[c.pair[c.edge(a, b)]])

    def reorg_of(self, donor: str, acceptor: str) -> float:
        """λ (eV) of the hop donor → acceptor in this sample."""
        return float(self.reorg[self.component.edge(donor, acceptor)])

    def potential_shift_of(self, uid: str) -> float:
        """Shift (V) of a cofactor's potential from the one used, in this sample."""
        if self.potential_shift is None:
            return 0.0
        return float(self.potential_shift[self.component.index[uid]])

    def rate_matrix(self) -> np.ndarray:
        """Dense n × n matrix of rates, ``[i, j]`` for the hop i → j (s⁻¹)."""
        c = self.component
        n = len(c.nodes)
        w = np.zeros((n, n))
        w[c.src, c.dst] = np.power(10.0, self.log10_k)
        return w

    def hop_rate(self, donor: str, acceptor: str) -> float:
        """Rate (s⁻¹) of one hop in this sample."""
        return float(10.0 ** self.log10_k[self.component.edge(donor, acceptor)])

    def graph(self) -> nx.DiGraph:
        """The scan's graph restricted to the group, each Hop carrying this sample's R, ΔG, λ and rates."""
        c = self.component
        g = c.graph.subgraph(c.nodes).copy()
        lk = {(c.nodes[s], c.nodes[d]): float(v) for s, d, v in zip(c.src, c.dst, self.log10_k)}
        for e, (s, d) in enumerate(zip(c.src, c.dst)):
            a, b = c.nodes[s], c.nodes[d]
            lf, lb = lk[(a, b)], lk.get((b, a), -math.inf)
            kf = 10.0**lf
            hop = replace(g.edges[a, b]["hop"], edge=float(self.distance[c.pair[e]]), dg=float(self.dg[e]),
                          reorg=float(self.reorg[e]), log10_k_forward=lf, log10_k_back=lb, k_forward=kf,
                          k_back=10.0**lb, hop_time=1.0 / kf if kf > 0 else math.inf)
            g.edges[a, b].update(hop=hop, hop_time=hop.hop_time, edge=hop.edge)
        return g


#: Any function of a rate sample: mean first-passage time, a hop rate, a flux...
Quantity = Callable[[RateSample], float]


def mfpt_of(sample: RateSample) -> float:
    """Mean first-passage time (s) entry → exit of one electron entering an oxidised chain."""
    c = sample.component
    if c.entry is None or c.exit is None or c.exit not in c.nodes:
        return math.nan
    w = sample.rate_matrix()
    ix = c.index
    s, x = ix[c.entry], ix[c.exit]
    if s == x:
        return 0.0
    keep = [i for i in range(len(c.nodes)) if i != x]
    out = w[keep].sum(axis=1)
    if (out <= 0).any():
        return math.inf
    sub = w[np.ix_(keep, keep)] / out[:, None]
    a = np.eye(len(keep)) - sub
    try:
        tau = np.linalg.solve(a, 1.0 / out)
    except np.linalg.LinAlgError:
        return math.inf
    v = float(tau[keep.index(s)])
    return v if math.isfinite(v) and v >= 0 else math.inf


def summed_path_time_of(sample: RateSample) -> float:
    """Σ 1/k_forward along the wire's path (s): forward steps only, kept for comparison."""
    c = sample.component
    if len(c.path) < 2:
        return math.nan
    return math.fsum(1.0 / sample.hop_rate(a, b) for a, b in zip(c.path, c.path[1:]))


def _closest(da: np.ndarray, aa: np.ndarray) -> tuple[int, int]:
    d, k = NeighbourTree(aa).query(da, k=1)
    i = int(np.argmin(d))
    return i, int(k[i])


def build_component(result: Any, error: CoordinateError) -> tuple[Component | None, list[str]]:
    """The connected group of the wire's entry with the spread of every pair distance.

    Parameters
    ----------
    result : fescan.analysis.scan.ScanResult
    error : CoordinateError
        Per-atom coordinate error model.

    Returns
    -------
    component : Component or None
        ``None`` when the scan has no wire entry.
    notes : list of str
    """
    wire, g, opts = result.wire, result.graph, result.options
    notes: list[str] = []
    if not wire.entry or wire.entry not in g:
        return None, ["no wire: nothing to put an interval on"]
    nodes = tuple(sorted(nx.node_connected_component(g.to_undirected(as_view=True), wire.entry)))
    ix = {u: i for i, u in enumerate(nodes)}
    by = {c.uid: c for c in result.cofactors}
    src, dst, pair, dg, lam, rho, dflt = [], [], [], [], [], [], []
    pairs: dict[tuple[str, str], int] = {}
    dist, sig, names, sat = [], [], [], []
    mates = 0
    for a, b, hop in g.subgraph(nodes).edges(data="hop"):
        key = (min(a, b), max(a, b))
        if key not in pairs:
            pairs[key] = len(pairs)
            d, x = by[a], by[b]
            sd = error.sigma_x([t.b_iso for t in d.redox_atoms])
            sa = error.sigma_x([t.b_iso for t in x.redox_atoms])
            if hop.symmetry:  # the partner is a crystal mate: its closest atom is not found here
                i, j = int(np.argsort(sd)[len(sd) // 2]), int(np.argsort(sa)[len(sa) // 2])
                mates += 1
            else:
                i, j = _closest(np.asarray([t.xyz for t in d.redox_atoms]), np.asarray([t.xyz for t in x.redox_atoms]))
            dist.append(float(hop.edge))
            sig.append(math.hypot(sd[i], sa[j]))
            names.append(f"{d.redox_atoms[i].name}-{x.redox_atoms[j].name}")
            sat.append((float(sd[i]), float(sa[j])))
        src.append(ix[a])
        dst.append(ix[b])
        pair.append(pairs[key])
        dg.append(float(hop.dg))
        lam.append(float(hop.reorg))
        rho.append(float(getattr(hop, "packing_density", opts.packing_density)))
        dflt.append(abs(float(hop.reorg) - float(opts.reorg)) < 1e-9)
    if mates:
        notes.append(f"{mates} hop(s) to symmetry mates: median atom errors used for their distance")
    comp = Component(
        nodes, np.asarray(src, int), np.asarray(dst, int), np.asarray(pair, int), np.asarray(dist),
        np.asarray(sig), tuple(names), np.asarray(sat).reshape(-1, 2), np.asarray(dg), np.asarray(lam),
        np.asarray(rho), np.asarray(dflt, bool), dict(result.potentials), wire.entry, wire.exit,
        tuple(wire.path), float(opts.temperature), g)
    return comp, notes
