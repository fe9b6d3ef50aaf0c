"""Silence is an error: cofactors named in the header but absent from the coordinates.

Sources: the PDB format's HET/FORMUL records and the mmCIF _pdbx_nonpoly_scheme
category (wwPDB format documentation, common practice, no source) and 1DWL
(SOURCES.md: model 1 holds chain A only, models 2 and 3 the SF4 and HEC).
"""

from __future__ import annotations

from fescan.analysis.scan import scan
from fescan.cofactors.header_check import header_counts
from tests.datafiles import entry_path, requires_shared
from tests.synth import four_fe_cluster

_SCHEME = """
loop_
_pdbx_nonpoly_scheme.asym_id
_pdbx_nonpoly_scheme.entity_id
_pdbx_nonpoly_scheme.mon_id
_pdbx_nonpoly_scheme.ndb_seq_num
_pdbx_nonpoly_scheme.pdb_seq_num
_pdbx_nonpoly_scheme.auth_seq_num
_pdbx_nonpoly_scheme.pdb_mon_id
_pdbx_nonpoly_scheme.auth_mon_id
_pdbx_nonpoly_scheme.pdb_strand_id
_pdbx_nonpoly_scheme.pdb_ins_code
B 2 SF4 1 101 101 SF4 SF4 A .
C 2 SF4 1 102 102 SF4 SF4 A .
"""


def test_pdb_header_lists_clusters_the_coordinates_lack(tmp_path):
    st = four_fe_cluster()
    st[0]["A"].__delitem__(len(st[0]["A"]) - 1)  # drop the cluster, keep the four Cys
    body = st.make_pdb_string()
    head = ("HET    SF4  A 101       8\nHET    SF4  A 102       8\nHETNAM     SF4 IRON/SULFUR CLUSTER\n"
            "FORMUL   2  SF4    2(FE4 S4)\n")
    p = tmp_path / "lost.pdb"
    p.write_text(head + body, encoding="utf-8")
    assert header_counts(p)["SF4"] == 2
    res = scan(p)
    assert res.cofactors == []
    assert "the header lists SF4 ×2; the coordinates hold none" in res.notes


def test_mmcif_scheme_lists_clusters_the_coordinates_lack(tmp_path):
    text = four_fe_cluster().make_mmcif_document().as_string()
    kept = [ln for ln in text.splitlines() if not (ln.startswith("HETATM") and " SF4 " in ln)]
    p = tmp_path / "lost.cif"
    p.write_text("\n".join(kept) + "\n" + _SCHEME, encoding="utf-8")
    res = scan(p)
    assert res.cofactors == []
    assert "the header lists SF4 ×2; the coordinates hold none" in res.notes


def test_complete_file_has_no_note(tmp_path):
    p = tmp_path / "ok.pdb"
    st = four_fe_cluster()
    p.write_text(st.make_pdb_string(), encoding="utf-8")  # gemmi writes the HET record of the cluster
    assert header_counts(p)["SF4"] == 1
    assert scan(p).notes == []


@requires_shared
def test_1dwl_model_1_says_which_models_hold_cofactors():
    res = scan(entry_path("1DWL"))
    assert res.cofactors == []
    assert any("models 2, 3" in n and "SF4" in n and "HEC" in n for n in res.notes)
    assert scan(entry_path("1DWL"), model=2).notes == []
