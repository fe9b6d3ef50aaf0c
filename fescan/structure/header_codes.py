"""Hetero-group codes a structure file's header names, with their counts.

A PDB file lists its hetero groups before the coordinates (``HET`` records, one
per residue; ``FORMUL`` with a count; ``HETNAM`` with the name only); an mmCIF
file in ``_pdbx_nonpoly_scheme`` (one row per residue), ``_pdbx_entity_nonpoly``
and ``_chem_comp``. Both are read here from what the reader already holds (the
header text, the parsed block), so the file is never read twice.
"""

from __future__ import annotations

import re
from collections import Counter

import gemmi

__all__ = ["codes_from_block", "codes_from_pdb_header"]

_FORMUL = re.compile(r"^FORMUL\s+\d+\s+(\S+)\s+(\*?)(\d+)?\(")


def codes_from_pdb_header(text: str) -> dict[str, int | None]:
    """Codes named by the HET, FORMUL and HETNAM records of PDB text.

    Parameters
    ----------
    text : str
        PDB text; reading stops at the first ATOM, HETATM or MODEL record.

    Returns
    -------
    dict of str to int or None
        Code → number of residues listed (``None``: named without a count).

    Examples
    --------
    >>> codes_from_pdb_header("HET    SF4  A 501       8\\nHET    SF4  B 501       8\\n")
    {'SF4': 2}
    """
    het: Counter = Counter()
    formul: dict[str, int | None] = {}
    named: set[str] = set()
    for line in text.splitlines():
        rec = line[:6]
        if rec in ("ATOM  ", "HETATM", "MODEL "):
            break
        if rec == "HET   ":
            het[line[7:10].strip()] += 1
        elif rec == "FORMUL":
            m = _FORMUL.match(line)
            if m:
                formul[m.group(1)] = int(m.group(3)) if m.group(3) else None
            else:
                parts = line[12:].split()
                if parts:
                    formul.setdefault(parts[0], 1)
        elif rec == "HETNAM":
            code = line[11:14].strip()
            if code:
                named.add(code)
    out: dict[str, int | None] = dict.fromkeys(named)
    out.update(formul)
    out.update(het)
    return out


def codes_from_block(block: gemmi.cif.Block) -> dict[str, int | None]:
    """Codes named by ``_chem_comp``, ``_pdbx_entity_nonpoly`` and ``_pdbx_nonpoly_scheme`` of an mmCIF block.

    Parameters
    ----------
    block : gemmi.cif.Block

    Returns
    -------
    dict of str to int or None
        Code → rows of ``_pdbx_nonpoly_scheme`` (``None``: named without a count).
    """
    out: dict[str, int | None] = {}
    for tag in ("_chem_comp.id", "_pdbx_entity_nonpoly.comp_id"):
        for v in block.find_values(tag):
            out[gemmi.cif.as_string(v)] = None
    scheme = [gemmi.cif.as_string(v) for v in block.find_values("_pdbx_nonpoly_scheme.mon_id")]
    if scheme:
        for code, n in Counter(scheme).items():
            out[code] = n
    return out
