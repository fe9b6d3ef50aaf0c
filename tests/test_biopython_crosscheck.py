"""Independent parser cross-check: coordinates and ligand distances equal Biopython's (1e-3 Å).

Biopython's Bio.PDB (PDBParser / MMCIFParser) is an independent reader of the same
files (shared/structures, SOURCES.md).
"""

from __future__ import annotations

import gzip
import io

import numpy as np
import pytest
from Bio.PDB import MMCIFParser, PDBParser

from fescan.cofactors import find_cofactors
from fescan.structure.reading import read_structure
from tests.datafiles import entry_path, requires_shared

pytestmark = requires_shared

ENTRIES = ["1FDN", "7FD1", "6LK1", "5WQQ", "2DSX", "2NIP", "1KF6", "1BE3", "2FUG", "1YQ9", "4CRM"]


def _bio(path):
    name = path.name
    opener = gzip.open if name.endswith(".gz") else open
    with opener(path, "rt") as fh:
        text = fh.read()
    parser = MMCIFParser(QUIET=True) if ".cif" in name else PDBParser(QUIET=True)
    return parser.get_structure("x", io.StringIO(text))[0]


def _bio_atom(model, ref):
    chain = model[ref.chain]
    for res in chain:
        hetflag, num, icode = res.id
        if num == ref.seqnum and icode.strip() == ref.icode and res.get_resname() == ref.resname:
            atom = res[ref.name]
            if atom.is_disordered() and ref.altloc:
                atom = atom.disordered_get(ref.altloc)
            return atom.coord.astype(float)
    raise KeyError(ref)


@pytest.mark.parametrize("pdb_id", ENTRIES)
def test_fe_s_coordinates_and_ligand_distances(pdb_id):
    path = entry_path(pdb_id)
    loaded = read_structure(path)
    cofs = [c for c in find_cofactors(loaded.model) if c.category in ("iron-sulfur", "iron")]
    assert cofs
    bio = _bio(path)
    n = 0
    for c in cofs:
        metal_xyz = {}
        for a in c.redox_atoms:
            xyz = _bio_atom(bio, a)
            assert np.allclose(xyz, a.xyz, atol=1e-3), (c.label, a.name)
            metal_xyz[a.name] = xyz
            n += 1
        for lig in c.ligands:
            d = float(np.linalg.norm(_bio_atom(bio, lig.atom) - metal_xyz[lig.metal]))
            assert d == pytest.approx(lig.distance, abs=1e-3)
    assert n > 0
