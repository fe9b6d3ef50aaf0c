"""The command line: output formats, exit status, one-line errors, README transcripts."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from fescan.cli.main import main
from tests.datafiles import entry_path, requires_shared

ROOT = Path(__file__).resolve().parents[1]


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "fescan.cli", *args], capture_output=True, text=True, cwd=ROOT)


@requires_shared
def test_scan_text_json_csv(tmp_path, capsys):
    assert main(["scan", str(entry_path("1FDN")), "--csv", str(tmp_path / "t")]) == 0
    out = capsys.readouterr().out
    assert "[4Fe-4S]" in out and "Electron wire" in out and "not measurements" in out
    for name in ("cofactors", "ligands", "flags", "pairs", "hops", "wires"):
        assert (tmp_path / "t" / f"{name}.csv").is_file()
    cof = pd.read_csv(tmp_path / "t" / "cofactors.csv")
    # 1FDN: 2[4Fe-4S] ferredoxin, SF4 A/56 and A/57 (shared/structures/SOURCES.md)
    assert list(cof["class"]) == ["[4Fe-4S]", "[4Fe-4S]"]
    assert main(["scan", str(entry_path("1FDN")), "--json", "-"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert {"cofactors", "pairs", "wire", "structure", "options", "caution"} <= set(data)
    assert data["cofactors"][0]["class"] == "[4Fe-4S]"


@pytest.mark.parametrize("content,expect", [
    (b"", "empty file"),
    (b"\x00\x01\x02garbage\xff" * 50, "not a PDB or mmCIF"),
    (b"\x1f\x8b\x08\x00garbage", "damaged gzip"),
])
def test_bad_input_one_line_error(tmp_path, content, expect):
    # bad-input behaviour: one line naming the file, exit 1 (common practice, no source)
    bad = tmp_path / "bad_input.cif"
    bad.write_bytes(content)
    r = run_cli("scan", str(bad))
    assert r.returncode == 1
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "bad_input.cif" in lines[0] and expect in lines[0]
    assert "Traceback" not in r.stderr


def test_missing_file_and_bad_option(tmp_path):
    r = run_cli("scan", str(tmp_path / "nope.pdb"))
    assert r.returncode == 1 and "nope.pdb: no such file" in r.stderr
    r = run_cli("scan", str(tmp_path / "nope.pdb"), "--packing", "2")
    # errors name the option as typed, not the API field
    assert r.returncode == 1 and "--packing" in r.stderr and "packing_density" not in r.stderr
    assert "Traceback" not in r.stderr


@requires_shared
def test_json_never_swallows_the_file_and_verbose_after_subcommand(tmp_path, capsys):
    # `--json` takes its own value; a structure path after it is not silently eaten
    with pytest.raises(SystemExit):
        main(["scan", "--json", str(entry_path("1FDN"))])
    out = tmp_path / "r.json"
    assert main(["scan", str(entry_path("1FDN")), "-v", "--json", str(out), "--brief"]) == 0
    assert json.loads(out.read_text())["cofactors"]


def test_one_packing_option():
    from fescan.cli.common import parse_packing
    from fescan.core.errors import ConfigError

    assert parse_packing("0.7") == {"packing": "default", "packing_density": 0.7}
    assert parse_packing("measured") == {"packing": "measured"}
    assert parse_packing("measured*0.9") == {"packing": "measured", "packing_scale": 0.9}
    assert parse_packing("index") == {"measure_packing": True}
    with pytest.raises(ConfigError, match="--packing"):
        parse_packing("dense")


@requires_shared
def test_unknown_selector_is_one_line(tmp_path):
    r = run_cli("scan", str(entry_path("1FDN")), "--entry", "Z/1")
    assert r.returncode == 1 and "no cofactor at Z/1" in r.stderr and "Traceback" not in r.stderr


def _readme_transcripts():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    # a sentence naming the command in backticks, then a fenced block with its output
    for m in re.finditer(r"\(`fescan (scan [^`]+)`\)[^\n]*\n\n```\n(.*?)```", text, re.S):
        yield m.group(1).split(), m.group(2)


@requires_shared
@pytest.mark.parametrize("argv,shown", list(_readme_transcripts()), ids=lambda v: " ".join(v) if isinstance(v, list) else "")
def test_readme_transcripts_are_real(argv, shown, capsys):
    # gemmi test_prog style: the CLI output printed in the README is what the CLI prints today
    argv = [str(entry_path(a.split(".")[0])) if a.endswith((".pdb", ".cif", ".gz")) else a for a in argv]
    assert main(argv) == 0
    out = capsys.readouterr().out.splitlines()
    for line in shown.strip().splitlines():
        assert line.rstrip() in [o.rstrip() for o in out] or line.strip() in [o.strip() for o in out], line


def _help(argv: list[str], capsys) -> str:
    with pytest.raises(SystemExit):
        main(argv)
    return " ".join(capsys.readouterr().out.split())  # argparse wraps lines: compare words


def test_help_says_how_endpoints_are_chosen_and_lists_every_packing_value(capsys):
    from fescan.cli.common import PACKING_VALUES, parse_packing
    from fescan.core.errors import ConfigError

    text = _help(["scan", "--help"], capsys)
    # endpoints come from the chemistry rules of fescan.transfer.paths.choose_endpoints, not "a flavin"
    assert "default: a flavin" not in text and "default: a quinone or heme" not in text
    assert "chemistry rules" in text and "CuA to heme a3" in text and "longest chain" in text
    # every value parse_packing accepts for scan is in the help, and the error lists no other
    for value in ("a number from 0 to 1", "'measured'", "'measured*SCALE'"):
        assert value in text, value
    with pytest.raises(ConfigError) as err:
        parse_packing("abc", index=False)
    assert "index" not in str(err.value) and all(v in str(err.value) for v in PACKING_VALUES)
    assert "'index'" not in text
    # compare also takes index: its help and its error both say so
    text = _help(["compare", "--help"], capsys)
    assert "'index'" in text and "'measured*SCALE'" in text
    with pytest.raises(ConfigError, match="or index"):
        parse_packing("abc", index=True)
    assert parse_packing(" Measured * 0.9 ") == {"packing": "measured", "packing_scale": 0.9}


def test_scan_packing_index_is_one_line_naming_compare(tmp_path):
    r = run_cli("scan", str(tmp_path / "x.pdb"), "--packing", "abc")
    assert r.returncode == 1 and "measured*SCALE" in r.stderr and "index" not in r.stderr
    r = run_cli("scan", str(tmp_path / "x.pdb"), "--packing", "index")
    assert r.returncode == 1 and "fescan compare" in r.stderr and len(r.stderr.strip().splitlines()) == 1


def test_ion_site_heading_names_only_the_elements_present():
    from types import SimpleNamespace

    from fescan.report.text import ion_site_heading

    def site(*elements: str) -> SimpleNamespace:
        return SimpleNamespace(redox_atoms=[SimpleNamespace(element=e) for e in elements])

    assert ion_site_heading([site("MG", "O")]).startswith("Mg sites, listed apart")
    assert ion_site_heading([site("ZN", "S"), site("CA")]).startswith("Zn and Ca sites,")
    assert ion_site_heading([site("MG"), site("CA"), site("ZN")]).startswith("Zn, Ca and Mg sites,")
    assert ion_site_heading([site("ZN"), site("ZN")]).endswith("never on a wire (2)")


@requires_shared
def test_magnesium_only_entry_heads_its_table_mg_sites(capsys):
    # 4CRM holds one Mg (with ATP) and no Zn or Ca (shared/structures/SOURCES.md)
    assert main(["scan", str(entry_path("4CRM")), "--brief"]) == 0
    out = capsys.readouterr().out
    assert "Mg sites, listed apart: no redox role, never on a wire (1)" in out
    assert "Zn" not in out.split("Mg sites")[0][-40:] and "Zn, Ca and Mg" not in out


@requires_shared
def test_other_copy_without_a_path_says_why(capsys):
    # 6LK1: two ferredoxin copies whose clusters meet at a possible crystal contact; each copy alone
    # holds one cluster, so the other copy has no wire of its own
    assert main(["scan", str(entry_path("6LK1")), "--brief"]) == 0
    out = capsys.readouterr().out
    assert "other copy: no path" not in out
    line = next(ln for ln in out.splitlines() if "other copy of the complex" in ln)
    assert "on its own" in line and "no path" in line and "fewer than two" in line


def test_text_numbers_have_three_significant_digits_and_no_negative_zero():
    from fescan.report.text import fixed, format_flux, format_time, signed

    assert format_flux(31234.5) == "3.12×10^4 electrons/s"
    assert format_time(2.2149e-9) == "2.21 ns" and format_time(9.9996e-4) == "1.00 ms"
    assert format_time(float("inf")) == "-"
    assert signed(-1e-9) == "0.000" and fixed(-0.001) == "0.00" and signed(-0.05) == "-0.050"
