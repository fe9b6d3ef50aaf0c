"""Strict fixed-column check of the ATOM/HETATM records of PDB text.

gemmi reads a PDB number from its columns as far as it looks like a number, so a
damaged record is read as a wrong number instead of being refused: ``'1  4.394'``
in the x columns reads as 1.0, a line shifted by one column reads every field
off by a digit, ``abc.de`` reads as 0.0. This module refuses such records before
gemmi sees them, with the file, the line number and the columns in the message
(as Biopython's ``PDBParser(PERMISSIVE=False)`` does for coordinates, occupancy
and B factor, and for residue numbers).

Columns checked (1-based, PDB format version 3.3):

- 7-11 atom serial number: an integer, hybrid-36 (over 99,999 atoms), ``*****``
  (written by some programs past 99,999) or blank;
- 23-26 residue sequence number: an integer or hybrid-36;
- 31-54 x, y, z: three finite numbers of 8 columns each;
- 55-60 occupancy and 61-66 B factor: finite numbers of 6 columns, or blank, or
  absent (a line ending before them).

A number with a blank inside is what a damaged line or a line shifted by a column
looks like (the digits cut by the shift spill into the next field), so it is refused.
Numbers may be left-justified or written with an exponent, as Biopython's ``float()``
reads them.

Speed: every record written in the standard layout (``%8.3f`` coordinates,
``%6.2f`` occupancy and B) is passed by a column-wise test over all records at
once (numpy, :func:`screen_pdb_records`); only the records it flags are looked
at in Python, one by one. The same pass tells whether any occupancy lies
outside [0, 1], so the reader looks at atoms only then.
"""

from __future__ import annotations

import math
import re

import numpy as np

from fescan.core.errors import CoordinateError, StructureFileError

__all__ = ["check_pdb_records", "record_problem", "screen_pdb_records"]


def _alternatives(width: int) -> bytes:
    """Regex of a right-justified integer of exactly ``width`` columns (sign allowed first)."""
    alts = [b" " * (width - 1) + rb"\d"]
    alts += [b" " * k + rb"[-\d]" + rb"\d" * (width - k - 1) for k in range(width - 1)]
    return b"(?:" + b"|".join(alts) + b")"


_SERIAL = b"(?:" + _alternatives(5) + rb"|[A-Za-z][A-Za-z0-9]{4})"
_RESSEQ = b"(?:" + _alternatives(4) + rb"|[A-Za-z][A-Za-z0-9]{3})"
_COORD = _alternatives(4) + rb"\.\d{3}"  # %8.3f
_SIX = b"(?:" + _alternatives(3) + rb"\.\d\d| {6})"  # %6.2f or blank
_LINE_END = rb"[ \t]*\r?$"
# A record in the standard layout; any ATOM/HETATM record not matching it is looked at closely.
_STANDARD = (rb".." + _SERIAL + rb".{11}" + _RESSEQ + rb".{4}" + _COORD * 3
             + rb"(?:" + _SIX + rb"(?:" + _SIX + rb"|" + _LINE_END + rb")|" + _LINE_END + rb")")
# Searched from a line end: a literal prefix is much faster to search than ``^`` at every position.
_SUSPECT = re.compile(rb"\n(?:ATOM|HETA|atom|heta)(?!" + _STANDARD + rb")", re.MULTILINE)
# gemmi stops reading PDB text at an END record ("END" not followed by a letter or digit).
_END = re.compile(rb"(?:\A|\n)END(?![A-Za-z0-9])", re.IGNORECASE)

_DECIMAL = re.compile(rb"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
_INTEGER = re.compile(rb"-?\d+")
_HYBRID36 = re.compile(rb"[A-Za-z][A-Za-z0-9]*")


def _field_problem(field: bytes, what: str, columns: str, *, optional: bool,
                   number: re.Pattern[bytes] = _DECIMAL) -> str | None:
    """Problem of one numeric field, or None."""
    text = field.strip()
    shown = text.decode("latin-1")
    if not text:
        return None if optional else f"{what} is blank ({columns})"
    if b" " in text or b"\t" in text:
        return f"{what} {shown!r} has a blank inside ({columns}): a damaged or shifted line"
    if number is _DECIMAL:
        try:
            value = float(text)
        except ValueError:
            value = None
        if value is not None and not math.isfinite(value):
            return f"{what} {shown!r} is not finite ({columns})"
    if not number.fullmatch(text):
        return f"{what} {shown!r} is not {'an integer' if number is _INTEGER else 'a number'} ({columns})"
    return None


def record_problem(line: bytes) -> tuple[str, type[StructureFileError]] | None:
    """What is wrong with one ATOM/HETATM record, and the error class to raise; or None.

    Parameters
    ----------
    line : bytes
        The record, without its line end.

    Returns
    -------
    tuple of (str, type) or None
        The problem in words and :class:`CoordinateError` (coordinates) or
        :class:`StructureFileError` (other columns); None for a good record.
    """
    line = line.rstrip(b"\r")
    if len(line) < 54:
        return "record too short to hold coordinates (columns 31-54)", CoordinateError
    for axis, first in (("x", 30), ("y", 38), ("z", 46)):
        problem = _field_problem(line[first:first + 8], f"{axis} coordinate",
                                   f"columns {first + 1}-{first + 8}", optional=False)
        if problem:
            return problem, CoordinateError
    serial = line[6:11]
    stripped = serial.strip()
    if stripped and stripped.strip(b"*") and not (len(stripped) == 5 and _HYBRID36.fullmatch(stripped)):
        problem = _field_problem(serial, "atom serial number", "columns 7-11", optional=True, number=_INTEGER)
        if problem:
            return problem, StructureFileError
    resseq = line[22:26]
    if not (len(resseq.strip()) == 4 and _HYBRID36.fullmatch(resseq)):
        problem = _field_problem(resseq, "residue number", "columns 23-26", optional=False, number=_INTEGER)
        if problem:
            return problem, StructureFileError
    for what, first in (("occupancy", 54), ("B factor", 60)):
        field = line[first:first + 6]
        problem = _field_problem(field, what, f"columns {first + 1}-{first + 6}", optional=True)
        if problem:
            return problem, CoordinateError
    return None


def check_pdb_records(name: str, data: bytes) -> None:
    """Raise for the first damaged ATOM/HETATM record of PDB text (before any END record).

    Parameters
    ----------
    name : str
        File name, for the message.
    data : bytes
        The PDB text (``\\n`` line ends; ``\\r\\n`` is fine).

    Raises
    ------
    CoordinateError
        A coordinate, occupancy or B factor field is blank, not a number, has a
        blank inside or is not right-justified.
    StructureFileError
        The atom serial number or residue number is not a number.
    """
    screen_pdb_records(name, data)


_WIDTH = 80  # columns gathered per record: the standard layout needs 66
_SPACE, _TAB, _CR, _MINUS, _DOT = 32, 9, 13, 45, 46
_ABSENT = 0  # past the end of a line


def _record_starts(buf: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start offsets and lengths (without ``\\n``) of the ATOM/HETATM lines of the text."""
    nl = np.flatnonzero(buf == 10)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [len(buf)]))
    keep = ends - starts >= 4
    starts, ends = starts[keep], ends[keep]
    head = buf[starts[:, None] + np.arange(4)]
    word = (head[:, 0].astype(np.uint32) | head[:, 1].astype(np.uint32) << 8
            | head[:, 2].astype(np.uint32) << 16 | head[:, 3].astype(np.uint32) << 24)
    codes = [int.from_bytes(w, "little") for w in (b"ATOM", b"HETA", b"atom", b"heta")]
    rec = np.isin(word, codes)
    return starts[rec], (ends - starts)[rec]


def _integer(f: np.ndarray) -> np.ndarray:
    """Rows of ``f`` (byte codes) that hold a right-justified integer (a sign allowed first)."""
    sp = f == _SPACE
    dg = (f >= 48) & (f <= 57)
    seen = np.logical_or.accumulate(~sp, axis=1)
    first = np.argmax(~sp, axis=1)
    at_first = np.arange(f.shape[1])[None, :] == first[:, None]
    return (~(sp & seen).any(axis=1) & (dg | sp | ((f == _MINUS) & at_first)).all(axis=1) & dg[:, -1])


def _hybrid36(f: np.ndarray) -> np.ndarray:
    letter = ((f >= 65) & (f <= 90)) | ((f >= 97) & (f <= 122))
    alnum = letter | ((f >= 48) & (f <= 57))
    return letter[:, 0] & alnum[:, 1:].all(axis=1)


def _decimal(f: np.ndarray, point: int) -> np.ndarray:
    """Rows holding ``%w.df``: a right-justified integer, a point at ``point``, then digits."""
    tail = f[:, point + 1:]
    return _integer(f[:, :point]) & (f[:, point] == _DOT) & ((tail >= 48) & (tail <= 57)).all(axis=1)


def _blank_from(cols: np.ndarray, first: int) -> np.ndarray:
    """Rows whose columns from ``first`` on are blanks, tabs, then at most a final ``\\r``."""
    rest = cols[:, first:]
    blank = (rest == _SPACE) | (rest == _TAB) | (rest == _ABSENT)
    cr = rest == _CR
    # a \r is allowed only as the line's last character (then ABSENT follows)
    nxt = np.concatenate([rest[:, 1:], np.full((len(rest), 1), _ABSENT, dtype=rest.dtype)], axis=1)
    return (blank | (cr & (nxt == _ABSENT))).all(axis=1)


def _standard(cols: np.ndarray, length: np.ndarray) -> np.ndarray:
    """Records in the standard layout (never passes a record :func:`record_problem` would refuse)."""
    ok = length >= 54
    ok &= _integer(cols[:, 6:11]) | _hybrid36(cols[:, 6:11])
    ok &= _integer(cols[:, 22:26]) | _hybrid36(cols[:, 22:26])
    for first in (30, 38, 46):
        ok &= _decimal(cols[:, first:first + 8], 4)
    printable = (cols[:, :54] >= 32) & (cols[:, :54] < 127)  # the regex's '.' takes no line break
    ok &= printable.all(axis=1)
    occ = cols[:, 54:60]
    b = cols[:, 60:66]
    six_occ = _decimal(occ, 3) | (occ == _SPACE).all(axis=1)
    six_b = _decimal(b, 3) | (b == _SPACE).all(axis=1)
    fits = length <= _WIDTH  # the tail of a longer line is not looked at here: the slow path does
    tail = (six_occ & six_b) | (six_occ & _blank_from(cols, 60) & fits) | (_blank_from(cols, 54) & fits)
    return ok & tail


def _occupancy_outside(cols: np.ndarray, length: np.ndarray) -> bool:
    """Whether any standard-layout occupancy (columns 55-60) is negative or above 1."""
    occ = cols[:, 54:60]
    written = _decimal(occ, 3)
    if not written.any():
        return False
    occ = occ[written]
    digits = np.where((occ >= 48) & (occ <= 57), occ.astype(np.int64) - 48, 0)
    whole = digits[:, 0] * 100 + digits[:, 1] * 10 + digits[:, 2]
    hundredths = digits[:, 4] * 10 + digits[:, 5]
    negative = (occ[:, :3] == _MINUS).any(axis=1)
    return bool((negative | (whole > 1) | ((whole == 1) & (hundredths > 0))).any())


def _outside_unit(field: bytes) -> bool:
    try:
        value = float(field)
    except ValueError:
        return False  # blank or absent
    return value < 0 or value > 1.0


def screen_pdb_records(name: str, data: bytes) -> bool:
    """Check every ATOM/HETATM record of PDB text; tell whether an occupancy may lie outside [0, 1].

    Parameters
    ----------
    name : str
        File name, for the message.
    data : bytes
        The PDB text.

    Returns
    -------
    bool
        True when a record has an occupancy above 1 or negative: the reader
        then counts the atoms' occupancies.

    Raises
    ------
    CoordinateError, StructureFileError
        As :func:`check_pdb_records`, for the first damaged record before any END record.
    """
    buf = np.frombuffer(data, dtype=np.uint8)
    if not len(buf):
        return False
    starts, length = _record_starts(buf)
    if not len(starts):
        return False
    pos = starts[:, None] + np.arange(_WIDTH)
    inside = np.arange(_WIDTH)[None, :] < length[:, None]
    cols = np.where(inside, buf[np.minimum(pos, len(buf) - 1)], _ABSENT).astype(np.uint8)
    standard = _standard(cols, length)
    suspect = _occupancy_outside(cols[standard], length[standard])
    for k in np.flatnonzero(~standard).tolist():
        start = int(starts[k])
        line = data[start:start + int(length[k])]
        found = record_problem(line)
        if found is None:
            suspect = suspect or _outside_unit(line[54:60])
            continue
        if _END.search(data, 0, start):
            return suspect  # gemmi stops at the END record before this line: so does the check
        problem, cls = found
        lineno = data.count(b"\n", 0, start) + 1
        shown = line.rstrip().decode("latin-1")[:80]
        raise cls(f"{name}: line {lineno}: {problem}: {shown!r}")
    return suspect
