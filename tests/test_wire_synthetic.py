"""Wire logic on synthetic cofactor sets: endpoints, gaps, branches, isolated, both times.

Closed forms (common practice, no source): for an irreversible chain the summed hop time is
Σ 1/k; for a two-site wire with the exit absorbing the mean first-passage time is 1/k_f.
"""

from __future__ import annotations

import math

import pytest

from fescan.core.options import ScanOptions
from fescan.core.records import AtomRef, Cofactor
from fescan.transfer.distances import pair_distances
from fescan.transfer.graph import build_cofactor_graph
from fescan.transfer.paths import choose_endpoints, parse_selector, trace_wire
from fescan.transfer.potentials import Potential
from fescan.transfer.rate_law import log10_hop_rate


def point(chain: str, num: int, x: float, y: float = 0.0, category: str = "iron-sulfur", cls: str = "[4Fe-4S]"):
    a = AtomRef(chain, num, "", "SF4", "FE1", "FE", (x, y, 0.0))
    return Cofactor(model=1, chain=chain, seqnum=num, icode="", ccd_code="SF4", category=category, cls=cls,
                    composition="Fe", residues=(f"{chain}/{num} SF4",), atoms=(a,), redox_atoms=(a,),
                    centroid=(x, y, 0.0), mean_occupancy=1.0, mean_b=20.0, detected_by="geometry")


def run(cofs, potentials=None, **opt):
    o = ScanOptions(**opt)
    pots = {c.uid: Potential(e_v=(potentials or {}).get(c.key, 0.0), low_v=-1, high_v=1, source="test",
                             origin="default") for c in cofs}
    g = build_cofactor_graph(cofs, pair_distances(cofs, o.cutoff), pots, o)
    return g, trace_wire(g, cofs, o)


def test_two_site_times_equal_inverse_rate():
    cofs = [point("A", 1, 0.0, category="flavin", cls="FMN"), point("A", 2, 10.0, category="quinone", cls="ubiquinone")]
    g, w = run(cofs, {"A/1": -0.2, "A/2": 0.0})
    k = 10 ** log10_hop_rate(10.0, -0.2, reorg=0.7, packing_density=0.76)
    assert w.how_chosen.startswith("chemistry: substrate-oxidising flavin as entry")
    assert w.summed_hop_time == pytest.approx(1 / k)
    assert w.mean_first_passage_time == pytest.approx(1 / k)


def test_gap_flagged_on_path_and_isolated():
    # 0 -- 10 Å -- 1 -- 18 Å -- 2 : the second hop is a relay gap (over 14 Å, Page et al. 1999)
    cofs = [point("A", 1, 0.0), point("A", 2, 10.0), point("A", 3, 28.0)]
    g, w = run(cofs)
    assert [g.nodes[u]["cofactor"].key for u in w.path] == ["A/1", "A/2", "A/3"]
    assert len(w.gaps) == 1 and w.gaps[0].edge == pytest.approx(18.0)
    assert w.bottleneck is w.gaps[0]
    assert [g.nodes[u]["cofactor"].key for u in w.isolated] == ["A/3"]


def test_side_branch_reported():
    cofs = [point("A", 1, 0.0), point("A", 2, 10.0), point("A", 3, 20.0), point("A", 4, 10.0, 9.0)]
    g, w = run(cofs, entry="A/1", exit="A/3")
    assert [g.nodes[b["cofactor"]]["cofactor"].key for b in w.branches] == ["A/4"]
    assert g.nodes[w.branches[0]["attached_to"]]["cofactor"].key == "A/2"


def test_mfpt_counts_back_hops_on_uphill_path():
    # with an uphill first hop the electron returns to the entry: MFPT > Σ 1/k (REFERENCES.md s1c note)
    cofs = [point("A", 1, 0.0), point("A", 2, 9.0), point("A", 3, 18.0)]
    g, w = run(cofs, {"A/1": 0.0, "A/2": -0.15, "A/3": 0.2}, entry="A/1", exit="A/3")
    assert w.mean_first_passage_time > w.summed_hop_time


def test_no_path_beyond_cutoff():
    cofs = [point("A", 1, 0.0), point("A", 2, 40.0)]
    g, w = run(cofs, entry="A/1", exit="A/2")
    assert w.path == [] and math.isinf(w.mean_first_passage_time)
    assert any("no chain of relay hops" in n for n in w.notes)


def test_longest_chain_default():
    cofs = [point("A", 1, 0.0), point("A", 2, 10.0), point("A", 3, 20.0), point("B", 1, 100.0)]
    g, _ = run(cofs)
    e, x, how = choose_endpoints(g, cofs, ScanOptions())
    assert {g.nodes[e]["cofactor"].key, g.nodes[x]["cofactor"].key} == {"A/1", "A/3"}
    assert "longest chain" in how


@pytest.mark.parametrize("text,expected", [("B/245", ("B", 245, "")), ("a/-5", ("a", -5, "")),
                                           (" 7/500A ", ("7", 500, "A"))])
def test_selectors(text, expected):
    assert parse_selector(text) == expected


@pytest.mark.parametrize("bad", ["B245", "B/", "/12", "B/12/3"])
def test_bad_selectors(bad):
    from fescan.core.errors import ConfigError

    with pytest.raises(ConfigError, match="selector"):
        parse_selector(bad)
