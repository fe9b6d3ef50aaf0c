"""Mononuclear metal sites built in code (tests/synth_cofactors.py): active sites, structural ions.

Sources, beside each check:
* the Mn superoxide dismutase site: Mn bound by three His and one Asp (plus a solvent molecule),
  Borgstahl et al. 1992 Cell 71:107; Fe-SOD has the same ligand set (from memory);
* the 2-His-1-carboxylate facial triad of mononuclear O2-activating sites: Hegg & Que 1997
  Eur J Biochem 250:625;
* the Mg/Mn site of cytochrome c oxidase has no redox role: Svensson-Ek et al. 2002 J Mol Biol 321:329;
* structural zinc sites are bound by four Cys (Vallee & Auld 1990 Biochemistry 29:5647, from memory);
  Zn(II), Ca(II) and Mg(II) have one oxidation state in proteins (common practice, no source);
* metal-ligand distances of the builders: Harding 2006 Acta Cryst D62:678 (values from memory).
"""

from __future__ import annotations

import gemmi
import numpy as np
import pytest

from fescan.analysis.scan import scan
from fescan.report.text import render_text
from tests import synth_cofactors as sc
from tests.synth import _atom, _residue, four_fe_cluster


def _scan(st, tmp_path, name="m.pdb", **kw):
    p = tmp_path / name
    st.write_pdb(str(p))
    return scan(p, **kw)


def _one(st, tmp_path):
    (c,) = _scan(st, tmp_path).cofactors
    return c


# -- mononuclear redox metals -------------------------------------------------------
def test_mn_sod_site_is_catalytic(tmp_path):
    # Borgstahl et al. 1992 Cell 71:107: Mn bound by His26, His74, His163 and Asp159 (+ solvent)
    c = _one(sc.mononuclear_site("MN", sc.SOD_SET), tmp_path)
    assert (c.role, c.subclass) == ("catalytic", "SOD-type")
    assert "3 His and 1 Asp" in c.role_reason and "Borgstahl et al. 1992 Cell 71:107" in c.role_reason


def test_fe_sod_site_is_catalytic(tmp_path):
    # Fe-SOD binds Fe with the same 3 His + 1 Asp set as Mn-SOD (from memory)
    c = _one(sc.mononuclear_site("FE", sc.SOD_SET), tmp_path)
    assert c.cls == "mononuclear Fe" and (c.role, c.subclass) == ("catalytic", "SOD-type")


def test_mn_with_a_facial_triad_is_catalytic(tmp_path):
    # Hegg & Que 1997 Eur J Biochem 250:625: two His and one Asp/Glu on one face of the metal
    triad = [("HIS", "NE2", "N", 2.2), ("HIS", "NE2", "N", 2.2), ("GLU", "OE1", "O", 2.1), ("HOH", "O", "O", 2.2)]
    c = _one(sc.mononuclear_site("MN", triad), tmp_path)
    assert (c.role, c.subclass) == ("catalytic", "2-His-1-carboxylate")


def test_mn_held_by_carboxylates_only_is_not_an_active_site(tmp_path):
    # Mn taking the place of Mg among Asp/Glu O (common practice, no source): no redox site assumed
    oxygens = [("ASP", "OD1", "O", 2.15), ("GLU", "OE1", "O", 2.15), ("ASP", "OD2", "O", 2.15), ("HOH", "O", "O", 2.2)]
    c = _one(sc.mononuclear_site("MN", oxygens), tmp_path)
    assert c.role == "structural" and "3 protein ligands" in c.role_reason


def test_oxidase_rule_comes_before_the_sod_rule(tmp_path):
    # a Mn with the SOD ligand set 10 Å from a heme a iron is still the oxidase Mg/Mn site
    # (Svensson-Ek et al. 2002 J Mol Biol 321:329): the oxidase rule is tried first
    st = sc.mononuclear_site("MN", sc.SOD_SET)
    st[0]["A"].add_residue(sc.porphyrin("HEA", 2, (0.0, 10.0, 5.0)))
    c = {x.key: x for x in _scan(st, tmp_path).cofactors}["A/501"]
    assert c.role == "structural" and "cytochrome c oxidase" in c.role_reason


# -- Zn, Ca, Mg: listed apart ------------------------------------------------------------
@pytest.mark.parametrize(("metal", "ligands", "role", "words"), [
    ("ZN", sc.ZN_CYS4, "structural", "Zn bound by 4 Cys: a structural zinc site, no redox role"),
    ("CA", sc.CA_SITE, "structural", "Ca bound by 2 Asp, 1 Glu and 1 backbone O (+2 water)"),
    ("MG", sc.MG_ONE_ASP, "ion or additive", "Mg bound by 1 Asp (+3 water): fewer than two protein residues"),
])
def test_zn_ca_mg_are_listed_apart_with_their_ligands(tmp_path, metal, ligands, role, words):
    res = _scan(sc.mononuclear_site(metal, ligands), tmp_path)
    (c,) = res.cofactors
    assert c.is_ion_site and c.ccd_code == metal and c.role == role
    assert words in c.role_reason
    assert c.uid not in res.graph and [o["id"] for o in res.off_wire] == [c.uid]


def test_zinc_site_stays_off_a_cluster_wire_and_apart_in_the_text(tmp_path):
    # two [4Fe-4S] 10 Å apart (a relay pair) and a Zn(Cys)4 10 Å beside them: the wire is the two clusters
    st = four_fe_cluster()
    ch = st[0]["A"]
    for r in four_fe_cluster(centre=(20.0, 10.0, 10.0), numbers=(40, 43, 46, 50), cluster_num=102)[0]["A"]:
        ch.add_residue(r)
    for r in sc.mononuclear_site("ZN", sc.ZN_CYS4)[0]["A"]:
        moved = r.clone()
        for a in moved:
            a.pos = gemmi.Position(a.pos.x + 15.0, a.pos.y + 20.0, a.pos.z + 10.0)
        moved.seqid = gemmi.SeqId(r.seqid.num + 200, " ")
        ch.add_residue(moved)
    res = _scan(st, tmp_path)
    zn = next(c for c in res.cofactors if c.is_ion_site)
    assert zn.role == "structural" and len(res.cofactors) == 3
    assert zn.uid not in res.graph and zn.uid not in res.wire.path
    assert len(res.wire.path) == 2
    text = render_text(res)
    assert "Cofactors (2)" in text  # the redox cofactors only
    assert "Zn sites, listed apart: no redox role, never on a wire (1)" in text


def test_magnesium_of_an_organic_group_seeds_no_ion(tmp_path):
    # a porphyrin-like group holding Mg under an unknown code (a chlorophyll-like group): its Mg is part
    # of the group, not an ion (common practice, no source), and no cofactor is made of it
    por = sc.porphyrin("UNL", 1, (0.0, 0.0, 0.0))
    mg = por[0]
    mg.element = gemmi.Element("Mg")
    mg.name = "MG"
    assert _scan(sc._structure([por]), tmp_path).cofactors == []


def test_calcium_joined_to_manganese_stays_in_the_cluster(tmp_path):
    # four Mn and one Ca 2.7-3.4 Å apart, in one residue named UNL: one Mn4Ca site, the Ca no ion of its own
    # (Mn...Mn 2.7-3.3 Å and Mn...Ca about 3.4 Å in the Mn4CaO5 cluster; Ferreira et al. 2004 Science 303:1831)
    pts = {"MN1": (0.0, 0.0, 0.0), "MN2": (2.8, 0.0, 0.0), "MN3": (1.4, 2.4, 0.0), "MN4": (5.6, 0.5, 0.0),
           "CA1": (1.4, 0.8, 2.8)}
    r = _residue("UNL", 1, het=True)
    for name, xyz in pts.items():
        r.add_atom(_atom(name, name[:2].capitalize(), np.asarray(xyz)))
    (c,) = _scan(sc._structure([r]), tmp_path).cofactors
    assert c.composition == "Mn4Ca" and c.subclass == "Mn4CaO5" and c.role == "catalytic"
