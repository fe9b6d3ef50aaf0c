"""Several cofactors named by one residue get distinct ids (rewritten real entry 1FDN, SOURCES.md)."""

from __future__ import annotations

import gemmi

import fescan
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared


def test_two_clusters_in_one_unl_residue(tmp_path):
    # a hand-built model may put every ligand atom in one UNL residue
    st = gemmi.read_structure(str(entry_path("1FDN")))
    ch = st[0]["A"]
    idx = [i for i, r in enumerate(ch) if r.name == "SF4"]
    first = ch[idx[0]]
    for a in ch[idx[1]]:
        first.add_atom(a)
    first.name = "UNL"
    del ch[idx[1]]
    st.write_pdb(str(tmp_path / "one_unl.pdb"))
    r = fescan.scan(tmp_path / "one_unl.pdb")
    assert [c.key for c in r.cofactors] == ["A/56#1", "A/56#2"]
    assert {c.cls for c in r.cofactors} == {"[4Fe-4S]"} and len({c.uid for c in r.cofactors}) == 2
    assert len(r.wire.path) == 2  # the two clusters still form the wire
    r2 = fescan.scan(tmp_path / "one_unl.pdb", entry="A/56#2")
    assert r2.cofactor(r2.wire.entry).key == "A/56#2"


def test_alternative_conformations_kept_apart(tmp_path):
    # altloc="all" keeps both conformations of a cluster: two cofactors, not one Fe8S8
    st = gemmi.read_structure(str(entry_path("1FDN")))
    for res in st[0]["A"]:
        if res.name == "SF4" and res.seqid.num == 56:
            copies = [a.clone() for a in res]
            for a in res:
                a.altloc, a.occ = "A", 0.6
            for a in copies:
                a.altloc, a.occ = "B", 0.4
                a.pos = gemmi.Position(a.pos.x + 0.3, a.pos.y, a.pos.z)
                res.add_atom(a)
    st.write_pdb(str(tmp_path / "alt.pdb"))
    keep_all = fescan.scan(tmp_path / "alt.pdb", altloc="all")
    assert [(c.key, c.cls, len(c.atoms)) for c in keep_all.cofactors] == [
        ("A/56#A", "[4Fe-4S]", 8), ("A/56#B", "[4Fe-4S]", 8), ("A/57", "[4Fe-4S]", 8)]
    best = fescan.scan(tmp_path / "alt.pdb")  # highest occupancy: conformation A only
    assert [c.key for c in best.cofactors] == ["A/56", "A/57"]
