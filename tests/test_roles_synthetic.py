"""Roles, pterins and robustness on synthetic structures built in code (tests/synth_cofactors.py).

The chemistry checked: a flavin is an isoalloxazine (benzo + pyrazine + pyrimidine
rings) and a molybdopterin a pyranopterin whose dithiolene binds Mo/W (Hille 1996
Chem Rev 96:2757); molybdate is a free oxoanion (wwPDB CCD MOO). The bad-input
cases follow the project rule "a result or a clear per-file error, never a traceback".
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest

from fescan.analysis.scan import scan
from fescan.cofactors.rings import isoalloxazine_atoms, pterin_atoms
from tests import synth_cofactors as sc


def _scan(st, tmp_path, name="x.pdb", **kw):
    p = tmp_path / name
    st.write_pdb(str(p))
    return scan(p, **kw)


# -- bad input: no crash ------------------------------------------------------
def test_metal_inside_a_60_atom_residue_spanning_more_than_20_angstrom(tmp_path):
    # used to raise KeyError in detect._env_rows: the residue's first atom is > 12.5 Å from the metal
    st = sc.big_metal_residue(60)
    res = _scan(st, tmp_path)
    xyz = np.asarray([a.pos.tolist() for a in st[0]["A"][0]])
    assert len(xyz) == 60 and np.ptp(xyz[:, 0]) > 20.0
    (mo,) = res.cofactors
    assert mo.composition == "Mo"
    assert {lig.kind for lig in mo.ligands} == {"UNL S"}  # both S of the far end of the residue found
    assert mo.role == "ion or additive"  # no pterin, no protein: kept off the wire
    assert mo.uid not in res.graph


def test_residue_with_forty_iron_atoms(tmp_path):
    res = _scan(sc.many_iron_residue(40), tmp_path)
    (fe,) = res.cofactors
    assert fe.composition == "Fe40"
    assert fe.role == "ion or additive" and fe.role_reason
    assert res.off_wire and res.off_wire[0]["id"] == fe.uid


# -- pterins are not flavins --------------------------------------------------
@pytest.mark.parametrize("kind", ["flavin", "pterin"])
def test_ring_perception_tells_isoalloxazine_from_pterin(kind):
    atoms = sc.tricycle(kind)
    xyz = np.asarray([p for _, _, p in atoms])
    el = np.asarray([e for _, e, _ in atoms], dtype=object)
    if kind == "flavin":
        assert isoalloxazine_atoms(xyz, el) is not None and pterin_atoms(xyz, el) is None
    else:
        assert isoalloxazine_atoms(xyz, el) is None and pterin_atoms(xyz, el) is not None


@pytest.mark.parametrize("scramble", [True, False])
@pytest.mark.parametrize("metal", ["MO", "W"])
def test_mo_bis_pterin_is_one_catalytic_site_and_the_flavin_stays_a_flavin(tmp_path, scramble, metal):
    res = _scan(sc.flavin_and_mo_bis_pterin(scramble=scramble, metal=metal), tmp_path)
    cats = Counter(c.category for c in res.cofactors)
    assert cats == Counter({"flavin": 1, "metal": 1})  # the two pterins are no flavins
    fl = next(c for c in res.cofactors if c.category == "flavin")
    assert len(fl.redox_atoms) == 16  # 14 isoalloxazine ring atoms + 2 carbonyl O
    site = next(c for c in res.cofactors if c.category == "metal")
    assert site.cls == f"{metal.capitalize()}-bis-pterin"
    assert site.role == "catalytic" and site.subclass == "bis-pterin"
    assert len(site.residues) == 3 and len(site.extra["pterins"]) == 2  # metal + both pterins named
    assert Counter(lig.kind for lig in site.ligands)["dithiolene S"] == 4
    assert site.uid in res.graph  # a catalytic site may end a wire


def test_molybdate_on_a_surface_lysine_is_an_ion(tmp_path):
    res = _scan(sc.molybdate_on_lysine("MOO"), tmp_path)
    (moo,) = res.cofactors
    assert moo.role == "ion or additive"
    assert moo.uid not in res.graph
    assert moo.cls == "molybdate" and moo.detected_by == "ccd+geometry"
    assert moo.flags == ()  # no class mismatch, no "incomplete cluster" for a lone Mo


def test_molybdate_with_a_hidden_code_is_an_ion(tmp_path):
    res = _scan(sc.molybdate_on_lysine("UNL"), tmp_path)
    (moo,) = res.cofactors
    assert moo.role == "ion or additive" and "pterin" in moo.role_reason


def test_role_override_from_the_parameter_file(tmp_path):
    toml = tmp_path / "p.toml"
    toml.write_text('[cofactor."A/301"]\nrole = "catalytic"\n', encoding="utf-8")
    res = _scan(sc.molybdate_on_lysine("MOO"), tmp_path, potentials_file=str(toml))
    (moo,) = res.cofactors
    assert moo.role == "catalytic" and "parameter file" in moo.role_reason
    assert moo.uid in res.graph and not res.off_wire


def test_role_override_rejects_an_unknown_role(tmp_path):
    from fescan.core.errors import ConfigError

    toml = tmp_path / "p.toml"
    toml.write_text('[cofactor."A/301"]\nrole = "spectator"\n', encoding="utf-8")
    with pytest.raises(ConfigError, match="spectator"):
        _scan(sc.molybdate_on_lysine("MOO"), tmp_path, potentials_file=str(toml))


# -- quinones by ring -----------------------------------------------------------
@pytest.mark.parametrize(("kind", "cls"), [("benzo", "quinone"), ("naphtho", "naphthoquinone")])
def test_quinone_with_an_unknown_code_is_found_by_its_ring(tmp_path, kind, cls):
    # para-quinone ring: six ring C, two terminal O in 1,4 positions (common practice, no source);
    # a fused all-carbon ring makes it a naphthoquinone (phylloquinone, menaquinones)
    (q,) = _scan(sc.quinone(kind, scramble=True), tmp_path).cofactors
    assert q.category == "quinone" and q.cls == cls and q.detected_by == "geometry"
    assert len(q.redox_atoms) == 8 and q.role == "relay"


def test_phylloquinone_code_is_a_quinone(tmp_path):
    # wwPDB CCD PQN = phylloquinone, the A1 acceptor of photosystem I (Jordan et al. 2001 Nature 411:909)
    (q,) = _scan(sc.quinone("naphtho", scramble=False), tmp_path).cofactors
    assert q.ccd_code == "PQN" and q.cls == "phylloquinone"


def test_ortho_diol_with_an_unknown_code_is_no_quinone(tmp_path):
    assert _scan(sc.quinone("catechol", scramble=True), tmp_path).cofactors == []


# -- alternative states -----------------------------------------------------------
@pytest.mark.parametrize("code_b", ["SF4", "FS4"])
def test_overlapping_states_are_one_cofactor_without_clashes(tmp_path, code_b):
    # one [4Fe-4S] modelled twice (occupancies 0.6 + 0.4, second copy 0.6 Å away, same or other code)
    res = _scan(sc.two_state_cluster(code_b), tmp_path)
    (c,) = res.cofactors
    assert c.cls == "[4Fe-4S]" and c.key == "A/101"
    assert c.states == ("SF4 A/101 occ 0.60", f"{code_b} A/102 occ 0.40")
    assert not any(f.code in ("clash", "class_mismatch") for f in c.flags)
    assert len(c.ligands) == 4  # the four Cys, no S of the twin


def test_two_positions_of_one_iron_are_no_diiron_site(tmp_path):
    # Fe at two positions 1.2 Å apart (occupancy 0.5 each): no metal-metal bond is that short
    res = _scan(sc.two_iron_positions(1.2), tmp_path)
    (c,) = res.cofactors
    assert c.cls == "mononuclear Fe" and len(c.states) == 2


def test_pterins_without_metal_are_listed_as_not_analysed(tmp_path):
    # the two MGD of the bis-pterin site with the Mo removed: no cofactor, but not silent either
    st = sc.flavin_and_mo_bis_pterin(scramble=False)
    ch = st[0]["A"]
    ch.__delitem__(len(ch) - 1)
    res = _scan(st, tmp_path)
    assert [c.category for c in res.cofactors] == ["flavin"]
    assert res.not_analysed == {"MGD": 2}


@pytest.mark.parametrize("altloc", ["occupancy", "all"])
def test_overlapping_states_with_altloc_labels_and_other_code(tmp_path, altloc):
    # the same twin cluster written as altloc A (SF4 101) and altloc B (an unknown code, 102)
    st = sc.two_state_cluster("CLX")
    ch = st[0]["A"]
    for a in ch[len(ch) - 2]:
        a.altloc = "A"
    for a in ch[len(ch) - 1]:
        a.altloc = "B"
    (c,) = _scan(st, tmp_path, altloc=altloc).cofactors
    assert c.cls == "[4Fe-4S]" and c.states == ("SF4 A/101 occ 0.60", "CLX A/102 occ 0.40")


def test_forty_iron_forty_sulfur_block_is_not_taken_as_a_relay(tmp_path):
    # a rock-salt block of 40 Fe and 40 S in one residue: no known Fe-S cluster has more than 8 Fe
    atoms = []
    for x in range(5):
        for y in range(4):
            for z in range(4):
                el = "Fe" if (x + y + z) % 2 == 0 else "S"
                atoms.append((f"A{len(atoms)}", el, np.array([2.3 * x, 2.3 * y, 2.3 * z])))
    (c,) = _scan(sc._structure([sc._res("UNL", 1, atoms, False)]), tmp_path).cofactors
    assert c.composition == "Fe40S40" and c.role == "ion or additive"
