"""Inputs of the report tests, built in code: synthetic wires, a crafted file, survey-like tables.

The synthetic wires reuse the idealised [4Fe-4S] cube of :mod:`tests.synth`
(geometry sources noted there). The crafted file holds markup and script text
in its title and chain names, to check that reports escape what they read.
Survey-like tables are made from :func:`fescan.scan` results with
:func:`fescan.analysis.tables.result_tables`, so the tests do not depend on the survey
module.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import gemmi
import numpy as np
import pandas as pd

from fescan.analysis.scan import ScanResult
from fescan.analysis.tables import SCHEMAS, result_tables, to_frame
from tests import synth

__all__ = ["SCRIPT", "IMG", "CRAFTED_TITLE", "wire_structure", "write_wire", "write_crafted", "survey_tables",
           "write_tables"]

#: Markup that must never reach a report unescaped.
SCRIPT = "<script>alert(1)</script>"
IMG = '"><img src=x onerror=alert(1)>'
CRAFTED_TITLE = f"Crafted {SCRIPT} & {IMG} [link](javascript:alert(1)) | *bold* _it_ `code` \\ title"


def wire_structure(offsets: Sequence[float], *, direction=(1.0, 2.0, 3.0), zigzag: float = 0.0,
                   origin=(5.0, -3.0, 8.0)) -> gemmi.Structure:
    """[4Fe-4S] clusters on a straight line (chain A), cluster k at ``offsets[k]`` Å from the first.

    ``zigzag`` moves every other cluster that far off the line (perpendicular),
    so the centres are no longer collinear.
    """
    u = np.asarray(direction, dtype=float)
    u /= np.linalg.norm(u)
    side = np.cross(u, [0.0, 0.0, 1.0])
    side /= np.linalg.norm(side)
    chain = gemmi.Chain("A")
    for k, off in enumerate(offsets):
        centre = np.asarray(origin, dtype=float) + off * u + (zigzag if k % 2 else 0.0) * side
        one = synth.four_fe_cluster(centre=tuple(centre), numbers=(20 * k + 1, 20 * k + 4, 20 * k + 7, 20 * k + 11),
                                    cluster_num=500 + k)
        for res in one[0][0]:
            chain.add_residue(res)
    st = gemmi.Structure()
    st.name = "WIRE"
    model = gemmi.Model(1)
    model.add_chain(chain)
    st.add_model(model)
    st.setup_entities()
    return st


def write_wire(path: Path, offsets: Sequence[float], **kw) -> Path:
    """Write :func:`wire_structure` as a PDB file."""
    wire_structure(offsets, **kw).write_pdb(str(path))
    return path


def write_crafted(path: Path) -> Path:
    """An mmCIF file whose title and chain names hold markup and script text (two [4Fe-4S] 12 Å apart)."""
    st = synth.four_fe_cluster(centre=(0.0, 0.0, 0.0), numbers=(8, 11, 14, 18), cluster_num=101)
    other = synth.four_fe_cluster(centre=(12.0, 0.0, 0.0), numbers=(30, 33, 36, 40), cluster_num=102)
    ch = other[0][0].clone()
    ch.name = IMG
    st[0].add_chain(ch)
    st[0][0].name = SCRIPT
    st.setup_entities()
    st.info["_struct.title"] = CRAFTED_TITLE
    st.make_mmcif_document().write_file(str(path))
    return path


def _structure_row(res: ScanResult) -> dict:
    i = res.info
    counts = {f"n_{cat.replace('-', '_')}": sum(1 for c in res.cofactors if c.category == cat)
              for cat in ("iron-sulfur", "flavin", "quinone", "heme", "copper", "iron", "metal")}
    return {"file": res.path, "entry_id": i.entry_id, "title": i.title, "method": i.method,
            "resolution": i.resolution, "n_models": i.n_models, "n_atoms": i.n_atoms, **counts,
            "n_cofactors": len(res.cofactors), "n_flags": sum(len(c.flags) for c in res.cofactors),
            "status": "ok", "seconds": 0.0}


def survey_tables(results: Sequence[ScanResult], failures: Sequence[dict] = ()) -> dict[str, pd.DataFrame]:
    """Survey-like merged tables of some results (plus ``structures`` and ``failures``)."""
    parts: dict[str, list[pd.DataFrame]] = {}
    for res in results:
        for name, df in result_tables(res).items():
            parts.setdefault(name, []).append(df)
    out = {name: pd.concat(dfs, ignore_index=True) for name, dfs in parts.items()}
    rows = [_structure_row(r) for r in results]
    rows += [{"file": f["file"], "status": "failed"} for f in failures]
    if "structures" in SCHEMAS:
        out["structures"] = to_frame("structures", rows)
    if "failures" in SCHEMAS:
        out["failures"] = to_frame("failures", list(failures))
    return out


def write_tables(tables: dict[str, pd.DataFrame], folder: Path, fmt: str = "parquet") -> Path:
    """Write tables as ``<name>.parquet`` or ``<name>.csv`` into a folder."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, df in tables.items():
        if fmt == "parquet":
            df.to_parquet(folder / f"{name}.parquet", index=False)
        else:
            df.to_csv(folder / f"{name}.csv", index=False)
    return folder
