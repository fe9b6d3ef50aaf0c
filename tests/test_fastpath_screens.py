"""The vectorised screens give what the one-by-one references give.

References kept here, beside the fast code they check:

- the PDB record screen (:func:`fescan.structure.pdb_lines.screen_pdb_records`, all
  records at once with numpy) against :func:`fescan.structure.pdb_lines.record_problem`
  applied line by line (the column rules of the wwPDB format guide 3.3, ATOM record),
  on every real PDB entry of ../shared/structures (SOURCES.md) and on records of
  1FDN damaged at random (columns changed, inserted, deleted, lines cut);
- ring perception with the 2-core pruning against the same breadth-first search
  over every bond (the code before the pruning), on every hetero residue of the
  real entries;
- the porphyrin search that looks only at the bonds of the N atoms bound to the
  metal against the search over every bond, on every heme of the real entries and
  examples;
- the quinone screen (two carbons carrying a terminal O, each with two carbon
  neighbours) against ring perception without it, on every hetero residue of the
  real entries (their menaquinones and plastoquinones among them): it never sets
  aside a residue the perception would call a quinone;
- alternative states found from the atom columns against the same rules applied
  to gemmi residues one by one (the code before the columns), on the real entries
  and a synthetic pair of overlapping half-occupancy clusters.
"""

from __future__ import annotations

import gzip
import random
from pathlib import Path

import gemmi
import numpy as np
import pytest

from fescan.cofactors import rings
from fescan.cofactors.atoms import ModelIndex
from fescan.cofactors.rings import bond_graph, porphyrin_atoms, quinone_kind, small_rings
from fescan.cofactors.states import OVERLAP_MAX, find_alternative_states
from fescan.core.errors import FescanError
from fescan.structure.pdb_lines import _END, record_problem, screen_pdb_records
from tests.datafiles import ENTRIES, entry_path, requires_shared

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "example_structures").glob("rb*"))


def _text(path) -> bytes:
    raw = path.read_bytes()
    return gzip.decompress(raw) if raw[:2] == b"\x1f\x8b" else raw


def _reference_screen(data: bytes) -> tuple[str, str] | None:
    """First damaged record before any END, one line at a time: (error class name, message)."""
    offset = 0
    for lineno, line in enumerate(data.split(b"\n"), start=1):
        if line[:4] in (b"ATOM", b"HETA", b"atom", b"heta"):
            found = record_problem(line)
            if found is not None:
                if _END.search(data, 0, offset):
                    return None
                problem, cls = found
                return cls.__name__, f"x: line {lineno}: {problem}: {line.rstrip().decode('latin-1')[:80]!r}"
        offset += len(line) + 1
    return None


def _fast_screen(data: bytes) -> tuple[str, str] | None:
    try:
        screen_pdb_records("x", data)
    except FescanError as exc:
        return type(exc).__name__, str(exc)
    return None


PDB_ENTRIES = sorted(k for k, v in ENTRIES.items() if ".pdb" in v)


@requires_shared
@pytest.mark.parametrize("pdb_id", PDB_ENTRIES)
def test_real_entries_pass_both_screens(pdb_id):
    data = _text(entry_path(pdb_id))
    assert _reference_screen(data) is None
    assert _fast_screen(data) is None


@requires_shared
@pytest.mark.parametrize("seed", range(4))
def test_damaged_records_are_refused_alike(seed):
    """2,000 records of 1FDN damaged at random: same verdict, same message (random, seeded)."""
    rng = random.Random(seed)
    records = [ln for ln in _text(entry_path("1FDN")).split(b"\n") if ln[:4] in (b"ATOM", b"HETA")]
    alphabet = b" 0123456789.-+eEAZaz*\t\r#"
    refused = 0
    for _ in range(2000):
        line = bytearray(rng.choice(records))
        for _ in range(rng.randint(1, 3)):
            op, pos = rng.random(), rng.randrange(0, 82)
            if op < 0.5 and pos < len(line):
                line[pos] = rng.choice(alphabet)
            elif op < 0.7:
                line.insert(min(pos, len(line)), rng.choice(alphabet))
            elif op < 0.9 and pos < len(line):
                del line[pos]
            else:
                line = line[:pos]
        text = b"HEADER    TEST\n" + bytes(line) + b"\n" + rng.choice(records) + b"\nEND\n"
        want = _reference_screen(text)
        assert _fast_screen(text) == want, bytes(line)
        refused += want is not None
    assert refused > 200  # the damage is real: many records are refused


def test_occupancy_outside_unit_is_told():
    good = b"ATOM      1  N   ALA A   1      11.104   6.134  -6.504  1.00 20.00           N\n"
    high = good.replace(b"  1.00 20.00", b"  1.50 20.00")
    low = good.replace(b"  1.00 20.00", b" -0.50 20.00")
    odd = good.replace(b"  1.00 20.00", b" 1.500 20.00")  # not the standard layout: read by float()
    assert screen_pdb_records("x", good) is False
    assert screen_pdb_records("x", high) is True
    assert screen_pdb_records("x", low) is True
    assert screen_pdb_records("x", odd) is True


def test_occupancy_outside_unit_matches_float_reading():
    """Every ``%6.2f`` occupancy from -1.50 to 12.00, and zero-padded ones, told as ``float()`` reads them."""
    good = b"ATOM      1  N   ALA A   1      11.104   6.134  -6.504  1.00 20.00           N\n"
    fields = [f"{v / 100:6.2f}".encode() for v in range(-150, 1201, 7)]
    fields += [b"001.00", b"000.99", b"001.01", b" 00.50", b" -0.00", b"  1.00", b"  0.00", b"  1.01"]
    for field in fields:
        line = good.replace(b"  1.00 20.00", field + b" 20.00")
        want = not 0.0 <= float(field) <= 1.0 or field.strip().startswith(b"-")
        assert screen_pdb_records("x", line * 3) is want, field
        mixed = good * 2 + line  # the odd record among plain ones
        assert screen_pdb_records("x", mixed) is want, field


def _reference_rings(g, sizes):
    """Breadth-first search over every bond (no pruning)."""
    max_size, rings = max(sizes), set()
    adj = {n: set(g.neighbors(n)) for n in g.nodes}
    for u, v in g.edges:
        parent, frontier, found = {u: None}, [u], None
        for _ in range(max_size - 1):
            nxt = []
            for a in frontier:
                for b in adj[a]:
                    if (a == u and b == v) or b in parent:
                        continue
                    parent[b] = a
                    if b == v:
                        found = b
                        break
                    nxt.append(b)
                if found is not None:
                    break
            if found is not None or not nxt:
                break
            frontier = nxt
        if found is None:
            continue
        ring, node = [], found
        while node is not None:
            ring.append(node)
            node = parent[node]
        if len(ring) in sizes:
            rings.add(frozenset(ring))
    return sorted(rings, key=lambda r: sorted(r))


@requires_shared
@pytest.mark.parametrize("pdb_id", sorted(ENTRIES))
def test_rings_with_pruning_equal_the_full_search(pdb_id):
    st = gemmi.read_structure(str(entry_path(pdb_id)))
    for ch in st[0]:
        for res in ch:
            if res.het_flag != "H" or len(res) < 5:
                continue
            xyz = np.array([a.pos.tolist() for a in res])
            el = np.array([a.element.name.upper() for a in res], dtype=object)
            g = bond_graph(xyz, el)
            for sizes in ((5, 6), (6,), (5, 6, 7)):
                assert small_rings(g, sizes) == _reference_rings(g, sizes), res.name


@requires_shared
@pytest.mark.parametrize("pdb_id", sorted(ENTRIES))
def test_quinone_screen_never_hides_a_quinone(pdb_id, monkeypatch):
    st = gemmi.read_structure(str(entry_path(pdb_id)))
    residues = []
    for ch in st[0]:
        for res in ch:
            if res.het_flag == "H" and len(res) >= 8:
                residues.append((np.array([a.pos.tolist() for a in res]),
                                 np.array([a.element.name.upper() for a in res], dtype=object)))
    fast = [quinone_kind(xyz, el) for xyz, el in residues]
    monkeypatch.setattr(rings, "_two_oxo_ring_carbons", lambda *args: True)
    full = [quinone_kind(xyz, el) for xyz, el in residues]
    assert fast == full


def _reference_porphyrin(xyz, element, metal):
    """Pyrroles among the 5-rings of every bond, then the meso carbons (the code before the N-only search)."""
    g = bond_graph(xyz, element)
    pyrroles = []
    for ring in small_rings(g, (5,)):
        ns = [i for i in ring if element[i] == "N"]
        if len(ns) == 1 and np.linalg.norm(xyz[ns[0]] - xyz[metal]) < 2.6:
            pyrroles.append(ring)
    if len(pyrroles) < 4:
        return None
    ring_atoms = set().union(*pyrroles)
    meso = {i for i in g.nodes if i not in ring_atoms and element[i] == "C"
            and len({k for k, r in enumerate(pyrroles) if any(nb in r for nb in g.neighbors(i))}) >= 2}
    return sorted(ring_atoms | meso | {metal})


@pytest.mark.parametrize("path", [*(entry_path(e) for e in sorted(ENTRIES)), *EXAMPLES], ids=str)
def test_porphyrin_search_equals_the_full_search(path):
    if not path.exists():
        pytest.skip("structure not available")
    st = gemmi.read_structure(str(path))
    seen = 0
    for ch in st[0]:
        for res in ch:
            fe = [k for k, a in enumerate(res) if a.element.name == "Fe"]
            if len(fe) != 1 or len(res) < 20:
                continue
            xyz = np.array([a.pos.tolist() for a in res])
            el = np.array([a.element.name.upper() for a in res], dtype=object)
            assert porphyrin_atoms(xyz, el, fe[0]) == _reference_porphyrin(xyz, el, fe[0]), res.name
            seen += 1
    if path.name.startswith(("19HC", "2AXT")):
        assert seen  # hemes were compared


def _reference_states(model, candidate_ids):
    """The grouping rules applied to gemmi residues one by one."""
    residues = [(ch.name, r) for ch in model for r in ch if len(r)]
    data = {}
    for rid in candidate_ids:
        cname, res = residues[rid]
        xyz = np.asarray([a.pos.tolist() for a in res])
        occ = float(np.mean([a.occ for a in res]))
        if occ <= 0.95:
            metals = frozenset(a.element.name.upper() for a in res) & {"FE", "NI", "MO", "V", "W", "CU", "MN",
                                                                       "CO", "ZN"}
            data[rid] = (xyz, occ, (metals,) if metals else (metals, res.name))
    groups = []
    keys = list(data)
    for i, a in enumerate(keys):
        for b in keys[i + 1:]:
            xa, oa, ka = data[a]
            xb, ob, kb = data[b]
            if ka != kb or not 0.7 <= oa + ob <= 1.3:
                continue
            small, big = (xa, xb) if len(xa) <= len(xb) else (xb, xa)
            d = np.linalg.norm(small[:, None, :] - big[None, :, :], axis=2).min(axis=1)
            if np.mean(d <= OVERLAP_MAX) >= 0.5:
                groups.append({a, b})
    merged: list[set] = []
    for g in groups:
        for m in [m for m in merged if m & g]:
            merged.remove(m)
            g |= m
        merged.append(g)
    return sorted(sorted(g) for g in merged)


def _fast_states(model):
    index = ModelIndex(model)
    found = find_alternative_states(index.candidates())
    return sorted(sorted(s.res_id for s in group) for group in found.values()), index


@requires_shared
@pytest.mark.parametrize("pdb_id", sorted(ENTRIES))
def test_states_from_columns_equal_the_residue_loop(pdb_id):
    model = gemmi.read_structure(str(entry_path(pdb_id)))[0]
    fast, index = _fast_states(model)
    assert fast == _reference_states(model, np.flatnonzero(index.is_candidate).tolist())


def test_states_of_a_synthetic_pair():
    """Two SF4 residues on top of each other at occupancies 0.6 / 0.4, a third far away at 0.5."""
    st = gemmi.Structure()
    model = gemmi.Model("1")
    ch = gemmi.Chain("A")
    for num, occ, shift in ((501, 0.6, 0.0), (502, 0.4, 0.3), (503, 0.5, 30.0)):
        res = gemmi.Residue()
        res.name, res.seqid, res.het_flag = "SF4", gemmi.SeqId(num, " "), "H"
        for k, (el, xyz) in enumerate((("Fe", (0, 0, 0)), ("Fe", (2.7, 0, 0)), ("S", (1.3, 1.6, 0)),
                                       ("S", (1.3, -1.6, 0)))):
            a = gemmi.Atom()
            a.name, a.element, a.occ = f"{el.upper()}{k}", gemmi.Element(el), occ
            a.pos = gemmi.Position(xyz[0] + shift, xyz[1], xyz[2])
            res.add_atom(a)
        ch.add_residue(res)
    model.add_chain(ch)
    st.add_model(model)
    fast, index = _fast_states(st[0])
    assert fast == [[0, 1]]
    assert fast == _reference_states(st[0], np.flatnonzero(index.is_candidate).tolist())
