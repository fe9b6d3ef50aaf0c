"""Read one structure file (PDB, mmCIF or mmJSON, optionally gzipped) into gemmi.

:func:`read_structure` is the only way fescan opens coordinate files. It returns a
:class:`LoadedStructure`: the gemmi structure reduced to one model, with the
alternative-location and hydrogen policies applied, plus a :class:`StructureInfo`
summary of the entry.

Format and compression are told from the content, never from the file name:
gzip by its magic bytes (``1f 8b``), mmCIF by a leading ``data_`` (after blank
lines and ``#`` comments), mmJSON by a leading ``{"data_``, PDB by ATOM, HETATM,
HEADER, CRYST1 or MODEL records. A file named ``.gz`` that is not gzip data is
read as plain text.

Alternative locations (``altloc``)
----------------------------------
``"occupancy"`` (default)
    Per residue, keep the alternative location whose atoms have the highest
    summed occupancy; on a tie (within 1e-6) keep the label that comes first
    alphabetically. Atoms without an altloc label are always kept. The sums are
    taken after hydrogens are removed (unless they are kept).
``"first"``
    Per residue, keep the first alternative location met in the file (what
    gemmi's ``remove_alternative_conformations`` keeps).
``"all"``
    Keep every atom of every alternative location.

Kept atoms keep their altloc label, so one can tell which conformer was chosen;
after ``"occupancy"`` or ``"first"`` each residue holds at most one label.
Adjacent residues that share a sequence number in one chain (microheterogeneity,
e.g. SER altloc A / THR altloc B) are variants of one residue: only one is kept,
the one with the highest summed altloc occupancy (``"occupancy"``) or the first.

Hydrogen (H) and deuterium (D) atoms are removed unless ``keep_hydrogens=True``;
residues left without atoms are removed with them.

Bad input always raises a :class:`~fescan.core.errors.FescanError` subclass whose
message starts with the path. gemmi accepts several kinds of damage silently
(an empty file gives one empty model, ``abc.de`` or a blank coordinate field in a
PDB file reads as 0.0, ``nan`` reads as NaN, an mmCIF ``?`` coordinate reads as
NaN), so this module checks for them itself:

- the bytes are read through a stream: binary data is refused from its first 64 KiB,
  and the (decompressed) size is capped (:mod:`fescan.structure.rawtext`); CR-only
  line ends are read as line breaks and non-UTF-8 text (a Latin-1 title) as Latin-1;
- every ATOM/HETATM record of PDB text is checked column by column (serial, residue
  number, coordinates, occupancy, B factor: :mod:`fescan.structure.pdb_lines`);
  a blank inside a number or a shifted line is refused with its line number;
- an mmCIF ``atom_site`` loop without a coordinate or ``type_symbol`` column is refused
  with the column named;
- coordinates beyond 10⁴ Å and residues of more than 5000 atoms are refused, an
  invalid unit cell is dropped and out-of-range occupancies are noted
  (:mod:`fescan.structure.sanity`);
- non-finite coordinates of every model are caught by gemmi's centre of mass,
  which is NaN or infinite as soon as one coordinate is; the offending atom is
  then looked up to name it in the message.
"""

from __future__ import annotations

import logging
import math
import os
import re
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

import gemmi

from fescan.core.errors import (
    ConfigError,
    CoordinateError,
    EmptyStructureError,
    StructureFileError,
)
from fescan.structure.altlocs import (
    AltlocStates,
    apply_altloc_policy,
    choose_model,
    model_numbers,
    remove_empty_residues,
)
from fescan.structure.cif_numbering import number_residues_without_author_numbers
from fescan.structure.header_codes import codes_from_block, codes_from_pdb_header
from fescan.structure.pdb_lines import screen_pdb_records
from fescan.structure.rawtext import first_record, is_binary, normalise_text, read_text
from fescan.structure.refinement import (
    RefinementStats,
    refinement_stats_from_block,
    refinement_stats_from_text,
)
from fescan.structure.sanity import (
    check_cell,
    check_extent,
    check_metal_aggregates,
    check_residue_sizes,
    occupancy_notes,
)
from fescan.structure.split_residues import join_split_residues

__all__ = [
    "ALTLOC_POLICIES",
    "FORMATS",
    "LoadedStructure",
    "StructureInfo",
    "detect_format",
    "read_structure",
]

logger = logging.getLogger(__name__)

#: Accepted values of the ``altloc`` argument of :func:`read_structure`.
ALTLOC_POLICIES: tuple[str, ...] = ("occupancy", "first", "all")

#: File formats :func:`detect_format` can report (besides ``"unknown"``).
FORMATS: tuple[str, ...] = ("pdb", "mmcif", "mmjson")

_UTF8_BOM = b"\xef\xbb\xbf"

_BLANK = re.compile(rb"\s*\Z")
_CIF_START = re.compile(rb"(?:\s|#[^\n]*)*data_", re.IGNORECASE)
_JSON_START = re.compile(rb'\s*\{\s*"data_')
_PDB_RECORD = re.compile(rb"^(?:ATOM[ \d]|HETATM|HEADER|CRYST1|MODEL )", re.MULTILINE)
_GEMMI_LOCATION = re.compile(r"^\S*?:(\d+):\S*\s+")
_PDB_ID_STEM = re.compile(r"(?:pdb)?([0-9][A-Za-z0-9]{3})", re.IGNORECASE)
_MISSING_IDS = {"", "?", ".", "XXXX"}
_CARTN = ("_atom_site.Cartn_x", "_atom_site.Cartn_y", "_atom_site.Cartn_z")
# Columns an atom_site loop must have for fescan (gemmi fails with a bare IndexError without
# type_symbol; the element is what the cofactor search is built on).
_REQUIRED = (*_CARTN, "_atom_site.type_symbol")


@dataclass(frozen=True, slots=True)
class StructureInfo:
    """Summary of a structure file, as read.

    Attributes
    ----------
    entry_id : str
        PDB ID from the header (``HEADER`` / ``_entry.id``); the file name stem
        when the header has none or the placeholder ``XXXX``.
    title : str or None
        Title of the entry (``TITLE`` / ``_struct.title``).
    method : str or None
        Experimental method as written, e.g. ``"X-RAY DIFFRACTION"``,
        ``"ELECTRON MICROSCOPY"``, ``"SOLUTION NMR"``.
    resolution : float or None
        Resolution in Å, ``None`` when the file gives none.
    n_models : int
        Number of models in the file (before one is chosen).
    file_format : str
        ``"pdb"``, ``"mmcif"`` or ``"mmjson"`` (told from the content).
    compressed : bool
        Whether the file was gzip data.
    n_atoms : int
        Atoms of the chosen model after the altloc and hydrogen policies.
    altloc_policy : str
        The altloc policy applied (one of :data:`ALTLOC_POLICIES`).
    cell : tuple of float or None
        Unit cell ``(a, b, c, alpha, beta, gamma)`` in Å and degrees; ``None``
        when the file has no crystal cell (NMR, EM: 1 Å cubic placeholder).
    spacegroup : str or None
        Hermann-Mauguin space group symbol; ``None`` without a crystal cell.
    notes : tuple of str
        Warnings about the file that did not stop the reading (e.g. a deposited
        PDB entry without its END record: possibly truncated).
    """

    entry_id: str
    title: str | None
    method: str | None
    resolution: float | None
    n_models: int
    file_format: str
    compressed: bool
    n_atoms: int
    altloc_policy: str
    cell: tuple[float, float, float, float, float, float] | None
    spacegroup: str | None
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Return the fields as a plain dict (``cell`` as a list), ready for JSON.

        Returns
        -------
        dict
            Field name to value.
        """
        out = asdict(self)
        if self.cell is not None:
            out["cell"] = list(self.cell)
        return out


@dataclass(frozen=True, slots=True, eq=False)
class LoadedStructure:
    """A structure file read by :func:`read_structure`.

    Attributes
    ----------
    path : str
        The path as given.
    structure : gemmi.Structure
        The structure, holding only the chosen model.
    model : gemmi.Model
        The chosen model (``structure[0]``). It is a view into ``structure``:
        adding or removing models of ``structure`` invalidates it.
    model_number : int
        Number of the chosen model as written in the file (its 1-based index
        when the file's model numbers are missing, repeated or not positive).
    info : StructureInfo
        Summary of the entry.
    header_codes : dict of str to int or None
        Hetero-group codes the file's header names, with their count when it
        gives one (:mod:`fescan.structure.header_codes`).
    refinement : RefinementStats or None
        Refinement statistics of the header (:mod:`fescan.structure.refinement`).
    altloc_states : dict
        Residues that had two or more altloc labels, with each label's mean
        occupancy, before the altloc policy (:data:`fescan.structure.altlocs.AltlocStates`).
    """

    path: str
    structure: gemmi.Structure
    model: gemmi.Model
    model_number: int
    info: StructureInfo
    header_codes: dict[str, int | None] = field(default_factory=dict)
    refinement: RefinementStats | None = None
    altloc_states: AltlocStates = field(default_factory=dict)


def detect_format(data: str | bytes) -> str:
    """Tell the format of uncompressed structure text from its content.

    Parameters
    ----------
    data : str or bytes
        Content of the file, already decompressed.

    Returns
    -------
    str
        ``"mmcif"`` when the text starts with ``data_`` (after blank lines and
        ``#`` comments), ``"mmjson"`` when it starts with ``{"data_``, ``"pdb"``
        when a line starts with ATOM, HETATM, HEADER, CRYST1 or MODEL, and
        ``"unknown"`` otherwise.

    Examples
    --------
    >>> detect_format("# comment\\ndata_1ABC\\n_entry.id 1ABC\\n")
    'mmcif'
    >>> detect_format(b"HEADER    OXIDOREDUCTASE\\nEND\\n")
    'pdb'
    >>> detect_format("hello")
    'unknown'
    """
    raw = data.encode("utf-8", "replace") if isinstance(data, str) else bytes(data)
    if raw.startswith(_UTF8_BOM):
        raw = raw[len(_UTF8_BOM) :]
    if _CIF_START.match(raw):
        return "mmcif"
    if _JSON_START.match(raw):
        return "mmjson"
    if _PDB_RECORD.search(raw):
        return "pdb"
    return "unknown"


def read_structure(
    path: str | os.PathLike[str],
    *,
    model: int = 1,
    altloc: str = "occupancy",
    keep_hydrogens: bool = False,
) -> LoadedStructure:
    """Read a PDB, mmCIF or mmJSON file (plain or gzipped) and keep one model.

    Parameters
    ----------
    path : str or os.PathLike
        The structure file. Format and compression are told from the content.
    model : int, optional
        Number of the model to keep, as numbered in the file (MODEL records,
        ``pdbx_PDB_model_num``); 1 by default. A file with a single model gives
        it for ``model=1`` whatever its number.
    altloc : {"occupancy", "first", "all"}, optional
        Alternative-location policy (see the module docstring).
    keep_hydrogens : bool, optional
        Keep H and D atoms (removed by default).

    Returns
    -------
    LoadedStructure
        The structure reduced to the chosen model, and its summary.

    Raises
    ------
    StructureNotFound
        The path does not exist or is a directory.
    EmptyStructureError
        The file is empty or whitespace only, holds no atoms, or the chosen
        model has none (after hydrogen removal).
    CoordinateError
        A coordinate is blank, not a number, or not finite (NaN, inf).
    StructureFileError
        The file cannot be read, is not a PDB/mmCIF/mmJSON file, is damaged
        (bad gzip data, a truncated mmCIF loop, ...) or lacks the chosen model.
    ConfigError
        ``model`` or ``altloc`` is not a valid option.

    Examples
    --------
    >>> loaded = read_structure("1FDN.pdb")  # doctest: +SKIP
    >>> loaded.info.resolution, loaded.info.method  # doctest: +SKIP
    (1.84, 'X-RAY DIFFRACTION')
    """
    name = os.fspath(path)
    if isinstance(model, bool) or not isinstance(model, int) or model < 1:
        raise ConfigError(f"model must be a positive integer, not {model!r}")
    if altloc not in ALTLOC_POLICIES:
        raise ConfigError(f"altloc must be one of {', '.join(ALTLOC_POLICIES)}, not {altloc!r}")

    data, compressed = read_text(name)
    data, text_notes = normalise_text(data)
    file_format = _check_text(name, data, compressed)
    st, block, occupancy_suspect, parse_notes, parted = _parse(name, data, file_format)
    notes = _file_notes(file_format, data) + text_notes + parse_notes
    header_codes, refinement = _header_facts(file_format, data, block)
    del data

    n_models = len(st)
    numbers = model_numbers(st)
    counts = [m.count_atom_sites() for m in st]
    if n_models == 0:
        raise EmptyStructureError(f"{name}: no atoms (the file has 0 models)")
    if not any(counts):
        raise EmptyStructureError(f"{name}: no atoms in any of its {n_models} model(s)")
    for index, m in enumerate(st):
        if counts[index]:
            _check_finite(name, m, numbers[index], block)
    check_extent(name, st)
    notes += check_cell(st)

    index = choose_model(name, numbers, counts, model)
    for i in range(n_models - 1, -1, -1):
        if i != index:
            del st[i]
    chosen = st[0]

    if not keep_hydrogens and chosen.has_hydrogen():
        chosen.remove_hydrogens()
        remove_empty_residues(chosen)
        if chosen.count_atom_sites() == 0:
            raise EmptyStructureError(
                f"{name}: model {numbers[index]} has only hydrogen atoms"
                " (pass keep_hydrogens=True to keep them)"
            )
    if parted:  # only a chain written in several runs can hold a residue split across them
        notes += tuple(join_split_residues(chosen, chains=parted))
    check_residue_sizes(name, chosen)
    check_metal_aggregates(name, chosen)
    notes += occupancy_notes(chosen, occupancy_suspect)
    altloc_states = apply_altloc_policy(chosen, altloc)

    entry_id = _entry_id(st, name)
    st.name = entry_id
    info = StructureInfo(
        entry_id=entry_id,
        title=_info_value(st, "_struct.title"),
        method=_info_value(st, "_exptl.method"),
        resolution=_resolution(st),
        n_models=n_models,
        file_format=file_format,
        compressed=compressed,
        n_atoms=chosen.count_atom_sites(),
        altloc_policy=altloc,
        cell=_cell(st),
        spacegroup=(st.spacegroup_hm or None) if st.cell.is_crystal() else None,
        notes=notes,
    )
    logger.debug(
        "%s: %s%s, model %d of %d, %d atoms",
        name,
        file_format,
        " (gzip)" if compressed else "",
        numbers[index],
        n_models,
        info.n_atoms,
    )
    return LoadedStructure(
        path=name, structure=st, model=chosen, model_number=numbers[index], info=info,
        header_codes=header_codes, refinement=refinement,
        altloc_states=altloc_states,
    )


_COORDINATE_STARTS = (b"ATOM  ", b"HETATM", b"MODEL ")  # the header ends at the first of these


def _header_facts(
    file_format: str, data: bytes, block: gemmi.cif.Block | None
) -> tuple[dict[str, int | None], RefinementStats]:
    """Header codes and refinement statistics from what the reader holds (the file is not read again)."""
    if block is not None:
        stats = (refinement_stats_from_block(block) if file_format == "mmcif"
                 else RefinementStats(file_format=file_format, notes=("refinement statistics are not read from mmJSON",)))
        return codes_from_block(block), stats
    head = data[: first_record(data, _COORDINATE_STARTS)].decode("latin-1")
    return codes_from_pdb_header(head), refinement_stats_from_text(head)


# --- reading and recognising the bytes -------------------------------------------------


_HEADER_REC = re.compile(rb"^HEADER", re.MULTILINE)
_END_REC = re.compile(rb"^END\s*$", re.MULTILINE)


def _file_notes(file_format: str, data: bytes) -> tuple[str, ...]:
    """Warnings that do not stop the reading."""
    if file_format == "pdb" and _HEADER_REC.search(data[:4096]) and not _END_REC.search(data[-4096:]):
        return ("a deposited-style PDB file (HEADER record) without its END record: the file may be "
                "truncated and atoms missing",)
    if file_format == "mmcif" and _ends_inside_atom_list(data):
        return ("a deposited-style mmCIF file (_database_2) whose last line is an atom row, with no '#' "
                "closing the atom list: the file may be truncated and atoms missing",)
    return ()


def _ends_inside_atom_list(data: bytes) -> bool:
    """Whether a deposited-style mmCIF text ends on an atom row.

    wwPDB files close every category with a ``#`` line (the atom list too, when it
    is the last category; common practice, no source), so a deposited file ending on
    an ``ATOM``/``HETATM`` row was most likely cut. Files written by other programs,
    which may end anywhere, are not judged: only those naming their entry in
    ``_database_2``.
    """
    tail = data[-4096:].rstrip()
    last = tail[tail.rfind(b"\n") + 1:]
    return last.startswith((b"ATOM", b"HETATM")) and data.find(b"\n_database_2.", 0, 1 << 20) >= 0


def _check_text(name: str, data: bytes, compressed: bool = False) -> str:
    """Check the content is non-empty structure text; return its format."""
    if _BLANK.match(data):
        what = "0 bytes" if not data else "whitespace only"
        if compressed:
            what += " once decompressed"
        raise EmptyStructureError(f"{name}: empty file ({what})")
    if is_binary(data):
        raise StructureFileError(f"{name}: not a PDB or mmCIF file (binary data)")
    file_format = detect_format(data)
    if file_format == "unknown":
        raise StructureFileError(
            f"{name}: not a PDB or mmCIF file (no data_ block and no ATOM, HETATM,"
            " HEADER, CRYST1 or MODEL records)"
        )
    return file_format


def _parse(
    name: str, data: bytes, file_format: str
) -> tuple[gemmi.Structure, gemmi.cif.Block | None, bool, tuple[str, ...], frozenset[str]]:
    """Parse with gemmi; return the structure, the block (mmCIF/mmJSON), whether a PDB occupancy is
    outside [0, 1], notes on what was supplied (residue numbers of an mmCIF file without them), and
    the chains written in several runs."""
    if data.startswith(_UTF8_BOM):
        data = data[len(_UTF8_BOM) :]
    occupancy_suspect = False
    numbering = None
    if file_format == "pdb":
        occupancy_suspect = screen_pdb_records(name, data)
        try:
            st = gemmi.read_pdb_string(data)
        except Exception as exc:  # gemmi raises RuntimeError/ValueError with its own text
            raise StructureFileError(f"{name}: malformed PDB file ({_gemmi_text(exc)})") from exc
        block = None
    else:
        label = "mmCIF" if file_format == "mmcif" else "mmJSON"
        try:
            if file_format == "mmcif":
                doc = gemmi.cif.read_string(data)
            else:
                doc = gemmi.cif.read_mmjson_string(data)
            block = _atom_block(doc)
            numbering = number_residues_without_author_numbers(block)
        except Exception as exc:
            text = _gemmi_text(exc)
            hint = " (truncated or damaged file?)" if "number of values" in text else ""
            raise StructureFileError(f"{name}: malformed {label} file ({text}){hint}") from exc
        sizes = {tag: len(block.find_values(tag)) for tag in _REQUIRED}
        if any(sizes.values()) and not all(sizes.values()):
            missing = ", ".join(tag for tag, size in sizes.items() if not size)
            raise StructureFileError(f"{name}: malformed {label} file (no {missing} values)")
        try:
            st = gemmi.make_structure_from_block(block)
        except Exception as exc:
            raise StructureFileError(
                f"{name}: malformed {label} file ({_gemmi_text(exc)})"
            ) from exc
    parted = _chains_in_parts(st)
    st.merge_chain_parts()  # as gemmi.read_structure does
    notes = (numbering,) if file_format != "pdb" and numbering else ()
    return st, block, occupancy_suspect, notes, parted


def _chains_in_parts(st: gemmi.Structure) -> frozenset[str]:
    """Names of chains written in more than one run of the file (before gemmi joins the runs).

    gemmi gathers a residue's records within one run of a chain; only across runs can a
    residue stay split in two (:mod:`fescan.structure.split_residues`).
    """
    out: set[str] = set()
    for m in st:
        names = [ch.name for ch in m]
        if len(names) != len(set(names)):
            seen: set[str] = set()
            out.update(n for n in names if n in seen or seen.add(n))
    return frozenset(out)


def _gemmi_text(exc: BaseException) -> str:
    """gemmi's error text on one line, with its 'source:line:col' prefix made plain."""
    text = " ".join(str(exc).split()) or type(exc).__name__
    m = _GEMMI_LOCATION.match(text)
    if m:
        text = f"line {m.group(1)}: {text[m.end() :]}"
    return text[:300]


def _atom_block(doc: gemmi.cif.Document) -> gemmi.cif.Block:
    """The first data block with atom_site coordinates (or the first block)."""
    if len(doc) == 0:
        raise ValueError("no data block")
    for block in doc:
        if len(block.find_values(_CARTN[0])):
            return block
    return doc[0]


# --- coordinate checks ------------------------------------------------------------------


def _check_finite(name: str, m: gemmi.Model, number: int, block: gemmi.cif.Block | None) -> None:
    """Raise CoordinateError when a coordinate of the model is NaN or infinite.

    gemmi's centre of mass is computed in C++ and becomes NaN/inf as soon as one
    coordinate is (0 * NaN is NaN, so even massless or unoccupied atoms count);
    only then are the atoms looked at one by one, to name the culprit.
    """
    com = m.calculate_center_of_mass()
    if math.isfinite(com.x) and math.isfinite(com.y) and math.isfinite(com.z):
        return
    if block is not None:
        try:
            problem = _cif_coordinate_problem(block, number)
        except (RuntimeError, ValueError, IndexError):  # unusual layout: name the atom instead
            problem = None
        if problem is not None:
            raise CoordinateError(f"{name}: {problem}")
    for ch in m:
        for res in ch:
            for atom in res:
                p = atom.pos
                if not (math.isfinite(p.x) and math.isfinite(p.y) and math.isfinite(p.z)):
                    raise CoordinateError(
                        f"{name}: model {number}: atom {atom.name} of {res.name}"
                        f" {ch.name}/{res.seqid} has a non-finite coordinate"
                        f" ({p.x}, {p.y}, {p.z})"
                    )
    # Finite coordinates, zero total mass x occupancy: nothing wrong.


def _cif_coordinate_problem(block: gemmi.cif.Block, number: int) -> str | None:
    """Describe the first missing / non-numeric / non-finite _atom_site.Cartn value."""
    tags = ["Cartn_x", "Cartn_y", "Cartn_z", "?id", "?pdbx_PDB_model_num"]
    table = block.find("_atom_site.", tags)
    has_id, has_model = table.has_column(3), table.has_column(4)
    for i, row in enumerate(table):
        if has_model and gemmi.cif.as_string(row[4]) not in ("", str(number)):
            continue
        for axis, col in (("x", 0), ("y", 1), ("z", 2)):
            raw = row[col]
            if math.isfinite(gemmi.cif.as_number(raw)):
                continue
            atom = f"id {gemmi.cif.as_string(row[3])}" if has_id else f"row {i + 1}"
            where = f"_atom_site {atom}: Cartn_{axis}"
            if gemmi.cif.is_null(raw):
                return f"{where} is missing ({raw!r})"
            value = gemmi.cif.as_string(raw)
            try:
                float(value)
            except ValueError:
                return f"{where} {value!r} is not a number"
            return f"{where} {value!r} is not finite"
    return None


# --- summary ---------------------------------------------------------------------------


def _info_value(st: gemmi.Structure, key: str) -> str | None:
    """A value of gemmi's info map, stripped; None when absent or null."""
    for k, v in st.info.items():
        if k == key:
            v = " ".join(v.split())
            return v if v and v not in ("?", ".") else None
    return None


def _entry_id(st: gemmi.Structure, name: str) -> str:
    """PDB ID from the header, else from the file name (``2fug.pdb1`` -> ``2FUG``)."""
    entry = _info_value(st, "_entry.id") or ""
    if entry.upper() not in _MISSING_IDS:
        return entry
    base = Path(name).name
    if base.lower().endswith(".gz"):
        base = base[:-3]
    stem = base.split(".", 1)[0] or base
    m = _PDB_ID_STEM.fullmatch(stem)
    return m.group(1).upper() if m else stem


def _resolution(st: gemmi.Structure) -> float | None:
    """Resolution in Å, or None when missing."""
    res = st.resolution
    return float(res) if math.isfinite(res) and res > 0 else None


def _cell(st: gemmi.Structure) -> tuple[float, float, float, float, float, float] | None:
    """Unit cell parameters, or None without a crystal cell."""
    c = st.cell
    if not c.is_crystal():
        return None
    return (c.a, c.b, c.c, c.alpha, c.beta, c.gamma)
