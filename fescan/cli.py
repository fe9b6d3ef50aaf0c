"""Command line: ``fescan scan FILE`` and friends; a thin layer over the API."""

from __future__ import annotations

import argparse
import json
import logging
import sys
from collections.abc import Sequence
from pathlib import Path

from fescan import __version__
from fescan.errors import FescanError

__all__ = ["main", "build_parser"]

log = logging.getLogger("fescan")


def _add_wire_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("reading and wire options")
    g.add_argument("--model", type=int, default=1, help="model number to read (default 1)")
    g.add_argument("--altloc", choices=("occupancy", "all"), default="occupancy",
                   help="alternative locations: keep the highest-occupancy one per residue (default) or all")
    g.add_argument("--entry", metavar="CHAIN/RESNUM", help="entry cofactor, e.g. A/500 (default: a flavin)")
    g.add_argument("--exit", metavar="CHAIN/RESNUM", help="exit cofactor (default: a quinone or heme)")
    g.add_argument("--reorg", type=float, default=0.7, help="reorganisation energy λ in eV (default 0.7)")
    g.add_argument("--packing-density", type=float, default=0.76, help="packing density ρ, 0-1 (default 0.76)")
    g.add_argument("--gap-limit", type=float, default=14.0, help="longest hop not flagged as a gap, Å (default 14)")
    g.add_argument("--cutoff", type=float, default=25.0, help="longest pair distance considered, Å (default 25)")
    g.add_argument("--rate-threshold", type=float, default=1e3,
                   help="flag hops slower than this, per second (default 1000)")
    g.add_argument("--temperature", type=float, default=298.15, help="temperature in K (default 298.15)")
    g.add_argument("--potentials", metavar="TOML", help="file of per-cofactor potentials (and λ)")
    g.add_argument("--symmetry", action="store_true", help="also consider hops to crystal-symmetry mates")
    g.add_argument("--all-pairs", action="store_true", help="also list the fastest path of every pair")


def _scan_options(a: argparse.Namespace) -> dict:
    return {
        "model": a.model, "altloc": a.altloc, "entry": a.entry, "exit": a.exit, "reorg": a.reorg,
        "packing_density": a.packing_density, "gap_limit": a.gap_limit, "cutoff": a.cutoff,
        "rate_threshold": a.rate_threshold, "temperature": a.temperature, "potentials_file": a.potentials,
        "symmetry": a.symmetry, "all_pairs": a.all_pairs,
    }


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``fescan`` command."""
    p = argparse.ArgumentParser(
        prog="fescan",
        description="Find redox cofactors in a protein structure, check Fe-S cluster ligation, "
                    "and estimate the electron-transfer wire (Moser-Dutton estimates, not measurements).",
    )
    p.add_argument("--version", action="version", version=f"fescan {__version__}")
    p.add_argument("-v", "--verbose", action="store_true", help="log progress to stderr")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    s = sub.add_parser("scan", help="one structure: cofactors, ligands, checks and the wire")
    s.add_argument("file", help="PDB or mmCIF file (gzipped or not)")
    s.add_argument("--json", metavar="FILE", nargs="?", const="-",
                   help="write the full result as JSON (to FILE, or stdout when no FILE is given)")
    s.add_argument("--csv", metavar="DIR", help="write the tables (cofactors, ligands, flags, pairs, hops, wires) as CSV files in DIR")
    s.add_argument("--brief", action="store_true", help="leave out the per-ligand and per-flag lines")
    _add_wire_options(s)
    return p


def _cmd_scan(a: argparse.Namespace) -> int:
    from fescan.scan import scan
    from fescan.tables import result_tables
    from fescan.textout import render_text

    res = scan(a.file, **_scan_options(a))
    if a.csv:
        out = Path(a.csv)
        out.mkdir(parents=True, exist_ok=True)
        for name, df in result_tables(res).items():
            df.to_csv(out / f"{name}.csv", index=False)
    if a.json:
        text = json.dumps(res.to_dict(), indent=1, ensure_ascii=False)
        if a.json == "-":
            sys.stdout.write(text + "\n")
        else:
            Path(a.json).write_text(text + "\n", encoding="utf-8")
    if a.json != "-":
        sys.stdout.write(render_text(res, details=not a.brief) + "\n")
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 bad input, 2 usage)."""
    parser = build_parser()
    a = parser.parse_args(argv)
    logging.basicConfig(level=logging.INFO if a.verbose else logging.WARNING, stream=sys.stderr,
                        format="fescan: %(message)s")
    if a.command is None:
        parser.print_help(sys.stderr)
        return 2
    handlers = {"scan": _cmd_scan}
    try:
        return handlers[a.command](a)
    except FescanError as exc:
        sys.stderr.write(f"fescan: error: {exc}\n")
        return 1
    except BrokenPipeError:  # e.g. piped into head
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
