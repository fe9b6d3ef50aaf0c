"""Join a residue whose atom records are split into separate runs of the file.

A residue's records should follow one another (wwPDB format guide, ATOM/HETATM;
the same holds for the rows of an mmCIF atom list), but a hand-edited or
concatenated file may list half of a flavin after the other ligands. gemmi then
reads two residues with the same chain, number, insertion code and name, and the
analysis would see two half cofactors with a 1 Å "hop" between them. Such parts
are joined into the first one, with a note. Two parts that share an atom name and
alternative location are two residues that truly share an identifier: they are
left apart, with a note.

Only residues outside the polymers and water are looked at (gemmi's table of
components tells them): a split amino acid leaves every analysis alike, as atoms
are searched by position and named by their residue's identifier.
"""

from __future__ import annotations

from collections.abc import Collection
from functools import lru_cache

import gemmi

__all__ = ["join_split_residues"]


@lru_cache(maxsize=4096)
def _polymer_or_water(name: str) -> bool:
    info = gemmi.find_tabulated_residue(name)
    return info is not None and (info.is_amino_acid() or info.is_nucleic_acid() or info.is_water())


def join_split_residues(model: gemmi.Model, chains: Collection[str] | None = None) -> list[str]:
    """Join, in place, the parts of every non-polymer residue listed in separate runs.

    Parameters
    ----------
    model : gemmi.Model
        The model (changed in place).
    chains : collection of str, optional
        Look only at these chains (those the file writes in several runs: gemmi
        gathers a residue within one run by itself); every chain when omitted.

    Returns
    -------
    list of str
        One note per residue joined, or left apart because its parts share an atom.
    """
    notes: list[str] = []
    for ch in model:
        if chains is not None and ch.name not in chains:
            continue
        first: dict[tuple[str, int, str], int] = {}
        parts: list[tuple[int, int]] = []
        for i, res in enumerate(ch):
            name = res.name
            if _polymer_or_water(name):
                continue
            seqid = res.seqid
            key = (name, seqid.num, seqid.icode)
            if key in first:
                parts.append((first[key], i))
            else:
                first[key] = i
        if not parts:
            continue
        joined: list[int] = []
        for keep, extra in parts:
            target, piece = ch[keep], ch[extra]
            label = f"{ch.name}/{target.seqid.num}{target.seqid.icode.strip()} {target.name}"
            names = {(a.name, a.altloc) for a in target}
            if any((a.name, a.altloc) in names for a in piece):
                notes.append(f"two residues share the identifier {label} (same atom names): read as two residues")
                continue
            for atom in piece:
                target.add_atom(atom)
            joined.append(extra)
            notes.append(f"residue {label}: its atom records are split into separate runs of the file "
                         "(not one after the other): joined as one residue")
        for index in sorted(joined, reverse=True):
            del ch[index]
    return notes
