"""Test helpers that rewrite real structures: hide cluster CCD codes, split clusters, move cofactors."""

from __future__ import annotations

from pathlib import Path

import gemmi

from fescan.cofactors.registry import ccd_table


def _cluster_codes() -> set[str]:
    return {k for k, v in ccd_table().items() if v.category == "iron-sulfur"}


def rename_clusters(st: gemmi.Structure, new_name: str = "UNL") -> int:
    """Rename every Fe-S cluster residue (by CCD code) to ``new_name``; return how many."""
    codes, n = _cluster_codes(), 0
    for m in st:
        for ch in m:
            for res in ch:
                if res.name in codes:
                    res.name = new_name
                    n += 1
    return n


def split_clusters(st: gemmi.Structure, start: int = 9001) -> int:
    """Replace each cluster residue by single-atom residues named FE and S (no CCD code)."""
    codes, n = _cluster_codes(), 0
    for m in st:
        for ch in m:
            num = start
            idx = [i for i, res in enumerate(ch) if res.name in codes]
            new = []
            for i in idx:
                for a in ch[i]:
                    r = gemmi.Residue()
                    r.name = "FE" if a.element.name.upper() == "FE" else a.element.name.upper()
                    r.seqid = gemmi.SeqId(num, " ")
                    r.het_flag = "H"
                    atom = a.clone()
                    atom.name = r.name
                    r.add_atom(atom)
                    new.append(r)
                    num += 1
                n += 1
            for i in reversed(idx):
                del ch[i]
            for r in new:
                ch.add_residue(r)
    return n


def move_residue(st: gemmi.Structure, chain: str, seqnum: int, shift: tuple[float, float, float]) -> None:
    """Translate every atom of one residue (all models) by ``shift`` Å."""
    for m in st:
        for ch in m:
            if ch.name != chain:
                continue
            for res in ch:
                if res.seqid.num == seqnum:
                    for a in res:
                        a.pos = gemmi.Position(a.pos.x + shift[0], a.pos.y + shift[1], a.pos.z + shift[2])


def remove_residue(st: gemmi.Structure, chain: str, seqnum: int) -> None:
    """Delete one residue (all models)."""
    for m in st:
        for ch in m:
            if ch.name != chain:
                continue
            for i in reversed(range(len(ch))):
                if ch[i].seqid.num == seqnum:
                    del ch[i]


def write(st: gemmi.Structure, path: Path) -> Path:
    """Write as mmCIF when the suffix says so, else PDB."""
    st.setup_entities()
    if path.suffix == ".cif":
        st.make_mmcif_document().write_file(str(path))
    else:
        st.write_pdb(str(path))
    return path
