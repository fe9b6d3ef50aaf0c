"""Refinement statistics from a structure file's header (PDB ``REMARK 3``, mmCIF ``_refine``).

:func:`read_refinement_stats` reads the numbers that the precision of the
coordinates rests on: resolution, R and R_free, the number of reflections used in
refinement, completeness, the number of non-hydrogen atoms refined, the mean B,
and every overall coordinate error the depositors stated (Cruickshank's DPI,
Blow's DPI, Refmac's ESU, the maximum-likelihood coordinate error, Luzzati).

The header is read from the file text, up to the first coordinate record (PDB) or
the ``_atom_site`` loop (mmCIF); mmCIF categories are parsed with gemmi's CIF
reader, PDB ``REMARK 3`` lines by their wording. ``NULL``, ``?`` and ``.`` are
"not given". mmJSON headers are not read (every field ``None``, with a note).
Nothing here raises on a bad header: what cannot be read is ``None``.
"""

from __future__ import annotations

import gzip
import math
import re
import zlib
from dataclasses import asdict, dataclass
from functools import cache
from typing import Any

import gemmi

from fescan.structure.rawtext import first_record

__all__ = ["RefinementStats", "read_refinement_stats", "refinement_stats_from_block", "refinement_stats_from_text"]


@dataclass(frozen=True, slots=True)
class RefinementStats:
    """Refinement statistics of one file, as deposited (``None`` = not given).

    Attributes
    ----------
    resolution : float or None
        d_min of the refinement (Å).
    r_work, r_free : float or None
        R of the working set and free R (fractions).
    n_reflections : int or None
        Reflections used in refinement (working + test set, as deposited).
    completeness : float or None
        Completeness of the refinement data (fraction, 0-1).
    n_atoms : int or None
        Non-hydrogen atoms in the refinement (protein + nucleic acid + hetero + solvent).
    mean_b : float or None
        Deposited mean B (Å²).
    dpi_rfree, dpi_r : float or None
        Deposited Cruickshank DPI or Refmac ESU from R_free / from R (Å).
    blow_dpi_rfree, blow_dpi_r : float or None
        Deposited Blow DPI from R_free / from R (Å).
    ml_error : float or None
        Deposited maximum-likelihood coordinate error (Å).
    luzzati_free, luzzati : float or None
        Deposited cross-validated and plain Luzzati coordinate error (Å).
    file_format : str
        ``"pdb"``, ``"mmcif"``, ``"mmjson"`` or ``"unknown"``.
    notes : tuple of str
    """

    resolution: float | None = None
    r_work: float | None = None
    r_free: float | None = None
    n_reflections: int | None = None
    completeness: float | None = None
    n_atoms: int | None = None
    mean_b: float | None = None
    dpi_rfree: float | None = None
    dpi_r: float | None = None
    blow_dpi_rfree: float | None = None
    blow_dpi_r: float | None = None
    ml_error: float | None = None
    luzzati_free: float | None = None
    luzzati: float | None = None
    file_format: str = "unknown"
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict of every field."""
        out = asdict(self)
        out["notes"] = list(self.notes)
        return out


def _num(text: str | None) -> float | None:
    """A positive finite number, or ``None`` for NULL / ? / . / junk."""
    if text is None:
        return None
    try:
        v = float(str(text).strip().strip("'\""))
    except ValueError:
        return None
    return v if math.isfinite(v) and v > 0 else None


# --- PDB REMARK 3 --------------------------------------------------------------------
_N = r"([-+0-9.eE]+|NULL)"
_PDB_ITEMS: dict[str, tuple[str, ...]] = {  # field -> wordings, most preferred first
    "resolution": (r"RESOLUTION RANGE HIGH \(ANGSTROMS\)\s*:",),
    "r_work": (r"R VALUE\s+\(WORKING SET, NO CUTOFF\)\s*:", r"R VALUE\s+\(WORKING SET\)\s*:",
               r"R VALUE\s+\(WORKING SET, F>4SIG\(F\)\)\s*:"),
    "r_free": (r"FREE R VALUE\s+\(NO CUTOFF\)\s*:", r"FREE R VALUE\s*:", r"FREE R VALUE\s+\(F>4SIG\(F\)\)\s*:"),
    "n_reflections": (r"NUMBER OF REFLECTIONS\s*:", r"TOTAL NUMBER OF REFLECTIONS\s+\(NO CUTOFF\)\s*:",
                      r"TOTAL NUMBER OF REFLECTIONS\s+\(F>4SIG\(F\)\)\s*:"),
    "completeness": (r"COMPLETENESS \(WORKING\+TEST\)\s+\(%\)\s*:", r"COMPLETENESS FOR RANGE\s+\(%\)\s*:"),
    "mean_b": (r"MEAN B VALUE\s+\(OVERALL, A\*\*2\)\s*:",),
    "dpi_rfree": (r"DPI \(CRUICKSHANK\) BASED ON FREE R VALUE\s+\(A\)\s*:", r"ESU BASED ON FREE R VALUE\s+\(A\)\s*:"),
    "dpi_r": (r"DPI \(CRUICKSHANK\) BASED ON R VALUE\s+\(A\)\s*:", r"ESU BASED ON R VALUE\s+\(A\)\s*:"),
    "blow_dpi_rfree": (r"DPI \(BLOW EQ-9\) BASED ON FREE R VALUE\s+\(A\)\s*:",),
    "blow_dpi_r": (r"DPI \(BLOW EQ-10\) BASED ON R VALUE\s+\(A\)\s*:",),
    "ml_error": (r"ESU BASED ON MAXIMUM LIKELIHOOD\s+\(A\)\s*:", r"COORDINATE ERROR \(MAXIMUM-LIKELIHOOD BASED\)\s*:"),
    "luzzati_free": (r"ESD FROM C-V LUZZATI PLOT\s+\(A\)\s*:",),
    "luzzati": (r"ESD FROM LUZZATI PLOT\s+\(A\)\s*:",),
}
_PDB_ATOMS = ("PROTEIN ATOMS", "NUCLEIC ACID ATOMS", "HETEROGEN ATOMS", "SOLVENT ATOMS")


def _remark3(text: str) -> list[str]:
    """Bodies of the REMARK 3 lines (after ``REMARK   3``), first refinement block only."""
    return [ln[10:].rstrip() for ln in text.splitlines() if ln.startswith("REMARK   3")]


_LITERAL = re.compile(r"[A-Z0-9 ]*")


@cache
def _item(pattern: str) -> tuple[re.Pattern[str], str]:
    """The compiled item expression, and its leading literal words (a line without them cannot match)."""
    rx = re.compile(r"^\s*" + pattern + r"\s*" + _N + r"\s*$", re.IGNORECASE)
    return rx, _LITERAL.match(pattern).group(0).strip()


def _pdb_first(lines: list[str], patterns: tuple[str, ...], upper: list[str] | None = None) -> float | None:
    upper = [ln.upper() for ln in lines] if upper is None else upper
    for p in patterns:
        rx, literal = _item(p)
        for ln, up in zip(lines, upper):
            if literal not in up:  # cheap test first: the expression needs these words (any case)
                continue
            m = rx.match(ln)
            if m:
                v = _num(m.group(1))
                if v is not None:
                    return v
    return None


def _pdb_atoms(lines: list[str]) -> int | None:
    """Non-H atoms in refinement: ``ALL ATOMS`` or the sum of the four kinds (first of each)."""
    total = _pdb_first(lines, (r"ALL ATOMS\s*:",))
    if total is not None:
        return int(total)
    parts = []
    for name in _PDB_ATOMS:
        rx = re.compile(r"^\s*" + name + r"\s*:\s*" + _N + r"\s*$")
        hit = next((m.group(1) for m in map(rx.match, lines) if m), None)
        if hit is not None and hit.upper() != "NULL":
            try:
                parts.append(int(float(hit)))
            except ValueError:
                pass
    return sum(parts) if parts and sum(parts) > 0 else None


def _from_pdb(text: str) -> RefinementStats:
    lines = _remark3(text)
    if not lines:
        return RefinementStats(file_format="pdb", notes=("the file has no REMARK 3 refinement statistics",))
    upper = [ln.upper() for ln in lines]
    vals = {k: _pdb_first(lines, p, upper) for k, p in _PDB_ITEMS.items()}
    n_refl = vals.pop("n_reflections")
    comp = vals.pop("completeness")
    return RefinementStats(**vals, n_reflections=int(n_refl) if n_refl else None,
                           completeness=round(comp / 100.0, 6) if comp and comp <= 100 else None,
                           n_atoms=_pdb_atoms(lines), file_format="pdb")


# --- mmCIF -----------------------------------------------------------------------------
_CIF_REFINE = {
    "resolution": ("ls_d_res_high",),
    "r_work": ("ls_R_factor_R_work", "ls_R_factor_obs"),
    "r_free": ("ls_R_factor_R_free",),
    "n_reflections": ("ls_number_reflns_obs",),
    "completeness": ("ls_percent_reflns_obs",),
    "mean_b": ("B_iso_mean",),
    "dpi_rfree": ("pdbx_overall_SU_R_free_Cruickshank_DPI", "pdbx_overall_ESU_R_Free"),
    "dpi_r": ("overall_SU_R_Cruickshank_DPI", "pdbx_overall_ESU_R"),
    "blow_dpi_rfree": ("pdbx_overall_SU_R_free_Blow_DPI",),
    "blow_dpi_r": ("pdbx_overall_SU_R_Blow_DPI",),
    "ml_error": ("overall_SU_ML",),
}
_ATOM_SITE = re.compile(r"^(?:loop_\s*\n\s*)?_atom_site\.", re.MULTILINE)


def _row(block: gemmi.cif.Block, category: str) -> dict[str, str]:
    """First row of a category (the X-ray row when several refinements are given), tag -> raw value."""
    cat = block.get_mmcif_category(category, raw=True)
    if not cat:
        return {}
    n = max(len(v) for v in cat.values())
    pick = 0
    ids = cat.get("pdbx_refine_id")
    if ids and n > 1:
        pick = next((i for i, v in enumerate(ids) if "X-RAY" in str(v).upper()), 0)
    return {k: (v[pick] if pick < len(v) else None) for k, v in cat.items()}


def _cif_first(row: dict[str, str], tags: tuple[str, ...]) -> float | None:
    for t in tags:
        v = _num(row.get(t))
        if v is not None:
            return v
    return None


def _from_cif(text: str) -> RefinementStats:
    m = _ATOM_SITE.search(text)
    head = text[: m.start()] if m else text
    try:
        block = gemmi.cif.read_string(head).sole_block()
    except (RuntimeError, ValueError) as exc:
        return RefinementStats(file_format="mmcif", notes=(f"mmCIF header not readable: {exc}",))
    return refinement_stats_from_block(block)


def refinement_stats_from_block(block: gemmi.cif.Block) -> RefinementStats:
    """Refinement statistics from a parsed mmCIF block (the reader's, so the file is not read again).

    Parameters
    ----------
    block : gemmi.cif.Block

    Returns
    -------
    RefinementStats
    """
    ref = _row(block, "_refine.")
    vals = {k: _cif_first(ref, tags) for k, tags in _CIF_REFINE.items()}
    reflns = _row(block, "_reflns.")
    if vals["completeness"] is None:
        vals["completeness"] = _num(reflns.get("percent_possible_obs"))
    if vals["resolution"] is None:
        vals["resolution"] = _num(reflns.get("d_resolution_high"))
    hist = _row(block, "_refine_hist.")
    n_atoms = _num(hist.get("number_atoms_total"))
    if n_atoms is None:
        parts = [_num(hist.get(t)) for t in ("pdbx_number_atoms_protein", "pdbx_number_atoms_nucleic_acid",
                                            "pdbx_number_atoms_ligand", "number_atoms_solvent")]
        n_atoms = sum(p for p in parts if p) or None
    ana = _row(block, "_refine_analyze.")
    comp = vals.pop("completeness")
    n_refl = vals.pop("n_reflections")
    notes = () if ref else ("the file has no _refine category",)
    return RefinementStats(**vals, n_reflections=int(n_refl) if n_refl else None,
                           completeness=round(comp / 100.0, 6) if comp and comp <= 100 else None,
                           n_atoms=int(n_atoms) if n_atoms else None,
                           luzzati_free=_num(ana.get("Luzzati_coordinate_error_free")),
                           luzzati=_num(ana.get("Luzzati_coordinate_error_obs")), file_format="mmcif", notes=notes)


# --- entry points ----------------------------------------------------------------------
def refinement_stats_from_text(text: str) -> RefinementStats:
    """Refinement statistics from a structure file's (decompressed) text.

    Parameters
    ----------
    text : str
        The file content; the header alone is enough.

    Returns
    -------
    RefinementStats

    Examples
    --------
    >>> s = refinement_stats_from_text("REMARK   3   FREE R VALUE                     : 0.290\\n")
    >>> s.r_free
    0.29
    """
    stripped = text.lstrip()
    if stripped.startswith("{"):
        return RefinementStats(file_format="mmjson", notes=("refinement statistics are not read from mmJSON",))
    if re.match(r"(?:#[^\n]*\n\s*)*data_", stripped, re.IGNORECASE):
        return _from_cif(stripped)
    return _from_pdb(text[: first_record(text, ("ATOM  ", "HETATM"))])


def read_refinement_stats(path: str) -> RefinementStats:
    """Refinement statistics of a (possibly gzipped) structure file.

    Parameters
    ----------
    path : str or path-like

    Returns
    -------
    RefinementStats
        Every field ``None`` (with a note) when the file cannot be read.
    """
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
        if raw[:2] == b"\x1f\x8b":
            raw = gzip.decompress(raw)
    except (OSError, EOFError, zlib.error) as exc:
        return RefinementStats(notes=(f"{path}: header not readable ({exc})",))
    return refinement_stats_from_text(raw.decode("latin-1"))
