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
import re
from collections import Counter
from pathlib import Path

import gemmi

from fescan.cofactors.metal_sites import METALS
from fescan.cofactors.registry import METAL_ION_CODES, ccd_table

__all__ = ["cofactor_codes", "header_counts", "missing_cofactor_notes", "models_with_cofactors"]

_FORMUL = re.compile(r"^FORMUL\s+\d+\s+(\S+)\s+(\*?)(\d+)?\(")


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
        return _cif_counts(path)
    het: Counter = Counter()
    formul: dict[str, int | None] = {}
    named: set[str] = set()
    with _open_text(path) as fh:
        for line in fh:
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


def _cif_counts(path: str | Path) -> dict[str, int | None]:
    try:
        block = gemmi.cif.read(str(path)).sole_block()
    except (RuntimeError, ValueError):
        return {}
    out: dict[str, int | None] = {}
    for tag in ("_chem_comp.id", "_pdbx_entity_nonpoly.comp_id"):
        for v in block.find_values(tag):
            out[gemmi.cif.as_string(v)] = None
    scheme = [gemmi.cif.as_string(v) for v in block.find_values("_pdbx_nonpoly_scheme.mon_id")]
    if scheme:
        for code, n in Counter(scheme).items():
            out[code] = n
    return out


def missing_cofactor_notes(path: str | Path, model: gemmi.Model) -> list[str]:
    """Notes for cofactor codes the header lists more often than the model holds them.

    Parameters
    ----------
    path : str or Path
        The file read (its header is parsed again).
    model : gemmi.Model
        The chosen model.

    Returns
    -------
    list of str
        For example ``["the header lists SF4 ×2; the coordinates hold none"]``.
    """
    wanted = cofactor_codes()
    listed = {k: v for k, v in header_counts(path).items() if k in wanted}
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
