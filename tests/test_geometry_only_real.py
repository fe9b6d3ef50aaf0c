"""Geometry-only detection on rewritten real entries: same clusters and classes without CCD codes.

Real entries from shared/structures (SOURCES.md); the rewrites are made by tests/rewrite.py.
"""

from __future__ import annotations

from collections import Counter

import gemmi
import pytest

from fescan.cofactors import find_cofactors
from fescan.structure.reading import read_structure
from tests import rewrite
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared

ENTRIES = ["1FDN", "7FD1", "6LK1", "5WQQ", "2NIP", "1KF6", "1BE3", "2FUG", "1YQ9", "4CRM"]


def _clusters(path):
    loaded = read_structure(path)
    cofs = find_cofactors(loaded.model, resolution=loaded.info.resolution)
    return [c for c in cofs if c.category == "iron-sulfur"]


def _signature(cofs):
    # class and centroid (rounded to 0.01 A) of each cluster
    return Counter((c.cls, tuple(round(x, 2) for x in c.centroid)) for c in cofs)


@pytest.mark.parametrize("pdb_id", ENTRIES)
@pytest.mark.parametrize("how", ["UNL", "split"])
def test_same_clusters_without_codes(pdb_id, how, tmp_path):
    original = _clusters(entry_path(pdb_id))
    assert original, "entry has Fe-S clusters"
    st = gemmi.read_structure(str(entry_path(pdb_id)))
    n = rewrite.rename_clusters(st) if how == "UNL" else rewrite.split_clusters(st)
    assert n == len(original)
    out = rewrite.write(st, tmp_path / f"{pdb_id}_{how}.pdb")
    found = _clusters(out)
    assert _signature(found) == _signature(original)
    assert all(c.ccd_code is None and c.detected_by == "geometry" for c in found)
    # the same ligands, by residue and atom
    lig = lambda cs: sorted((lig.atom.chain, lig.atom.seqnum, lig.atom.name) for c in cs for lig in c.ligands)  # noqa: E731
    assert lig(found) == lig(original)
