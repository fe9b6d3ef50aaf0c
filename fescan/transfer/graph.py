"""The cofactor graph: nodes are cofactors, directed edges are hops with rates.

Each pair of cofactors within the cutoff gives two directed edges (u→v and
v→u) carrying the edge-to-edge and centre-to-centre distances, the driving
force ΔG of that direction, the Moser–Dutton rate and the hop time 1/k.
Rates are estimates from an empirical law, not measurements.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import networkx as nx
import numpy as np

from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.transfer.distances import Pair
from fescan.transfer.potentials import Potential
from fescan.transfer.rate_law import dg_from_potentials, hop_reorganisation, log10_hop_rate

__all__ = ["Hop", "build_cofactor_graph"]


@dataclass(frozen=True, slots=True)
class Hop:
    """One electron hop from a donor to an acceptor cofactor.

    Attributes
    ----------
    donor, acceptor : str
        Cofactor uids.
    edge, centre : float
        Edge-to-edge and centre-to-centre distances (Å).
    dg : float
        Driving force ΔG = −(E_acceptor − E_donor) of this direction (eV).
    reorg : float
        Reorganisation energy λ used (eV).
    log10_k_forward, log10_k_back : float
        log10 of the forward and back rates (s⁻¹).
    k_forward, k_back : float
        Rates (s⁻¹).
    hop_time : float
        1 / k_forward (s).
    gap : bool
        Edge-to-edge distance above the gap limit.
    slow : bool
        Forward rate below the turnover threshold.
    symmetry : str
        Symmetry operator applied to one partner, empty in the asymmetric unit.
    packing_density : float
        Packing density ρ used for this hop (default or measured).
    """

    donor: str
    acceptor: str
    edge: float
    centre: float
    dg: float
    reorg: float
    log10_k_forward: float
    log10_k_back: float
    k_forward: float
    k_back: float
    hop_time: float
    gap: bool
    slow: bool
    symmetry: str = ""
    packing_density: float = 0.76

    def to_dict(self) -> dict:
        """JSON-ready record (distances in Å, energies in eV, rates in s⁻¹, time in s)."""
        return {
            "donor": self.donor,
            "acceptor": self.acceptor,
            "edge_distance": self.edge,
            "centre_distance": self.centre,
            "dg_ev": round(self.dg, 4),
            "reorg_ev": self.reorg,
            "log10_k_forward": round(self.log10_k_forward, 3),
            "log10_k_back": round(self.log10_k_back, 3),
            "k_forward": self.k_forward,
            "k_back": self.k_back,
            "hop_time_s": self.hop_time,
            "gap": self.gap,
            "slow": self.slow,
            "symmetry": self.symmetry,
            "packing_density": round(self.packing_density, 4),
        }


def build_cofactor_graph(
    cofactors: Sequence[Cofactor],
    pairs: Sequence[Pair],
    potentials: Mapping[str, Potential],
    options: ScanOptions,
    reorgs: Mapping[str, float] | None = None,
    packing: Mapping[tuple[int, int], float] | None = None,
) -> nx.DiGraph:
    """Build the directed cofactor graph with Moser–Dutton rates on every edge.

    Parameters
    ----------
    cofactors : sequence of Cofactor
    pairs : sequence of Pair
        From :func:`fescan.geometry.pair_distances` (indices into ``cofactors``).
    potentials : mapping of uid to Potential
        Midpoint potential of each cofactor (V).
    options : ScanOptions
        λ, ρ, temperature, gap limit and rate threshold.
    reorgs : mapping of uid to float, optional
        Per-cofactor λ (eV) from the user's file; a hop uses the mean of its
        two cofactors' values (the default λ standing in for one without).
    packing : mapping of (i, j) to float, optional
        Measured packing density per pair (indices as in ``pairs``); pairs
        missing from it use ``options.packing_density``.

    Returns
    -------
    networkx.DiGraph
        Node key = cofactor uid, attributes ``cofactor`` (the record),
        ``potential`` (Potential). Edge attribute ``hop`` (a :class:`Hop`) and
        ``hop_time`` (s), ``edge`` (Å) for the path algorithms.
    """
    reorgs = reorgs or {}
    packing = packing or {}
    g = nx.DiGraph()
    for c in cofactors:
        g.add_node(c.uid, cofactor=c, potential=potentials[c.uid])
    # one vectorised rate-law call for every direction of every pair
    rows = []
    for p in pairs:
        a, b = cofactors[p.i], cofactors[p.j]
        lam = options.reorg
        if a.uid in reorgs or b.uid in reorgs:
            lam = hop_reorganisation(reorgs.get(a.uid, options.reorg), reorgs.get(b.uid, options.reorg))
        rho = float(packing.get((p.i, p.j), options.packing_density))
        for d, acc in ((a, b), (b, a)):
            dg = dg_from_potentials(potentials[d.uid].e_v, potentials[acc.uid].e_v)
            rows.append((p, d, acc, dg, lam, rho))
    if not rows:
        return g
    edge = np.array([r[0].edge for r in rows])
    dgs = np.array([r[3] for r in rows])
    lams = np.array([r[4] for r in rows])
    rhos = np.array([r[5] for r in rows])
    lf_all = np.atleast_1d(log10_hop_rate(edge, dgs, reorg=lams, packing_density=rhos, temperature=options.temperature))
    lb_all = np.atleast_1d(log10_hop_rate(edge, -dgs, reorg=lams, packing_density=rhos, temperature=options.temperature))
    for (p, d, acc, dg, lam, rho), lf, lb in zip(rows, lf_all.tolist(), lb_all.tolist()):
        kf, kb = 10.0**lf, 10.0**lb
        hop = Hop(
            donor=d.uid, acceptor=acc.uid, edge=p.edge, centre=p.centre, dg=dg, reorg=lam,
            log10_k_forward=lf, log10_k_back=lb, k_forward=kf, k_back=kb,
            hop_time=1.0 / kf if kf > 0 else float("inf"),
            gap=p.edge > options.gap_limit, slow=kf < options.rate_threshold, symmetry=p.symmetry,
            packing_density=rho,
        )
        g.add_edge(d.uid, acc.uid, hop=hop, hop_time=hop.hop_time, edge=p.edge)
    return g

