"""Ligation and geometry checks on idealised synthetic clusters (built in tests/synth.py)."""

from __future__ import annotations

import pytest

from fescan.cofactors import find_cofactors
from tests import synth


def _one(st):
    cofs = find_cofactors(st[0])
    assert len(cofs) == 1, [c.label for c in cofs]
    return cofs[0]


def _codes(c):
    return {f.code for f in c.flags}


def test_ideal_cube_is_clean_and_typed():
    # Ideal geometry from REFERENCES.md s2 values: no warning expected.
    c = _one(synth.four_fe_cluster())
    assert c.cls == "[4Fe-4S]" and c.category == "iron-sulfur"
    assert c.ccd_code == "SF4" and c.detected_by == "ccd+geometry"
    assert [f for f in c.flags if f.severity == "warning"] == []
    assert sorted(lig.kind for lig in c.ligands) == ["Cys S"] * 4
    assert c.motif == "C-x2-C-x2-C-x3-C"
    assert c.extra["coordination"] == {"FE1": 4, "FE2": 4, "FE3": 4, "FE4": 4}


def test_missing_ligand_flagged():
    # Each cluster Fe is four-coordinate (common practice, no source); Cys 3 -> Ala.
    c = _one(synth.four_fe_cluster(drop_ligand=2))
    assert "missing_ligand" in _codes(c)
    assert any("FE3" in f.message for f in c.flags if f.code == "missing_ligand")


@pytest.mark.parametrize("distance,code", [(2.8, "stretched_bond"), (2.05, "compressed_bond")])
def test_bad_bond_length_flagged(distance, code):
    # cctbx [4Fe-4S] Fe-SG 2.268 +/- 3 x 0.034 A window (REFERENCES.md s2).
    c = _one(synth.four_fe_cluster(stretch=(1, distance)))
    assert code in _codes(c)
    assert any("FE2" in f.message for f in c.flags if f.code == code)


def test_incomplete_cluster_flagged():
    st = synth.four_fe_cluster()
    res = st[0]["A"][4]
    assert res.name == "SF4"
    del res[7]  # drop S4
    c = _one(st)
    assert c.cls == "[4Fe-4S]" and "incomplete_cluster" in _codes(c)
    assert c.detected_by == "ccd"


def test_clash_flagged():
    import gemmi

    st = synth.four_fe_cluster()
    ch = st[0]["A"]
    r = gemmi.Residue()
    r.name = "HOH"
    r.seqid = gemmi.SeqId(300, " ")
    a = gemmi.Atom()
    a.name, a.element = "O", gemmi.Element("O")
    fe = ch[4][0].pos
    a.pos = gemmi.Position(fe.x + 0.8, fe.y + 0.9, fe.z - 0.9)  # 1.5 A from FE1, not along a bond
    r.add_atom(a)
    ch.add_residue(r)
    c = _one(st)
    codes = _codes(c)
    assert "extra_ligand" in codes or "clash" in codes


@pytest.mark.parametrize("kw", [{"code": "UNL"}, {"split": True}, {"code": "XYZ"}])
def test_geometry_only_detection(kw):
    c = _one(synth.four_fe_cluster(**kw))
    assert c.cls == "[4Fe-4S]" and c.ccd_code is None and c.detected_by == "geometry"
    assert len(c.redox_atoms) == 8 and len(c.ligands) == 4
