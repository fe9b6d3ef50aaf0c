"""The cofactor graph: nodes are cofactors, directed edges are hops with rates.

Each pair of cofactors within the cutoff gives two directed edges (u→v and
v→u) carrying the edge-to-edge and centre-to-centre distances, the driving
force ΔG of that direction, the Moser–Dutton rate and the hop time 1/k.
Rates are estimates from an empirical law, not measurements.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import networkx as nx
import numpy as np

from fescan.core.options import ScanOptions
from fescan.core.records import Cofactor
from fescan.transfer.distances import Pair
from fescan.transfer.potentials import Potential
from fescan.transfer.rate_law import RateLaw, dg_from_potentials, hop_reorganisation, log10_hop_rate

__all__ = ["Hop", "HopSpec", "hop_reorg", "build_hops", "build_hop", "build_cofactor_graph"]


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
    donor_couple, acceptor_couple : str
        The couple each side uses for this electron (``"FMN sq/red"``, ``"[4Fe-4S] 2+/1+"``).
    dg_assumed : bool
        A potential of this hop is undetermined; ΔG = 0 was assumed.
    crystal_contact : bool
        The two cofactors belong to different copies of the complex in the file
        and no biological assembly of the file joins them: a possible crystal contact.
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
    donor_couple: str = ""
    acceptor_couple: str = ""
    dg_assumed: bool = False
    crystal_contact: bool = False

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
            "donor_couple": self.donor_couple,
            "acceptor_couple": self.acceptor_couple,
            "dg_assumed": self.dg_assumed,
            "possible_crystal_contact": self.crystal_contact,
        }


@dataclass(frozen=True, slots=True)
class HopSpec:
    """What one hop needs before the rate law: the two cofactors and their distances."""

    donor: Cofactor
    acceptor: Cofactor
    edge: float
    centre: float
    packing_density: float | None = None
    symmetry: str = ""


def hop_reorg(donor: str, acceptor: str, reorgs: Mapping[str, float], default: float) -> float:
    """λ of a hop: the mean of the two cofactors' λ when the user gave either, else *default*."""
    if donor in reorgs or acceptor in reorgs:
        return hop_reorganisation(reorgs.get(donor, default), reorgs.get(acceptor, default))
    return default


def build_hops(
    specs: Iterable[HopSpec],
    potentials: Mapping[str, Potential],
    options: ScanOptions,
    reorgs: Mapping[str, float] | None = None,
    *,
    law: RateLaw = log10_hop_rate,
) -> list[Hop]:
    """Build hops (ΔG, λ, ρ, k_f, k_b, flags) with one vectorised call of the rate law.

    This is the one place a :class:`Hop` is made: the graph, the comparison and the
    uncertainty use it.

    Parameters
    ----------
    specs : iterable of HopSpec
        Donor, acceptor and distances of each hop.
    potentials : mapping of uid to Potential
        The couple each cofactor works at (see :mod:`fescan.transfer.potentials`).
    options : ScanOptions
        Global λ, ρ, temperature, gap limit and slow-hop threshold.
    reorgs : mapping of uid to float, optional
        Per-cofactor λ from the user's file.
    law : RateLaw, optional
        The rate law (default Moser–Dutton, :func:`fescan.transfer.rate_law.log10_hop_rate`).

    Returns
    -------
    list of Hop
        In the order of *specs*. A hop whose donor or acceptor potential is
        undetermined gets ΔG = 0 and ``dg_assumed=True``.
    """
    reorgs = reorgs or {}
    specs = list(specs)
    if not specs:
        return []
    dgs, lams, rhos, assumed = [], [], [], []
    for s in specs:
        ed, ea = potentials[s.donor.uid], potentials[s.acceptor.uid]
        ok = math.isfinite(ed.e_v) and math.isfinite(ea.e_v)
        dgs.append(float(dg_from_potentials(ed.e_v, ea.e_v)) if ok else 0.0)
        assumed.append(not ok)
        lams.append(hop_reorg(s.donor.uid, s.acceptor.uid, reorgs, options.reorg))
        rhos.append(float(options.packing_density if s.packing_density is None else s.packing_density))
    edge = np.array([s.edge for s in specs], dtype=float)
    dg = np.array(dgs)
    kw = {"reorg": np.array(lams), "packing_density": np.array(rhos)}
    lf_all = np.atleast_1d(law(edge, dg, temperature=options.temperature, **kw))
    lb_all = np.atleast_1d(law(edge, -dg, temperature=options.temperature, **kw))
    out = []
    for s, g, lam, rho, bad, lf, lb in zip(specs, dgs, lams, rhos, assumed, lf_all.tolist(), lb_all.tolist()):
        kf, kb = 10.0**lf, 10.0**lb
        out.append(Hop(
            donor=s.donor.uid, acceptor=s.acceptor.uid, edge=s.edge, centre=s.centre, dg=g, reorg=lam,
            log10_k_forward=lf, log10_k_back=lb, k_forward=kf, k_back=kb,
            hop_time=1.0 / kf if kf > 0 else float("inf"),
            gap=s.edge > options.gap_limit, slow=kf < options.rate_threshold, symmetry=s.symmetry,
            packing_density=rho, donor_couple=potentials[s.donor.uid].couple,
            acceptor_couple=potentials[s.acceptor.uid].couple, dg_assumed=bad,
        ))
    return out


def build_hop(spec: HopSpec, potentials: Mapping[str, Potential], options: ScanOptions,
              reorgs: Mapping[str, float] | None = None, *, law: RateLaw = log10_hop_rate) -> Hop:
    """One hop (see :func:`build_hops`)."""
    return build_hops([spec], potentials, options, reorgs, law=law)[0]


def build_cofactor_graph(
    cofactors: Sequence[Cofactor],
    pairs: Sequence[Pair],
    potentials: Mapping[str, Potential],
    options: ScanOptions,
    reorgs: Mapping[str, float] | None = None,
    packing: Mapping[tuple[int, int], float] | None = None,
    *,
    law: RateLaw = log10_hop_rate,
) -> nx.DiGraph:
    """Build the directed cofactor graph with rates on every edge.

    Parameters
    ----------
    cofactors : sequence of Cofactor
    pairs : sequence of Pair
        From :func:`fescan.transfer.distances.pair_distances` (indices into ``cofactors``).
    potentials : mapping of uid to Potential
        The couple each cofactor works at (V).
    options : ScanOptions
    reorgs : mapping of uid to float, optional
        Per-cofactor λ (eV) from the user's file.
    packing : mapping of (i, j) to float, optional
        Measured packing density per pair; pairs missing from it use ``options.packing_density``.
    law : RateLaw, optional
        The rate law (default Moser–Dutton).

    Returns
    -------
    networkx.DiGraph
        Node key = cofactor uid, attributes ``cofactor`` and ``potential`` (the
        working couple). Edge attributes ``hop`` (a :class:`Hop`), ``hop_time`` (s)
        and ``edge`` (Å).
    """
    packing = packing or {}
    g = nx.DiGraph()
    for c in cofactors:
        g.add_node(c.uid, cofactor=c, potential=potentials[c.uid])
    specs = []
    for p in pairs:
        a, b = cofactors[p.i], cofactors[p.j]
        rho = packing.get((p.i, p.j))
        specs.append(HopSpec(a, b, p.edge, p.centre, rho, p.symmetry))
        specs.append(HopSpec(b, a, p.edge, p.centre, rho, p.symmetry))
    for hop in build_hops(specs, potentials, options, reorgs, law=law):
        g.add_edge(hop.donor, hop.acceptor, hop=hop, hop_time=hop.hop_time, edge=hop.edge)
    return g
