"""Hostile inputs: each gets a clear FescanError naming the file, or a right answer with a note.

Every case is written here from scratch (a small invented peptide with an Fe ion,
standard PDB columns) and all are scanned by one child process under a memory cap
(``RLIMIT_AS``, 2 GiB), so a case that would take the machine's memory fails the test
instead. What must be refused follows Biopython's ``PDBParser(PERMISSIVE=False)``
(Bio/PDB/PDBParser.py: "Invalid or missing coordinate(s)", "Invalid or missing
occupancy", "Invalid or missing B factor", and ``int()`` of the residue number) and
the wwPDB format guide 3.3 (ATOM record columns); the gzip and mmCIF cases follow
RFC 1952 and the mmCIF dictionary's required ``_atom_site`` items.
"""

from __future__ import annotations

import gzip
import json
import os
import re
import subprocess
import sys
import zlib
from pathlib import Path

import pytest

from fescan.cli.main import main

REPO = Path(__file__).resolve().parents[1]
MEMORY_CAP = 2 << 30


def atom(serial: int, name: str, resname: str, resseq: int, xyz: tuple[float, float, float], *,
         occ: float = 1.0, b: float = 20.0, element: str = "C", record: str = "ATOM", chain: str = "A") -> str:
    """One ATOM/HETATM record in the standard columns (wwPDB format guide 3.3)."""
    x, y, z = xyz
    return (f"{record:<6}{serial:>5} {name:<4} {resname:>3} {chain}{resseq:>4}    "
            f"{x:8.3f}{y:8.3f}{z:8.3f}{occ:6.2f}{b:6.2f}          {element:>2}\n")


HEADER = ("HEADER    ELECTRON TRANSPORT                      01-JAN-00   9ZZZ              \n"
          "TITLE     AN INVENTED PEPTIDE WITH AN IRON ION                                  \n"
          "CRYST1   40.000   40.000   40.000  90.00  90.00  90.00 P 1           1          \n")


def base_lines() -> list[str]:
    """HEADER, TITLE, CRYST1 (lines 1-3), then the atoms from line 4; the target atom is line 5."""
    lines = HEADER.splitlines(keepends=True)
    serial = 1
    for k in range(3):
        for j, (name, el) in enumerate(((" N  ", "N"), (" CA ", "C"), (" C  ", "C"), (" O  ", "O"), (" CB ", "C"))):
            lines.append(atom(serial, name, "ALA", k + 1, (10.0 + 3.8 * k + 0.5 * j, 12.345, -13.456), element=el))
            serial += 1
    lines.append(atom(serial, "FE  ", " FE", 101, (20.0, 20.0, 20.0), element="FE", record="HETATM"))
    lines.append("END\n")
    return lines


def pdb(edit=None, line: int = 5) -> bytes:
    """The base PDB text with ``edit`` applied to the given line (1-based)."""
    lines = base_lines()
    if edit is not None:
        lines[line - 1] = edit(lines[line - 1].rstrip("\n")) + "\n"
    return "".join(lines).encode("latin-1")


def put(start: int, text: str):
    """An edit writing ``text`` from column ``start`` (1-based)."""
    return lambda s: s[: start - 1] + text + s[start - 1 + len(text):]


def shift_left(line: str) -> str:
    """The line moved one column left from column 20 (a character lost)."""
    return line[:19] + line[20:]


CIF_HEAD = """data_9ZZZ
_entry.id 9ZZZ
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
_atom_site.pdbx_PDB_ins_code
_atom_site.Cartn_x
_atom_site.Cartn_y
_atom_site.Cartn_z
_atom_site.occupancy
_atom_site.B_iso_or_equiv
_atom_site.auth_seq_id
_atom_site.auth_comp_id
_atom_site.auth_asym_id
_atom_site.auth_atom_id
_atom_site.pdbx_PDB_model_num
"""


def cif(x: str = "10.000", occ: str = "1.00", drop: str | None = None) -> bytes:
    """A small mmCIF file; ``x`` and ``occ`` of the second atom; ``drop`` removes one column."""
    rows = [("ATOM", "1", "N", "N", ".", "ALA", "A", "1", "1", "?", "9.000", "12.000", "13.000", "1.00", "20.0",
             "1", "ALA", "A", "N", "1"),
            ("ATOM", "2", "C", "CA", ".", "ALA", "A", "1", "1", "?", x, "12.500", "13.500", occ, "20.0",
             "1", "ALA", "A", "CA", "1"),
            ("HETATM", "3", "FE", "FE", ".", "FE", "B", "2", ".", "?", "20.000", "20.000", "20.000", "1.00",
             "20.0", "101", "FE", "A", "FE", "1")]
    tags = CIF_HEAD.splitlines()[3:]
    keep = [i for i, t in enumerate(tags) if t != drop]
    head = "\n".join(CIF_HEAD.splitlines()[:3] + [tags[i] for i in keep]) + "\n"
    return (head + "".join(" ".join(r[i] for i in keep) + "\n" for r in rows) + "#\n").encode()


def gzip_bomb(size: int = 200 << 20) -> bytes:
    """A gzip member of ``size`` blanks after one ATOM line: ~1000 times smaller than its content."""
    co = zlib.compressobj(9, zlib.DEFLATED, 31)
    out = [co.compress(pdb())]
    block = b" " * (1 << 20)
    out += [co.compress(block) for _ in range(size >> 20)]
    out.append(co.flush())
    return b"".join(out)


def metal_lattice(n: int) -> bytes:
    """``n`` one-atom Fe residues 1.2 Å apart: a lattice no cofactor is (invented)."""
    lines = HEADER.splitlines(keepends=True)
    lines += [atom(i % 99999 + 1, "FE  ", " FE", i % 9999 + 1, ((i % 30) * 1.2, (i // 30 % 30) * 1.2, (i // 900) * 1.2),
                   element="FE", record="HETATM", chain="AB"[i // 9999 % 2]) for i in range(n)]
    return "".join(lines + ["END\n"]).encode()


def big_residue(n: int) -> bytes:
    lines = HEADER.splitlines(keepends=True)
    lines += [atom(i % 99999 + 1, "FE  ", " FE", 1, ((i % 50) * 1.0, (i // 50 % 50) * 1.0, (i // 2500) * 1.0),
                   element="FE", record="HETATM") for i in range(n)]
    return "".join(lines + ["END\n"]).encode()


# id -> (file name, content, expected class or "ok", pattern in the message (or in a note), options)
CASES: dict[str, tuple[str, object, str, str, dict]] = {
    # --- PDB columns (Biopython strict: coordinates, occupancy, B factor, residue number) ---
    "x-inner-blank": ("a.pdb", pdb(put(31, "1  4.394")), "CoordinateError",
                      r"line 5: x coordinate '1  4.394' has a blank inside \(columns 31-38\)", {}),
    "y-inner-blank": ("a.pdb", pdb(put(39, " 12 .345")), "CoordinateError", r"line 5: y coordinate", {}),
    "z-inner-blank": ("a.pdb", pdb(put(47, "-13. 456")), "CoordinateError", r"line 5: z coordinate", {}),
    "x-tab-inside": ("a.pdb", pdb(put(31, "  1\t.394")), "CoordinateError", r"x coordinate .* blank inside", {}),
    "x-two-points": ("a.pdb", pdb(put(31, "  1.2.34")), "CoordinateError", r"x coordinate '1.2.34' is not a number", {}),
    "x-two-signs": ("a.pdb", pdb(put(31, " +-1.000")), "CoordinateError", r"x coordinate '\+-1.000' is not a number", {}),
    "x-sign-inside": ("a.pdb", pdb(put(31, " 12-.345")), "CoordinateError", r"x coordinate '12-.345' is not a number", {}),
    "x-letters": ("a.pdb", pdb(put(31, "  abc.de")), "CoordinateError", r"x coordinate 'abc.de' is not a number", {}),
    "x-overflow-inf": ("a.pdb", pdb(put(31, "  1e400 ")), "CoordinateError", r"x coordinate '1e400' is not finite", {}),
    "y-minus-inf": ("a.pdb", pdb(put(39, "    -inf")), "CoordinateError", r"y coordinate '-inf' is not finite", {}),
    "z-nan": ("a.pdb", pdb(put(47, "     NaN")), "CoordinateError", r"z coordinate 'NaN' is not finite", {}),
    "x-blank": ("a.pdb", pdb(put(31, "        ")), "CoordinateError", r"line 5: x coordinate is blank", {}),
    "record-too-short": ("a.pdb", pdb(lambda s: s[:44]), "CoordinateError", r"line 5: record too short", {}),
    "x-beyond-1e4": ("a.pdb", pdb(put(31, "99999.00")), "CoordinateError", r"beyond ±10000 Å", {}),
    "occupancy-inner-blank": ("a.pdb", pdb(put(55, "  1 00")), "CoordinateError",
                              r"occupancy '1 00' has a blank inside \(columns 55-60\)", {}),
    "occupancy-letters": ("a.pdb", pdb(put(55, "  x.xx")), "CoordinateError", r"occupancy 'x.xx' is not a number", {}),
    "bfactor-inner-blank": ("a.pdb", pdb(put(61, "2 0.00")), "CoordinateError", r"B factor '2 0.00' has a blank", {}),
    "bfactor-nan": ("a.pdb", pdb(put(61, "   nan")), "CoordinateError", r"B factor 'nan' is not finite", {}),
    "shifted-right": ("a.pdb", pdb(lambda s: s[:20] + " " + s[20:]), "CoordinateError", r"line 5: .* blank inside", {}),
    # full-width numbers: a line shifted left cuts the sign off y into x's columns
    "shifted-left": ("a.pdb", pdb(lambda s: shift_left(put(31, "-100.123-200.456-300.789")(s))),
                     "CoordinateError", r"line 5: x coordinate '100.123-' is not a number", {}),
    "serial-letters": ("a.pdb", pdb(put(7, "12x45")), "StructureFileError", r"atom serial number '12x45' is not", {}),
    "serial-inner-blank": ("a.pdb", pdb(put(7, " 1 2 ")), "StructureFileError", r"atom serial number '1 2' has a blank",
                           {}),
    "resseq-garbage": ("a.pdb", pdb(put(23, " 1?2")), "StructureFileError", r"residue number '1\?2' is not", {}),
    "resseq-blank": ("a.pdb", pdb(put(23, "    ")), "StructureFileError", r"residue number is blank", {}),
    "long-line-no-newline": ("a.pdb", b"ATOM  " + b"x" * (1 << 20), "CoordinateError", r"line 1: x coordinate", {}),
    # --- accepted, with a note where something is off ---
    "hybrid36-serial": ("a.pdb", pdb(put(7, "A0000")), "ok", "", {}),
    "stars-serial": ("a.pdb", pdb(put(7, "*****")), "ok", "", {}),
    "occupancy-above-1": ("a.pdb", pdb(put(55, "  1.50")), "ok", r"occupancies out of range \(above 1 1", {}),
    "occupancy-negative": ("a.pdb", pdb(put(55, " -1.00")), "ok", r"occupancies out of range \(negative 1", {}),
    "cr-only": ("a.pdb", pdb().replace(b"\n", b"\r"), "ok", r"CR only", {}),
    "crlf": ("a.pdb", pdb().replace(b"\n", b"\r\n"), "ok", "", {}),
    "latin1-title": ("a.pdb", pdb().replace(b"AN INVENTED", b"\xe9T\xe9 INVENTED"), "ok", r"not UTF-8 .* Latin-1", {}),
    "utf8-bom": ("a.pdb", b"\xef\xbb\xbf" + pdb(), "ok", "", {}),
    "cell-alpha-180": ("a.pdb", pdb(put(34, "180.00"), line=3), "ok", r"not a valid cell", {"symmetry": True}),
    "cell-zero-edge": ("a.pdb", pdb(put(7, "   0.000"), line=3), "ok", r"not a valid cell", {"symmetry": True}),
    "gzip-two-members": ("a.pdb.gz", gzip.compress(pdb()[:200]) + gzip.compress(pdb()[200:]), "ok", "", {}),
    # --- not structure text, damaged containers, giant content ---
    "empty": ("a.pdb", b"", "EmptyStructureError", r"empty file \(0 bytes\)", {}),
    "blank-lines": ("a.pdb", b"\n \n\t\n", "EmptyStructureError", r"empty file \(whitespace only\)", {}),
    "header-only": ("a.pdb", HEADER.encode() + b"END\n", "EmptyStructureError", r"no atoms", {}),
    "nul-bytes": ("a.pdb", pdb()[:100] + b"\0\0\0" + pdb()[100:], "StructureFileError", r"binary data", {}),
    "html-page": ("a.cif", b"<html><body>404 Not Found</body></html>\n", "StructureFileError",
                  r"not a PDB or mmCIF file", {}),
    "gzip-bomb": ("a.pdb.gz", gzip_bomb(), "StructureFileError", r"decompression bomb", {}),
    "gzip-truncated": ("a.pdb.gz", gzip.compress(pdb())[:-30], "StructureFileError", r"damaged gzip data", {}),
    "gzip-of-binary": ("a.pdb.gz", gzip.compress(bytes(range(256)) * 64), "StructureFileError", r"binary data", {}),
    "gzip-magic-junk": ("a.pdb.gz", b"\x1f\x8b\x08\x00" + b"junk" * 50, "StructureFileError", r"damaged gzip data", {}),
    "residue-6000-atoms": ("a.pdb", big_residue(6000), "StructureFileError", r"has 6000 atoms, more than the 5000", {}),
    "residue-200000-fe": ("a.pdb", big_residue(200000), "StructureFileError", r"has 200000 atoms", {}),
    "fe-lattice-20000-residues": ("a.pdb", metal_lattice(20000), "StructureFileError",
                                  r"20000 metal atoms chained by contacts .* a metal lattice", {}),
    # --- mmCIF (required _atom_site items named) ---
    "cif-no-cartn-x": ("a.cif", cif(drop="_atom_site.Cartn_x"), "StructureFileError", r"no _atom_site.Cartn_x", {}),
    "cif-no-type-symbol": ("a.cif", cif(drop="_atom_site.type_symbol"), "StructureFileError",
                           r"no _atom_site.type_symbol", {}),
    "cif-x-unknown": ("a.cif", cif(x="?"), "CoordinateError", r"_atom_site id 2: Cartn_x is missing", {}),
    "cif-x-letters": ("a.cif", cif(x="abc"), "CoordinateError", r"Cartn_x 'abc' is not a number", {}),
    "cif-x-1e300": ("a.cif", cif(x="1e300"), "CoordinateError", r"beyond ±10000 Å", {}),
    "cif-truncated": ("a.cif", cif()[:-40], "StructureFileError", r"malformed mmCIF", {}),
    "cif-occupancy-2": ("a.cif", cif(occ="2.0"), "ok", r"occupancies out of range", {}),
    "mmjson-broken": ("a.json", b'{"data_9ZZZ": {"_atom_site": ', "StructureFileError", r"malformed mmJSON", {}),
}


def _special(tmp: Path) -> dict[str, tuple[Path, str, str]]:
    """Cases that are not plain files: id -> (path, expected class, pattern)."""
    out = {}
    (tmp / "folder.pdb").mkdir()
    out["directory"] = (tmp / "folder.pdb", "StructureNotFound", r"is a directory")
    fifo = tmp / "pipe.pdb"
    os.mkfifo(fifo)
    out["fifo"] = (fifo, "StructureNotFound", r"not a regular file \(a FIFO\)")
    dev = tmp / "device.pdb"
    dev.symlink_to(os.devnull)
    out["device"] = (dev, "StructureNotFound", r"not a regular file \(a character device\)")
    broken = tmp / "broken.pdb"
    broken.symlink_to(tmp / "nowhere.pdb")
    out["broken-link"] = (broken, "StructureNotFound", r"no such file")
    return out


@pytest.fixture(scope="module")
def outcomes(tmp_path_factory) -> tuple[dict[str, dict], dict[str, tuple]]:
    tmp = tmp_path_factory.mktemp("hostile")
    manifest, expected = [], {}
    for cid, (name, content, cls, pattern, options) in CASES.items():
        folder = tmp / cid
        folder.mkdir()
        path = folder / name
        path.write_bytes(content)  # type: ignore[arg-type]
        manifest.append({"id": cid, "path": str(path), "options": options})
        expected[cid] = (path, cls, pattern)
    for cid, (path, cls, pattern) in _special(tmp).items():
        manifest.append({"id": cid, "path": str(path), "options": {}})
        expected[cid] = (path, cls, pattern)
    (tmp / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")

    def cap() -> None:
        import resource

        resource.setrlimit(resource.RLIMIT_AS, (MEMORY_CAP, MEMORY_CAP))

    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.run([sys.executable, "-m", "tests.hostile_runner", str(tmp / "manifest.json")], cwd=REPO,
                          env=env, capture_output=True, text=True, timeout=300, preexec_fn=cap)
    got = {}
    for line in proc.stdout.splitlines():
        rec = json.loads(line)
        got[rec["id"]] = rec
    if len(got) < len(manifest):
        pytest.fail(f"the child stopped after {len(got)} of {len(manifest)} cases (exit {proc.returncode}):\n"
                    f"{proc.stderr[-3000:]}")
    return got, expected


ALL_IDS = [*CASES, "directory", "fifo", "device", "broken-link"]


def test_at_least_forty_cases():
    assert len(ALL_IDS) >= 40


@pytest.mark.parametrize("cid", ALL_IDS)
def test_hostile_input(outcomes, cid):
    got, expected = outcomes
    rec = got[cid]
    path, cls, pattern = expected[cid]
    assert rec["outcome"] != "unexpected", rec["message"]  # a traceback: never
    if cls == "ok":
        assert rec["outcome"] == "ok", rec["message"]
        if pattern:
            assert any(re.search(pattern, n) for n in rec["notes"]), rec["notes"]
        assert not re.search(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]", rec["text"])
        return
    assert (rec["outcome"], rec["error_class"]) == ("error", cls), rec["message"]
    message = rec["message"]
    assert message.startswith(f"{path}: "), message  # the file is named first
    assert "\n" not in message and re.search(pattern, message), message


def test_escape_sequences_never_reach_the_terminal(tmp_path, capsys):
    # ESC ] 0 ; ... BEL retitles an xterm; ESC [ 2 J clears the screen (ECMA-48, 5th ed., 1991)
    text = pdb().replace(b"AN INVENTED PEPTIDE", b"\x1b]0;owned\x07\x1b[2J PEPTIDE")
    path = tmp_path / "esc.pdb"
    path.write_bytes(text)
    assert main(["scan", str(path), "--brief"]) == 0
    out = capsys.readouterr().out
    assert "PEPTIDE" in out and "\x1b" not in out and "\x07" not in out


def test_symmetry_with_a_flat_cell_is_one_note_not_a_traceback(tmp_path, capsys):
    path = tmp_path / "flat.pdb"
    path.write_bytes(pdb(put(34, "180.00"), line=3))
    assert main(["scan", str(path), "--symmetry", "--brief"]) == 0
    captured = capsys.readouterr()
    assert "not a valid cell" in captured.out and "Traceback" not in captured.err


def test_bad_file_on_the_command_line_is_one_line(tmp_path, capsys):
    path = tmp_path / "bad\x1b[31m.pdb"
    path.write_bytes(pdb(put(31, "1  4.394")))
    assert main(["scan", str(path)]) == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "line 5: x coordinate" in err and "\x1b" not in err
