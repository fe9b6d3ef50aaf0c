"""``fescan report``: structure report, survey report, one-line errors."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from fescan.analysis.scan import scan
from fescan.cli.main import main
from tests.report_fixtures import survey_tables, write_tables, write_wire

ROOT = Path(__file__).resolve().parents[1]


def test_structure_report_from_the_command_line(tmp_path, capsys):
    f = write_wire(tmp_path / "w.pdb", [0, 12, 24])
    assert main(["report", str(f), "-o", str(tmp_path / "r"), "--gap-limit", "12"]) == 0
    printed = capsys.readouterr().out.split()
    assert [Path(p).name for p in printed] == ["report.html", "report.md", "wire.svg", "wire.png"]
    assert all(Path(p).is_file() for p in printed)
    assert "12 Å edge to edge" in (tmp_path / "r" / "report.html").read_text(encoding="utf-8")  # option used


def test_survey_report_from_the_command_line(tmp_path, capsys):
    res = scan(write_wire(tmp_path / "w.pdb", [0, 12, 24]))
    folder = write_tables(survey_tables([res]), tmp_path / "survey", "csv")
    assert main(["report", "--survey", str(folder), "--survey-out", str(tmp_path / "o")]) == 0
    printed = capsys.readouterr().out.split()
    assert printed[0] == str(tmp_path / "o" / "index.html") and len(printed) == 11  # index + 5 figures (SVG, PNG)


def test_errors_are_one_line(tmp_path, capsys):
    for args, expect in ((["report"], "nothing to report"),
                         (["report", "--survey", str(tmp_path / "none")], "no such survey folder"),
                         (["report", str(tmp_path / "missing.pdb")], "missing.pdb"),
                         (["report", "--survey-out", str(tmp_path)], "--survey-out needs --survey")):
        assert main(args) == 1, args
        lines = capsys.readouterr().err.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("fescan: error: ") and expect in lines[0], lines


def test_bad_file_through_a_subprocess_gives_no_traceback(tmp_path):
    bad = tmp_path / "bad_input.cif"
    bad.write_bytes(b"")
    r = subprocess.run([sys.executable, "-m", "fescan.cli", "report", str(bad), "-o", str(tmp_path / "o")],
                       capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 1 and "bad_input.cif" in r.stderr and "Traceback" not in r.stderr
