"""Results do not depend on the order of atoms, residues or cofactors (property tests).

Order independence is a requirement of the analysis (common practice, no source);
the structures are real entries from shared/structures (SOURCES.md).
"""

from __future__ import annotations

import functools
import random

import gemmi
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import fescan
from fescan.transfer.distances import pair_distances
from fescan.transfer.graph import build_cofactor_graph
from fescan.transfer.paths import trace_wire
from tests import rewrite
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared


@functools.lru_cache(maxsize=1)
def _fug():
    return fescan.scan(entry_path("2FUG"))


def _pairs_by_uid(cofs, pairs):
    return {frozenset((cofs[p.i].uid, cofs[p.j].uid)): (p.edge, p.centre) for p in pairs}


@settings(max_examples=25, deadline=None)
@given(st.randoms(use_true_random=False))
def test_permuting_cofactors_changes_nothing(rnd: random.Random):
    res = _fug()
    cofs = list(res.cofactors)
    rnd.shuffle(cofs)
    pairs = pair_distances(cofs, res.options.cutoff)
    assert _pairs_by_uid(cofs, pairs) == _pairs_by_uid(res.cofactors, res.pairs)
    g = build_cofactor_graph(cofs, pairs, res.potentials, res.options)
    w = trace_wire(g, cofs, res.options)
    # with the endpoints fixed, the path and the times are the same
    opts = res.options.__class__(**{**res.options.to_dict(), "entry": res.cofactor(res.wire.entry).key,
                                     "exit": res.cofactor(res.wire.exit).key})
    w = trace_wire(g, cofs, opts)
    assert w.path == res.wire.path
    assert w.summed_hop_time == pytest.approx(res.wire.summed_hop_time)
    assert w.mean_first_passage_time == pytest.approx(res.wire.mean_first_passage_time, rel=1e-6)


def _shuffled_copy(pdb_id: str, seed: int, path):
    """Write the entry with chains in reverse order and the atoms of every residue shuffled."""
    st_ = gemmi.read_structure(str(entry_path(pdb_id)))
    rnd = random.Random(seed)
    model = st_[0]
    new = gemmi.Model(model.num)
    for ch in reversed(list(model)):
        nc = gemmi.Chain(ch.name)
        for res in ch:
            r = res.clone()
            atoms = [a.clone() for a in res]
            rnd.shuffle(atoms)
            while len(r):
                del r[0]
            for a in atoms:
                r.add_atom(a)
            nc.add_residue(r)
        new.add_chain(nc)
    out = gemmi.Structure()
    out.cell, out.spacegroup_hm = st_.cell, st_.spacegroup_hm
    out.add_model(new)
    return rewrite.write(out, path)


@pytest.mark.parametrize("pdb_id", ["1YQ9", "1KF6"])
def test_reordering_atoms_and_chains_changes_nothing(pdb_id, tmp_path):
    a = fescan.scan(entry_path(pdb_id))
    b = fescan.scan(_shuffled_copy(pdb_id, 7, tmp_path / f"{pdb_id}.pdb"))
    ka = sorted((c.key, c.cls, len(c.redox_atoms), len(c.ligands)) for c in a.cofactors)
    kb = sorted((c.key, c.cls, len(c.redox_atoms), len(c.ligands)) for c in b.cofactors)
    assert ka == kb
    pa = {frozenset((a.cofactors[p.i].key, a.cofactors[p.j].key)): p.edge for p in a.pairs}
    pb = {frozenset((b.cofactors[p.i].key, b.cofactors[p.j].key)): p.edge for p in b.pairs}
    assert pa.keys() == pb.keys()
    assert all(pa[k] == pytest.approx(pb[k], abs=1e-3) for k in pa)
    opts = {"entry": a.cofactor(a.wire.entry).key, "exit": a.cofactor(a.wire.exit).key}
    b2 = fescan.scan(tmp_path / f"{pdb_id}.pdb", **opts)
    assert [b2.cofactor(u).key for u in b2.wire.path] == [a.cofactor(u).key for u in a.wire.path]
