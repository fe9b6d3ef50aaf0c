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
_KEYED = 72  # columns whose classes the field keys read (a key reads 8 bytes from its field's start)

# character classes: a field's classes (at most 8 bytes), read as one 64-bit number, is one key
_OTHER, _BLANK, _DIGIT, _MINUS, _POINT, _LETTER, _TABC, _CRC = range(8)
_CLASS = np.zeros(256, dtype=np.uint8)
_CLASS[ord(" ")] = _BLANK
_CLASS[ord("0"):ord("9") + 1] = _DIGIT
_CLASS[ord("-")] = _MINUS
_CLASS[ord(".")] = _POINT
_CLASS[ord("A"):ord("Z") + 1] = _LETTER
_CLASS[ord("a"):ord("z") + 1] = _LETTER
_CLASS[ord("\t")] = _TABC
_CLASS[ord("\r")] = _CRC


_CLASS_TABLE = bytes(_CLASS.tolist())


def _classes(data: bytes) -> np.ndarray:
    """Character class of every byte of the text, as a uint8 array.

    ``bytes.translate`` maps the bytes through the class table in compiled code, about
    twice as fast as numpy's ``take`` (which first widens every byte to an index); the
    whole text is mapped once, and the records' rows gathered from the result.
    """
    return np.frombuffer(data.translate(_CLASS_TABLE), dtype=np.uint8)


def _key_of(classes) -> int:
    return int.from_bytes(bytes(classes), "little")


def _int_patterns(width: int) -> list[tuple[int, ...]]:
    """Class sequences of a right-justified integer of ``width`` columns (a sign allowed first)."""
    out = [(_BLANK,) * (width - 1) + (_DIGIT,)]
    for k in range(width - 1):
        for first in (_MINUS, _DIGIT):
            out.append((_BLANK,) * k + (first,) + (_DIGIT,) * (width - k - 1))
    return out


def _alnum_patterns(width: int) -> list[tuple[int, ...]]:
    """A letter then letters or digits (hybrid-36)."""
    out = [(_LETTER,)]
    for _ in range(width - 1):
        out = [p + (c,) for p in out for c in (_LETTER, _DIGIT)]
    return out


_SERIAL_KEYS = np.asarray(sorted({_key_of(p) for p in _int_patterns(5) + _alnum_patterns(5)}), dtype=np.uint64)
_RESSEQ_KEYS = np.asarray(sorted({_key_of(p) for p in _int_patterns(4) + _alnum_patterns(4)}), dtype=np.uint64)
_COORD_KEYS = np.asarray(sorted({_key_of(p + (_POINT,) + (_DIGIT,) * 3) for p in _int_patterns(4)}), dtype=np.uint64)
_SIX_NUMBER_KEYS = np.asarray(sorted({_key_of(p + (_POINT, _DIGIT, _DIGIT)) for p in _int_patterns(3)}),
                              dtype=np.uint64)
_SIX_BLANK_KEY = _key_of((_BLANK,) * 6)


def _record_starts(buf: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start offsets and lengths (without ``\\n``) of the ATOM/HETATM lines of the text."""
    nl = np.flatnonzero(buf == 10)
    starts = np.concatenate(([0], nl + 1))
    ends = np.concatenate((nl, [len(buf)]))
    keep = ends - starts >= 4
    starts, ends = starts[keep], ends[keep]
    if len(buf) < 4 or not len(starts):
        return starts, ends - starts
    # the first four bytes of each line as one little-endian number, read in place
    words = np.ndarray((len(buf) - 3,), dtype="<u4", buffer=buf, strides=(1,))
    word = words[starts]
    codes = [int.from_bytes(w, "little") for w in (b"ATOM", b"HETA", b"atom", b"heta")]
    rec = np.isin(word, codes)
    return starts[rec], (ends - starts)[rec]


def _rows(buf: np.ndarray, starts: np.ndarray, width: int = _WIDTH) -> np.ndarray:
    """The ``width`` bytes from each start, one C-contiguous row per record (zeros past the end of the text)."""
    if len(buf) >= width:
        inside = starts <= len(buf) - width
        if inside.all():  # the usual case: no copy of the whole text to pad it
            return np.lib.stride_tricks.sliding_window_view(buf, width)[starts]
    padded = np.concatenate((buf, np.zeros(width, dtype=np.uint8)))
    return np.lib.stride_tricks.sliding_window_view(padded, width)[starts]


def _field_key(classes: np.ndarray, first: int, width: int) -> np.ndarray:
    """The classes of columns ``first`` to ``first + width`` of every record, as one 64-bit key each.

    ``classes`` is the C-contiguous ``(n, _WIDTH)`` class array; the eight bytes from
    ``first`` are read in place as one little-endian number (no copy), and the bytes
    past ``width`` masked off.
    """
    key = np.ndarray((len(classes),), dtype="<u8", buffer=classes, offset=first, strides=(classes.strides[0],))
    return key & np.uint64((1 << (8 * width)) - 1) if width < 8 else key.copy()


def _blank_tail(classes: np.ndarray, length: np.ndarray, first: int) -> np.ndarray:
    """Rows whose columns from ``first`` to the line end are blanks or tabs, then at most one ``\\r``."""
    pos = np.arange(first, _WIDTH)[None, :]
    rest = classes[:, first:]
    inline = pos < length[:, None]
    ok = (rest == _BLANK) | (rest == _TABC) | ((rest == _CRC) & (pos == length[:, None] - 1)) | ~inline
    return ok.all(axis=1) & (length <= _WIDTH)


def _standard(text_classes: np.ndarray, starts: np.ndarray, length: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Records in the standard layout, and which of them have a written (not blank) occupancy.

    Never passes a record :func:`record_problem` would refuse (the tests pit the two
    against each other on real and damaged records).
    """
    classes = _rows(text_classes, starts, _KEYED)  # C-contiguous (n, _KEYED): the columns the keys read
    ok = length >= 54
    ok &= np.isin(_field_key(classes, 6, 5), _SERIAL_KEYS)
    ok &= np.isin(_field_key(classes, 22, 4), _RESSEQ_KEYS)
    for first in (30, 38, 46):
        ok &= np.isin(_field_key(classes, first, 8), _COORD_KEYS)
    occ_key = _field_key(classes, 54, 6)
    occ_number = np.isin(occ_key, _SIX_NUMBER_KEYS) & (length >= 60)
    occ_six = occ_number | ((occ_key == _SIX_BLANK_KEY) & (length >= 60))
    b_key = _field_key(classes, 60, 6)
    b_six = (np.isin(b_key, _SIX_NUMBER_KEYS) | (b_key == _SIX_BLANK_KEY)) & (length >= 66)
    full = ok & occ_six & b_six
    rest = np.flatnonzero(ok & ~full)  # short or unusual tails: looked at only for these rows
    if len(rest):
        sub_c, sub_l = _rows(text_classes, starts[rest]), length[rest]  # every column of these few rows
        tail = (occ_six[rest] & _blank_tail(sub_c, sub_l, 60)) | _blank_tail(sub_c, sub_l, 54)
        full[rest[tail]] = True
    return full, occ_number


_OCC_ZERO = int.from_bytes(b"  0.", "little")  # "  0.dd": 0.00 to 0.99
_OCC_ONE = int.from_bytes(b"  1.00", "little")


def _occupancy_outside_rows(buf: np.ndarray, starts: np.ndarray) -> bool:
    """Whether any ``%6.2f`` occupancy (columns 55-60) of the records starting at ``starts`` is negative or above 1.

    Nearly every deposited occupancy is written ``  0.dd`` or ``  1.00``: the columns of
    each record are read as one number and compared with those two; only when a record
    is written otherwise are the digits read (:func:`_occupancy_outside`).
    """
    if not len(starts):
        return False
    occ = _rows(buf, starts + 54, 8)  # columns 55-62, C-contiguous
    word = occ.view("<u8").reshape(-1)
    plain = ((word & np.uint64(0xFFFFFFFF)) == _OCC_ZERO) | ((word & np.uint64(0xFFFFFFFFFFFF)) == _OCC_ONE)
    if plain.all():
        return False
    return _occupancy_outside(occ[:, :6])


def _occupancy_outside(occ: np.ndarray) -> bool:
    """Whether any ``%6.2f`` occupancy (``occ``: the bytes of columns 55-60 of each row) is negative or above 1."""
    if not len(occ):
        return False
    digit = lambda k: np.where(occ[:, k] >= 48, occ[:, k].astype(np.int64) - 48, 0)  # noqa: E731
    whole = digit(0) * 100 + digit(1) * 10 + digit(2)
    hundredths = digit(4) * 10 + digit(5)
    negative = (occ[:, 0] == ord("-")) | (occ[:, 1] == ord("-")) | (occ[:, 2] == ord("-"))
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
    standard, occ_written = _standard(_classes(data), starts, length)
    suspect = _occupancy_outside_rows(buf, starts[standard & occ_written])
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
