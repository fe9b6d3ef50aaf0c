"""Tables at the boundary: column schemas declared once, DataFrames built from results.

Every table fescan writes (one structure with ``--csv``, or a survey) uses the
columns below. ``file`` is the structure file the row comes from.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import pandas as pd

if TYPE_CHECKING:  # pragma: no cover
    from fescan.analysis.scan import ScanResult

__all__ = ["Column", "TableSpec", "TABLES", "SCHEMAS", "empty_table", "result_rows", "result_tables",
           "to_frame", "tables_markdown"]


@dataclass(frozen=True)
class Column:
    """One declared column: name, pandas dtype, unit and meaning."""

    name: str
    dtype: str
    unit: str
    doc: str


def _cols(*spec: tuple[str, str, str, str]) -> tuple[Column, ...]:
    return tuple(Column(*s) for s in spec)


SCHEMAS: dict[str, tuple[Column, ...]] = {
    "cofactors": _cols(
        ("file", "string", "", "structure file"),
        ("cofactor_id", "string", "", "MODEL:CHAIN/RESNUM[ICODE]:CODE"),
        ("model", "Int64", "", "model number"),
        ("chain", "string", "", "chain of the naming residue"),
        ("resnum", "Int64", "", "residue number"),
        ("icode", "string", "", "insertion code (empty if none)"),
        ("ccd_code", "string", "", "CCD code, empty when found by geometry alone"),
        ("category", "string", "", "iron-sulfur, flavin, quinone, heme, copper, iron, metal"),
        ("class", "string", "", "class label ([4Fe-4S], Rieske [2Fe-2S], FMN, heme c...)"),
        ("composition", "string", "", "element composition of the core"),
        ("n_atoms", "Int64", "", "atoms of the cofactor"),
        ("n_redox_atoms", "Int64", "", "atoms of the redox-active set"),
        ("x", "float64", "Å", "centroid of the redox-active set"),
        ("y", "float64", "Å", ""),
        ("z", "float64", "Å", ""),
        ("mean_occupancy", "float64", "", "mean occupancy of the atoms"),
        ("mean_b", "float64", "Å²", "mean B-factor of the atoms"),
        ("detected_by", "string", "", "ccd+geometry, ccd or geometry"),
        ("n_ligands", "Int64", "", "ligand bonds from the metals"),
        ("motif", "string", "", "spacing of ligating residues (C-x2-C-x2-C-x3-C)"),
        ("n_warnings", "Int64", "", "flags of severity warning"),
        ("potential_v", "float64", "V", "midpoint potential used"),
        ("potential_origin", "string", "", "default table or user file"),
    ),
    "ligands": _cols(
        ("file", "string", "", "structure file"),
        ("cofactor_id", "string", "", "cofactor the metal belongs to"),
        ("metal", "string", "", "metal atom name"),
        ("residue", "string", "", "ligating residue CHAIN/RESNUM"),
        ("resname", "string", "", "ligating residue name"),
        ("atom", "string", "", "ligating atom name"),
        ("kind", "string", "", "Cys S, His N, water O..."),
        ("distance", "float64", "Å", "metal-ligand distance"),
    ),
    "flags": _cols(
        ("file", "string", "", "structure file"),
        ("cofactor_id", "string", "", "cofactor flagged"),
        ("code", "string", "", "machine-readable flag code"),
        ("severity", "string", "", "warning or note"),
        ("message", "string", "", "plain words"),
    ),
    "pairs": _cols(
        ("file", "string", "", "structure file"),
        ("first", "string", "", "cofactor id"),
        ("second", "string", "", "cofactor id"),
        ("first_class", "string", "", ""),
        ("second_class", "string", "", ""),
        ("edge_distance", "float64", "Å", "edge-to-edge distance of the redox-active sets"),
        ("centre_distance", "float64", "Å", "centre-to-centre distance"),
        ("dg_ev", "float64", "eV", "ΔG of first → second"),
        ("log10_k_forward", "float64", "log10 s⁻¹", "first → second (estimate)"),
        ("log10_k_back", "float64", "log10 s⁻¹", "second → first (estimate)"),
        ("gap", "boolean", "", "edge distance above the gap limit"),
        ("symmetry", "string", "", "symmetry operator, empty in the asymmetric unit"),
        ("packing_density", "float64", "", "packing density ρ used (default or measured)"),
    ),
    "hops": _cols(
        ("file", "string", "", "structure file"),
        ("step", "Int64", "", "position along the fastest path (1 = first hop)"),
        ("donor", "string", "", "cofactor id"),
        ("acceptor", "string", "", "cofactor id"),
        ("edge_distance", "float64", "Å", ""),
        ("centre_distance", "float64", "Å", ""),
        ("dg_ev", "float64", "eV", ""),
        ("log10_k_forward", "float64", "log10 s⁻¹", "estimate"),
        ("hop_time_s", "float64", "s", "1/k_forward (estimate)"),
        ("gap", "boolean", "", "above the gap limit"),
        ("slow", "boolean", "", "slower than the turnover threshold"),
        ("bottleneck", "boolean", "", "slowest hop of the path"),
        ("packing_density", "float64", "", "packing density ρ used"),
    ),
    "wires": _cols(
        ("file", "string", "", "structure file"),
        ("entry", "string", "", "entry cofactor id"),
        ("exit", "string", "", "exit cofactor id"),
        ("how_chosen", "string", "", "user choice or default rule"),
        ("path", "string", "", "cofactor ids along the fastest path, ' > ' separated"),
        ("n_hops", "Int64", "", ""),
        ("bottleneck", "string", "", "donor > acceptor of the slowest hop"),
        ("bottleneck_edge_distance", "float64", "Å", ""),
        ("max_edge_distance", "float64", "Å", "longest hop on the path"),
        ("n_gaps", "Int64", "", "hops over the gap limit or below the rate threshold"),
        ("summed_hop_time_s", "float64", "s", "Σ 1/k along the path (estimate)"),
        ("mean_first_passage_time_s", "float64", "s", "MFPT entry → exit (estimate)"),
        ("isolated", "string", "", "cofactors with no partner within the gap limit"),
    ),
    "structures": _cols(
        ("file", "string", "", "structure file"),
        ("entry_id", "string", "", "PDB ID from the header, else the file name stem (empty when failed)"),
        ("title", "string", "", "title of the entry"),
        ("method", "string", "", "experimental method as written in the file"),
        ("resolution", "float64", "Å", "resolution (empty when the file gives none)"),
        ("n_models", "Int64", "", "models in the file"),
        ("n_atoms", "Int64", "", "atoms of the model read (after the altloc and hydrogen policies)"),
        ("n_iron_sulfur", "Int64", "", "cofactors of category iron-sulfur"),
        ("n_flavin", "Int64", "", "cofactors of category flavin"),
        ("n_quinone", "Int64", "", "cofactors of category quinone"),
        ("n_heme", "Int64", "", "cofactors of category heme"),
        ("n_copper", "Int64", "", "cofactors of category copper"),
        ("n_iron", "Int64", "", "cofactors of category iron"),
        ("n_metal", "Int64", "", "cofactors of category metal"),
        ("n_cofactors", "Int64", "", "cofactors found"),
        ("n_flags", "Int64", "", "flags of the checks (warnings and notes)"),
        ("status", "string", "", "ok or failed (then see the failures table)"),
    ),
    "failures": _cols(
        ("file", "string", "", "structure file"),
        ("error_class", "string", "", "exception class, or Timeout / WorkerCrash"),
        ("message", "string", "", "what went wrong, in plain words"),
        ("reason", "string", "", "error, timeout, memory or crash"),
    ),
    "timings": _cols(
        ("file", "string", "", "structure file"),
        ("seconds", "float64", "s", "wall time of the analysis of this file (differs from run to run)"),
    ),
}


def empty_table(name: str) -> pd.DataFrame:
    """An empty DataFrame with the declared columns and dtypes of table ``name``."""
    return pd.DataFrame({c.name: pd.Series(dtype=c.dtype) for c in SCHEMAS[name]})


def to_frame(name: str, rows: list[dict]) -> pd.DataFrame:
    """Rows → DataFrame with exactly the declared columns (in order) and dtypes."""
    cols = SCHEMAS[name]
    df = pd.DataFrame(rows, columns=[c.name for c in cols]) if rows else empty_table(name)
    return df.astype({c.name: c.dtype for c in cols})


def cofactor_rows(res: ScanResult) -> list[dict]:
    """Rows of the ``cofactors`` table for one result."""
    out = []
    for c in res.cofactors:
        pot = res.potentials[c.uid]
        out.append({
            "file": res.path, "cofactor_id": c.uid, "model": c.model, "chain": c.chain, "resnum": c.seqnum,
            "icode": c.icode, "ccd_code": c.ccd_code, "category": c.category, "class": c.cls,
            "composition": c.composition, "n_atoms": len(c.atoms), "n_redox_atoms": len(c.redox_atoms),
            "x": c.centroid[0], "y": c.centroid[1], "z": c.centroid[2],
            "mean_occupancy": c.mean_occupancy, "mean_b": c.mean_b, "detected_by": c.detected_by,
            "n_ligands": len(c.ligands), "motif": c.motif,
            "n_warnings": sum(1 for f in c.flags if f.severity == "warning"),
            "potential_v": pot.e_v, "potential_origin": pot.origin,
        })
    return out


def ligand_rows(res: ScanResult) -> list[dict]:
    """Rows of the ``ligands`` table."""
    return [
        {"file": res.path, "cofactor_id": c.uid, "metal": lig.metal, "residue": lig.atom.residue,
         "resname": lig.atom.resname, "atom": lig.atom.name, "kind": lig.kind, "distance": lig.distance}
        for c in res.cofactors for lig in c.ligands
    ]


def flag_rows(res: ScanResult) -> list[dict]:
    """Rows of the ``flags`` table."""
    return [
        {"file": res.path, "cofactor_id": c.uid, "code": f.code, "severity": f.severity, "message": f.message}
        for c in res.cofactors for f in c.flags
    ]


def pair_rows(res: ScanResult) -> list[dict]:
    """Rows of the ``pairs`` table."""
    return [{"file": res.path, **r} for r in res.pair_records()]


def hop_rows(res: ScanResult) -> list[dict]:
    """Rows of the ``hops`` table (the fastest path)."""
    w = res.wire
    out = []
    for k, h in enumerate(w.hops, start=1):
        d = h.to_dict()
        out.append({"file": res.path, "step": k, **{c: d[c] for c in (
            "donor", "acceptor", "edge_distance", "centre_distance", "dg_ev", "log10_k_forward",
            "hop_time_s", "gap", "slow", "packing_density")}, "bottleneck": h is w.bottleneck})
    return out


def wire_rows(res: ScanResult) -> list[dict]:
    """The one row of the ``wires`` table."""
    w = res.wire
    d = w.to_dict()
    b = w.bottleneck
    return [{
        "file": res.path, "entry": w.entry, "exit": w.exit, "how_chosen": w.how_chosen,
        "path": " > ".join(w.path), "n_hops": len(w.hops),
        "bottleneck": f"{b.donor} > {b.acceptor}" if b else None,
        "bottleneck_edge_distance": b.edge if b else None,
        "max_edge_distance": max((h.edge for h in w.hops), default=None),
        "n_gaps": len(w.gaps), "summed_hop_time_s": d["summed_hop_time_s"],
        "mean_first_passage_time_s": d["mean_first_passage_time_s"],
        "isolated": " ".join(w.isolated),
    }]


# --- the one list of tables -----------------------------------------------------------------

_INTROS = {
    "structures": "One row per input file, whether it succeeded (`status` = `ok`) or not (`failed`; the "
                  "other columns are then empty and the file has a row in `failures`).",
    "failures": "One row per file that could not be analysed. `reason` is `error` (the file is bad: missing, "
                "empty, not a structure, damaged gzip, truncated, non-finite coordinates...; `error_class` is "
                "the fescan exception, a `FescanError` subclass; any other class is a bug in fescan and is "
                "logged with its traceback), `timeout` (over the per-file time limit; `Timeout`), `memory` "
                "(over the per-worker memory cap; `MemoryError`) or `crash` (the worker process died: "
                "segfault, `os._exit`, killed by a signal; `WorkerCrash`).",
    "cofactors": "One row per redox cofactor found, as `fescan scan --csv` writes it.",
    "ligands": "One row per bond from a cofactor metal to a ligating atom outside the cofactor.",
    "flags": "One row per finding of the ligation and geometry checks.",
    "pairs": "One row per cofactor pair within the cutoff. Rates are model estimates (Moser-Dutton), "
             "not measurements.",
    "timings": "One row per input file: the wall time of its analysis. Kept apart from `structures` so that "
               "every other table depends only on the inputs and options, not on the machine or its load.",
    "hops": "One row per hop of the fastest path of each structure. Rates and times are model estimates.",
    "wires": "One row per structure analysed: entry, exit, fastest path, bottleneck and transfer times. "
             "Times are model estimates from the Moser-Dutton law, not measurements.",
}

_DOC_HEAD = """# Survey tables

`fescan survey INPUT... -o OUT` (or `fescan.survey(inputs, out_dir)`) writes one table per kind into `OUT`:
`OUT/<table>.parquet` by default, `OUT/<table>.csv` with `--format csv`. The columns are declared once, in
`fescan/analysis/tables.py` (`TABLES`); the tables below list them with their pandas dtype and unit. This file is
made by `fescan.analysis.tables.tables_markdown()`; a test checks that it is up to date.

- Every row has a `file` column: the structure file as found in the inputs (not resolved).
- Rows are sorted by their columns, left to right (`file` first), whatever order the files finished in.
- Parquet keeps the dtypes: `pandas.read_parquet("OUT/cofactors.parquet")` gives `string`, `Int64`,
  `boolean` and `float64` columns as listed. For CSV use `fescan.surveys.store.read_table(path, name)`;
  in CSV an empty string and a missing value are written alike.
- Cofactor ids are `MODEL:CHAIN/RESNUM[ICODE]:CODE` (`CODE` is `-` for a cluster found by geometry alone).
- Rates (`log10_k_*`, log10 of s⁻¹) and times (`*_time_s`, s) are estimates from the empirical Moser-Dutton
  tunnelling law (Page, Moser, Chen & Dutton 1999, Nature 402:47), not measurements.
- `OUT/_survey_state/` holds what lets a rerun resume: the options used, the index of files done
  (keyed by resolved path, size and modification time) and the part files. A rerun into `OUT` analyses
  only new or changed files (and, with `--retry-failed`, the failed ones); the merged tables always hold
  the latest result of every file ever surveyed into `OUT`.
- With `--report`, per-structure reports go to `OUT/structures/<file name>-<8 hex digits>` and the
  survey report into `OUT` (when the report module is installed).
"""


@dataclass(frozen=True)
class TableSpec:
    """One output table: its name, what a row is, its columns and how rows are built.

    ``rows`` builds the rows of one structure's result; it is ``None`` for the
    tables a survey fills itself (``structures``, ``failures``, ``timings``).
    """

    name: str
    intro: str
    columns: tuple[Column, ...]
    rows: Callable[[ScanResult], list[dict]] | None


_ROWS: dict[str, Callable[[ScanResult], list[dict]]] = {
    "cofactors": cofactor_rows, "ligands": ligand_rows, "flags": flag_rows,
    "pairs": pair_rows, "hops": hop_rows, "wires": wire_rows,
}

#: Every table fescan writes, in the order surveys merge and documents list them. Adding a
#: table is one entry here (columns in SCHEMAS, a row builder, an intro).
TABLES: dict[str, TableSpec] = {
    name: TableSpec(name, _INTROS[name], cols, _ROWS.get(name)) for name, cols in SCHEMAS.items()
}


def result_rows(res: ScanResult) -> dict[str, list[dict]]:
    """Rows of every per-result table of one result, keyed by table name."""
    return {t.name: t.rows(res) for t in TABLES.values() if t.rows is not None}


def result_tables(res: ScanResult) -> dict[str, pd.DataFrame]:
    """All per-result tables of one result as DataFrames, keyed by table name."""
    return {name: to_frame(name, rows) for name, rows in result_rows(res).items()}


def tables_markdown() -> str:
    """The Markdown reference of the tables (``docs/survey_tables.md``), from :data:`TABLES`."""
    out = [_DOC_HEAD]
    for t in TABLES.values():
        out += [f"## `{t.name}`", "", t.intro, "", "| column | dtype | unit | meaning |",
                "| --- | --- | --- | --- |"]
        out += [f"| `{c.name}` | {c.dtype} | {c.unit} | {c.doc} |" for c in t.columns]
        out.append("")
    return "\n".join(out)
