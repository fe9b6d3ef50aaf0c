"""``fescan compare MODEL REFERENCE``: audit a model against a reference structure."""

from __future__ import annotations

import argparse
import sys

from fescan.cli.common import add_json_option, add_wire_options, emit_json, wire_options

NAME = "compare"
HELP = "audit a model against a reference: matched cofactors, changes, per-hop rate deltas"


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Arguments of ``fescan compare``."""
    p.add_argument("model_file", metavar="MODEL", help="the model to audit (PDB or mmCIF, gzipped or not)")
    p.add_argument("reference_file", metavar="REFERENCE", help="the reference structure of the same protein")
    add_json_option(p, "the full comparison")
    p.add_argument("--report", metavar="DIR", help="write compare.html, compare.md and the wire diagram in DIR")
    g = p.add_argument_group("matching")
    g.add_argument("--match-cutoff", type=float, default=4.0,
                   help="largest centre distance of a match by position after superposition, Å (default 4)")
    g.add_argument("--moved-limit", type=float, default=1.0,
                   help="report matched cofactors displaced more than this, Å (default 1)")
    g.add_argument("--rate-drop", type=float, default=1.0,
                   help="a model hop slower by more than this many decades is implausible (default 1)")
    add_wire_options(p, index_packing=True)
    p.set_defaults(index_packing=True)


def run(a: argparse.Namespace) -> int:
    """Run ``fescan compare``; exit status 0 (the verdict is in the output, not the status)."""
    from fescan.comparison.compare import compare
    from fescan.report.compare_report import render_compare_text, write_compare_report

    res = compare(a.model_file, a.reference_file, match_cutoff=a.match_cutoff, moved_limit=a.moved_limit,
                  rate_drop_limit=a.rate_drop, **wire_options(a))
    if a.report:
        paths = write_compare_report(res, a.report)
        sys.stderr.write("fescan: report written: " + ", ".join(str(p) for p in paths.values()) + "\n")
    if a.json:
        emit_json(res.to_dict(), a.json)
    if a.json != "-":
        sys.stdout.write(render_compare_text(res) + "\n")
    return 0
