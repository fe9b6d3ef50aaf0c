"""``fescan scan FILE``: one structure — cofactors, ligands, checks and the wire."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from fescan.cli.common import add_json_option, add_wire_options, emit_json, wire_options
from fescan.core.errors import ConfigError

NAME = "scan"
HELP = "one structure: cofactors, ligands, checks and the electron wire"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments of ``fescan scan``."""
    p.add_argument("file", help="PDB or mmCIF file (gzipped or not)")
    add_json_option(p, "the full result")
    p.add_argument("--csv", metavar="DIR",
                   help="write the tables (cofactors, ligands, flags, pairs, hops, wires) as CSV files in DIR")
    p.add_argument("--brief", action="store_true", help="leave out the per-ligand and per-flag lines")
    add_wire_options(p)


def run(a: argparse.Namespace) -> int:
    """Run ``fescan scan``."""
    from fescan.analysis.scan import scan
    from fescan.report.text import render_text

    res = scan(a.file, **wire_options(a))
    if a.csv:
        from fescan.analysis.tables import result_tables
        from fescan.surveys.store import neutralise_csv  # pandas: loaded only for --csv

        out = Path(a.csv)
        try:
            out.mkdir(parents=True, exist_ok=True)
            for name, df in result_tables(res).items():
                neutralise_csv(df).to_csv(out / f"{name}.csv", index=False)
        except OSError as exc:
            raise ConfigError(f"{out}: cannot write the CSV tables there ({exc.strerror or exc})") from None
    if a.json:
        emit_json(res.to_dict(), a.json)
    if a.json != "-":
        sys.stdout.write(render_text(res, details=not a.brief) + "\n")
    return 0
