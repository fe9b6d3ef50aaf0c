"""Silence is an error: cofactors the file's header names but its coordinates lack.

A PDB file lists its hetero groups in the header (``HET`` records, one per
residue, and ``FORMUL`` with a count); an mmCIF file in ``_pdbx_nonpoly_scheme``
(one row per residue), ``_pdbx_entity_nonpoly`` and ``_chem_comp``. When those
name a cofactor code (a code of the packaged CCD table, or a redox-metal ion)
that the chosen model holds fewer times, or when the chosen model of a
multi-model file has no cofactor but other models do, the result says so
instead of silently reporting fewer cofactors.
"""

from __future__ import annotations

import gzip
from collections import Counter
from pathlib import Path

import gemmi

from fescan.cofactors.metal_sites import METALS
from fescan.cofactors.registry import METAL_ION_CODES, ccd_table
from fescan.structure.header_codes import codes_from_block, codes_from_pdb_header

__all__ = ["cofactor_codes", "header_counts", "missing_cofactor_notes", "models_with_cofactors"]



def cofactor_codes() -> frozenset[str]:
    """Codes whose absence matters: table codes of analysed groups and redox-metal ions."""
    return frozenset(k for k, v in ccd_table().items() if v.category != "not analysed") | METAL_ION_CODES


def _open_text(path: str | Path):
    p = str(path)
    if p.endswith(".gz"):
        return gzip.open(p, "rt", encoding="utf-8", errors="replace")
    return open(p, encoding="utf-8", errors="replace")  # noqa: SIM115


def _is_cif(path: str | Path) -> bool:
    name = str(path).lower().removesuffix(".gz")
    if name.endswith((".cif", ".mmcif")):
        return True
    if name.endswith((".pdb", ".ent")):
        return False
    with _open_text(path) as fh:
        for line in fh:
            if line.strip():
                return line.startswith("data_")
    return False


def header_counts(path: str | Path) -> dict[str, int | None]:
    """Hetero-group codes named in the header, with their count when the header gives one.

    Reads the file; a scan takes the same counts from the reading instead
    (:attr:`fescan.structure.reading.LoadedStructure.header_codes`).

    Parameters
    ----------
    path : str or Path
        PDB or mmCIF file, gzipped or not.

    Returns
    -------
    dict of str to int or None
        Code → number of residues the header lists (``None``: named without a count).
    """
    if _is_cif(path):
        try:
            block = gemmi.cif.read(str(path)).sole_block()
        except (RuntimeError, ValueError):
            return {}
        return codes_from_block(block)
    lines = []
    with _open_text(path) as fh:
        for line in fh:
            if line[:6] in ("ATOM  ", "HETATM", "MODEL "):
                break
            lines.append(line)
    return codes_from_pdb_header("".join(lines))


def missing_cofactor_notes(path: str | Path, model: gemmi.Model,
                           counts: dict[str, int | None] | None = None) -> list[str]:
    """Notes for cofactor codes the header lists more often than the model holds them.

    Parameters
    ----------
    path : str or Path
        The file read (its header is parsed again).
    model : gemmi.Model
        The chosen model.
    counts : dict of str to int or None, optional
        The header's codes as the reader found them; read from ``path`` when absent.

    Returns
    -------
    list of str
        For example ``["the header lists SF4 ×2; the coordinates hold none"]``.
    """
    wanted = cofactor_codes()
    listed = {k: v for k, v in (header_counts(path) if counts is None else counts).items() if k in wanted}
    if not listed:
        return []
    held = Counter(res.name for ch in model for res in ch if res.name in listed)
    notes = []
    for code in sorted(listed):
        n = listed[code]
        have = held.get(code, 0)
        if n is None and have == 0:
            notes.append(f"the header names {code}; the coordinates hold none")
        elif n is not None and have < n:
            notes.append(f"the header lists {code} ×{n}; the coordinates hold {have or 'none'}")
    return notes


def models_with_cofactors(path: str | Path) -> dict[int, list[str]]:
    """Model number → cofactor codes (or redox-metal elements) it holds, for every model of the file.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    dict of int to list of str
        Only models holding at least one such residue.
    """
    st = gemmi.read_structure(str(path), merge_chain_parts=False)
    wanted = cofactor_codes()
    out: dict[int, list[str]] = {}
    for k, m in enumerate(st, start=1):
        codes = set()
        for ch in m:
            for res in ch:
                if res.name in wanted or (res.het_flag == "H" and any(a.element.name.upper() in METALS for a in res)):
                    codes.add(res.name)
        if codes:
            out[m.num if m.num > 0 else k] = sorted(codes)
    return out
