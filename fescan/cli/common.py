"""Options shared by several subcommands (reading and wire options)."""

from __future__ import annotations

import argparse
import json
import re
import sys
from pathlib import Path
from typing import Any

from fescan.core.errors import ConfigError

__all__ = ["add_wire_options", "wire_options", "emit_json", "add_json_option", "parse_packing",
           "option_words", "add_verbose", "local_file_hint",
           "PACKING_VALUES"]

#: Option fields of the API and the command-line option that sets each (for error messages).
OPTION_NAMES = {
    "model": "--model-number", "altloc": "--altloc", "reorg": "--reorg", "packing_density": "--packing",
    "packing_scale": "--packing", "packing": "--packing", "gap_limit": "--gap-limit", "cutoff": "--cutoff",
    "rate_threshold": "--rate-threshold", "temperature": "--temperature", "potentials_file": "--potentials",
    "entry": "--entry", "exit": "--exit", "match_cutoff": "--match-cutoff", "moved_limit": "--moved-limit",
    "rate_drop_limit": "--rate-drop", "time_limit": "--time-limit", "memory_limit": "--memory-limit",
    "batch_size": "--batch-size", "workers": "--workers",
}


#: The ``--packing`` values every subcommand accepts (``fescan compare`` also takes ``index``).
PACKING_VALUES = ("a density from 0 to 1 (e.g. 0.76)", "measured", "measured*SCALE (e.g. measured*0.9)")


def option_words(message: str) -> str:
    """An API error message with option fields named as the command line names them."""
    for field, option in sorted(OPTION_NAMES.items(), key=lambda kv: -len(kv[0])):
        # a field with an underscore is never an English word; a plain word only as the subject of "must"
        tail = "" if "_" in field else r"(?= must)"
        message = re.sub(rf"(?<![\w-]){field}(?![\w-]){tail}", option, message)
    return message


def add_verbose(p: argparse.ArgumentParser) -> None:
    """``-v`` accepted after the subcommand too (``fescan scan FILE -v``)."""
    p.add_argument("-v", "--verbose", action="store_true", default=argparse.SUPPRESS,
                   help="log progress to stderr")


def add_json_option(p: argparse.ArgumentParser, what: str) -> None:
    """``--json FILE`` (``-`` for standard output); never takes the next argument by surprise."""
    p.add_argument("--json", metavar="FILE",
                   help=f"write {what} as JSON to FILE (use - for standard output)")


def parse_packing(spec: str, *, index: bool = True) -> dict[str, Any]:
    """Options for one ``--packing`` value.

    Parameters
    ----------
    spec : str
        ``0.76`` (a number from 0 to 1): ρ used for every hop; ``measured``: ρ
        measured from the atoms between each pair and used in the rates;
        ``measured*0.9``: the same, multiplied by the scale; ``index``: measured and
        reported beside the rates, which keep the default ρ (``fescan compare`` only).
        Case is ignored.
    index : bool, optional
        Whether ``index`` is accepted (the subcommand reports ρ as an index).

    Returns
    -------
    dict
        Keyword options of :func:`fescan.scan` (or ``measure_packing`` for ``index``).

    Raises
    ------
    fescan.core.errors.ConfigError
        The value is none of the above; the message lists the accepted values.
    """
    text = spec.strip().lower()
    values = [*PACKING_VALUES, "index"] if index else list(PACKING_VALUES)
    accepted = ", ".join(values[:-1]) + " or " + values[-1]
    if text == "index":
        if not index:
            raise ConfigError("--packing index: only fescan compare reports ρ as an index; "
                              "use --packing measured to put measured ρ into the rates")
        return {"measure_packing": True}
    if text.startswith("measured"):
        rest = text[len("measured"):].strip()
        if not rest:
            return {"packing": "measured"}
        if rest.startswith("*"):
            try:
                return {"packing": "measured", "packing_scale": float(rest[1:])}
            except ValueError:
                pass
        raise ConfigError(f"--packing {spec!r}: write measured or measured*SCALE (e.g. measured*0.9)")
    try:
        return {"packing": "default", "packing_density": float(text)}
    except ValueError:
        raise ConfigError(f"--packing {spec!r}: give {accepted}") from None


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


def add_wire_options(p: argparse.ArgumentParser, *, endpoints: bool = True, index_packing: bool = False) -> None:
    """Add the reading and wire options of :class:`fescan.core.options.ScanOptions`."""
    g = p.add_argument_group("reading and wire options")
    g.add_argument("--model-number", dest="model", type=int, default=1, metavar="N",
                   help="model number to read (default 1)")
    g.add_argument("--altloc", choices=("occupancy", "first", "all"), default="occupancy",
                   help="alternative locations: keep the highest-occupancy one per residue (default), "
                        "the first one, or all")
    if endpoints:
        g.add_argument("--entry", metavar="CHAIN/RESNUM",
                       help="entry cofactor, e.g. A/500 (default: chosen with the exit by chemistry rules, "
                            "e.g. hydrogenase or flavin to quinone or heme, CuA to heme a3, QA to QB, else the "
                            "lower-potential end of the longest chain; the output names the rule used)")
        g.add_argument("--exit", metavar="CHAIN/RESNUM",
                       help="exit cofactor (default: chosen with the entry by the same rules; when only one "
                            "end is given, the farthest connected cofactor is the other)")
    g.add_argument("--reorg", type=float, default=0.7, help="reorganisation energy λ in eV (default 0.7)")
    g.add_argument("--packing", metavar="RHO|measured|measured*SCALE" + ("|index" if index_packing else ""),
                   default="0.76",
                   help="protein packing density ρ in the rate law, one of: a number from 0 to 1 used for "
                        "every hop (default 0.76); 'measured': measured from the atoms between each pair; "
                        "'measured*SCALE': measured, then multiplied by SCALE (e.g. measured*0.9)"
                        + ("; 'index': measured and reported beside each hop, while the rates keep 0.76"
                           if index_packing else ""))
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
        "model": a.model, "altloc": a.altloc, "reorg": a.reorg,
        "gap_limit": a.gap_limit, "cutoff": a.cutoff, "rate_threshold": a.rate_threshold,
        "temperature": a.temperature, "potentials_file": a.potentials, "symmetry": a.symmetry,
        "edge_atoms": a.edge_atoms,
    }
    out.update(parse_packing(a.packing, index=getattr(a, "index_packing", False)))
    for k in ("entry", "exit", "all_pairs", "reverse"):
        if hasattr(a, k):
            out[k] = getattr(a, k)
    return out


_PDB_ID = re.compile(r"^(?:[0-9][A-Za-z0-9]{3}|pdb_[0-9]{4}[0-9a-z]{4})$", re.IGNORECASE)


def local_file_hint(message: str) -> str:
    """Add how to get a file when a missing "file" is a PDB entry id (``fescan scan 1KF6``).

    Examples
    --------
    >>> print(local_file_hint("1KF6: no such file"))  # doctest: +NORMALIZE_WHITESPACE
    1KF6: no such file. fescan reads local structure files and never downloads: 1KF6 looks like a PDB
    entry id. Download the entry's PDBx/mmCIF or PDB file from a wwPDB archive site (for example
    1kf6.cif.gz) and give its path: fescan scan 1kf6.cif.gz
    """
    name, sep, rest = message.partition(": ")
    if not sep or not rest.startswith("no such file") or not _PDB_ID.match(name.strip()):
        return message
    pid = name.strip().lower()
    return (f"{message}. fescan reads local structure files and never downloads: {name.strip()} looks like a PDB "
            f"entry id. Download the entry's PDBx/mmCIF or PDB file from a wwPDB archive site (for example "
            f"{pid}.cif.gz) and give its path: fescan scan {pid}.cif.gz")

