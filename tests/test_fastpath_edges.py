"""Edge cases of the fast paths, found by a cold review of the speed work.

Each case pits the fast code against the plain definition it replaces:

- neighbour search: every point with ``distance <= r`` is returned, computed with the
  same arithmetic as :func:`fescan.core.neighbours.pairwise_distances` (a brute-force
  reference), including points at exactly ``r`` on 3-decimal (PDB) coordinates, where
  a bounding box drawn without slack loses them to rounding; a non-finite query point
  does not take the neighbours of the other query points away;
- the flavin screen allows a Zn in the residue (only redox metals and Mg rule a flavin
  out, as before the per-residue counts);
- the porphyrin search through the Fe-bound N falls back to every bond when a smaller
  ring shares the N's bonds (a badly modelled heme), as the full search does;
- the PDB record screen accepts texts shorter than one record name;
- the end of a PDB header (first coordinate record) is the first line starting with a record name.
"""

from __future__ import annotations

from collections import Counter

import gemmi
import numpy as np
import pytest

import tests.synth_cofactors as sc
from fescan.cofactors import find_cofactors
from fescan.cofactors.rings import bond_graph, porphyrin_atoms, small_rings
from fescan.core.neighbours import NeighbourTree, pairwise_distances
from fescan.structure.pdb_lines import check_pdb_records, screen_pdb_records
from fescan.structure.rawtext import first_record
from tests.datafiles import entry_path, requires_shared


def _reference(queries, data, r):
    d = pairwise_distances(queries, data)
    return [np.flatnonzero(row <= r).tolist() for row in d]


def test_point_at_exactly_r_on_pdb_coordinates():
    far = np.full((5000, 3), 500.0) + np.arange(5000)[:, None] * 0.01
    data = np.vstack([[-3.994, 10.0, 10.0], far])
    tree = NeighbourTree(data)
    q = np.array([[-0.994, 10.0, 10.0]])
    assert tree.query_ball_point(q[0], 3.0) == _reference(q, data, 3.0)[0] == [0]
    d, i = tree.query(q[0], k=1, distance_upper_bound=3.0)
    assert (d, i) == (pytest.approx(3.0), 0)


@pytest.mark.parametrize("r", [1.9, 3.0, 6.0, 12.5])
def test_three_decimal_grid_matches_brute_force(r):
    rng = np.random.default_rng(11)
    data = rng.integers(-20000, 20000, size=(6000, 3)) / 1000.0  # 3-decimal coordinates, many exact ties
    tree = NeighbourTree(data)
    for _ in range(20):
        centre = data[rng.integers(len(data))]
        queries = np.round(centre + rng.integers(-3000, 3000, size=(rng.integers(1, 40), 3)) / 1000.0, 3)
        assert tree.query_ball_point(queries, r) == _reference(queries, data, r)


def test_non_finite_query_point_leaves_the_others_their_neighbours():
    data = np.random.default_rng(5).uniform(0, 30, size=(3000, 3))
    tree = NeighbourTree(data)
    good = data[17] + 0.1
    got = tree.query_ball_point(np.array([[np.nan, 0.0, 0.0], good]), 3.0)
    assert got[0] == [] and got[1] == _reference(good[None, :], data, 3.0)[0] and 17 in got[1]


def test_a_zinc_in_the_residue_does_not_hide_an_unnamed_flavin():
    # before the per-residue counts, only redox metals and Mg ruled a residue out as a flavin
    res = gemmi.Residue()
    res.name = "UNL"
    res.seqid = gemmi.SeqId(1, " ")
    res.het_flag = "H"
    for k, (_, el, p) in enumerate(sc.tricycle("flavin"), start=1):
        a = gemmi.Atom()
        a.name, a.element, a.pos, a.occ = f"X{k}", gemmi.Element(el), gemmi.Position(*p), 1.0
        res.add_atom(a)
    zn = gemmi.Atom()
    zn.name, zn.element, zn.pos, zn.occ = "ZN", gemmi.Element("Zn"), gemmi.Position(0.0, 0.0, 12.0), 1.0
    res.add_atom(zn)
    ch = gemmi.Chain("A")
    ch.add_residue(res)
    model = gemmi.Model(1)
    model.add_chain(ch)
    cats = Counter(c.category for c in find_cofactors(model))
    assert cats["flavin"] == 1


@requires_shared
def test_porphyrin_with_small_rings_on_the_iron_bound_n_is_still_found():
    # two extra atoms each close a 3-ring on an N-C bond of pyrrole A (the review's case on a 2AXT heme)
    st = gemmi.read_structure(str(entry_path("2AXT")))
    st.remove_hydrogens()
    res = next(r for ch in st[0] for r in ch if r.name == "HEM")
    names = [a.name for a in res]
    xyz = np.array([a.pos.tolist() for a in res])
    el = np.array([a.element.name.upper() for a in res], dtype=object)
    fe, na, c1, c4 = (names.index(n) for n in ("FE", "NA", "C1A", "C4A"))

    def apex(p, q):
        mid, d = (p + q) / 2, q - p
        perp = np.cross(d, xyz[fe] - mid)
        return mid + 1.2 * perp / np.linalg.norm(perp)

    xyz2 = np.vstack([xyz, apex(xyz[na], xyz[c1]), apex(xyz[na], xyz[c4])])
    el2 = np.concatenate([el, np.array(["C", "C"], dtype=object)])
    found = porphyrin_atoms(xyz2, el2, fe)
    # the full search (every bond) finds pyrrole A through its Cb-Cb bond
    full = [r for r in small_rings(bond_graph(xyz2, el2), (5,))
            if sum(el2[i] == "N" for i in r) == 1
            and np.linalg.norm(xyz2[next(i for i in r if el2[i] == "N")] - xyz2[fe]) < 2.6]
    assert len(full) == 4
    assert found is not None and set().union(*full) <= set(found)


@pytest.mark.parametrize("text", [b"", b"\n", b"\n\n", b"AT", b"ATO", b"END"])
def test_tiny_texts_pass_the_record_screen(text):
    assert screen_pdb_records("x", text) in (False, None)
    check_pdb_records("x", text)


@requires_shared
def test_a_structure_that_is_not_the_models_own_is_not_read_in_place():
    from fescan.structure.reading import read_structure

    loaded = read_structure(entry_path("1FDN"))
    moved = loaded.structure.clone()
    for ch in moved[0]:
        for res in ch:
            for a in res:
                a.pos = gemmi.Position(a.pos.x + 100.0, a.pos.y, a.pos.z)
    plain = [c.centroid for c in find_cofactors(loaded.model)]
    in_place = [c.centroid for c in find_cofactors(loaded.model, structure=loaded.structure)]
    wrong = [c.centroid for c in find_cofactors(loaded.model, structure=moved)]
    assert plain == in_place == wrong


def _first_record_by_lines(text, names):
    """The plain definition: the offset of the first line that starts with one of ``names``."""
    offset = 0
    for line in text.splitlines(keepends=True):
        if any(line.startswith(word) for word in names):
            return offset
        offset += len(line)
    return len(text)


@pytest.mark.parametrize("as_bytes", [False, True])
def test_header_end_matches_the_line_by_line_definition(as_bytes):
    """The header end is found by the stem of each record name, its blanks checked after.

    Cases: a name cut short at the end of the text, a name followed by no blank, a name
    inside a line, a later name before an earlier one (common practice, no source).
    """
    names = ("ATOM  ", "HETATM", "MODEL ")
    texts = [
        "", "ATOM  1\n", "HEADER\nATOM", "HEADER\nATOM\nATOM  2\n", "REMARK ATOM  \nATOMS\nHETATM 1\n",
        "HEADER x\nMODEL        1\nATOM  1\n", "X\nHETATM\nATOM  \n", "X\nATOMX \nATOM \nATOM  \n",
        "X\nMODEL", "X\nMODEL \n", "X\nATOM \n", "\nATOM  ",
    ]
    rng = np.random.default_rng(3)
    pieces = ["\n", "ATOM", "  ", " ", "HETATM", "MODEL", "X", "REMARK"]
    texts += ["".join(rng.choice(pieces, size=rng.integers(1, 12))) for _ in range(400)]
    for text in texts:
        if as_bytes:
            text, words = text.encode(), tuple(w.encode() for w in names)
        else:
            words = names
        assert first_record(text, words) == _first_record_by_lines(text, words), repr(text)
