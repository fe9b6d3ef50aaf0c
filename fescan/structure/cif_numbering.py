"""Residue numbers for an mmCIF file that has no author residue numbers.

gemmi numbers residues from ``_atom_site.auth_seq_id``. Without that column every
residue outside a polymer (``label_seq_id`` is ``.`` there) gets the same unset
number, and neighbouring residues of one code — two SF4 clusters listed one after
the other — are read as a single residue: the analysis would then see one
16-atom "cluster" instead of two. Before gemmi builds the structure, this module
adds the column: polymer residues take their ``label_seq_id``; every other residue
takes the next number after the highest ``label_seq_id`` of its chain, in file
order. A new residue starts where the ``label_asym_id`` or the component changes,
or where an atom name (with its alternative location) comes round again — the
waters of one ``label_asym_id`` are one residue per oxygen.
"""

from __future__ import annotations

import gemmi

__all__ = ["number_residues_without_author_numbers"]

_BLANK = (".", "?", "")  # null values (as_string gives "" for both)


def _column(block: gemmi.cif.Block, tag: str) -> list[str] | None:
    col = block.find_values("_atom_site." + tag)
    return [gemmi.cif.as_string(v) for v in col] if len(col) else None


def number_residues_without_author_numbers(block: gemmi.cif.Block) -> str | None:
    """Add ``_atom_site.auth_seq_id`` when the atom list lacks it; say what was done.

    Parameters
    ----------
    block : gemmi.cif.Block
        The data block holding the ``_atom_site`` loop (changed in place).

    Returns
    -------
    str or None
        A note for the reader's notes when numbers were made, else None (the file
        has author numbers, or lacks a column the numbering needs, or its atom
        list is not a loop).
    """
    if len(block.find_values("_atom_site.auth_seq_id")) or not len(block.find_values("_atom_site.id")):
        return None
    seq, asym = _column(block, "label_seq_id"), _column(block, "label_asym_id")
    comp, atom = _column(block, "label_comp_id"), _column(block, "label_atom_id")
    if seq is None or asym is None or comp is None or atom is None:
        return None
    item = block.find_loop("_atom_site.id")
    loop = item.get_loop()
    if loop is None:  # a single atom written as key-value pairs: nothing to tell apart
        return None
    n = len(seq)
    alt = _column(block, "label_alt_id") or [""] * n
    chain = _column(block, "auth_asym_id") or asym
    model = _column(block, "pdbx_PDB_model_num") or ["1"] * n
    highest: dict[tuple[str, str], int] = {}
    for s, c, m in zip(seq, chain, model):
        if s not in _BLANK:
            try:
                highest[(m, c)] = max(highest.get((m, c), 0), int(s))
            except ValueError:
                pass
    values: list[str] = []
    current, last, seen = "", None, set()
    made = 0
    for k in range(n):
        if seq[k] not in _BLANK:
            values.append(seq[k])
            last = None
            continue
        key = (model[k], asym[k], comp[k])
        name = (atom[k], alt[k])
        if key != last or name in seen:  # a new residue
            owner = (model[k], chain[k])
            highest[owner] = highest.get(owner, 0) + 1
            current, last, seen = str(highest[owner]), key, set()
            made += 1
        seen.add(name)
        values.append(current)
    loop.add_columns(["_atom_site.auth_seq_id"], ".")
    column = block.find_values("_atom_site.auth_seq_id")
    for k, v in enumerate(values):
        column[k] = v
    return ("the atom list has no author residue numbers (_atom_site.auth_seq_id): polymer residues are "
            f"numbered by label_seq_id, the {made} other residue(s) on from the last number of their chain "
            "in file order")
