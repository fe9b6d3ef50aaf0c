"""The bytes of a structure file: read through a stream, screened, size-capped, normalised.

:func:`read_text` returns the (decompressed) content of a file. It never holds
more than it must: the first 64 KiB are screened for binary data before the rest
is read, and the decompressed size is capped (:data:`MAX_TEXT_BYTES`), so a gzip
bomb is refused after reading at most the cap, not after filling the memory.
:func:`normalise_text` makes CR-only line ends ``\\n`` and re-encodes a file that
is not UTF-8 (a Latin-1 title) so gemmi's strings can be read.
"""

from __future__ import annotations

import os
import stat
import zlib
from typing import BinaryIO

try:  # ISA-L inflates ~2x faster than zlib on structure files; zlib stays as the fallback
    from isal.isal_zlib import decompressobj as _decompressobj
    from isal.isal_zlib import error as _isal_error
except ImportError:  # pragma: no cover - isal is a dependency, but keep the reader working
    _decompressobj = zlib.decompressobj
    _isal_error = zlib.error

from fescan.core.errors import StructureFileError, StructureNotFound

__all__ = ["MAX_TEXT_BYTES", "MAX_GZIP_RATIO", "read_text", "normalise_text", "is_binary", "os_reason", "first_record"]

#: Largest structure text fescan reads, after decompression (bytes). The largest
#: mmCIF files of the PDB archive are a few hundred MB (common practice, no source).
MAX_TEXT_BYTES = 2 << 30
#: Past 64 MiB of output, a gzip stream expanding more than this many times is refused:
#: structure text compresses 3-10 times (common practice, no source); a bomb ~1000 times.
MAX_GZIP_RATIO = 100
_RATIO_FLOOR = 64 << 20

_GZIP_MAGIC = b"\x1f\x8b"
_UTF8_BOM = b"\xef\xbb\xbf"
_HEAD = 65536  # bytes looked at to tell text from binary data
_CHUNK = 1 << 22
# Bytes that may appear in a text file; anything else (NUL, most C0 controls) means binary.
# BEL, BS and ESC are let through: terminal escape sequences in a title are text to be
# shown without them (fescan.report.text.strip_controls), not a reason to refuse the file.
_TEXT_BYTES = bytes(range(32, 256)) + b"\t\n\r\f\v\x1a\x07\x08\x1b"


def first_record(text: str | bytes, names: tuple) -> int:
    """Offset of the first line starting with one of ``names``, or ``len(text)`` when none does.

    ``text`` and ``names`` are both ``str`` or both ``bytes``. ``find`` per name (a fast
    scan, each bounded by the best offset so far), not a multi-line regular expression:
    the end of a PDB header is where the first coordinate record starts.

    Examples
    --------
    >>> first_record("HEADER x\\nREMARK\\nATOM  1\\n", ("ATOM  ", "HETATM"))
    16
    """
    newline = "\n" if isinstance(text, str) else b"\n"
    first = len(text)
    for word in names:
        if text.startswith(word):
            return 0
        # look for the word without its trailing blanks, then check them: a needle ending in a
        # blank makes the search stop at every blank of the header (several times slower)
        stem = word.rstrip()
        needle, tail = newline + stem, word[len(stem):]
        at = text.find(needle, 0, first)
        while at >= 0 and not text.startswith(tail, at + len(needle)):
            at = text.find(needle, at + 1, first)
        if at >= 0:
            first = at + 1
    return first


def os_reason(exc: Exception) -> str:
    """The plain reason of an OSError (``Permission denied``...)."""
    return getattr(exc, "strerror", None) or str(exc)


def is_binary(head: bytes) -> bool:
    """Whether the start of a file holds bytes no text file has (NUL, most C0 controls)."""
    return bool(head[:_HEAD].translate(None, _TEXT_BYTES))


def _binary_error(name: str) -> StructureFileError:
    return StructureFileError(f"{name}: not a PDB or mmCIF file (binary data)")


def read_text(name: str, *, max_bytes: int | None = None) -> tuple[bytes, bool]:
    """Return the (decompressed) content of a structure file and whether it was gzip.

    Parameters
    ----------
    name : str
        Path of the file.
    max_bytes : int, optional
        Cap on the (decompressed) size; :data:`MAX_TEXT_BYTES` by default.

    Returns
    -------
    tuple of (bytes, bool)

    Raises
    ------
    StructureNotFound
        No such file, a folder, or not a regular file (FIFO, device).
    StructureFileError
        Unreadable, binary, damaged gzip data, or larger than the cap.
    """
    cap = MAX_TEXT_BYTES if max_bytes is None else max_bytes
    try:
        st = os.stat(name)
    except (FileNotFoundError, NotADirectoryError) as exc:
        raise StructureNotFound(f"{name}: no such file") from exc
    except (OSError, ValueError) as exc:  # ValueError: NUL byte in the path
        raise StructureFileError(f"{name}: cannot be read ({os_reason(exc)})") from exc
    if stat.S_ISDIR(st.st_mode):
        raise StructureNotFound(f"{name}: is a directory, not a structure file")
    if not stat.S_ISREG(st.st_mode):
        raise StructureNotFound(f"{name}: not a regular file ({_kind(st.st_mode)})")
    try:
        with open(name, "rb") as handle:
            head = handle.read(_HEAD)
            if head.startswith(_GZIP_MAGIC):
                return _gunzip_stream(name, head, handle, cap), True
            if is_binary(head):
                raise _binary_error(name)
            if st.st_size > cap:
                raise StructureFileError(f"{name}: {st.st_size} bytes, more than the {_size(cap)} "
                                         "fescan reads (not a single structure?)")
            rest = handle.read(max(0, st.st_size + 1 - len(head)))  # read(n) reserves n bytes: never the cap
    except OSError as exc:
        raise StructureFileError(f"{name}: cannot be read ({os_reason(exc)})") from exc
    data = head + rest
    if len(data) > cap:  # grew past the cap while being read
        raise StructureFileError(f"{name}: more than the {_size(cap)} fescan reads")
    return data, False


def _gunzip_stream(name: str, head: bytes, handle: BinaryIO, cap: int) -> bytes:
    """Decompress gzip members chunk by chunk, refusing binary content and bombs early."""
    parts: list[bytes] = []  # joined once at the end (a growing bytearray copies as it grows)
    size = 0
    dec = _decompressobj(wbits=31)
    pending, read_in, screened = head, len(head), False
    try:
        while True:
            if not pending:
                pending = handle.read(_CHUNK)
                read_in += len(pending)
                if not pending:
                    break
            if dec.eof:  # a member ended: another member may follow; anything else is ignored
                if not pending.startswith(_GZIP_MAGIC):
                    break
                dec = _decompressobj(wbits=31)
            piece = dec.decompress(pending, _CHUNK)
            parts.append(piece)
            size += len(piece)
            pending = dec.unconsumed_tail or (dec.unused_data if dec.eof else b"")
            if not screened and (size >= _HEAD or dec.eof):
                screened = True
                if is_binary(b"".join(parts)[:_HEAD]):
                    raise _binary_error(name)
            if size > cap:
                raise StructureFileError(f"{name}: gzip data expands past the {_size(cap)} fescan reads "
                                         "(a decompression bomb?)")
            if size > _RATIO_FLOOR and size > MAX_GZIP_RATIO * read_in:
                raise StructureFileError(
                    f"{name}: gzip data expands more than {MAX_GZIP_RATIO} times ({_size(read_in)} read "
                    f"gave {_size(size)}): a decompression bomb, not structure text")
    except (zlib.error, _isal_error) as exc:
        raise StructureFileError(f"{name}: damaged gzip data ({exc})") from exc
    if not dec.eof:
        raise StructureFileError(f"{name}: damaged gzip data (compressed file ended before the "
                                 "end-of-stream marker was reached)")
    out = b"".join(parts)
    if is_binary(out[:_HEAD]):
        raise _binary_error(name)
    return out


def normalise_text(data: bytes) -> tuple[bytes, tuple[str, ...]]:
    """CR-only line ends to ``\\n``; non-UTF-8 text re-encoded from Latin-1.

    Returns
    -------
    tuple of (bytes, tuple of str)
        The text and notes saying what was changed.
    """
    notes: list[str] = []
    head = data[:_HEAD]
    if b"\r" in head and b"\n" not in head:
        data = data.replace(b"\r", b"\n")
        notes.append("line ends are CR only (old Mac style): read as line breaks")
    if not data.isascii():
        try:
            data.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = data.count(b"\n", 0, exc.start) + 1
            data = data.decode("latin-1").encode("utf-8")
            notes.append(f"text is not UTF-8 (first at line {line}): read as Latin-1")
    return data, tuple(notes)


def _kind(mode: int) -> str:
    if stat.S_ISFIFO(mode):
        return "a FIFO"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a special file"


def _size(n: int) -> str:
    for unit, scale in (("GiB", 1 << 30), ("MiB", 1 << 20), ("KiB", 1 << 10)):
        if n >= scale:
            return f"{n / scale:.3g} {unit}"
    return f"{n} bytes"
