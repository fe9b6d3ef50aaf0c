"""The survey prefilter never sets aside a file that holds a cofactor.

Sources: the real deposited entries of ../shared/structures (SOURCES.md) and the
packaged examples hold cofactors (each is analysed elsewhere in the suite); the
small files below are written here with gemmi from those entries, keeping one Fe
atom, one SF4 residue, one FMN, or a heme as ATOM records (PDB format: ATOM and
HETATM differ only in the record name, wwPDB format guide, common practice, no
source). A protein-only file (every non-polymer residue removed) holds nothing.
"""

from __future__ import annotations

import gzip
from pathlib import Path

import gemmi
import pytest

from fescan.surveys.prefilter import NO_CANDIDATE, can_hold_candidate, screen_text
from tests.datafiles import ENTRIES, entry_path, requires_shared

EXAMPLES = sorted(p for p in (Path(__file__).resolve().parents[1] / "example_structures").iterdir()
                  if p.name.endswith((".pdb", ".cif", ".pdb.gz", ".cif.gz")))


@requires_shared
@pytest.mark.parametrize("pdb_id", sorted(ENTRIES))
def test_every_shared_entry_passes(pdb_id):
    v = can_hold_candidate(entry_path(pdb_id))
    assert v.candidate, v.reason


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_example_passes(path):
    assert can_hold_candidate(path).candidate


def _keep(src: Path, keep) -> gemmi.Structure:
    """The structure of ``src`` (model 1) with only polymer residues and those ``keep(res)`` accepts."""
    st = gemmi.read_structure(str(src))
    st.setup_entities()
    for ch in st[0]:
        for i in range(len(ch) - 1, -1, -1):
            res = ch[i]
            polymer = res.entity_type == gemmi.EntityType.Polymer
            if not polymer and not keep(res):
                del ch[i]
    st.connections.clear()
    return st


def _write(st: gemmi.Structure, folder: Path, stem: str, fmt: str) -> Path:
    if fmt == "pdb":
        path = folder / f"{stem}.pdb.gz"
        text = st.make_pdb_string(gemmi.PdbWriteOptions(minimal=True)).encode()
    else:
        path = folder / f"{stem}.cif.gz"
        text = st.make_mmcif_document().as_string().encode()
    path.write_bytes(gzip.compress(text))
    return path


@requires_shared
@pytest.mark.parametrize("fmt", ["pdb", "cif"])
def test_protein_only_file_is_skipped(tmp_path, fmt):
    # 1KF6 (fumarate reductase: FAD, [2Fe-2S], [4Fe-4S], [3Fe-4S]) with every non-polymer residue removed
    st = _keep(entry_path("1KF6"), lambda res: False)
    v = can_hold_candidate(_write(st, tmp_path, "protein", fmt))
    assert not v.candidate, v.reason
    assert NO_CANDIDATE == "no redox candidate"


@requires_shared
@pytest.mark.parametrize("fmt", ["pdb", "cif"])
@pytest.mark.parametrize("what", ["one_fe", "one_sf4", "one_fmn", "heme_as_atom"])
def test_one_cofactor_is_enough(tmp_path, fmt, what):
    if what == "one_fe":
        # 2DSX (rubredoxin: one Fe ion, SOURCES.md)
        st = _keep(entry_path("2DSX"), lambda res: res.name == "FE")
    elif what == "one_sf4":
        # 1FDN (2[4Fe-4S] ferredoxin): keep the first SF4 only
        seen = []
        st = _keep(entry_path("1FDN"), lambda res: res.name == "SF4" and not seen and not seen.append(1))
    elif what == "one_fmn":
        st = _keep(entry_path("3EK3"), lambda res: res.name == "FMN")  # 3EK3: a flavoprotein with FMN
    else:
        st = _keep(entry_path("19HC"), lambda res: res.name == "HEM")  # 19HC: hemes
        for ch in st[0]:
            for res in ch:
                res.het_flag = "A"  # written as ATOM records
    names = {res.name for ch in st[0] for res in ch}
    assert names & {"FE", "SF4", "FMN", "HEM"}, "the kept cofactor is in the file"
    path = _write(st, tmp_path, what, fmt)
    if what == "heme_as_atom" and fmt == "pdb":
        text = gzip.decompress(path.read_bytes())
        assert b"HETATM" not in text and b"HEM" in text
    v = can_hold_candidate(path)
    assert v.candidate, v.reason


def test_a_lone_iron_without_element_column_passes():
    # an old-style PDB line: no element column, the element is read from the atom name (columns 13-14)
    line = b"HETATM    1 FE   XYZ A   1      10.000  10.000  10.000  1.00 20.00\n"
    assert screen_text(line).candidate
    protein = b"ATOM      1  CA  ALA A   1      10.000  10.000  10.000  1.00 20.00           C\n"
    assert not screen_text(protein).candidate


def test_chain_named_w_is_not_tungsten():
    # a token W is a chain name here, not an element: the columns decide (stage 2)
    protein = b"ATOM      1  CA  ALA W   1      10.000  10.000  10.000  1.00 20.00           C\n"
    assert not screen_text(protein).candidate
    cif = (b"data_x\nloop_\n_atom_site.group_PDB\n_atom_site.id\n_atom_site.type_symbol\n"
           b"_atom_site.label_atom_id\n_atom_site.label_comp_id\n_atom_site.label_asym_id\n"
           b"_atom_site.Cartn_x\n_atom_site.Cartn_y\n_atom_site.Cartn_z\n"
           b"ATOM 1 C CA ALA W 1.0 2.0 3.0\n")
    assert not screen_text(cif).candidate
    assert screen_text(cif.replace(b"ATOM 1 C CA ALA W", b"HETATM 1 W W W W")).candidate


def test_irregular_mmcif_layout_uses_the_cif_tokenizer():
    # a row split over two lines (legal CIF): the numpy column reader declines, gemmi's tokenizer decides
    cif = (b"data_x\nloop_\n_atom_site.group_PDB\n_atom_site.id\n_atom_site.type_symbol\n"
           b"_atom_site.label_atom_id\n_atom_site.label_comp_id\n_atom_site.label_asym_id\n"
           b"_atom_site.Cartn_x\n_atom_site.Cartn_y\n_atom_site.Cartn_z\n"
           b"ATOM 1 C CA ALA W 1.0 2.0 3.0\nHETATM 2 FE FE\nFE B 1.0 2.0 3.0\n")
    assert screen_text(cif).candidate
    assert not screen_text(cif.replace(b"HETATM 2 FE FE\nFE B", b"ATOM 2 C CB\nALA B")).candidate


@requires_shared
def test_survey_records_a_row_and_resumes(tmp_path):
    from fescan.surveys.run import read_file_list, survey
    from fescan.surveys.store import read_table

    # archive layout: two-character folders; one protein-only file, one ferredoxin (1FDN) as deposited
    mirror = tmp_path / "mirror"
    (mirror / "kf").mkdir(parents=True)
    (mirror / "fd").mkdir(parents=True)
    protein = _write(_keep(entry_path("1KF6"), lambda res: False), mirror / "kf", "1kf6", "cif")
    fdn = mirror / "fd" / "pdb1fdn.ent.gz"
    fdn.write_bytes(gzip.compress(entry_path("1FDN").read_bytes()))
    listing = tmp_path / "list.txt"
    listing.write_text("# two files\nmirror/kf/1kf6.cif.gz\n\nmirror/fd/pdb1fdn.ent.gz\n", encoding="utf-8")
    assert read_file_list(listing) == [str(protein), str(fdn)]

    s = survey([mirror], tmp_path / "out", workers=1, quiet=True)
    assert (s.n_files, s.n_ok, s.n_no_candidate, s.n_failed) == (2, 1, 1, 0)
    st = read_table(s.tables["structures"], "structures")
    status = dict(zip((Path(f).name for f in st["file"]), st["status"]))
    assert status == {"1kf6.cif.gz": NO_CANDIDATE, "pdb1fdn.ent.gz": "ok"}
    again = survey(read_file_list(listing), tmp_path / "out", workers=1, quiet=True)
    assert (again.n_skipped, again.n_ok, again.n_no_candidate) == (2, 0, 0)  # both already done

    off = survey([mirror], tmp_path / "off", workers=1, quiet=True, prefilter=False)
    assert (off.n_ok, off.n_no_candidate) == (2, 0)  # switched off: every file is parsed


@requires_shared
def test_cli_file_list_and_switch(tmp_path, capsys):
    from fescan.cli.main import main

    protein = _write(_keep(entry_path("1KF6"), lambda res: False), tmp_path, "1kf6", "pdb")
    listing = tmp_path / "list.txt"
    listing.write_text(f"{protein.name}\n", encoding="utf-8")  # relative: from the list's folder
    assert main(["survey", "--file-list", str(listing), "-o", str(tmp_path / "on")]) == 0
    assert f"1 {NO_CANDIDATE}" in capsys.readouterr().out
    assert main(["survey", "--file-list", str(listing), "-o", str(tmp_path / "off"), "--no-prefilter"]) == 0
    assert NO_CANDIDATE not in capsys.readouterr().out
    assert main(["survey", "-o", str(tmp_path / "none")]) == 1  # neither inputs nor a list
    assert "--file-list" in capsys.readouterr().err
