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
