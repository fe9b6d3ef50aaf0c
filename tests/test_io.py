"""Tests of fescan.structure.reading: reading structure files, bad input, models, altlocs, hydrogens."""

from __future__ import annotations

import gzip
import json
import math
import os
import random
import re
import shutil
from collections import Counter
from collections.abc import Callable
from pathlib import Path

import gemmi
import pytest
from Bio.PDB import MMCIFParser, PDBParser

from fescan.core.errors import (
    ConfigError,
    CoordinateError,
    EmptyStructureError,
    FescanError,
    StructureFileError,
    StructureNotFound,
)
from fescan.structure.reading import LoadedStructure, detect_format, read_structure
from tests.datafiles import ENTRIES, entry_path, requires_shared

# --- small synthetic files, built in code -------------------------------------------------


def pdb_atom(
    serial: int,
    name: str,
    resname: str,
    seq: int,
    xyz: tuple[float, float, float],
    *,
    chain: str = "A",
    altloc: str = " ",
    occ: float = 1.0,
    element: str | None = None,
    record: str | None = None,
) -> str:
    """One fixed-column PDB ATOM/HETATM line (with newline)."""
    element = element or name[0]
    record = record or ("ATOM" if resname in ("CYS", "SER", "THR", "ALA") else "HETATM")
    padded = f" {name:<3s}" if len(name) < 4 and len(element) == 1 else f"{name:<4s}"
    x, y, z = xyz
    return (
        f"{record:<6s}{serial:5d} {padded}{altloc}{resname:>3s} {chain}{seq:4d}    "
        f"{x:8.3f}{y:8.3f}{z:8.3f}{occ:6.2f}{20.0:6.2f}          {element:>2s}  \n"
    )


def small_pdb() -> str:
    """A tiny PDB entry: one Cys and one SF4 fragment (5 atoms)."""
    return (
        "HEADER    ELECTRON TRANSPORT                      01-JAN-00   9XYZ              \n"
        "EXPDTA    X-RAY DIFFRACTION                                                     \n"
        "CRYST1   30.000   40.000   50.000  90.00  90.00  90.00 P 1           1          \n"
        + pdb_atom(1, "N", "CYS", 1, (1.0, 2.0, 3.0))
        + pdb_atom(2, "CA", "CYS", 1, (2.0, 2.0, 3.0))
        + pdb_atom(3, "SG", "CYS", 1, (3.0, 2.0, 3.0))
        + pdb_atom(4, "FE1", "SF4", 101, (5.0, 2.0, 3.0), element="FE")
        + pdb_atom(5, "S1", "SF4", 101, (6.0, 2.0, 3.0), element="S")
        + "END\n"
    )


def replace_field(text: str, serial: int, first_col: int, value: str) -> str:
    """Overwrite columns first_col..first_col+7 (1-based) of the ATOM line with this serial."""
    lines = text.splitlines(keepends=True)
    for i, line in enumerate(lines):
        if line.startswith(("ATOM", "HETATM")) and int(line[6:11]) == serial:
            lines[i] = line[: first_col - 1] + value.rjust(8)[:8] + line[first_col + 7 :]
    return "".join(lines)


CIF_HEADER = """data_9XYZ
_entry.id 9XYZ
_exptl.method 'X-RAY DIFFRACTION'
loop_
_atom_site.group_PDB
_atom_site.id
_atom_site.type_symbol
_atom_site.label_atom_id
_atom_site.label_alt_id
_atom_site.label_comp_id
_atom_site.label_asym_id
_atom_site.label_entity_id
_atom_site.label_seq_id
_atom_site.Cartn_x
_atom_site.Cartn_y
_atom_site.Cartn_z
_atom_site.occupancy
_atom_site.B_iso_or_equiv
_atom_site.auth_seq_id
_atom_site.auth_asym_id
_atom_site.pdbx_PDB_model_num
"""
CIF_ROWS = [
    "ATOM 1 N N . CYS A 1 1 1.000 2.000 3.000 1.00 20.0 1 A 1",
    "ATOM 2 C CA . CYS A 1 1 2.000 2.000 3.000 1.00 20.0 1 A 1",
    "ATOM 3 S SG . CYS A 1 1 3.000 2.000 3.000 1.00 20.0 1 A 1",
    "HETATM 4 FE FE1 . SF4 B 2 . 5.000 2.000 3.000 1.00 20.0 101 A 1",
    "HETATM 5 S S1 . SF4 B 2 . 6.000 2.000 3.000 1.00 20.0 101 A 1",
]


def small_cif(x_of_first: str = "1.000") -> str:
    """A tiny mmCIF entry (same atoms as small_pdb); optionally a raw first x value."""
    rows = [CIF_ROWS[0].replace(" 1.000 2.000", f" {x_of_first} 2.000", 1), *CIF_ROWS[1:]]
    return CIF_HEADER + "\n".join(rows) + "\n#\n"


def write(tmp_path: Path, name: str, content: str | bytes) -> Path:
    """Write content to tmp_path/name and return the path."""
    path = tmp_path / name
    path.write_bytes(content.encode() if isinstance(content, str) else content)
    return path


# --- the table of bad files ---------------------------------------------------------------
# bad-input behaviour, common practice, no source
# Each builder writes one file into tmp_path (or names a missing one) and returns its path.

Builder = Callable[[Path], Path]


def _truncated_real_cif(tmp_path: Path) -> Path:
    text = entry_path("5WQQ").read_text()
    start = text.index("\nATOM ")
    cut = text.index("\n", start + 20_000) - 10  # mid-row, well inside the atom_site loop
    return write(tmp_path, "5wqq_cut.cif", text[:cut])


def _truncated_gzip(tmp_path: Path) -> Path:
    blob = gzip.compress((small_pdb() * 40).encode())
    return write(tmp_path, "cut.pdb.gz", blob[: len(blob) // 2])


def _random_bytes(seed: int) -> bytes:
    data = random.Random(seed).randbytes(4096)
    return b"\x00" + data[1:]  # never gzip magic by chance


BAD_FILES: list[tuple[str, Builder, type[FescanError], str]] = [
    ("empty", lambda t: write(t, "empty.pdb", b""), EmptyStructureError, r"empty file \(0 bytes\)"),
    (
        "whitespace",
        lambda t: write(t, "blank.cif", b" \n\t\n  \r\n"),
        EmptyStructureError,
        r"empty file \(whitespace only\)",
    ),
    (
        "gzip-of-empty",
        lambda t: write(t, "empty.pdb.gz", gzip.compress(b"")),
        EmptyStructureError,
        r"empty file \(0 bytes once decompressed\)",  # the file itself holds 20 bytes
    ),
    (
        "cif-without-atom_site",
        lambda t: write(t, "noatoms.cif", "data_9XYZ\n_entry.id 9XYZ\n_cell.length_a 10.0\n"),
        EmptyStructureError,
        r"no atoms \(the file has 0 models\)",
    ),
    (
        "pdb-header-only",
        lambda t: write(t, "header.pdb", "HEADER    TEST PROTEIN\nEND\n"),
        EmptyStructureError,
        r"no atoms in any of its 1 model",
    ),
    (
        "pdb-model-without-atoms",
        lambda t: write(t, "emptymodel.pdb", "MODEL        1\nENDMDL\nEND\n"),
        EmptyStructureError,
        r"no atoms",
    ),
    (
        "cif-truncated-mid-row",
        lambda t: write(t, "cut.cif", small_cif()[: small_cif().index("HETATM 5") + 20]),
        StructureFileError,
        r"malformed mmCIF file \(line \d+: .*number of values.*truncated",
    ),
    (
        "cif-row-missing-a-value",
        lambda t: write(t, "short_row.cif", small_cif().replace(" 20.0 101 A 1\n#", " 101 A 1\n#")),
        StructureFileError,
        r"malformed mmCIF file .*number of values",
    ),
    (
        "cif-no-cartn_z",
        lambda t: write(
            t,
            "noz.cif",
            CIF_HEADER.replace("_atom_site.Cartn_z\n", "")
            + "".join(" ".join(row.split()[:11] + row.split()[12:]) + "\n" for row in CIF_ROWS),
        ),
        StructureFileError,
        r"malformed mmCIF file \(no _atom_site.Cartn_z values\)",
    ),
    (
        "cif-unterminated-quote",
        lambda t: write(t, "quote.cif", small_cif().replace("'X-RAY DIFFRACTION'", "'X-RAY")),
        StructureFileError,
        r"malformed mmCIF file",
    ),
    (
        "random-bytes-named-gz",
        lambda t: write(t, "noise.pdb.gz", _random_bytes(1)),
        StructureFileError,
        r"not a PDB or mmCIF file \(binary data\)",
    ),
    (
        "binary-garbage",
        lambda t: write(t, "noise.cif", _random_bytes(2)),
        StructureFileError,
        r"not a PDB or mmCIF file \(binary data\)",
    ),
    (
        "plain-text-not-a-structure",
        lambda t: write(t, "notes.pdb", "Dear reader,\nthis is not a structure.\n"),
        StructureFileError,
        r"not a PDB or mmCIF file \(no data_ block",
    ),
    (
        "truncated-gzip",
        _truncated_gzip,
        StructureFileError,
        r"damaged gzip data",
    ),
    (
        "corrupt-gzip-crc",
        lambda t: write(t, "crc.pdb.gz", gzip.compress(small_pdb().encode())[:-8] + b"\0" * 8),
        StructureFileError,
        r"damaged gzip data",
    ),
    (
        "pdb-nan",
        lambda t: write(t, "nan.pdb", replace_field(small_pdb(), 2, 31, "nan")),
        CoordinateError,
        r"line 5: x coordinate 'nan' is not finite \(columns 31-38\)",
    ),
    (
        "pdb-inf",
        lambda t: write(t, "inf.pdb", replace_field(small_pdb(), 4, 47, "-inf")),
        CoordinateError,
        r"line 7: z coordinate '-inf' is not finite",
    ),
    (
        "pdb-abc.de",
        lambda t: write(t, "abc.pdb", replace_field(small_pdb(), 3, 39, "abc.de")),
        CoordinateError,
        r"line 6: y coordinate 'abc.de' is not a number \(columns 39-46\)",
    ),
    (
        "pdb-blank-coordinate",
        lambda t: write(t, "blankxyz.pdb", replace_field(small_pdb(), 5, 31, "")),
        CoordinateError,
        r"line 8: x coordinate is blank",
    ),
    (
        "pdb-overflow-stars",
        lambda t: write(t, "stars.pdb", replace_field(small_pdb(), 1, 31, "********")),
        CoordinateError,
        r"line 4: x coordinate '\*+' is not a number",
    ),
    (
        "pdb-line-too-short",
        lambda t: write(t, "short.pdb", pdb_atom(1, "N", "ALA", 1, (1, 2, 3))[:42] + "\n"),
        CoordinateError,
        r"line 1: record too short to hold coordinates",
    ),
    (
        "pdb-first-line-bad",
        lambda t: write(t, "first.pdb", replace_field(small_pdb().split("\n", 3)[3], 1, 31, "x")),
        CoordinateError,
        r"line 1: x coordinate 'x' is not a number",
    ),
    (
        "cif-nan",
        lambda t: write(t, "nan.cif", small_cif("nan")),
        CoordinateError,
        r"_atom_site id 1: Cartn_x 'nan' is not finite",
    ),
    (
        "cif-abc.de",
        lambda t: write(t, "abc.cif", small_cif("abc.de")),
        CoordinateError,
        r"_atom_site id 1: Cartn_x 'abc.de' is not a number",
    ),
    (
        "cif-question-mark",
        lambda t: write(t, "missing.cif", small_cif("?")),
        CoordinateError,
        r"_atom_site id 1: Cartn_x is missing \('\?'\)",
    ),
    (
        "cif-dot",
        lambda t: write(t, "dot.cif", small_cif(".")),
        CoordinateError,
        r"_atom_site id 1: Cartn_x is missing \('\.'\)",
    ),
    (
        "pdb-model-without-endmdl",
        lambda t: write(t, "model.pdb", multi_model_pdb([1, 2]).replace("ENDMDL\n", "", 1)),
        StructureFileError,
        r"malformed PDB file",
    ),
    (
        "missing-path",
        lambda t: t / "does_not_exist.pdb",
        StructureNotFound,
        r"no such file",
    ),
    ("directory", lambda t: t, StructureNotFound, r"is a directory"),
]


@pytest.mark.parametrize(
    ("builder", "error", "pattern"),
    [pytest.param(b, e, p, id=i) for i, b, e, p in BAD_FILES]
    + [
        pytest.param(
            _truncated_real_cif,
            StructureFileError,
            r"malformed mmCIF file .*number of values",
            id="real-5WQQ-cut-mid-atom_site",
            marks=requires_shared,
        )
    ],
)
def test_bad_file_raises(
    tmp_path: Path, builder: Builder, error: type[FescanError], pattern: str
) -> None:
    path = builder(tmp_path)
    with pytest.raises(error) as info:
        read_structure(path)
    message = str(info.value)
    assert message.startswith(f"{path}: "), message
    assert re.search(re.escape(path.name) + r".*" + pattern, message), message
    assert "Traceback" not in message


def test_errors_are_builtin_too(tmp_path: Path) -> None:
    with pytest.raises(FileNotFoundError):
        read_structure(tmp_path / "nothing.cif")
    with pytest.raises(ValueError):
        read_structure(write(tmp_path, "nan.pdb", replace_field(small_pdb(), 1, 31, "nan")))


def test_odd_paths(tmp_path: Path) -> None:
    with pytest.raises(StructureFileError, match=r"cannot be read"):
        read_structure(str(tmp_path / "nul\0byte.pdb"))
    fifo = tmp_path / "pipe.pdb"
    os.mkfifo(fifo)
    with pytest.raises(StructureNotFound, match=r"pipe.pdb: not a regular file"):
        read_structure(fifo)


def test_zero_occupancy_everywhere_is_not_a_coordinate_error(tmp_path: Path) -> None:
    """gemmi's centre of mass is 0/0 = NaN here; the atoms themselves are fine."""
    text = pdb_atom(1, "N", "ALA", 1, (1, 2, 3), occ=0.0) + pdb_atom(
        2, "CA", "ALA", 1, (2, 2, 3), occ=0.0
    )
    assert read_structure(write(tmp_path, "zero.pdb", text)).info.n_atoms == 2


def test_gemmi_alone_accepts_what_we_reject(tmp_path: Path) -> None:
    """Why the checks exist: gemmi 0.7 reads these without complaint."""
    st = gemmi.read_pdb_string(replace_field(small_pdb(), 1, 31, "abc.de"))
    assert st[0][0][0][0].pos.x == 0.0
    assert len(gemmi.read_pdb_string("")) == 1  # an empty model, no error
    st = gemmi.read_structure(str(write(tmp_path, "q.cif", small_cif("?"))))
    assert math.isnan(st[0][0][0][0].pos.x)


# --- options ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "kwargs", [{"model": 0}, {"model": True}, {"model": "1"}, {"altloc": "best"}]
)
def test_bad_options(tmp_path: Path, kwargs: dict) -> None:
    with pytest.raises(ConfigError):
        read_structure(write(tmp_path, "ok.pdb", small_pdb()), **kwargs)


# --- synthetic files that must read -----------------------------------------------------------


def test_small_pdb(tmp_path: Path) -> None:
    loaded = read_structure(write(tmp_path, "small.pdb", small_pdb()))
    assert isinstance(loaded, LoadedStructure)
    assert loaded.path == str(tmp_path / "small.pdb")
    assert len(loaded.structure) == 1 and loaded.model_number == 1
    assert loaded.model.count_atom_sites() == loaded.info.n_atoms == 5
    info = loaded.info
    assert (info.entry_id, info.method, info.file_format, info.compressed) == (
        "9XYZ",
        "X-RAY DIFFRACTION",
        "pdb",
        False,
    )
    assert info.cell == (30.0, 40.0, 50.0, 90.0, 90.0, 90.0) and info.spacegroup == "P 1"
    assert info.resolution is None and info.title is None
    assert json.loads(json.dumps(info.to_dict()))["cell"] == [30.0, 40.0, 50.0, 90.0, 90.0, 90.0]


def test_small_cif_and_mmjson(tmp_path: Path) -> None:
    cif = read_structure(write(tmp_path, "small.cif", small_cif()))
    assert (cif.info.file_format, cif.info.n_atoms, cif.info.entry_id) == ("mmcif", 5, "9XYZ")
    doc = gemmi.cif.read_string(small_cif())
    js = read_structure(write(tmp_path, "small.json", doc.as_json(mmjson=True)))
    assert (js.info.file_format, js.info.n_atoms) == ("mmjson", 5)
    assert [a.name for r in js.model["A"] for a in r] == ["N", "CA", "SG", "FE1", "S1"]


def test_plain_text_named_gz_reads(tmp_path: Path) -> None:
    loaded = read_structure(write(tmp_path, "plain.pdb.gz", small_pdb()))
    assert loaded.info.compressed is False and loaded.info.n_atoms == 5


def test_gzip_detected_by_content(tmp_path: Path) -> None:
    loaded = read_structure(write(tmp_path, "zipped.dat", gzip.compress(small_cif().encode())))
    assert loaded.info.compressed is True and loaded.info.file_format == "mmcif"


def test_left_justified_and_exponent_coordinates_are_read(tmp_path: Path) -> None:
    """The fast screen flags these lines; the exact check then accepts them."""
    text = replace_field(small_pdb(), 1, 31, "")
    text = text.replace("           2.000   3.000  1.00", "1.5        2.000   3.000  1.00", 1)
    text = replace_field(text, 2, 39, "2.5e0")
    loaded = read_structure(write(tmp_path, "odd.pdb", text))
    atoms = [a for r in loaded.model["A"] for a in r]
    assert atoms[0].pos.x == pytest.approx(1.5) and atoms[1].pos.y == pytest.approx(2.5)


def test_garbage_after_end_is_ignored_like_gemmi(tmp_path: Path) -> None:
    text = small_pdb() + pdb_atom(9, "O", "HOH", 9, (0, 0, 0)).replace("   0.000", "   abc.d", 1)
    assert read_structure(write(tmp_path, "tail.pdb", text)).info.n_atoms == 5


def test_entry_id_falls_back_to_file_name(tmp_path: Path) -> None:
    text = small_pdb().replace("9XYZ", "XXXX")
    assert read_structure(write(tmp_path, "2fug.pdb1", text)).info.entry_id == "2FUG"
    assert read_structure(write(tmp_path, "pdb1abc.ent.gz", text)).info.entry_id == "1ABC"
    assert read_structure(write(tmp_path, "my_model.pdb", text)).info.entry_id == "my_model"


def multi_model_pdb(numbers: list[int]) -> str:
    """Models with the given numbers; model k has k atoms."""
    out = []
    for k in numbers:
        out.append(f"MODEL     {k:4d}\n")
        out.extend(pdb_atom(i + 1, "CA", "ALA", i + 1, (float(i), 0.0, float(k))) for i in range(k))
        out.append("ENDMDL\n")
    return "".join(out) + "END\n"


def test_model_numbers_as_in_file(tmp_path: Path) -> None:
    path = write(tmp_path, "models.pdb", multi_model_pdb([3, 7]))
    loaded = read_structure(path, model=7)
    assert (loaded.model_number, loaded.info.n_models, loaded.info.n_atoms) == (7, 2, 7)
    assert len(loaded.structure) == 1
    with pytest.raises(
        StructureFileError, match=r"models.pdb: no model 1; the file has 2 model\(s\): 3, 7"
    ):
        read_structure(path)


def test_single_model_is_model_one_whatever_its_number(tmp_path: Path) -> None:
    loaded = read_structure(write(tmp_path, "five.pdb", multi_model_pdb([5])))
    assert (loaded.model_number, loaded.info.n_atoms) == (5, 5)


def test_hydrogen_only_model(tmp_path: Path) -> None:
    text = pdb_atom(1, "H1", "HOH", 1, (0, 0, 0), element="H") + "END\n"
    path = write(tmp_path, "h.pdb", text)
    with pytest.raises(EmptyStructureError, match=r"h.pdb: model 1 has only hydrogen atoms"):
        read_structure(path)
    assert read_structure(path, keep_hydrogens=True).info.n_atoms == 1


def test_deuterium_removed_and_empty_residue_dropped(tmp_path: Path) -> None:
    text = (
        pdb_atom(1, "N", "ALA", 1, (0, 0, 0))
        + pdb_atom(2, "D", "ALA", 1, (1, 0, 0), element="D")
        + pdb_atom(3, "H1", "HYD", 2, (2, 0, 0), element="H")
    )
    loaded = read_structure(write(tmp_path, "d.pdb", text))
    assert [(r.name, len(r)) for r in loaded.model["A"]] == [("ALA", 1)]


def altloc_pdb() -> str:
    """SER 1: B (0.4) listed before A (0.6); CYS 2: A/B tie at 0.5, B first; 3: SER/THR variants."""
    return (
        pdb_atom(1, "N", "SER", 1, (0, 0, 0))
        + pdb_atom(2, "OG", "SER", 1, (1, 0, 0), altloc="B", occ=0.4)
        + pdb_atom(3, "OG", "SER", 1, (2, 0, 0), altloc="A", occ=0.6)
        + pdb_atom(4, "N", "CYS", 2, (3, 0, 0))
        + pdb_atom(5, "SG", "CYS", 2, (4, 0, 0), altloc="B", occ=0.5)
        + pdb_atom(6, "SG", "CYS", 2, (5, 0, 0), altloc="A", occ=0.5)
        + pdb_atom(7, "CA", "SER", 3, (6, 0, 0), altloc="A", occ=0.3)
        + pdb_atom(8, "OG", "SER", 3, (7, 0, 0), altloc="A", occ=0.3)
        + pdb_atom(9, "CA", "THR", 3, (8, 0, 0), altloc="B", occ=0.7)
        + pdb_atom(10, "OG1", "THR", 3, (9, 0, 0), altloc="B", occ=0.7, element="O")
        + "END\n"
    )


@pytest.mark.parametrize(
    ("policy", "expected"),
    [
        (
            "occupancy",
            [("SER", 1, "N", ""), ("SER", 1, "OG", "A"), ("CYS", 2, "N", ""), ("CYS", 2, "SG", "A"),
             ("THR", 3, "CA", "B"), ("THR", 3, "OG1", "B")],
        ),
        (
            "first",
            [("SER", 1, "N", ""), ("SER", 1, "OG", "B"), ("CYS", 2, "N", ""), ("CYS", 2, "SG", "B"),
             ("SER", 3, "CA", "A"), ("SER", 3, "OG", "A")],
        ),
    ],
)  # fmt: skip
def test_altloc_policies_synthetic(tmp_path: Path, policy: str, expected: list) -> None:
    loaded = read_structure(write(tmp_path, "alt.pdb", altloc_pdb()), altloc=policy)
    got = [
        (r.name, r.seqid.num, a.name, a.altloc.replace("\0", ""))
        for r in loaded.model["A"]
        for a in r
    ]
    assert got == expected
    assert loaded.info.altloc_policy == policy and loaded.info.n_atoms == len(expected)


def test_altloc_all_keeps_everything(tmp_path: Path) -> None:
    assert read_structure(write(tmp_path, "alt.pdb", altloc_pdb()), altloc="all").info.n_atoms == 10


def test_detect_format() -> None:
    assert detect_format("# c\n\ndata_X\n") == "mmcif"
    assert detect_format(b'  {"data_X": {}}') == "mmjson"
    assert detect_format("REMARK 1\nATOM      1  N\n") == "pdb"
    assert detect_format(b"\xef\xbb\xbfdata_X\n") == "mmcif"
    assert detect_format("loop_\n_a.b 1\n") == "unknown"


# --- real deposited entries (../shared/structures, see SOURCES.md) -------------------------


def _read(pdb_id: str, **kwargs: object) -> LoadedStructure:
    return read_structure(entry_path(pdb_id), **kwargs)


def _residue_names(loaded: LoadedStructure) -> set[str]:
    return {r.name for ch in loaded.model for r in ch}


@requires_shared
@pytest.mark.parametrize("pdb_id", sorted(ENTRIES))
def test_every_shared_entry_reads(pdb_id: str) -> None:
    loaded = _read(pdb_id)
    name = ENTRIES[pdb_id]
    info = loaded.info
    assert info.entry_id == pdb_id
    assert info.file_format == ("mmcif" if ".cif" in name else "pdb")
    assert info.compressed == name.endswith(".gz")
    assert info.n_atoms == loaded.model.count_atom_sites() > 0
    assert len(loaded.structure) == 1
    assert info.method


@requires_shared
@pytest.mark.parametrize(("pdb_id", "n_models"), [("1CLF", 16), ("1DWL", 3), ("1FDN", 1)])
def test_model_counts(pdb_id: str, n_models: int) -> None:
    # source: SOURCES.md (1CLF 16 NMR models, 1DWL 3 models)
    assert _read(pdb_id).info.n_models == n_models


@requires_shared
def test_1dwl_models_differ() -> None:
    # source: SOURCES.md: model 1 chain A only, no cofactor; models 2 and 3 have SF4 A/60, HEC B/80
    first = _read("1DWL")
    assert not {"SF4", "HEC"} & _residue_names(first)
    assert [ch.name for ch in first.model] == ["A"]
    for number in (2, 3):
        loaded = _read("1DWL", model=number)
        assert loaded.model_number == number and len(loaded.structure) == 1
        assert {"SF4", "HEC"} <= _residue_names(loaded)
        assert loaded.model["A"]["60"][0].name == "SF4"
        assert loaded.model["B"]["80"][0].name == "HEC"
    with pytest.raises(
        StructureFileError, match=r"1DWL.pdb: no model 4; the file has 3 model\(s\): 1-3"
    ):
        _read("1DWL", model=4)


@requires_shared
def test_2axt_case_sensitive_chains() -> None:
    # source: SOURCES.md (36 chains A..z; FE2 A/557 and a/5557)
    model = _read("2AXT").model
    names = [ch.name for ch in model]
    assert len(names) == 36 and "A" in names and "a" in names
    assert model["A"]["557"][0].name == "FE2"
    assert model["a"]["5557"][0].name == "FE2"


@requires_shared
@pytest.mark.parametrize(("pdb_id", "n_h"), [("5WQQ", 707), ("7FD1", 782)])
def test_hydrogens(pdb_id: str, n_h: int) -> None:
    # source: SOURCES.md (5WQQ 707 H atoms, 7FD1 782 H atoms)
    default = _read(pdb_id, altloc="all")
    kept = _read(pdb_id, altloc="all", keep_hydrogens=True)
    assert not default.model.has_hydrogen() and kept.model.has_hydrogen()
    assert kept.info.n_atoms - default.info.n_atoms == n_h
    assert sum(a.is_hydrogen() for ch in kept.model for r in ch for a in r) == n_h


def _expected_occupancy_choice(model: gemmi.Model) -> Counter:
    """Independent reference: per residue keep unlabelled atoms + the highest-occupancy label."""
    kept: Counter = Counter()
    for ch in model:
        for res in ch:
            sums: dict[str, float] = {}
            for a in res:
                if a.altloc != "\0":
                    sums[a.altloc] = sums.get(a.altloc, 0.0) + a.occ
            best = sorted(sums, key=lambda k: (-round(sums[k], 6), k))[0] if sums else None
            for a in res:
                if a.altloc in ("\0", best):
                    kept[(ch.name, str(res.seqid), res.name, a.name, a.altloc)] += 1
    return kept


@requires_shared
@pytest.mark.parametrize("pdb_id", ["6LK1", "1YQ9", "5WQQ"])
def test_altloc_occupancy_real(pdb_id: str) -> None:
    # source: SOURCES.md (6LK1 altlocs A/B, e.g. CYS A76; 1YQ9 13 atoms with altloc A/B)
    every = _read(pdb_id, altloc="all")
    chosen = _read(pdb_id)
    labelled = sum(a.altloc != "\0" for ch in every.model for r in ch for a in r)
    assert labelled > 0
    got = Counter(
        (ch.name, str(r.seqid), r.name, a.name, a.altloc)
        for ch in chosen.model
        for r in ch
        for a in r
    )
    assert got == _expected_occupancy_choice(every.model)
    for ch in chosen.model:
        for res in ch:
            assert len({a.altloc for a in res} - {"\0"}) <= 1, res
    assert every.info.n_atoms - chosen.info.n_atoms > 0


@requires_shared
def test_altloc_6lk1_examples() -> None:
    # source: the 6LK1 file itself (GLU A28 CA: A 0.42 / B 0.58; ILE A23 CA: A 0.72 / B 0.28;
    # CYS A76: altloc B only, occupancy 1.00)
    chain = _read("6LK1").model["A"]
    assert {a.altloc for a in chain["28"][0] if a.altloc != "\0"} == {"B"}
    assert {a.altloc for a in chain["23"][0] if a.altloc != "\0"} == {"A"}
    assert [a.altloc for a in chain["76"][0]] == ["B"] * 6
    first = _read("6LK1", altloc="first").model["A"]
    assert {a.altloc for a in first["28"][0] if a.altloc != "\0"} == {"A"}


@requires_shared
def test_resolution_and_method() -> None:
    # source: SOURCES.md (1FDN X-ray 1.84 A; 4CRM EM 8.75 A; 1CLF solution NMR; 2FUG no resolution)
    fdn = _read("1FDN").info
    assert (fdn.method, fdn.resolution) == ("X-RAY DIFFRACTION", 1.84)
    assert fdn.cell is not None and fdn.spacegroup == "P 43 21 2"
    crm = _read("4CRM").info
    assert (crm.method, crm.resolution) == ("ELECTRON MICROSCOPY", 8.75)
    assert crm.cell is None and crm.spacegroup is None
    clf = _read("1CLF").info
    assert (clf.method, clf.resolution, clf.cell) == ("SOLUTION NMR", None, None)
    fug = _read("2FUG").info
    assert (fug.entry_id, fug.resolution) == ("2FUG", None)  # header ID is XXXX


@requires_shared
@pytest.mark.parametrize(("pdb_id", "fmt"), [("1FDN", "pdb"), ("5WQQ", "mmcif")])
def test_format_by_content_not_extension(tmp_path: Path, pdb_id: str, fmt: str) -> None:
    reference = _read(pdb_id).info
    renamed = tmp_path / f"{pdb_id}.txt"
    shutil.copyfile(entry_path(pdb_id), renamed)
    zipped = write(tmp_path, f"{pdb_id}.bin", gzip.compress(entry_path(pdb_id).read_bytes()))
    for path, compressed in ((renamed, False), (zipped, True)):
        info = read_structure(path).info
        assert (info.file_format, info.compressed) == (fmt, compressed)
        assert (info.entry_id, info.n_atoms) == (pdb_id, reference.n_atoms)


@requires_shared
def test_gzip_entry_same_as_gemmi() -> None:
    loaded = _read("19HC")
    st = gemmi.read_structure(str(entry_path("19HC")))
    st.remove_hydrogens()
    assert loaded.info.n_atoms <= st[0].count_atom_sites()
    assert [ch.name for ch in loaded.model] == [ch.name for ch in st[0]]


# --- cross-check with an independent parser ---------------------------------------------------
# source: Biopython as independent parser (Bio.PDB PDBParser / MMCIFParser, QUIET=True)


@requires_shared
@pytest.mark.parametrize("pdb_id", ["1FDN", "5WQQ"])
def test_sf4_coordinates_match_biopython(pdb_id: str) -> None:
    path = entry_path(pdb_id)
    parser = MMCIFParser(QUIET=True) if path.suffix == ".cif" else PDBParser(QUIET=True)
    bio_model = parser.get_structure(pdb_id, str(path))[0]
    loaded = _read(pdb_id)
    compared = 0
    for ch in loaded.model:
        for res in ch:
            if res.name != "SF4":
                continue
            bio_res = bio_model[ch.name][("H_SF4", res.seqid.num, res.seqid.icode.strip() or " ")]
            for atom in res:
                assert atom.element.name in ("Fe", "S")
                bio_atom = bio_res[atom.name]
                for ours, theirs in zip(atom.pos.tolist(), bio_atom.coord, strict=True):
                    assert ours == pytest.approx(float(theirs), abs=1e-3)
                compared += 1
    assert compared == {"1FDN": 16, "5WQQ": 8}[pdb_id]  # source: SOURCES.md (2 SF4 / 1 SF4)


@requires_shared
def test_deposited_pdb_cut_at_a_record_boundary_is_noted(tmp_path):
    # a wwPDB entry ends with an END record (wwPDB format guide; common practice, no source):
    # a copy cut between two records still reads, but with a warning that atoms may be missing
    lines = entry_path("1FDN").read_text().splitlines(keepends=True)
    cut = tmp_path / "cut.pdb"
    cut.write_text("".join(lines[:400]))
    info = read_structure(cut).info
    assert any("truncated" in n for n in info.notes)
    assert read_structure(entry_path("1FDN")).info.notes == ()


def _without_atom_site_columns(src: Path, dst: Path, tags: tuple[str, ...]) -> None:
    doc = gemmi.cif.read(str(src))
    block = doc.sole_block()
    loop = block.find_loop("_atom_site.id").get_loop()
    for tag in tags:
        if "_atom_site." + tag in loop.tags:  # gemmi leaves out some columns it does not need
            loop.remove_column("_atom_site." + tag)
    doc.write_file(str(dst))


@requires_shared
def test_mmcif_without_author_residue_numbers_keeps_residues_apart(tmp_path):
    # SOURCES.md: 4CRM holds two [4Fe-4S] clusters, SF4 P/1610 and P/1611, listed one after the
    # other; without _atom_site.auth_seq_id (wwPDB mmCIF dictionary: the author residue number)
    # they share gemmi's unset number and would read as one 16-atom residue
    import fescan

    plain = tmp_path / "no_auth_seq.cif"
    _without_atom_site_columns(entry_path("4CRM"), plain, ("auth_seq_id",))
    loaded = read_structure(plain)
    assert any("no author residue numbers" in n for n in loaded.info.notes)
    sf4 = [r for ch in loaded.model for r in ch if r.name == "SF4"]
    assert [len(r) for r in sf4] == [8, 8]
    waters = sum(1 for ch in loaded.model for r in ch if r.name == "HOH")
    original = read_structure(entry_path("4CRM"))
    assert waters == sum(1 for ch in original.model for r in ch if r.name == "HOH")  # one water per O
    got, want = fescan.scan(plain).to_dict(), fescan.scan(entry_path("4CRM")).to_dict()
    assert [c["class"] for c in got["cofactors"]] == [c["class"] for c in want["cofactors"]]
    assert [p["edge_distance"] for p in got["pairs"]] == pytest.approx([p["edge_distance"] for p in want["pairs"]],
                                                                      abs=1e-3)
    assert len(got["wire"]["path"]) == len(want["wire"]["path"]) == 2


@requires_shared
def test_mmcif_with_label_columns_only_reads_like_the_pdb_file(tmp_path):
    # SOURCES.md: 1BE3 (bovine bc1) holds a Rieske [2Fe-2S] (two His, two Cys ligands) and hemes;
    # the same structure written as mmCIF with only the label_* identifiers must read alike
    import fescan

    full, bare = tmp_path / "1be3.cif", tmp_path / "1be3_label_only.cif"
    st = gemmi.read_structure(str(entry_path("1BE3")))
    st.setup_entities()
    st.make_mmcif_document().write_file(str(full))
    _without_atom_site_columns(full, bare, ("auth_seq_id", "auth_asym_id", "auth_comp_id", "auth_atom_id"))
    got, want = fescan.scan(bare).to_dict(), fescan.scan(entry_path("1BE3")).to_dict()
    assert sorted((c["class"], len(c["ligands"])) for c in got["cofactors"]) == \
        sorted((c["class"], len(c["ligands"])) for c in want["cofactors"])
    assert sorted(p["edge_distance"] for p in got["pairs"]) == pytest.approx(
        sorted(p["edge_distance"] for p in want["pairs"]), abs=1e-3)


def _split_residue_text(lines: list[str], key: str) -> str:
    """The second half of residue ``key`` (columns 18-26, e.g. 'FAD A 721') moved after the other HETATMs."""
    rows = [i for i, ln in enumerate(lines) if ln[:6] == "HETATM" and ln[17:26] == key]
    moved = set(rows[len(rows) // 2:])
    kept = [ln for i, ln in enumerate(lines) if i not in moved]
    end = next(i for i, ln in enumerate(kept) if ln.startswith(("CONECT", "MASTER", "END")))
    return "\n".join(kept[:end] + [lines[i] for i in sorted(moved)] + kept[end:]) + "\n"


@requires_shared
def test_residue_split_into_two_runs_is_joined(tmp_path):
    # wwPDB format guide 3.3 (ATOM/HETATM): a residue's records follow one another. SOURCES.md: 1KF6's
    # wire runs F3S B/245 - SF4 B/246 - FES B/244 - FAD A/721; with half of the FAD listed after the
    # other HETATMs, gemmi reads two residues A/721 FAD, which must become one again
    import fescan

    lines = entry_path("1KF6").read_text().splitlines()
    split = tmp_path / "split_fad.pdb"
    split.write_text(_split_residue_text(lines, "FAD A 721"))
    loaded = read_structure(split)
    assert any("A/721 FAD" in n and "joined" in n for n in loaded.info.notes)
    assert sum(1 for r in loaded.model["A"] if r.name == "FAD") == 1
    got, want = fescan.scan(split).to_dict(), fescan.scan(entry_path("1KF6")).to_dict()
    assert len(got["cofactors"]) == len(want["cofactors"])
    assert got["wire"]["path"] == want["wire"]["path"]
    assert [h["edge_distance"] for h in got["wire"]["hops"]] == pytest.approx(
        [h["edge_distance"] for h in want["wire"]["hops"]], abs=1e-3)


def test_two_residues_sharing_an_identifier_stay_apart(tmp_path):
    # two complete copies of one ligand under one identifier (same atom names), another chain's record
    # between them (gemmi joins records of one identifier only within one run of a chain): not a split
    # residue (common practice, no source)
    atom = "HETATM{serial:5d}  {name:<3} LIG A 900    {x:8.3f}   0.000   0.000  1.00 20.00           {el:>2}"
    first = [atom.format(serial=k + 1, name=n, x=1.5 * k, el=n[0]) for k, n in enumerate(("C1", "C2", "O3"))]
    water = "HETATM   10  O   HOH B 950      30.000   0.000   0.000  1.00 20.00           O"  # another chain between
    second = [atom.format(serial=k + 20, name=n, x=40 + 1.5 * k, el=n[0]) for k, n in enumerate(("C1", "C2", "O3"))]
    path = tmp_path / "twins.pdb"
    path.write_text("\n".join(first + [water] + second + ["END"]) + "\n")
    loaded = read_structure(path)
    assert sum(1 for r in loaded.model["A"] if r.name == "LIG") == 2
    assert any("share the identifier A/900 LIG" in n for n in loaded.info.notes)


@requires_shared
@pytest.mark.parametrize("pdb_id", ["4CRM", "3EK3"])
def test_mmcif_cut_inside_the_atom_list_is_told(pdb_id, tmp_path):
    # wwPDB mmCIF files close every category with a '#' line (the deposited 4CRM and 3EK3 of
    # ../shared/structures do; common practice, no source): a deposited file that ends on an atom
    # row was cut, and says so; the whole file and the cut one rewritten by gemmi (whose atom list is
    # not its last category) do not
    data = entry_path(pdb_id).read_bytes()
    lines = data.split(b"\n")
    rows = [i for i, ln in enumerate(lines) if ln.startswith(b"ATOM")]
    cut = tmp_path / "cut.cif"
    cut.write_bytes(b"\n".join(lines[: rows[len(rows) // 2]]) + b"\n")
    told = "may be truncated"
    assert any(told in n for n in read_structure(cut).info.notes)
    assert not any(told in n for n in read_structure(entry_path(pdb_id)).info.notes)
    written = tmp_path / "written.cif"
    gemmi.read_structure(str(cut)).make_mmcif_document().write_file(str(written))
    assert not any(told in n for n in read_structure(written).info.notes)


def test_gemmi_gathers_a_residue_within_one_run_of_its_chain():
    # the join of split residues looks only at chains written in several runs: it relies on gemmi
    # gathering a residue's records within one run by itself (this pins that behaviour of gemmi)
    atom = "HETATM{serial:5d}  {name:<3} LIG A 900    {x:8.3f}   0.000   0.000  1.00 20.00           {el:>2}"
    first = [atom.format(serial=k + 1, name=n, x=1.5 * k, el=n[0]) for k, n in enumerate(("C1", "C2"))]
    water = "HETATM   10  O   HOH A 950      30.000   0.000   0.000  1.00 20.00           O"
    second = [atom.format(serial=k + 20, name=n, x=3 + 1.5 * k, el=n[0]) for k, n in enumerate(("O3", "C4"))]
    st = gemmi.read_pdb_string("\n".join(first + [water] + second + ["END"]) + "\n")
    assert [(r.name, len(r)) for r in st[0]["A"]] == [("LIG", 4), ("HOH", 1)]
