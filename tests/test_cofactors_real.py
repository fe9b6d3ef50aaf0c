"""Cofactor detection on real deposited PDB entries (shared/structures, see SOURCES.md).

Expected cofactors per entry are the inventory of shared/structures/SOURCES.md
(parsed there with gemmi 0.7.5), with classes as the trade names them; the
literature facts used are cited beside each check.
"""

from __future__ import annotations

from collections import Counter

import pytest

from fescan.cofactors import find_cofactors
from fescan.structure.reading import read_structure
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared


def cofactors_of(pdb_id: str, **kw):
    loaded = read_structure(entry_path(pdb_id), **kw)
    return find_cofactors(loaded.model, model_number=loaded.model_number, resolution=loaded.info.resolution)


def by_key(cofs):
    return {c.key: c for c in cofs}


# (entry, {selector: class}) from SOURCES.md "Cofactor inventory (parsed)"
INVENTORY = [
    ("1FDN", {"A/56": "[4Fe-4S]", "A/57": "[4Fe-4S]"}),  # SOURCES.md: 2[4Fe-4S] ferredoxin
    ("7FD1", {"A/107": "[4Fe-4S]", "A/108": "[3Fe-4S]"}),  # SOURCES.md: 7-Fe ferredoxin
    ("6LK1", {"A/101": "[2Fe-2S]", "B/101": "[2Fe-2S]"}),  # SOURCES.md: plant-type ferredoxin (Cys4, not Rieske)
    ("5WQQ", {"A/101": "[4Fe-4S]"}),  # SOURCES.md: HiPIP
    ("2DSX", {"A/501": "Fe(Cys)4"}),  # SOURCES.md: rubredoxin Fe(Cys)4, no inorganic sulfide
    ("2NIP", {"A/290": "[4Fe-4S]"}),  # SOURCES.md: inter-subunit [4Fe-4S]
    ("1KF6", {"A/721": "FAD", "B/244": "[2Fe-2S]", "B/245": "[3Fe-4S]", "B/246": "[4Fe-4S]",
              "M/821": "FAD", "N/244": "[2Fe-2S]", "N/245": "[3Fe-4S]", "N/246": "[4Fe-4S]"}),
    ("1BE3", {"C/1": "heme b", "C/2": "heme b", "D/3": "heme c", "E/4": "Rieske [2Fe-2S]"}),
    ("1CLF", {"A/56": "[4Fe-4S]", "A/57": "[4Fe-4S]"}),
    # 4CRM: MG P/1613 is the Mg of ATP P/1609 (the entry's struct_conn metalc3/metalc4), listed apart as an ion
    ("4CRM", {"P/1610": "[4Fe-4S]", "P/1611": "[4Fe-4S]", "P/1613": "Mg"}),
    ("3EK3", {"A/200": "FMN"}),  # SOURCES.md: flavin-only case (UNL A is no flavin)
    ("2FUG", {"7/500": "FMN", "1/439": "[4Fe-4S]", "2/182": "[2Fe-2S]", "3/787": "[2Fe-2S]",
              "3/784": "[4Fe-4S]", "3/785": "[4Fe-4S]", "3/786": "[4Fe-4S]", "9/183": "[4Fe-4S]",
              "9/184": "[4Fe-4S]", "6/182": "[4Fe-4S]"}),
    # 1YQ9: SOURCES.md "Other HET: MG H/540", listed apart as a structural Mg
    ("1YQ9", {"A/265": "[4Fe-4S]", "A/266": "[3Fe-4S]", "A/267": "[4Fe-4S]", "H/538": "NiFe", "H/540": "Mg"}),
]


@pytest.mark.parametrize("pdb_id,expected", INVENTORY, ids=[e[0] for e in INVENTORY])
def test_inventory(pdb_id, expected):
    found = {c.key: c.cls for c in cofactors_of(pdb_id)}
    assert found == expected


def test_1kf6_hqno_is_not_a_quinone():
    # SOURCES.md: HQO = 2-heptyl-4-hydroxyquinoline N-oxide, a quinone-site inhibitor, not a quinone
    assert not any(c.category == "quinone" for c in cofactors_of("1KF6"))


def test_2axt_photosystem_ii():
    # SOURCES.md inventory of 2AXT (PSII dimer, case-sensitive chains)
    cofs = cofactors_of("2AXT")
    cnt = Counter(c.cls for c in cofs)
    assert cnt["plastoquinone"] == 4  # PQ9 A/564, D/356, a/5564, d/5356
    assert cnt["mononuclear Fe"] == 2  # non-heme Fe A/557, a/5557
    assert Counter(c.category for c in cofs)["heme"] == 4  # HEM F/51, V/552, f/5051, v/5552
    assert cnt["Mn4Ca"] == 2  # OEC A/565, a/5565 [Ca Mn4]
    keys = {c.key for c in cofs}
    assert {"A/557", "a/5557", "A/564", "a/5564"} <= keys
    fe2 = by_key(cofs)["A/557"]
    # non-heme Fe of PSII: His ligands from D1 and D2 (common practice, no source)
    assert Counter(lig.kind for lig in fe2.ligands)["His N"] >= 4


def test_19hc_nine_heme_c_per_chain():
    # SOURCES.md: 18 c-type (thioether-linked) hemes filed under the legacy name HEM
    cofs = cofactors_of("19HC")
    assert len(cofs) == 18 and {c.cls for c in cofs} == {"heme c"}
    assert all(c.extra["thioether_links"] == 2 for c in cofs)


def test_1dwl_models_differ():
    # SOURCES.md: model 1 has no cofactor records; models 2-3 have SF4 A/60 and HEC B/80
    assert cofactors_of("1DWL", model=1) == []
    m2 = {c.key: c.cls for c in cofactors_of("1DWL", model=2)}
    assert m2 == {"A/60": "[4Fe-4S]", "B/80": "heme c"}


def test_rieske_ligands_1be3():
    # Rieske [2Fe-2S]: one Fe bound by two His (Brown et al. 2008 via REFERENCES.md s3; common practice)
    c = by_key(cofactors_of("1BE3"))["E/4"]
    kinds = Counter((lig.metal, lig.kind) for lig in c.ligands)
    assert sorted(kinds.values()) == [2, 2]
    assert {k for _, k in kinds} == {"Cys S", "His N"}


def test_2fug_ligands_and_motifs():
    # Ligands per SOURCES.md (2FUG LINK records) and REFERENCES.md s4a (4HEA preparation script)
    cofs = by_key(cofactors_of("2FUG"))
    n5 = cofs["3/784"]
    assert sorted((lig.atom.resname, lig.atom.seqnum) for lig in n5.ligands) == [
        ("CYS", 119), ("CYS", 122), ("CYS", 128), ("HIS", 115)]
    # REFERENCES.md s4a (Sazanov & Hinchliffe 2006): N2 is ligated by two consecutive cysteines
    n2 = cofs["6/182"]
    assert sorted(lig.atom.seqnum for lig in n2.ligands) == [45, 46, 111, 140]
    assert n2.motif.startswith("CC-")
    # every Fe-S(Cys)/N(His) between 2.12 and 2.37 A (SOURCES.md)
    for c in cofs.values():
        for lig in c.ligands:
            if c.category == "iron-sulfur":
                assert 2.10 <= lig.distance <= 2.38


def test_2nip_inter_subunit_ligands():
    # SOURCES.md: SF4 A/290 ligated by Cys97/Cys132 of both chains A and B
    c = by_key(cofactors_of("2NIP"))["A/290"]
    assert sorted((lig.atom.chain, lig.atom.seqnum) for lig in c.ligands) == [
        ("A", 97), ("A", 132), ("B", 97), ("B", 132)]


def test_1yq9_distal_cluster_his_ligand():
    # SOURCES.md: distal SF4 A/265 has His185 ND1 + Cys188/213/219; Ni bound by Cys65/68/530/533
    cofs = by_key(cofactors_of("1YQ9"))
    d = cofs["A/265"]
    assert sorted((lig.atom.resname, lig.atom.seqnum, lig.atom.name) for lig in d.ligands) == [
        ("CYS", 188, "SG"), ("CYS", 213, "SG"), ("CYS", 219, "SG"), ("HIS", 185, "ND1")]
    ni = cofs["H/538"]
    ni_cys = sorted({lig.atom.seqnum for lig in ni.ligands if lig.kind == "Cys S"})
    assert ni_cys == [65, 68, 530, 533]


def test_redox_atom_sets():
    # documented sets: cluster core; isoalloxazine (14 ring atoms + 2 carbonyl O); porphyrin 24 + Fe
    f = by_key(cofactors_of("3EK3"))["A/200"]
    assert len(f.redox_atoms) == 16
    assert {a.name for a in f.redox_atoms} >= {"N1", "N3", "N5", "N10", "O2", "O4", "C7", "C8"}
    h = by_key(cofactors_of("1BE3"))["C/1"]
    assert len(h.redox_atoms) == 25 and {"FE", "NA", "NB", "NC", "ND", "CHA"} <= {a.name for a in h.redox_atoms}
    q = by_key(cofactors_of("2AXT"))["A/564"]
    # plastoquinone ring: 6 ring C + 2 carbonyl O
    assert len(q.redox_atoms) == 8 and sum(a.element == "O" for a in q.redox_atoms) == 2


def test_mean_fe_s_cys_within_cited_ranges():
    # cctbx restraint means (REFERENCES.md s2): [4Fe-4S] 2.268 (sd 0.034), [2Fe-2S] 2.305 (sd 0.044);
    # the mean over deposited clusters must fall inside ideal +/- 3 sd.
    d4, d2 = [], []
    for pdb in ("1FDN", "7FD1", "5WQQ", "2FUG", "1YQ9", "6LK1", "1KF6"):
        for c in cofactors_of(pdb):
            for lig in c.ligands:
                if lig.kind != "Cys S":
                    continue
                if c.cls == "[4Fe-4S]":
                    d4.append(lig.distance)
                elif c.cls == "[2Fe-2S]":
                    d2.append(lig.distance)
    m4, m2 = sum(d4) / len(d4), sum(d2) / len(d2)
    assert 2.268 - 3 * 0.034 <= m4 <= 2.268 + 3 * 0.034, m4
    assert 2.305 - 3 * 0.044 <= m2 <= 2.305 + 3 * 0.044, m2
