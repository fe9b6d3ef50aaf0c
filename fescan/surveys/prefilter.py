"""Prefilter for archive-scale surveys: can this file hold anything fescan analyses?

Decided from the file's bytes, streamed through the decompressor, before any
parsing. A file *can hold a candidate* when its atom records name

* a redox metal (the elements of :data:`fescan.cofactors.metal_sites.METALS`) in
  the element column (PDB columns 77-78, mmCIF ``_atom_site.type_symbol``) or, for
  PDB lines without an element column, at the start of the atom name; or
* a residue whose code is in the packaged CCD cofactor table
  (:func:`fescan.cofactors.registry.ccd_table`, every category, "not analysed"
  included), a single-ion code (``METAL_ION_CODES``) or a placeholder ligand
  name (``UNL``, ``LIG``..., which a flavin found by its ring shape may carry),

in ``ATOM`` or ``HETATM`` records alike (a heme written as ``ATOM`` passes).

Two stages keep it at about decompression speed and never wrong in the unsafe
direction:

1. a token screen over the raw text: any whitespace-delimited word equal to one
   of the codes or metal symbols (an altloc letter glued in front, a charge or a
   number glued behind, quotes around are allowed) is a hit. No hit: the file cannot hold a candidate. A hit on a code of three or
   more characters (``SF4``, ``HEM``, ``FMN``): it can.
2. only when every hit is a short word that is also a common chain or atom
   name (``V``, ``W``, ``FE``, ``CO``...): the atom records are read column by
   column (numpy over the PDB lines; gemmi's CIF tokenizer for mmCIF) and the
   element and residue-name columns decide.

What the prefilter cannot see: a flavin or quinone under a private residue name
(neither a CCD code nor a placeholder) with no metal. Switch the prefilter off
(``survey(..., prefilter=False)``, ``fescan survey --no-prefilter``) for such files.
"""

from __future__ import annotations

import gzip
import os
import re
import stat
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from fescan.core.arrays import distinct

__all__ = ["Verdict", "can_hold_candidate", "screen_text", "NO_CANDIDATE"]

#: Status of a survey row for a file the prefilter set aside.
NO_CANDIDATE = "no redox candidate"

_CHUNK = 1 << 22  # bytes of decompressed text per step
_OVERLAP = 16  # bytes carried between steps, so a word cut by a step boundary is still seen


@dataclass(frozen=True, slots=True)
class Verdict:
    """Outcome of the prefilter for one file.

    Attributes
    ----------
    candidate : bool
        True when the file may hold a cofactor (it is then analysed).
    reason : str
        The word or column value that decided (``"SF4"``, ``"element FE"``), or why
        nothing was found.
    """

    candidate: bool
    reason: str


@lru_cache(maxsize=1)
def _vocabulary() -> tuple[frozenset[str], frozenset[str], frozenset[str]]:
    """(residue codes, metal symbols upper-case, short ambiguous words) from the packaged tables."""
    from fescan.cofactors.metal_sites import METALS
    from fescan.cofactors.registry import METAL_ION_CODES, UNKNOWN_LIGAND_CODES, ccd_table

    codes = frozenset(ccd_table()) | METAL_ION_CODES | (UNKNOWN_LIGAND_CODES - {"UNK"})  # UNK: amino acid
    metals = frozenset(METALS)
    short = frozenset(w for w in codes | metals if len(w) < 3) | metals
    return codes, metals, short


@lru_cache(maxsize=1)
def _words() -> frozenset[bytes]:
    """Every word the token screen looks for, as bytes (metal symbols also as Fe and fe)."""
    codes, metals, _ = _vocabulary()
    words = set(codes)
    for m in metals:
        words |= {m, m.capitalize(), m.lower()}
    return frozenset(w.encode() for w in words)


def _trie(words: list[bytes]) -> bytes:
    """Regex alternation of ``words`` as a prefix tree (re tries one branch per first letter)."""
    groups: dict[bytes, list[bytes]] = {}
    for w in words:
        groups.setdefault(w[:1], []).append(w[1:])
    parts = []
    for first in sorted(groups):
        rest = [r for r in groups[first] if r]
        optional = b"" in groups[first]
        if rest:
            parts.append(re.escape(first) + b"(?:" + _trie(rest) + b")" + (b"?" if optional else b""))
        else:
            parts.append(re.escape(first))
    return b"|".join(parts)


@lru_cache(maxsize=1)
def _token_pattern() -> re.Pattern[bytes]:
    # a whitespace-delimited word, optionally quoted, with a charge or number glued after it
    return re.compile(rb"(?<=\s)['\"]?(" + _trie(sorted(_words())) + rb")[\d+\-]{0,3}['\"]?(?=\s)")


def _screen_hits(text: bytes) -> set[str]:
    """Distinct words of the vocabulary in mmCIF ``text`` (stage 1)."""
    return {m.decode("ascii") for m in set(_token_pattern().findall(text))}


def _decisive(hits: set[str]) -> str | None:
    """A hit that settles it without reading columns (a code of 3+ characters), else None."""
    _, _, short = _vocabulary()
    for h in sorted(hits):
        if h.upper() not in short and len(h) >= 3:
            return h
    return None


def _key(cols: np.ndarray) -> np.ndarray:
    """Rows of bytes (n, w <= 4) → one integer per row (for a fast unique)."""
    key = np.zeros(len(cols), dtype=np.int64)
    for k in range(cols.shape[1]):
        key = (key << 8) | cols[:, k]
    return key


def _word(key: int, width: int) -> str:
    return int(key).to_bytes(width, "big").decode("latin-1").strip()


def _pdb_columns(text: bytes) -> Verdict:
    """Stage 2 for PDB text: element (77-78), residue name (18-20), atom name (13-16) of atom lines."""
    codes, metals, _ = _vocabulary()
    buf = np.frombuffer(text, dtype=np.uint8)
    if len(buf) == 0:
        return Verdict(False, "empty")
    nl = np.flatnonzero(buf == 10)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [len(buf)]))
    keep = starts + 6 <= ends
    starts, ends = starts[keep], ends[keep]
    head = buf[starts[:, None] + np.arange(6)] & 0xDF  # upper-case letters (gemmi reads any case)
    is_atom = (head[:, :4] == np.frombuffer(b"ATOM", np.uint8)).all(1) | \
              (head[:, :4] == np.frombuffer(b"HETA", np.uint8)).all(1)
    starts, ends = starts[is_atom], ends[is_atom]
    if len(starts) == 0:
        return Verdict(False, "no atom records")
    padded = np.concatenate((buf, np.full(80, 32, np.uint8)))

    def column(first: int, width: int) -> np.ndarray:
        idx = starts[:, None] + first + np.arange(width)
        raw = padded[idx]
        raw[idx >= ends[:, None]] = 32  # past the end of a short line: blank
        return raw

    resnames = {_word(k, 3) for k in distinct(_key(column(17, 3)))}
    found = sorted(resnames & codes)
    if found:
        return Verdict(True, f"residue {found[0]}")
    elements = column(76, 2)
    blank = (elements == 32).all(1)
    symbols = {_word(k, 2).upper() for k in distinct(_key(elements[~blank]))}
    hit = sorted(symbols & metals)
    if hit:
        return Verdict(True, f"element {hit[0]}")
    if blank.any():  # no element column: gemmi takes the element from the atom name
        for k in distinct(_key(column(12, 2)[blank])):
            word = _word(k, 2).upper()
            if word in metals or word[:1] in metals:
                return Verdict(True, f"atom name {word}")
    return Verdict(False, "no redox metal or cofactor code in the atom records")


def _cif_columns(text: bytes) -> Verdict:
    """Stage 2 for mmCIF text: ``_atom_site`` element and residue-name columns (gemmi's CIF tokenizer)."""
    import gemmi

    codes, metals, _ = _vocabulary()
    try:
        doc = gemmi.cif.read_string(text)
    except Exception:  # unreadable here: let the full analysis report it
        return Verdict(True, "not readable by the prefilter")
    for block in doc:
        for tag in ("_atom_site.label_comp_id", "_atom_site.auth_comp_id"):
            found = sorted({gemmi.cif.as_string(v) for v in block.find_values(tag)} & codes)
            if found:
                return Verdict(True, f"residue {found[0]}")
        els = {gemmi.cif.as_string(v).upper() for v in block.find_values("_atom_site.type_symbol")}
        hit = sorted(els & metals)
        if hit:
            return Verdict(True, f"element {hit[0]}")
    return Verdict(False, "no redox metal or cofactor code in the atom records")


_WANTED = ("type_symbol", "label_comp_id", "auth_comp_id")
_LOOP_END = re.compile(rb"\n(?:#|loop_|_|data_|;)")


def _cif_loop_values(text: bytes) -> dict[str, set[str]] | None:
    """Distinct values of the wanted ``_atom_site`` columns, read with numpy; None if irregular.

    Works on the usual layout (one ``_atom_site`` loop, one row per line, no value
    with inner spaces); anything else returns None and gemmi's tokenizer decides.
    """
    head = text.find(b"\n_atom_site.")
    if head < 0 or text.find(b"\n_atom_site.", text.find(b"\n", text.rfind(b"\n_atom_site.")) + 1) >= 0:
        return None
    if not text[:head].rstrip().endswith(b"loop_"):
        return None  # a one-atom file written as key-value pairs
    first = head + 1
    pos = first
    names = []
    while text.startswith(b"_atom_site.", pos):
        end = text.find(b"\n", pos)
        if end < 0:
            return None
        names.append(text[pos + 11:end].strip().decode("ascii", "replace"))
        pos = end + 1
    if len(names) > 0 and text.find(b"\n_atom_site.", pos - 1) >= 0:
        return None  # a second _atom_site loop (several blocks)
    stop = _LOOP_END.search(text, pos - 1)
    body = np.frombuffer(text[pos:stop.start() + 1 if stop else len(text)] + b"\n", dtype=np.uint8)
    n_cols = len(names)
    blank = np.concatenate(([True], body <= 32))
    edges = np.flatnonzero(blank[1:] != blank[:-1])  # token starts and ends, alternating (body ends blank)
    starts, ends = edges[0::2], edges[1::2]
    if len(starts) == 0:
        return {k: set() for k in _WANTED}
    if len(starts) % n_cols:
        return None
    # every row of n_cols tokens on a line of its own: then each line holds 0 or n_cols tokens
    newlines = np.flatnonzero(body == 10)
    first_line = np.searchsorted(newlines, starts[::n_cols])
    last_line = np.searchsorted(newlines, ends[n_cols - 1::n_cols] - 1)
    if not (np.array_equal(first_line, last_line) and np.all(np.diff(first_line) > 0)):
        return None
    padded = np.concatenate((body, np.zeros(8, np.uint8)))
    out = {}
    for col in _WANTED:
        if col not in names:
            out[col] = set()
            continue
        k = names.index(col)
        s0 = starts[k::n_cols]
        width = (ends[k::n_cols] - s0)[:, None]
        raw = padded[s0[:, None] + np.arange(8)]
        raw[np.arange(8)[None, :] >= width] = 0
        long = width[:, 0] > 8
        keys = distinct(raw.view(np.uint64).ravel()).astype(np.uint64).view("S8")  # same bytes, sorted fast
        vals = {v.decode("ascii", "replace").strip("'\"") for v in keys}
        if long.any():
            vals.add("<long>")
        out[col] = vals
    return out


def _cif_fast(text: bytes) -> Verdict | None:
    values = _cif_loop_values(text)
    if values is None:
        return None
    codes, metals, _ = _vocabulary()
    found = sorted((values["label_comp_id"] | values["auth_comp_id"]) & codes)
    if found:
        return Verdict(True, f"residue {found[0]}")
    hit = sorted({v.upper() for v in values["type_symbol"]} & metals)
    if hit:
        return Verdict(True, f"element {hit[0]}")
    return Verdict(False, "no redox metal or cofactor code in the atom records")


def screen_text(text: bytes) -> Verdict:
    """Decide from the whole (decompressed) text of a structure file.

    Parameters
    ----------
    text : bytes
        PDB or mmCIF text.

    Returns
    -------
    Verdict
    """
    from fescan.structure.reading import detect_format

    kind = detect_format(text)
    if kind == "pdb":  # fixed columns: read them directly (header words like HAS never count)
        return _pdb_columns(text)
    if kind != "mmcif":
        return Verdict(True, f"{kind} text: left to the full analysis")
    fast = _cif_fast(text)  # the usual layout: the atom_site columns read with numpy
    if fast is not None:
        return fast
    hits = _screen_hits(b"\n" + text + b"\n")
    if not hits:
        return Verdict(False, "no redox metal or cofactor code in the file")
    word = _decisive(hits)
    if word is not None:
        return Verdict(True, word)
    return _cif_columns(text)


def _gzip_reader(raw):
    """A streaming gzip reader: ISA-L's when installed (about 3x zlib's speed), else zlib's."""
    try:
        from isal import igzip
    except ImportError:  # pragma: no cover - isal is a dependency
        return gzip.GzipFile(fileobj=raw)
    return igzip.GzipFile(fileobj=raw)


def _chunks(path: Path):
    """Decompressed text of ``path`` in steps of about 4 MiB (gzip detected by its magic bytes)."""
    with open(path, "rb") as raw:
        magic = raw.read(2)
        raw.seek(0)
        if magic == b"\x1f\x8b":
            with _gzip_reader(raw) as fh:
                while block := fh.read(_CHUNK):
                    yield block
        else:
            while block := raw.read(_CHUNK):
                yield block


def can_hold_candidate(path: str | Path) -> Verdict:
    """Whether the structure file at ``path`` may hold a redox cofactor fescan analyses.

    Streams the file through the decompressor, then screens the text (see the
    module docstring). Never raises for a damaged file: a file the prefilter
    cannot read is passed on to the full analysis, which reports the problem.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Verdict
        ``candidate`` False only when no atom record can hold a redox metal or a
        cofactor code.
    """
    try:
        if not stat.S_ISREG(os.stat(path).st_mode):  # FIFO, device: never opened here; the reader refuses it
            return Verdict(True, "not a regular file")
        text = b"".join(_chunks(Path(path)))
    except Exception as exc:  # OSError, EOFError, zlib or ISA-L errors: the full analysis reports them
        return Verdict(True, f"not readable by the prefilter ({type(exc).__name__})")
    return screen_text(text)
