"""A cofactor modelled in two states inside one residue (altloc labels A/B), built in code.

The altloc label marks alternative locations of one atom, each with its own occupancy (wwPDB
Atomic Coordinate Entry Format 3.3, ATOM record, column 17 "altLoc"). The reader keeps one label
per residue; these tests check that the cofactor still says it was modelled in two states, and
that two positions of one metal never become a two-metal site: metals 1.5 Å apart cannot both be
bonded atoms (M-M bonds are 2.2 Å or longer; common practice, no source).
"""

from __future__ import annotations

import json

import gemmi
import pytest

from fescan.analysis.scan import scan
from fescan.report.text import render_text
from fescan.structure.reading import read_structure
from tests import synth_cofactors as sc


def _write(st, tmp_path, name="alt.pdb"):
    p = tmp_path / name
    st.write_pdb(str(p))
    return p


def test_reader_records_the_labels_it_drops(tmp_path):
    loaded = read_structure(_write(sc.altloc_metal("FE"), tmp_path))
    assert loaded.altloc_states[("A", 601, "", "FE")] == (("A", pytest.approx(0.6), "FE", 1),
                                                          ("B", pytest.approx(0.4), "FE", 1))
    fe = [a for ch in loaded.model for r in ch if r.name == "FE" for a in r]
    assert [a.altloc for a in fe] == ["A"]  # policy "occupancy": the other position is gone


@pytest.mark.parametrize(("metal", "cls"), [("FE", "mononuclear Fe"), ("CU", "Cu")])
def test_two_positions_of_one_metal_are_one_site_with_states(tmp_path, metal, cls):
    (c,) = scan(_write(sc.altloc_metal(metal, gap=1.5), tmp_path)).cofactors
    assert c.cls == cls and c.composition == metal.capitalize()
    assert c.states == ("altloc A occ 0.60 (kept)", "altloc B occ 0.40")
    assert any(f.code == "alternative_states" for f in c.flags)


@pytest.mark.parametrize(("policy", "occ", "kept"), [("occupancy", (0.4, 0.6), "B"), ("first", (0.4, 0.6), "A")])
def test_the_kept_state_follows_the_altloc_policy(tmp_path, policy, occ, kept):
    (c,) = scan(_write(sc.altloc_metal("FE", occ=occ), tmp_path), altloc=policy).cofactors
    marked = [s for s in c.states if s.endswith("(kept)")]
    assert marked == [f"altloc {kept} occ {occ[0] if kept == 'A' else occ[1]:.2f} (kept)"]


def test_altloc_all_gives_one_part_per_position_never_a_two_metal_site(tmp_path):
    res = scan(_write(sc.altloc_metal("FE", gap=1.5), tmp_path), altloc="all")
    assert sorted(c.part for c in res.cofactors) == ["A", "B"]
    for c in res.cofactors:
        assert c.composition == "Fe" and c.cls == "mononuclear Fe"
        assert f"altloc {c.part} occ {0.6 if c.part == 'A' else 0.4:.2f} (this part)" in c.states


@pytest.mark.parametrize("policy", ["occupancy", "all"])
def test_cluster_in_two_positions_inside_one_residue(tmp_path, policy):
    res = scan(_write(sc.altloc_cluster(shift=0.6), tmp_path), altloc=policy)
    assert {c.cls for c in res.cofactors} == {"[4Fe-4S]"}
    assert len(res.cofactors) == (1 if policy == "occupancy" else 2)
    for c in res.cofactors:
        assert len(c.states) == 2 and c.composition == "Fe4S4"
        assert len(c.ligands) == 4  # the four Cys; never an S of the other position
        assert not any(f.code in ("clash", "unexpected_ligand", "extra_ligand", "incomplete_cluster")
                       for f in c.flags)


def test_states_reach_json_and_text(tmp_path):
    res = scan(_write(sc.altloc_metal("CU"), tmp_path))
    (rec,) = json.loads(json.dumps(res.to_dict()))["cofactors"]
    assert rec["states"] == ["altloc A occ 0.60 (kept)", "altloc B occ 0.40"]
    assert "altloc A occ 0.60 (kept); altloc B occ 0.40" in render_text(res)


def test_variants_under_two_residue_names_are_named(tmp_path):
    # microheterogeneity: the same residue number written as FE2 (altloc A) and CU (altloc B)
    st = sc.altloc_metal("FE", occ=(0.7, 0.3))
    ch = st[0]["A"]
    ion = ch[len(ch) - 1]
    b = ion[1].clone()
    ion.remove_atom(ion[1].name, ion[1].altloc)
    cu = ion.clone()
    cu.name = "CU"
    while len(cu):
        cu.remove_atom(cu[0].name, cu[0].altloc)
    b.element = gemmi.Element("Cu")
    b.name = "CU"
    cu.add_atom(b)
    ion.name = "FE2"
    ch.add_residue(cu)
    (c,) = scan(_write(st, tmp_path)).cofactors
    assert c.cls == "mononuclear Fe"
    assert c.states == ("altloc A FE2 occ 0.70 (kept)", "altloc B CU occ 0.30")
