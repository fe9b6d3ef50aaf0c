"""``fescan report``: the report of one structure, and/or of a survey folder.

::

    fescan report FILE -o DIR            scan FILE, write DIR/report.html, report.md, wire.svg, wire.png
    fescan report --survey SURVEY_DIR    write SURVEY_DIR/index.html and SURVEY_DIR/figures/
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

from fescan.cli.common import add_wire_options, wire_options

__all__ = ["NAME", "HELP", "add_arguments", "run"]

NAME = "report"
HELP = "write a report: one structure (HTML, Markdown, relay diagram) and/or a survey folder (index, figures)"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments of ``fescan report``."""
    p.add_argument("file", nargs="?", metavar="FILE", help="PDB or mmCIF file (gzipped or not) to report on")
    p.add_argument("-o", "--out", metavar="DIR",
                   help="folder for the structure report (default: <file name>_report beside the working folder)")
    p.add_argument("--survey", metavar="SURVEY_DIR",
                   help="render the survey report from the tables saved in SURVEY_DIR (by fescan survey)")
    p.add_argument("--survey-out", metavar="DIR", help="folder for the survey report (default: SURVEY_DIR)")
    add_wire_options(p)


def _default_out(file: str) -> Path:
    name = Path(file).name
    name = name[:-3] if name.lower().endswith(".gz") else name
    safe = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or "structure"
    return Path(f"{safe}_report")


def run(a: argparse.Namespace) -> int:
    """Run ``fescan report``; print the files written, one per line."""
    from fescan.analysis.scan import scan
    from fescan.core.errors import ConfigError
    from fescan.report import write_report, write_survey_report

    if a.survey_out and not a.survey:
        raise ConfigError("--survey-out needs --survey SURVEY_DIR")
    if not a.file and not a.survey:
        raise ConfigError("nothing to report: give a structure FILE, --survey SURVEY_DIR, or both")
    written = []
    if a.file:
        res = scan(a.file, **wire_options(a))
        written += write_report(res, Path(a.out) if a.out else _default_out(a.file))
    elif a.out:
        raise ConfigError("-o/--out is the folder of a structure report: give a FILE (for a survey use --survey-out)")
    if a.survey:
        written += write_survey_report(a.survey, a.survey_out)
    sys.stdout.write("".join(f"{p}\n" for p in written))
    return 0
