"""Options shared by several subcommands (reading and wire options)."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from fescan.core.errors import ConfigError

__all__ = ["add_wire_options", "wire_options", "emit_json"]


def emit_json(data: Any, dest: str) -> None:
    """Write JSON-ready ``data`` to ``dest`` (a file path, or ``"-"`` for stdout)."""
    text = json.dumps(data, indent=1, ensure_ascii=False, allow_nan=False)
    if dest == "-":
        sys.stdout.write(text + "\n")
        return
    try:
        Path(dest).write_text(text + "\n", encoding="utf-8")
    except OSError as exc:
        raise ConfigError(f"{dest}: cannot write the JSON file ({exc.strerror or exc})") from None


def add_wire_options(p: argparse.ArgumentParser, *, endpoints: bool = True) -> None:
    """Add the reading and wire options of :class:`fescan.options.ScanOptions`."""
    g = p.add_argument_group("reading and wire options")
    g.add_argument("--model", type=int, default=1, help="model number to read (default 1)")
    g.add_argument("--altloc", choices=("occupancy", "first", "all"), default="occupancy",
                   help="alternative locations: keep the highest-occupancy one per residue (default), "
                        "the first one, or all")
    if endpoints:
        g.add_argument("--entry", metavar="CHAIN/RESNUM", help="entry cofactor, e.g. A/500 (default: a flavin)")
        g.add_argument("--exit", metavar="CHAIN/RESNUM", help="exit cofactor (default: a quinone or heme)")
    g.add_argument("--reorg", type=float, default=0.7, help="reorganisation energy λ in eV (default 0.7)")
    g.add_argument("--packing-density", type=float, default=0.76, help="packing density ρ, 0-1 (default 0.76)")
    g.add_argument("--packing", choices=("default", "measured"), default="default",
                   help="ρ per hop: the --packing-density value (default) or measured from the atoms between")
    g.add_argument("--packing-scale", type=float, default=1.0,
                   help="factor applied to measured ρ (default 1; see docs on why measured ρ runs low)")
    g.add_argument("--gap-limit", type=float, default=14.0, help="longest hop not flagged as a gap, Å (default 14)")
    g.add_argument("--cutoff", type=float, default=25.0, help="longest pair distance considered, Å (default 25)")
    g.add_argument("--rate-threshold", type=float, default=1e3,
                   help="flag hops slower than this, per second (default 1000)")
    g.add_argument("--temperature", type=float, default=298.15, help="temperature in K (default 298.15)")
    g.add_argument("--potentials", metavar="TOML", help="file of per-cofactor potentials (and λ)")
    g.add_argument("--symmetry", action="store_true", help="also consider hops to crystal-symmetry mates")
    g.add_argument("--edge-atoms", choices=("core", "core+ligands"), default="core",
                   help="edge of a metal centre: its core atoms (default) or also its first-shell "
                        "Cys S / His N / Met S ligands")
    if endpoints:
        g.add_argument("--reverse", action="store_true",
                       help="run the default wire against the direction chosen from chemistry")
        g.add_argument("--all-pairs", action="store_true", help="also list the fastest path of every pair")


def wire_options(a: argparse.Namespace) -> dict:
    """Keyword options for :func:`fescan.scan` from parsed arguments."""
    out = {
        "model": a.model, "altloc": a.altloc, "reorg": a.reorg, "packing_density": a.packing_density,
        "gap_limit": a.gap_limit, "cutoff": a.cutoff, "rate_threshold": a.rate_threshold,
        "temperature": a.temperature, "potentials_file": a.potentials, "symmetry": a.symmetry,
        "packing": a.packing, "packing_scale": a.packing_scale, "edge_atoms": a.edge_atoms,
    }
    for k in ("entry", "exit", "all_pairs", "reverse"):
        if hasattr(a, k):
            out[k] = getattr(a, k)
    return out
