"""Couples, directions, crystal contacts and the one hop builder on small synthetic cofactor sets.

Closed forms and facts of the trade are named beside each check.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from fescan.core.options import ScanOptions
from fescan.core.records import AtomRef, Cofactor
from fescan.transfer.distances import pair_distances
from fescan.transfer.graph import HopSpec, build_cofactor_graph, build_hop
from fescan.transfer.paths import choose_endpoints, mark_crystal_contacts, trace_wire
from fescan.transfer.potentials import assign_parameters
from fescan.transfer.rate_law import log10_hop_rate, log10_rate_slopes


def point(chain, num, x, category="iron-sulfur", cls="[4Fe-4S]", code="SF4", y=0.0):
    a = AtomRef(chain, num, "", code, "FE1", "FE", (x, y, 0.0))
    return Cofactor(model=1, chain=chain, seqnum=num, icode="", ccd_code=code, category=category, cls=cls,
                    composition="Fe", residues=(f"{chain}/{num} {code}",), atoms=(a,), redox_atoms=(a,),
                    centroid=(x, y, 0.0), mean_occupancy=1.0, mean_b=20.0, detected_by="geometry")


def graph(cofs, entry=None, **opt):
    o = ScanOptions(**opt)
    params = assign_parameters(cofs)
    pots = {u: p.working(entry=u == entry) for u, p in params.items()}
    g = build_cofactor_graph(cofs, pair_distances(cofs, o.cutoff), pots, o)
    for u, p in params.items():
        g.nodes[u]["parameters"] = p
    return g, o


def test_flavin_entry_donates_at_sq_red_and_exit_quinone_accepts_at_ox_sq():
    # Anderson 1983 (from memory): free flavin ox/sq -0.31, sq/red -0.13 V; Kishi et al. 2017 (from
    # memory): ubiquinone Q/SQ -0.05 V. A reduced flavin gives its first electron at sq/red.
    cofs = [point("A", 1, 0.0, "flavin", "FMN", "FMN"), point("A", 2, 8.0), point("A", 3, 16.0, "quinone",
                                                                                 "ubiquinone", "UQ1")]
    g0, o = graph(cofs)
    entry, exit_, how = choose_endpoints(g0, cofs, o)
    assert (entry, exit_) == (cofs[0].uid, cofs[2].uid) and "flavin" in how
    g, o = graph(cofs, entry=entry)
    w = trace_wire(g, cofs, o, (entry, exit_, how))
    assert w.hops[0].donor_couple == "FMN sq/red" and w.hops[0].dg == pytest.approx(-((-0.35) - (-0.13)))
    assert w.hops[-1].acceptor_couple == "Q/SQ"
    back = choose_endpoints(g0, cofs, ScanOptions(reverse=True))
    assert back[:2] == (exit_, entry) and "reversed" in back[2]


def test_catalytic_site_is_an_endpoint_never_an_interior_node():
    # a catalytic cofactor sits between two relays: the wire must go round it (here: no other route)
    cofs = [point("A", 1, 0.0), point("A", 2, 8.0), point("A", 3, 16.0)]
    cofs[1] = replace(cofs[1], role="catalytic")
    g, o = graph(cofs, cutoff=14.0)
    w = trace_wire(g, cofs, ScanOptions(entry="A/1", exit="A/3", cutoff=14.0))
    assert w.path == [] and any("no chain of relay hops" in n for n in w.notes)
    w2 = trace_wire(g, cofs, ScanOptions(entry="A/1", exit="A/2", cutoff=14.0))
    assert w2.path == [cofs[0].uid, cofs[1].uid]


def test_gap_is_distance_slow_is_rate():
    # Page et al. 1999: a hop over 14 Å is a relay gap; a short hop that is slow (far uphill) is "slow"
    cofs = [point("A", 1, 0.0, "heme", "heme c", "HEC"), point("A", 2, 10.0), point("A", 3, 28.0)]
    g, o = graph(cofs)
    w = trace_wire(g, cofs, ScanOptions(entry="A/1", exit="A/3"))
    # heme c +0.25 V -> [4Fe-4S] -0.35 V: 0.6 eV uphill over 10 Å, slower than 10^3/s but not a gap
    assert [h.edge for h in w.gaps] == [pytest.approx(18.0)]
    assert [h.edge for h in w.slow_hops] == [pytest.approx(10.0)]


def test_crystal_contacts_follow_the_biological_assemblies():
    cofs = [point("A", 1, 0.0), point("B", 1, 9.0)]
    g, _ = graph(cofs)
    assert mark_crystal_contacts(g, [{"A"}, {"B"}]) == 2  # two copies, no assembly joins them
    assert all(h.crystal_contact for _, _, h in g.edges(data="hop"))
    g, _ = graph(cofs)
    assert mark_crystal_contacts(g, [{"A"}, {"B"}, {"A", "B"}]) == 0  # an assembly holds both
    assert mark_crystal_contacts(g, [{"A", "B"}]) == 0  # one copy only


def test_one_hop_builder_and_rate_law_seam():
    cofs = [point("A", 1, 0.0), point("A", 2, 11.0, "heme", "heme c", "HEC")]
    params = assign_parameters(cofs)
    pots = {u: p.working() for u, p in params.items()}
    o = ScanOptions()
    h = build_hop(HopSpec(cofs[0], cofs[1], 11.0, 11.0), pots, o, {cofs[0].uid: 0.5})
    # Marcus cross relation λ = (λ_D + λ_A)/2 (common practice): (0.5 + 0.7)/2
    assert h.reorg == pytest.approx(0.6)
    assert h.log10_k_forward == pytest.approx(log10_hop_rate(11.0, h.dg, 0.6, 0.76))
    # another law passed through the seam
    flat = build_hop(HopSpec(cofs[0], cofs[1], 11.0, 11.0), pots, o, law=lambda r, dg, **kw: 3.0 + 0 * r)
    assert flat.log10_k_forward == pytest.approx(3.0)
    # the slopes live beside the law: -(1.2 - 0.8 rho) per Å (Page et al. 1999)
    assert log10_rate_slopes(10.0, -0.35, 0.7, 0.76)[0] == pytest.approx(-0.592)


def metal(chain, num, x, element, category, cls, code, y=0.0):
    a = AtomRef(chain, num, "", code, element, element, (x, y, 0.0))
    return Cofactor(model=1, chain=chain, seqnum=num, icode="", ccd_code=code, category=category, cls=cls,
                    composition=element, residues=(f"{chain}/{num} {code}",), atoms=(a,), redox_atoms=(a,),
                    centroid=(x, y, 0.0), mean_occupancy=1.0, mean_b=20.0, detected_by="geometry")


def test_oxidase_runs_cua_to_heme_a3():
    # heme-copper oxidase: cytochrome c -> CuA -> heme a -> heme a3-CuB (Moser et al. 2006 BBA 1757:1096);
    # heme a3 is the heme a whose Fe sits about 4.5-5 Å from CuB (common practice, no source)
    from fescan.transfer.context import context_subclasses

    cofs = [metal("B", 1, 0.0, "CU", "copper", "CuA", "CUA"), metal("A", 2, 12.0, "FE", "heme", "heme a", "HEA"),
            metal("A", 3, 24.0, "FE", "heme", "heme a", "HEA"), metal("A", 4, 28.5, "CU", "copper", "Cu", "CU")]
    ctx = context_subclasses(cofs)
    assert ctx[cofs[2].uid][0] == "heme a3" and ctx[cofs[3].uid][0] == "CuB"
    params = assign_parameters(cofs, context=ctx)
    o = ScanOptions()
    g = build_cofactor_graph(cofs, pair_distances(cofs, o.cutoff), {u: p.working() for u, p in params.items()}, o)
    for u, p in params.items():
        g.nodes[u]["parameters"] = p
    entry, exit_, how = choose_endpoints(g, cofs, o)
    assert (entry, exit_) == (cofs[0].uid, cofs[2].uid) and "CuA" in how
    # heme a3 default +0.35 V sits above heme a +0.28 V (Moser et al. 2006, from memory)
    assert params[cofs[2].uid].working().e_v > params[cofs[1].uid].working().e_v


def test_hipip_subclass_from_detection_changes_the_couple():
    # Stephens et al. 1996 (from memory): HiPIP 3+/2+ about +0.35 V, not the ferredoxin 2+/1+ couple
    hipip = replace(point("A", 1, 0.0), subclass="HiPIP-type")
    fd = replace(point("A", 2, 9.0), subclass="ferredoxin-type")
    p = assign_parameters([hipip, fd])
    assert p[hipip.uid].working().couple == "[4Fe-4S] 3+/2+" and p[hipip.uid].working().e_v > 0.2
    assert p[fd.uid].working().couple == "[4Fe-4S] 2+/1+" and p[fd.uid].working().e_v < -0.3
    assert "HiPIP-type" in p[hipip.uid].working().basis
