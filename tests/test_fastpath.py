"""The bulk atom extraction (numpy columns from gemmi) gives the same results as the atom loop.

Reference: the atom-by-atom extraction of ModelIndex (the code before the bulk path,
kept as ``bulk=False``), run here beside the bulk path on every real entry of
../shared/structures (SOURCES.md) and every packaged example; both read the file
with gemmi. Compared: every atom column, and the whole scan result (cofactors,
ligands, flags, distances to 1e-3 Å, hops, wire).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import fescan
from fescan.cofactors.atoms import AtomArrays, ModelIndex
from fescan.structure.reading import read_structure
from tests.datafiles import ENTRIES, entry_path, requires_shared

EXAMPLES = sorted(p for p in (Path(__file__).resolve().parents[1] / "example_structures").iterdir()
                  if p.name.endswith((".pdb", ".cif", ".pdb.gz", ".cif.gz")))


def _files():
    return [pytest.param(entry_path(k), id=k, marks=requires_shared) for k in sorted(ENTRIES)] + \
        [pytest.param(p, id=p.name) for p in EXAMPLES]


def _same(a, b, path="result"):
    """Deep equality, floats to 1e-3 (distances in Å; the same numbers either way)."""
    if isinstance(a, float) or isinstance(b, float):
        if a is None or b is None:
            assert a is b, path
        elif math.isnan(a) or math.isnan(b):
            assert math.isnan(a) and math.isnan(b), path
        else:
            assert a == pytest.approx(b, abs=1e-3), path
    elif isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), path
        for k in a:
            _same(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, (list, tuple)):
        assert isinstance(b, (list, tuple)) and len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            _same(x, y, f"{path}[{i}]")
    else:
        assert a == b, path


@pytest.mark.parametrize("path", _files())
def test_columns_equal_the_atom_loop(path):
    model = read_structure(path).model
    bulk, loop = ModelIndex(model), ModelIndex(model, bulk=False)
    assert bulk._flat is not None, "the bulk path is taken on deposited files"
    assert np.array_equal(bulk.rep_xyz, loop.rep_xyz)
    assert np.array_equal(bulk.is_candidate, loop.is_candidate)
    ids = np.arange(bulk.n_residues)
    a, b = bulk.extract(ids), loop.extract(ids)
    for name in AtomArrays.__slots__:
        x, y = getattr(a, name), getattr(b, name)
        assert x.dtype == y.dtype and np.array_equal(x, y), name


@pytest.mark.parametrize("path", _files())
def test_scan_equals_the_atom_loop(path, monkeypatch):
    fast = fescan.scan(str(path)).to_dict()
    monkeypatch.setattr(ModelIndex.__init__, "__kwdefaults__", {"bulk": False, "structure": None})
    slow = fescan.scan(str(path)).to_dict()
    _same(fast, slow)


@requires_shared
@pytest.mark.parametrize("what", ["chain", "subchain"])
def test_long_names_fall_back_to_the_loop(what):
    # gemmi's flat columns hold 8 bytes: a longer chain name (or subchain, which gemmi
    # refuses) sends the index to the atom loop, with the same columns
    model = read_structure(entry_path("1FDN")).model
    for ch in model:
        if what == "chain":
            ch.name = "CHAIN_NAME_12"
        for res in ch:
            if what == "subchain":
                res.subchain = "SUBCHAIN_NAME_12"
    bulk, loop = ModelIndex(model), ModelIndex(model, bulk=False)
    assert bulk._flat is None
    ids = np.arange(bulk.n_residues)
    a, b = bulk.extract(ids), loop.extract(ids)
    assert set(a.chain) == {"CHAIN_NAME_12"} or what == "subchain"
    for name in AtomArrays.__slots__:
        assert np.array_equal(getattr(a, name), getattr(b, name)), name


@requires_shared
@pytest.mark.parametrize("case", ["twin_residue", "empty_residue"])
def test_residues_the_columns_cannot_tell_apart_fall_back(case):
    # residue starts are read from the columns (a change of chain, number, icode or
    # name); two neighbours with the same id, or an empty residue, make the count
    # differ from the model's, and the model is walked instead: same columns
    loaded = read_structure(entry_path("1FDN"))
    model = loaded.model
    ch = model[0]
    if case == "twin_residue":
        ch.add_residue(ch[5], 6)  # a copy of residue 5 right after it, same number and name
    else:
        ch.add_residue(type(ch[5])(), 6)  # an empty residue
    for structure in (None, loaded.structure):
        bulk, loop = ModelIndex(model, structure=structure), ModelIndex(model, bulk=False)
        assert bulk._flat is not None  # the columns still serve the extraction
        assert bulk.n_residues == loop.n_residues
        ids = np.arange(bulk.n_residues)
        a, b = bulk.extract(ids), loop.extract(ids)
        for name in AtomArrays.__slots__:
            assert np.array_equal(getattr(a, name), getattr(b, name)), name
