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

Speed: one regular expression passes every record written in the standard layout
(``%8.3f`` coordinates, ``%6.2f`` occupancy and B); only the records it flags are
looked at in Python.
"""

from __future__ import annotations

import math
import re

from fescan.core.errors import CoordinateError, StructureFileError

__all__ = ["check_pdb_records", "record_problem"]


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
    stop = len(data)
    search = _SUSPECT.search
    # the first line has no newline before it: search it with one put in front
    start: int | None = 0 if stop and _SUSPECT.match(b"\n" + data[:512]) else None
    if start is None:
        match = search(data, 0, stop)
        start = match.start() + 1 if match else None
    while start is not None:
        line_end = data.find(b"\n", start)
        if line_end < 0:
            line_end = len(data)
        line = data[start:line_end]
        found = record_problem(line)
        if found is not None and _END.search(data, 0, start):
            return  # gemmi stops at the END record before this line: so does the check
        if found is not None:
            problem, cls = found
            lineno = data.count(b"\n", 0, start) + 1
            shown = line.rstrip().decode("latin-1")[:80]
            raise cls(f"{name}: line {lineno}: {problem}: {shown!r}")
        match = search(data, line_end, stop)
        start = match.start() + 1 if match else None
