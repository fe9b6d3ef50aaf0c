"""Roles and sub-classes on real deposited entries (../shared/structures, see SOURCES.md there).

Each check names the entry and the source that says what it holds.
"""

from __future__ import annotations

import pytest

from fescan.analysis.scan import scan
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared


@pytest.fixture(scope="module")
def psii():
    return scan(entry_path("2AXT"))


def _by_key(res):
    return {c.key: c for c in res.cofactors}


def test_1yq9_nife_site_is_catalytic():
    # SOURCES.md: NI H/538 and FCO H/537 (Fe(CN)2CO) bridged by Cys68/Cys533; [NiFe] hydrogenase
    # active site (Volbeda et al. 1995 Nature 373:580); the three Fe-S clusters are the relay.
    res = scan(entry_path("1YQ9"))
    cofs = _by_key(res)
    nife = cofs["H/538"]
    assert nife.role == "catalytic" and nife.subclass == "NiFe"
    assert {"H/538 NI", "H/537 FCO"} <= set(nife.residues)
    for key in ("A/265", "A/266", "A/267"):
        assert cofs[key].role == "relay"


def test_2axt_non_heme_iron_is_structural_and_off_the_qa_qb_path(psii):
    # SOURCES.md: FE2 A/557 between PQ9 A/564 and D/356; the acceptor-side Fe of PSII does not carry the
    # electron from QA to QB (Ferreira et al. 2004 Science 303:1831).
    cofs = _by_key(psii)
    fe = cofs["A/557"]
    assert fe.role == "structural" and "quinone" in fe.role_reason
    assert fe.uid not in psii.graph
    assert any(o["id"] == fe.uid for o in psii.off_wire)
    qa, qb = cofs["D/356"], cofs["A/564"]
    wired = scan(entry_path("2AXT"), entry=qa.key, exit=qb.key)
    assert fe.uid not in wired.wire.path
    assert wired.wire.path[0] == qa.uid and wired.wire.path[-1] == qb.uid


def test_2axt_oxygen_evolving_cluster_is_catalytic(psii):
    # SOURCES.md: OEC A/565 [Ca Mn4]; the Mn4CaO5 cluster oxidises water (Ferreira et al. 2004)
    oec = _by_key(psii)["A/565"]
    assert oec.role == "catalytic" and oec.subclass == "Mn4CaO5"


def test_5wqq_is_a_hipip():
    # 5WQQ: Thermochromatium tepidum HiPIP (Ohno et al. 2017 PLoS ONE 12:e0178183; the entry's _citation),
    # couple [4Fe-4S] 3+/2+ near +0.35 V (from memory; Stephens, Jollie & Warshel 1996 Chem Rev 96:2491)
    (c,) = scan(entry_path("5WQQ")).cofactors
    assert c.subclass == "HiPIP-type" and c.role == "relay"


@pytest.mark.parametrize("pdb_id", ["1FDN", "7FD1", "1KF6", "2FUG"])
def test_ferredoxin_clusters_are_never_hipip(pdb_id):
    # 1FDN and 7FD1 are bacterial ferredoxins, 1KF6 fumarate reductase, 2FUG complex I (SOURCES.md):
    # their [4Fe-4S] clusters are 2+/1+ clusters, ferredoxin-type or undetermined, never HiPIP-type
    for c in scan(entry_path(pdb_id)).cofactors:
        if c.cls == "[4Fe-4S]":
            assert c.subclass in ("ferredoxin-type", "")
    if pdb_id == "1FDN":  # C-x2-C-x2-C-x3-C ferredoxin motifs (Duee et al. 1994 J Mol Biol 243:683, from memory)
        assert {c.subclass for c in scan(entry_path(pdb_id)).cofactors} == {"ferredoxin-type"}


def test_1be3_rieske_is_bc1_type_and_hemes_carry_their_ligation():
    # 1BE3: bovine cytochrome bc1 (Iwata et al. 1998 Science 281:64): Rieske ISP with the loop disulfide
    # (bc1 type), cytochrome b hemes bis-His, cytochrome c1 heme His/Met.
    cofs = _by_key(scan(entry_path("1BE3")))
    assert cofs["E/4"].cls == "Rieske [2Fe-2S]" and cofs["E/4"].subclass == "bc1/b6f-type"
    assert cofs["C/1"].subclass == "bis-His"
    assert cofs["D/3"].subclass == "His/Met"


def test_2dsx_rubredoxin_is_a_relay():
    # 2DSX: rubredoxin, Fe(Cys)4 (SOURCES.md)
    (c,) = scan(entry_path("2DSX")).cofactors
    assert c.cls == "Fe(Cys)4" and c.subclass == "rubredoxin" and c.role == "relay"


def test_user_file_puts_the_psii_iron_back_on_the_wire(tmp_path):
    # the issue: structural "unless the user says otherwise"
    toml = tmp_path / "p.toml"
    toml.write_text('[cofactor."A/557"]\nrole = "relay"\n', encoding="utf-8")
    res = scan(entry_path("2AXT"), potentials_file=str(toml))
    fe = _by_key(res)["A/557"]
    assert fe.role == "relay" and fe.uid in res.graph


# -- Zn, Ca, Mg: listed apart, never on a wire ---------------------------------------------
def test_1yq9_magnesium_is_structural_and_off_the_wire():
    # SOURCES.md: MG H/540, 12-13 Å from Ni/Fe; the entry's LINK records bind it to Glu H/46 OE1, the
    # backbone O of Leu H/482, His H/536 NE2 and three waters
    res = scan(entry_path("1YQ9"))
    mg = _by_key(res)["H/540"]
    assert mg.is_ion_site and mg.role == "structural"
    assert mg.role_reason.startswith("Mg bound by 1 Glu, 1 His and 1 backbone O (+3 water)")
    assert {(lig.atom.resname, lig.atom.seqnum) for lig in mg.ligands if lig.kind != "water O"} == {
        ("GLU", 46), ("LEU", 482), ("HIS", 536)}
    assert mg.uid not in res.graph and any(o["id"] == mg.uid for o in res.off_wire)


def test_2axt_calcium_ions_are_structural_and_the_oec_calcium_stays_in_its_cluster(psii):
    # the entry's LINK records: CA K/56 bound by Asp K/19 OD1 and Asp K/23 OD2 (2.84, 2.86 Å), CA k/5056 by
    # Asp k/5019 OD1/OD2 and Asp k/5023 OD2; SOURCES.md: OEC A/565 and a/5565 hold [Ca Mn4]
    cofs = _by_key(psii)
    for key, asp in (("K/56", {19, 23}), ("k/5056", {5019, 5023})):
        ca = cofs[key]
        assert ca.is_ion_site and ca.role == "structural" and ca.role_reason.startswith("Ca bound by 2 Asp")
        assert {lig.atom.seqnum for lig in ca.ligands if lig.kind == "Asp O"} == asp
        assert ca.uid not in psii.graph
    for key in ("A/565", "a/5565"):
        assert cofs[key].composition == "Mn4Ca" and cofs[key].role == "catalytic"
    assert sum(1 for c in psii.cofactors if c.is_ion_site) == 2  # no Ca split out of an OEC


def test_4crm_magnesium_of_atp_is_an_ion():
    # the entry's struct_conn metalc3/metalc4: MG P/1613 bound to O1G and O2B of ATP P/1609 (EM, 8.75 Å)
    res = scan(entry_path("4CRM"))
    mg = _by_key(res)["P/1613"]
    assert mg.role == "ion or additive" and "ATP" in mg.role_reason
    assert mg.uid not in res.graph


@requires_shared
def test_tie_between_chains_is_broken_the_same_in_every_process():
    # 2NIP (Fe protein dimer, SOURCES.md): its [4Fe-4S] is held by two Cys of each chain; the
    # "main chain" of the pocket must not follow Python's per-process string hashing
    import json
    import subprocess
    import sys

    code = ("import json, sys, fescan; c = fescan.scan(sys.argv[1]).cofactors[0]; "
            "print(json.dumps([c.role_reason, c.to_dict().get('pocket')]))")
    outs = set()
    for seed in ("1", "2", "3"):
        env = {**__import__("os").environ, "PYTHONHASHSEED": seed}
        out = subprocess.run([sys.executable, "-c", code, str(entry_path("2NIP"))], capture_output=True,
                             text=True, check=True, env=env).stdout.strip().splitlines()[-1]
        outs.add(out)
    assert len(outs) == 1, outs
    assert "286-residue chain" in json.loads(outs.pop())[0]  # chain A (286 amino acids) wins the tie by name
