"""Electron wires of real deposited entries (shared/structures) against the literature.

Sources: REFERENCES.md s4a (Sazanov & Hinchliffe 2006 abstract: chain "maximally 14 Å apart",
"84-Å-long", N1a and N7 "not in this pathway"; Hayashi & Stuchebrukhov 2011: ~90 Å along FMN
and N3, N1b, N4, N5, N6a, N6b, N2; Kaila: N5 -> N6a bottleneck) and SOURCES.md (2FUG and
1YQ9 cluster inventory and relay order). Chain positions, not EPR names, are used (REFERENCES.md
naming pitfall).
"""

from __future__ import annotations

import json

import gemmi
import numpy as np
import pytest

import fescan
from fescan.core.errors import CofactorNotFound
from tests import rewrite
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared

# 2FUG chain positions (SOURCES.md): FMN, N3, N1b, N4, N5, N6a, N6b, N2
MAIN_CHAIN_2FUG = ["7/500", "1/439", "3/787", "3/785", "3/784", "9/184", "9/183", "6/182"]


@pytest.fixture(scope="module")
def fug():
    return fescan.scan(entry_path("2FUG"))


def keys(res, uids):
    return [res.cofactor(u).key for u in uids]


def test_2fug_path_order(fug):
    # Hayashi & Stuchebrukhov 2011 (REFERENCES.md s4a): FMN then N3, N1b, N4, N5, N6a, N6b, N2
    assert keys(fug, fug.wire.path) == MAIN_CHAIN_2FUG


def test_2fug_hops_under_14(fug):
    # Sazanov & Hinchliffe 2006: "maximally 14 angstroms apart" (+0.5 Å for the edge definition, REFERENCES.md)
    assert all(h.edge <= 14.5 for h in fug.wire.hops)
    assert not [h for h in fug.wire.gaps if h.gap]


def test_2fug_longest_hop_is_n5_n6a(fug):
    # REFERENCES.md s4a assertion 2: N5-N6a is the longest main-chain hop (Kaila: N5 -> N6a bottleneck)
    longest = max(fug.wire.hops, key=lambda h: h.edge)
    assert keys(fug, [longest.donor, longest.acceptor]) == ["3/784", "9/184"]


def test_2fug_off_path_clusters(fug):
    # Sazanov & Hinchliffe 2006: N1a (2/182) and N7 (3/786) are not in the pathway
    on = set(keys(fug, fug.wire.path))
    assert "2/182" not in on and "3/786" not in on
    # N7 sits ca. 20 Å from the main pathway (Kaila, REFERENCES.md): no partner inside 14 Å
    assert "3/786" in keys(fug, fug.wire.isolated)
    # N1a is within electron-transfer distance of the FMN (abstract): a side branch at the flavin
    assert {"cofactor": "2/182", "attached_to": "7/500"} == {
        k: fug.cofactor(v).key for b in fug.wire.branches for k, v in b.items() if k != "edge_distance"
        if fug.cofactor(b["cofactor"]).key == "2/182"}


def test_2fug_chain_length(fug):
    # "84-Å-long" / "approximately 90 Å" / "ca. 100 Å" (REFERENCES.md s4a assertion 5): 84-100 Å
    span = sum(h.centre for h in fug.wire.hops)
    assert 84.0 <= span <= 100.0


def test_2fug_both_times_reported(fug):
    w = fug.wire
    assert w.summed_hop_time > 0 and w.mean_first_passage_time > 0
    d = fug.to_dict()
    json.dumps(d, allow_nan=False)  # JSON-ready, no NaN/inf
    assert d["wire"]["summed_hop_time_s"] == pytest.approx(w.summed_hop_time)
    assert len(d["pairs"]) == len(fug.pairs) and {"edge_distance", "centre_distance", "dg_ev", "k_forward",
                                                    "k_back"} <= set(d["pairs"][0])
    assert "not measurements" in d["caution"]


def test_1kf6_quinol_to_flavin_and_reverse():
    # E. coli quinol:fumarate reductase (SOURCES.md 1KF6): no heme, so type D of the SDH/QFR family
    # (Lemos et al. 2002 Biochim Biophys Acta 1553:158, from memory); physiology menaquinol -> [3Fe-4S]
    # -> [4Fe-4S] -> [2Fe-2S] -> FAD -> fumarate (REFERENCES.md s4b order, from memory). Every hop < 14 Å
    # (REFERENCES.md s4b: assert only "all hops < 14 Å").
    r = fescan.scan(entry_path("1KF6"))
    assert keys(r, r.wire.path) == ["B/245", "B/246", "B/244", "A/721"]
    assert "fumarate reductase" in r.wire.how_chosen and "--reverse" in r.wire.how_chosen
    assert all(h.edge < 14.0 for h in r.wire.hops)
    back = fescan.scan(entry_path("1KF6"), reverse=True)
    assert [back.cofactor(u).cls for u in back.wire.path] == ["FAD", "[2Fe-2S]", "[4Fe-4S]", "[3Fe-4S]"]
    assert "reversed on request" in back.wire.how_chosen
    # between fumarate/succinate (+0.031 V) and the menaquinone pool (-0.074 V) (Thauer, Jungermann & Decker
    # 1977 Bacteriol Rev 41:100, from memory) the net flux of the reversed wire runs backwards
    assert back.wire.steady_state["flux_per_s"] < 0 < r.wire.steady_state["flux_per_s"]
    assert any("physiological direction is the reverse" in n for n in back.wire.notes)


def test_1yq9_relay_from_active_site():
    # SOURCES.md: Ni -10.65-> proximal SF4 A/267 -9.62-> medial F3S A/266 -7.53-> distal SF4 A/265
    r = fescan.scan(entry_path("1YQ9"), entry="H/538", exit="A/265")
    assert keys(r, r.wire.path) == ["H/538", "A/267", "A/266", "A/265"]
    assert [h.edge for h in r.wire.hops] == pytest.approx([10.65, 9.62, 7.53], abs=0.01)


def test_moved_cluster_opens_a_gap(tmp_path):
    # A rewritten 2FUG with N6a (SF4 9/184) moved 10 Å away from its neighbours
    st = gemmi.read_structure(str(entry_path("2FUG")))
    fug = fescan.scan(entry_path("2FUG"))
    cen = {fug.cofactor(u).key: np.array(fug.cofactor(u).centroid) for u in fug.wire.path}
    away = cen["9/184"] - (cen["3/784"] + cen["9/183"]) / 2
    shift = tuple(10.0 * away / np.linalg.norm(away))
    rewrite.move_residue(st, "9", 184, shift)
    moved = fescan.scan(rewrite.write(st, tmp_path / "moved.pdb"))
    w = moved.wire
    assert keys(moved, w.path)[0] == "7/500" and keys(moved, w.path)[-1] == "6/182"
    assert w.gaps, "a hop over 14 Å or below the rate threshold must be flagged"
    assert w.bottleneck.edge > 14.0
    assert w.summed_hop_time > 100 * fug.wire.summed_hop_time


def test_symmetry_mates_1be3():
    # SOURCES.md: the Rieske head docks onto the symmetry-related monomer; FES-HEC(c1) 51.1 Å in the
    # asymmetric unit but 6.55 Å (heavy atoms) to the nearest image
    plain = fescan.scan(entry_path("1BE3"))
    sym = fescan.scan(entry_path("1BE3"), symmetry=True)
    pair = lambda r: [p for p in r.pair_records() if {r.cofactor(p["first"]).key, r.cofactor(p["second"]).key} == {"D/3", "E/4"}]  # noqa: E731
    assert pair(plain) == []
    (p,) = pair(sym)
    assert p["symmetry"] and 6.55 <= p["edge_distance"] < 14.0
    assert sym.to_dict()["symmetry_mates"].startswith("included")


def test_bad_selector():
    with pytest.raises(CofactorNotFound, match="no cofactor at A/999"):
        fescan.scan(entry_path("1FDN"), entry="A/999")


def test_user_potentials_change_dg(tmp_path):
    # ΔG = -(E_acc - E_don) for one electron (REFERENCES.md s5)
    toml = tmp_path / "p.toml"
    toml.write_text('[cofactor."A/56"]\npotential = -0.50\n[cofactor."A/57"]\npotential = -0.30\n')
    r = fescan.scan(entry_path("1FDN"), entry="A/56", exit="A/57", potentials_file=str(toml))
    (h,) = r.wire.hops
    assert h.dg == pytest.approx(-0.20)
    assert all("user file" in r.potentials[u].origin for u in r.wire.path)


def test_symmetry_mates_found_wherever_the_model_sits(tmp_path):
    # the same crystal, model translated by two cell edges: the mate pair must still be found
    st = gemmi.read_structure(str(entry_path("1BE3")))
    shift = (2 * st.cell.a, 0.0, 0.0)
    for m in st:
        for ch in m:
            for res in ch:
                for a in res:
                    a.pos = gemmi.Position(a.pos.x + shift[0], a.pos.y, a.pos.z)
    moved = fescan.scan(rewrite.write(st, tmp_path / "shifted.pdb"), symmetry=True)
    base = fescan.scan(entry_path("1BE3"), symmetry=True)
    edges = lambda r: sorted(round(p.edge, 3) for p in r.pairs)  # noqa: E731
    assert edges(moved) == edges(base)
