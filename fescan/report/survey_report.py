"""The report of a survey: figures over all structures and an HTML index.

:func:`write_survey_report` reads the merged survey tables of a folder
(``<name>.parquet`` or ``<name>.csv`` for the tables of
:data:`fescan.analysis.tables.SCHEMAS`), draws three figures and writes
``index.html``, which links the per-structure reports found under
``structures/<stem>/report.html`` and lists the failures::

    index.html
    figures/nearest_neighbour.svg|.png   nearest-neighbour distance by class
    figures/rate_distance.svg|.png       log10 k against distance, Moser-Dutton curves
    figures/counts.svg|.png              cofactors per class, findings per flag
    figures/bottlenecks.svg|.png         distance of every wire's bottleneck hop
    figures/ligation_by_resolution.svg|.png   Fe-S clusters with a warning, by resolution
"""

from __future__ import annotations

import json
import logging
import math
import os
import posixpath
from pathlib import Path

import numpy as np
import pandas as pd

from fescan.analysis.scan import CAUTION
from fescan.analysis.tables import SCHEMAS, empty_table
from fescan.core.errors import ConfigError
from fescan.core.options import ScanOptions
from fescan.core.version import __version__
from fescan.report import style
from fescan.report.content import Document, Facts, Figure, Heading, Notice, Paragraph, Run, Table
from fescan.report.diagrams import (
    bottleneck_figure,
    counts_figure,
    distance_by_class_figure,
    ligation_by_resolution_figure,
    rate_distance_figure,
    save_figure,
)
from fescan.report.html import render_html
from fescan.report.labels import duration, number, plural
from fescan.transfer.rate_law import log10_hop_rate

__all__ = ["read_survey_tables", "survey_parameters", "nearest_neighbours", "ligation_by_resolution", "write_survey_report",
           "counts_caption", "CURVE_DG_EV", "RESOLUTION_BINS", "TITLE_CHARS"]

log = logging.getLogger(__name__)

#: Driving forces (eV) of the Moser-Dutton curves of the rate figure (−λ is added: the ceiling).
CURVE_DG_EV = (-0.3, 0.0, 0.3)


def read_survey_tables(survey_dir: str | os.PathLike[str]) -> dict[str, pd.DataFrame]:
    """Read every survey table of a folder (Parquet preferred, else CSV; missing ones empty).

    Raises
    ------
    fescan.core.errors.ConfigError
        The folder does not exist, holds no survey table, or a table cannot be read
        or lacks declared columns (the message names the file).
    """
    folder = Path(survey_dir)
    if not folder.is_dir():
        raise ConfigError(f"{folder}: no such survey folder")
    out: dict[str, pd.DataFrame] = {}
    found = 0
    for name, cols in SCHEMAS.items():
        path = next((p for p in (folder / f"{name}.parquet", folder / f"{name}.csv") if p.is_file()), None)
        if path is None:
            out[name] = empty_table(name)
            continue
        found += 1
        dtypes = {c.name: c.dtype for c in cols}
        try:
            if path.suffix == ".parquet":
                df = pd.read_parquet(path)
            else:  # an empty CSV field is a missing value, as the survey writes them
                df = pd.read_csv(path, dtype={k: v for k, v in dtypes.items() if v == "string"},
                                 keep_default_na=False, na_values=[""])
        except Exception as exc:  # pyarrow and pandas raise many kinds
            raise ConfigError(f"{path}: cannot read the table: {type(exc).__name__}: {exc}") from None
        missing = [c for c in dtypes if c not in df.columns]
        if missing:
            raise ConfigError(f"{path}: not a fescan '{name}' table; missing column(s) {', '.join(missing)}")
        try:
            df = df[list(dtypes)].astype(dtypes)
        except (TypeError, ValueError) as exc:
            raise ConfigError(f"{path}: a column has values of the wrong kind: {exc}") from None
        # survey rows arrive in the order files finished: a stable sort by file makes
        # every figure and listing independent of that order
        out[name] = df.sort_values("file", kind="stable").reset_index(drop=True) if "file" in df else df
    if not found:
        raise ConfigError(f"{folder}: no survey tables found (expected structures.parquet, cofactors.parquet ... "
                          "or the same as .csv)")
    return out


def survey_parameters(survey_dir: str | os.PathLike[str]) -> ScanOptions:
    """Options the survey ran with (``_survey_state/settings.json``), defaults when not recorded."""
    path = Path(survey_dir) / "_survey_state" / "settings.json"
    try:
        opts = json.loads(path.read_text(encoding="utf-8")).get("scan_options", {})
        known = {k: v for k, v in opts.items() if k in ScanOptions.__dataclass_fields__}
        return ScanOptions(**known)
    except (OSError, ValueError, TypeError, AttributeError, ConfigError):
        return ScanOptions()


def nearest_neighbours(cofactors: pd.DataFrame, pairs: pd.DataFrame) -> pd.DataFrame:
    """Nearest partner distance of every cofactor (NaN when none within the cutoff).

    Returns
    -------
    pandas.DataFrame
        Columns ``file, cofactor_id, category, class, nn_edge_distance`` (Å).
    """
    both = pd.concat([pairs[["file", "first", "edge_distance"]].rename(columns={"first": "cofactor_id"}),
                      pairs[["file", "second", "edge_distance"]].rename(columns={"second": "cofactor_id"})])
    nn = both.groupby(["file", "cofactor_id"], as_index=False)["edge_distance"].min()
    out = cofactors[["file", "cofactor_id", "category", "class"]].merge(nn, on=["file", "cofactor_id"], how="left")
    return out.rename(columns={"edge_distance": "nn_edge_distance"})


def _glyph(category: str, cls: str) -> style.Glyph:
    return style.glyph_for(str(category), str(cls))


def _flag_counts(t: dict[str, pd.DataFrame]) -> list[tuple[str, int, int]]:
    """(flag code, warnings, notes) of every flag code, most frequent first."""
    f = t["flags"]
    return [(str(code), int((g["severity"] == "warning").sum()), int((g["severity"] != "warning").sum()))
            for code, g in sorted(f.groupby("code"), key=lambda kv: (-len(kv[1]), kv[0]))]


def _figures(t: dict[str, pd.DataFrame], opts: ScanOptions, fig_dir: Path) -> list[tuple[str, list[Path]]]:
    out = []
    nn = nearest_neighbours(t["cofactors"], t["pairs"])
    groups = []
    for (cat, cls), g in sorted(nn.groupby(["category", "class"]), key=lambda kv: (-len(kv[1]), kv[0][1])):
        d = g["nn_edge_distance"].to_numpy(dtype=float)
        groups.append((str(cls), _glyph(cat, cls), np.sort(d[np.isfinite(d)]), int((~np.isfinite(d)).sum())))
    fig = distance_by_class_figure(groups, gap_limit=opts.gap_limit, cutoff=opts.cutoff)
    out.append(("nearest_neighbour", save_figure(fig, fig_dir / "nearest_neighbour", salt="fescan-survey-nn")))

    p = t["pairs"]
    r = np.concatenate([p["edge_distance"].to_numpy(float)] * 2)
    lk = np.concatenate([p["log10_k_forward"].to_numpy(float), p["log10_k_back"].to_numpy(float)])
    h = t["hops"]
    rr = np.linspace(3.6, max(opts.cutoff, 20.0), 120)
    curves = [(-opts.reorg, rr, np.asarray(log10_hop_rate(rr, -opts.reorg, opts.reorg, opts.packing_density,
                                                          temperature=opts.temperature)))]
    curves += [(dg, rr, np.asarray(log10_hop_rate(rr, dg, opts.reorg, opts.packing_density,
                                                  temperature=opts.temperature))) for dg in CURVE_DG_EV]
    fig = rate_distance_figure(r, lk, h["edge_distance"].to_numpy(float), h["log10_k_forward"].to_numpy(float),
                               curves, gap_limit=opts.gap_limit, log10_threshold=math.log10(opts.rate_threshold),
                               reorg=opts.reorg, rho=opts.packing_density)
    out.append(("rate_distance", save_figure(fig, fig_dir / "rate_distance", salt="fescan-survey-rate")))

    cc = [(str(cls), _glyph(cat, cls), len(g)) for (cat, cls), g in
          sorted(t["cofactors"].groupby(["category", "class"]), key=lambda kv: (-len(kv[1]), kv[0][1]))]
    fc = _flag_counts(t)
    fig = counts_figure(cc, fc)
    out.append(("counts", save_figure(fig, fig_dir / "counts", salt="fescan-survey-counts")))

    w = t["wires"]
    has = w["n_hops"].fillna(0) > 0
    fig = bottleneck_figure(w.loc[has, "bottleneck_edge_distance"].to_numpy(float), gap_limit=opts.gap_limit,
                            n_without=int((~has).sum()))
    out.append(("bottlenecks", save_figure(fig, fig_dir / "bottlenecks", salt="fescan-survey-bottleneck")))
    fig = ligation_by_resolution_figure(ligation_by_resolution(t))
    out.append(("ligation", save_figure(fig, fig_dir / "ligation_by_resolution", salt="fescan-survey-ligation")))
    return out


#: Resolution bins (Å) of the ligation figure: upper edges.
RESOLUTION_BINS = (1.5, 2.0, 2.5, 3.0, 3.5)


def ligation_by_resolution(t: dict[str, pd.DataFrame]) -> list[tuple[str, int, int]]:
    """Fe-S clusters with at least one warning, per resolution bin.

    Returns
    -------
    list of (label, clusters with a warning, clusters)
        Bins ``≤ 1.5 Å``, ``1.5–2.0 Å``... ``> 3.5 Å`` and ``not given`` (NMR, EM without
        resolution, models), only those holding a cluster.
    """
    c = t["cofactors"]
    c = c[c["category"] == "iron-sulfur"]
    if not len(c):
        return []
    res = t["structures"].drop_duplicates("file", keep="last").set_index("file")["resolution"]
    r = c["file"].map(res).astype(float)
    warned = c["n_warnings"].fillna(0).astype(int) > 0
    edges = (0.0, *RESOLUTION_BINS, math.inf)
    out = []
    for lo, hi in zip(edges, edges[1:]):
        inside = (r > lo) & (r <= hi)
        if inside.any():
            label = f"≤ {hi:g} Å" if lo == 0 else f"> {lo:g} Å" if math.isinf(hi) else f"{lo:g}–{hi:g} Å"
            out.append((label, int((inside & warned).sum()), int(inside.sum())))
    none = r.isna()
    if none.any():
        out.append(("not given", int((none & warned).sum()), int(none.sum())))
    return out


_CAPTIONS = {
    "nearest_neighbour": ("Nearest-neighbour distance by class",
                          "Edge-to-edge distance from every cofactor to its nearest partner, one row per class "
                          "(count in brackets). Dashed: the gap limit. Cofactors with no partner within the pair "
                          "cutoff are counted at the right."),
    "rate_distance": ("The Moser-Dutton law, with this survey's hops placed on it",
                      "Curves: the rate law (Page et al. 1999, Nature 402:47) for several driving forces; the top "
                      "curve (ΔG = −λ) is its ceiling. Points: every pair in both directions (grey) and the hops on "
                      "relay paths (black), each placed at its edge-to-edge distance with the rate the same law "
                      "gives it. The points are computed from the law, so they lie within the curves by "
                      "construction: the figure shows where the hops fall on the law, not a test of it. The vertical "
                      "axis spans every point with a finite rate. Dashed: the gap limit; grey line: the turnover "
                      "threshold."),
    "bottlenecks": ("Bottleneck distances",
                    "Edge-to-edge distance of the bottleneck hop of every wire (the hop with the largest "
                    "flux-control coefficient of the steady state, else the slowest forward hop; 1 Å bins). "
                    "Hatched: bottlenecks over "
                    "the gap limit (dashed), where the wire is broken or needs a cofactor fescan does not model."),
    "ligation": ("Fe-S clusters with ligation problems, by resolution",
                 "Share of iron-sulfur clusters with at least one ligation or geometry warning, per resolution "
                 "bin (counts beside the bars). Bond windows widen with the coordinate error of each file, so "
                 "a warning at low resolution means the bond lies outside what the data allow."),
    "counts": ("Cofactors and findings", "Cofactors per class, and findings of the ligation and geometry checks."),
}


def counts_caption(flag_counts: list[tuple[str, int, int]]) -> str:
    """Caption of the counts figure, naming only the kinds of finding drawn (warnings, notes).

    Parameters
    ----------
    flag_counts : list of (code, warnings, notes)

    Returns
    -------
    str
    """
    n_warn = sum(w for _, w, _ in flag_counts)
    n_note = sum(n for _, _, n in flag_counts)
    tail = ("filled: warnings, hatched: notes" if n_warn and n_note else "all warnings" if n_warn
            else "all notes" if n_note else "none found")
    return f"Cofactors per class, and findings of the ligation and geometry checks by kind ({tail})."


def _files(t: dict[str, pd.DataFrame]) -> list[str]:
    names = set(t["structures"]["file"].dropna().astype(str))
    for name in ("cofactors", "wires", "failures"):
        names |= set(t[name]["file"].dropna().astype(str))
    return sorted(names)


def _report_link(survey_dir: Path, out_dir: Path, file: str) -> str | None:
    """Relative link from the index to the per-structure report of ``file``, when one exists."""
    base = survey_dir / "structures"
    if not base.is_dir():
        return None
    name = Path(file).name
    name = name[:-3] if name.lower().endswith(".gz") else name
    candidates = []
    try:
        from fescan.surveys.outcomes import report_stem  # the survey names the folders
        candidates.append(base / report_stem(file))
    except ImportError:  # pragma: no cover - survey module absent
        pass
    safe = "".join(ch if ch.isalnum() or ch in "._-" else "_" for ch in name).strip("._")
    prefixed = sorted(p for p in base.glob(f"{safe}-*") if p.is_dir())
    if len(prefixed) == 1:
        candidates.append(prefixed[0])
    candidates += [base / name, base / Path(name).stem]
    for c in candidates:
        if (c / "report.html").is_file():
            return Path(os.path.relpath(c / "report.html", out_dir)).as_posix()
    return None


#: Longest title shown in the structures table (the whole title is the cell's tooltip).
TITLE_CHARS = 80


def _short_title(title: object) -> Run | str:
    """A title cut at a word boundary to :data:`TITLE_CHARS` characters, the whole one as tooltip."""
    text = " ".join(str(title).split())
    if len(text) <= TITLE_CHARS:
        return text
    cut = text[: TITLE_CHARS - 1]
    if " " in cut[TITLE_CHARS // 2:]:
        cut = cut[: cut.rindex(" ")]
    return Run(cut.rstrip(" ,;:-") + "…", tooltip=text)


def _common_folder(files: list[str]) -> str:
    """The folder every file lies in (``""`` when they differ or there is none)."""
    parents = {posixpath.dirname(f.replace(os.sep, "/")) for f in files}
    return parents.pop() if len(parents) == 1 else ""


def _structure_rows(t: dict[str, pd.DataFrame], survey_dir: Path, out_dir: Path) -> list[list]:
    files = _files(t)
    folder = _common_folder(files)
    s = t["structures"].drop_duplicates("file", keep="last").set_index("file")
    w = t["wires"].drop_duplicates("file", keep="last").set_index("file")
    ncof = t["cofactors"].groupby("file").size()
    failed = set(t["failures"]["file"].astype(str))
    rows = []
    for f in files:
        link = _report_link(survey_dir, out_dir, f)
        shown = f.replace(os.sep, "/")[len(folder) + 1:] if folder else f
        first = Run(shown, code=True, href=link, tooltip=f if shown != f else None)
        srow = s.loc[f] if f in s.index else None
        wrow = w.loc[f] if f in w.index else None

        def val(row, col, fmt=str):
            if row is None or col not in row or pd.isna(row[col]):
                return "–"
            return fmt(row[col])

        status = "failed" if f in failed else val(srow, "status") if srow is not None else "ok"
        rows.append([first, val(srow, "entry_id"), val(srow, "title", _short_title), val(srow, "method"),
                     val(srow, "resolution", lambda x: f"{x:.2f}"), str(int(ncof.get(f, 0))),
                     val(wrow, "n_hops", lambda x: str(int(x))), val(wrow, "max_edge_distance", lambda x: number(x, 1)),
                     val(wrow, "n_gaps", lambda x: str(int(x))), val(wrow, "summed_hop_time_s", duration),
                     val(wrow, "mean_first_passage_time_s", duration), status])
    return rows


def write_survey_report(survey_dir: str | os.PathLike[str], out_dir: str | os.PathLike[str] | None = None) -> list[Path]:
    """Write the survey report: figures and ``index.html``.

    Parameters
    ----------
    survey_dir : path-like
        Folder holding the merged survey tables (and ``structures/<stem>/`` reports).
    out_dir : path-like, optional
        Where to write (default: ``survey_dir``).

    Returns
    -------
    list of pathlib.Path
        ``index.html``, then the SVG and PNG of every figure.

    Raises
    ------
    fescan.core.errors.ConfigError
        No survey tables in the folder, an unreadable table, or an output folder
        that cannot be written.
    """
    src = Path(survey_dir)
    tables = read_survey_tables(src)
    opts = survey_parameters(src)
    out = Path(out_dir) if out_dir is not None else src
    try:
        out.mkdir(parents=True, exist_ok=True)
        figs = _figures(tables, opts, out / "figures")
        doc = _index_document(tables, opts, src, out, figs)
        index = out / "index.html"
        index.write_text(render_html(doc, subtitle=f"Survey folder {src}", footer=[
            f"Written by fescan {__version__}. ", CAUTION]), encoding="utf-8")
    except OSError as exc:
        raise ConfigError(f"{out}: cannot write the survey report: {exc.strerror or exc}") from None
    log.info("survey report written to %s", index)
    return [index] + [p for _, paths in figs for p in paths]


def _index_document(t: dict[str, pd.DataFrame], opts: ScanOptions, src: Path, out: Path,
                    figs: list[tuple[str, list[Path]]]) -> Document:
    files = _files(t)
    n_fail = t["failures"]["file"].nunique()
    wires = t["wires"]
    hops = t["hops"]
    n_bad = int((hops["gap"].fillna(False).astype(bool) | hops["slow"].fillna(False).astype(bool)).sum())
    n_with = t["cofactors"]["file"].nunique()
    doc = Document(f"Survey report: {src.resolve().name or src}")
    doc.add(Facts([
        ("Structures", f"{plural(len(files), 'file')}, {len(files) - n_fail} analysed, {n_fail} failed"),
        ("Cofactors", f"{len(t['cofactors'])} ({plural(n_with, 'file')} with at least one)"),
        ("Relay paths", f"{plural(int((wires['n_hops'].fillna(0) > 0).sum()), 'wire')}, {plural(len(hops), 'hop')}, "
                        f"{plural(n_bad, 'gap or slow hop', 'gaps or slow hops')}"),
        ("Parameters", f"λ = {opts.reorg:g} eV, ρ = {opts.packing_density:g}, gap limit {opts.gap_limit:g} Å, "
                       f"cutoff {opts.cutoff:g} Å, T = {opts.temperature:g} K, turnover threshold "
                       f"{opts.rate_threshold:g} s⁻¹, symmetry mates "
                       f"{'included' if opts.symmetry else 'not included'}"),
    ]), Notice("Estimates, not measurements.", CAUTION))
    doc.add(Heading(2, "Figures", "figures"))
    for name, (svg, png) in figs:
        title, caption = _CAPTIONS[name]
        if name == "counts":
            caption = counts_caption(_flag_counts(t))
        doc.add(Heading(3, title), Figure(svg.read_text(encoding="utf-8"),
                                          Path(os.path.relpath(png, out)).as_posix(), title, caption))
    doc.add(Heading(2, "Structures", "structures"))
    folder = _common_folder(files)
    where = f" Every file lies in {folder}/." if folder else ""
    doc.add(Table(["File", "Entry", "Title", "Method", "Resolution (Å)", "Cofactors", "Hops", "Longest hop (Å)",
                   "Gaps", "Sum of forward hop times", "Mean first passage", "Status"],
                  _structure_rows(t, src, out), frozenset({4, 5, 6, 7, 8, 9, 10}),
                  f"One row per file; the file name links to its report where one was written, a shortened title "
                  f"shows in full on hover.{where} Sum of forward hop times: ignores back hops, not a transit time. "
                  "Times are model estimates.", classes=("path", "", "text")))
    doc.add(Heading(2, "Failures", "failures"))
    f = t["failures"].sort_values("file")
    if len(f):
        doc.add(Table(["File", "Reason", "Error", "Message"],
                      [[Run(str(r.file), code=True), str(r.reason), str(r.error_class), str(r.message)]
                       for r in f.itertuples(index=False)]))
    else:
        doc.add(Paragraph("None: every file was analysed."))
    return doc
