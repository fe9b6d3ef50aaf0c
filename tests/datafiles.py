"""Registry of the real deposited PDB entries used by the tests.

The files live outside the repository, in ``shared/structures`` beside the repo
root (``../shared/structures`` from it); their provenance is in the
``SOURCES.md`` there. CI provides the folder; the environment variable
``FESCAN_SHARED_STRUCTURES`` points elsewhere when set. Tests that need a file
carry :data:`requires_shared` and are skipped, with the reason, when the folder
is absent. Files are never fetched at test time.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

__all__ = ["SHARED", "ENTRIES", "entry_path", "requires_shared"]

#: Folder holding the shared structure files.
SHARED: Path = Path(
    os.environ.get("FESCAN_SHARED_STRUCTURES")
    or Path(__file__).resolve().parents[1].parent / "shared" / "structures"
)

#: PDB ID -> file name in :data:`SHARED` (as deposited by the source; see SOURCES.md).
ENTRIES: dict[str, str] = {
    "1FDN": "1FDN.pdb",  # 2[4Fe-4S] ferredoxin, X-ray 1.84 A
    "7FD1": "7FD1.pdb",  # 7-Fe ferredoxin, riding H atoms, altlocs
    "6LK1": "6LK1.pdb",  # plant-type [2Fe-2S] ferredoxin, 0.90 A, altlocs, right-trimmed lines
    "5WQQ": "5WQQ.cif",  # HiPIP, mmCIF, 0.80 A, H atoms, altlocs
    "2DSX": "2DSX.pdb",  # rubredoxin, 0.68 A (Fe(Cys)4, no cluster)
    "2NIP": "2NIP.pdb",  # nitrogenase Fe protein, inter-subunit [4Fe-4S]
    "1KF6": "1KF6.pdb",  # quinol-fumarate reductase (FAD, 3 Fe-S, HQNO), 1.5 MB
    "1BE3": "1BE3.pdb.gz",  # cytochrome bc1 (hemes, Rieske), gzip
    "2AXT": "2AXT.pdb.gz",  # photosystem II, 36 case-sensitive chains, gzip (3.9 MB text)
    "19HC": "19HC.pdb.gz",  # nine-haem cytochrome c, gzip
    "1DWL": "1DWL.pdb",  # NMR, 3 models with different content
    "1CLF": "1CLF.pdb",  # NMR, 16 models
    "4CRM": "4CRM.cif",  # cryo-EM 8.75 A, mmCIF
    "3EK3": "3EK3.cif",  # nitroreductase with FMN, mmCIF
    "2FUG": "2FUG.pdb",  # complex I hydrophilic domain (assembly file, header ID XXXX), 1.6 MB
    "1YQ9": "1YQ9.pdb",  # [NiFe] hydrogenase (assembly file, header ID XXXX), altlocs
}

#: Skip marker for tests that read files from :data:`SHARED`.
requires_shared = pytest.mark.skipif(
    not SHARED.is_dir(), reason=f"{SHARED} not present (CI provides ../shared/structures)"
)


def entry_path(pdb_id: str) -> Path:
    """Return the path of a shared entry, e.g. ``entry_path("1FDN")``.

    Parameters
    ----------
    pdb_id : str
        PDB ID, any case; a key of :data:`ENTRIES`.

    Returns
    -------
    pathlib.Path
        Path of the file in :data:`SHARED` (it may not exist when the folder is absent).

    Raises
    ------
    KeyError
        The ID is not in the registry.
    """
    key = pdb_id.upper()
    if key not in ENTRIES:
        raise KeyError(f"{pdb_id!r} is not a registered shared entry; known: {', '.join(ENTRIES)}")
    return SHARED / ENTRIES[key]
