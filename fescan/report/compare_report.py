"""Words, text, HTML and Markdown of a model-versus-reference comparison.

:func:`hop_problems` and :func:`verdict` (from :mod:`fescan.comparison.verdict`)
put the findings of :func:`fescan.comparison.compare.compare` into plain words;
:func:`render_compare_text` is the terminal view; :func:`compare_document`
describes the comparison on the shared document model
(:mod:`fescan.report.content`), and :func:`write_compare_report` renders it with
the same HTML and Markdown renderers as the structure report (one escaping per
output kind: :func:`fescan.report.html.esc`, :func:`fescan.report.markdown.md_escape`)
into ``compare.html`` (self-contained, the diagram inline), ``compare.md`` and
``compare_wires.svg``/``.png``: both wires side by side in one view plane (the
model superposed on the reference). Rates and times are model estimates
(Moser–Dutton), and every output says so.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from fescan.analysis.scan import CAUTION
from fescan.comparison.verdict import cofactor_label as _label
from fescan.comparison.verdict import hop_problems, verdict
from fescan.comparison.verdict import ligand_words as _ligand_words
from fescan.core.numbers import format_with_interval
from fescan.core.version import __version__
from fescan.report.content import (
    BulletList,
    Document,
    Facts,
    Figure,
    Heading,
    Notice,
    Paragraph,
    Run,
    Table,
)
from fescan.report.html import render_html
from fescan.report.labels import duration
from fescan.report.markdown import md_escape, render_markdown
from fescan.report.text import format_time, table

if TYPE_CHECKING:  # pragma: no cover
    from fescan.comparison.compare import CompareResult

__all__ = ["hop_problems", "verdict", "render_compare_text", "compare_document", "write_compare_report",
           "md_escape"]


# ----------------------------------------------------------------------------- rows shared by all renderers


def _fmt(x: float | None, spec: str, dash: str = "-") -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return dash
    return format(float(format(x, spec)) + 0.0, spec)  # no "-0.00"


def _match_rows(result: CompareResult) -> list[list[str]]:
    rows = []
    for m in result.matches:
        change = ", ".join(_ligand_words(m, brief=True)) or "-"
        rows.append([_label(result.reference, m.reference), _label(result.model, m.model), m.how,
                     f"{m.displacement:.2f}", change])
    rows += [[_label(result.reference, u), "(missing)", "-", "-", "missing in the model"] for u in result.missing]
    rows += [["(none)", _label(result.model, u), "-", "-", "only in the model"] for u in result.extra]
    return rows


def _hop_rows(result: CompareResult, time=format_time, dash: str = "-") -> list[list[str]]:
    """Rows of the hop table; ``time`` and ``dash`` are the output kind's time formatter and blank."""
    rows = []
    for h in result.hops:
        r, m = h.reference, h.model

        def pair(a, b, spec):
            return f"{_fmt(a, spec, dash)} → {_fmt(b, spec, dash)}"

        rows.append([str(h.step), f"{_label(result.reference, h.reference_donor)} > "
                     f"{_label(result.reference, h.reference_acceptor)}", h.status,
                     pair(r.edge, m.edge if m else None, ".2f"), _fmt(h.delta("edge"), "+.2f", dash),
                     pair(r.dg, m.dg if m else None, "+.3f"),
                     pair(r.log10_k_forward, m.log10_k_forward if m else None, ".2f"),
                     _fmt(h.delta("log10_k_forward"), "+.2f", dash),
                     f"{time(r.hop_time)} → {time(m.hop_time) if m else dash}"]
                    + ([f"{_fmt(h.rho_reference, '.2f', dash)} → {_fmt(h.rho_model, '.2f', dash)}"]
                       if _has_rho(result) else []))
    return rows


def _has_rho(result: CompareResult) -> bool:
    return any(h.rho_reference is not None for h in result.hops)


def _hop_headers(result: CompareResult) -> list[str]:
    return (["hop", "reference hop", "status", "R Å (ref → model)", "ΔR Å", "ΔG eV", "log10 k", "Δlog10 k",
             "hop time"] + (["ρ measured"] if _has_rho(result) else []))


_MATCH_HEADERS = ["reference", "model", "matched by", "moved Å", "changes"]
#: Columns of the model wire with intervals; the hop time cell holds its value and its interval.
_INTERVAL_HEADERS = ("donor", "acceptor", "R Å (± σ)", "log10 k", "log10 k 95%", "hop time (95% interval)")


def _details(result: CompareResult) -> list[tuple[str, list[str]]]:
    """Per changed cofactor: its label and every change in words."""
    return [(_label(result.reference, m.reference), _ligand_words(m)) for m in result.matches if _ligand_words(m)]


def _superposition_text(result: CompareResult) -> str:
    s = result.superposition
    rms = f", RMSD {s.rmsd:.2f} Å" if s.rmsd is not None else ""
    chains = ", ".join(f"{m}→{r}" for m, r in sorted(s.chain_map.items()))
    return f"superposition: {s.method} ({s.n_pairs} pairs{rms})" + (f"; chains model→reference {chains}" if chains else "")


def _interval_table(result: CompareResult) -> tuple[str, list[str], list[list[str]], str] | None:
    """Title, headers, rows and summary line of the model's wire with 95% intervals.

    Times and their intervals are written by :func:`fescan.core.numbers.format_with_interval`
    (the value carries no more digits than its interval supports), the same in the terminal,
    HTML and Markdown.
    """
    u = result.uncertainty
    if u is None or not getattr(u, "hops", None):
        return None

    rows = []
    for h in u.hops:
        lo, hi = h.hop_time_interval("95%")
        rows.append([_label(result.model, h.donor), _label(result.model, h.acceptor),
                     f"{h.edge:.2f} ± {h.sigma_edge:.2f}", f"{h.log10_k:.2f}",
                     f"{h.log10_k_95[0]:.2f} to {h.log10_k_95[1]:.2f}",
                     format_with_interval(10.0 ** -h.log10_k, lo, hi, "s", level="95%")])
    basis = getattr(u, "basis", None)
    title = f"Model wire with intervals ({basis()})" if callable(basis) else "Model wire with 95% intervals"
    summary = ""
    if u.summed_hop_time_95:
        lo, hi = u.summed_hop_time_95
        summary = "summed hop time " + format_with_interval(u.summed_hop_time, lo, hi, "s", level="95%")
    if u.notes:
        summary = "; ".join(x for x in [summary, *u.notes] if x)
    return title, list(_INTERVAL_HEADERS), rows, summary


def _interval_lines(result: CompareResult) -> list[str]:
    t = _interval_table(result)
    if t is None:
        return []
    title, headers, rows, summary = t
    return [title, table(headers, rows)] + ([f"  {summary}"] if summary else []) + [""]


def render_compare_text(result: CompareResult) -> str:
    """Plain-text view of a comparison for the terminal."""
    v = verdict(result)
    lines = [f"model:     {result.model.path}", f"reference: {result.reference.path}", _superposition_text(result), ""]
    lines += [f"Cofactors ({len(result.matches)} matched)", table(_MATCH_HEADERS, _match_rows(result))]
    for name, words in _details(result):
        lines += [f"  {name}:"] + [f"    {w}" for w in words]
    lines.append("")
    if result.hops:
        lines += ["Reference wire, hop by hop (model estimates)", table(_hop_headers(result), _hop_rows(result)), ""]
    lines += _interval_lines(result)
    lines += ["Verdict: " + v["summary"]] + [f"  problem: {p['sentence']}" for p in v["problems"]]
    lines += [f"  note: {n}" for n in v["notes"]]
    return "\n".join(lines)


# ----------------------------------------------------------------------------- files


def _diagram(result: CompareResult, base: Path) -> list[Path]:
    """Both wires side by side in one view plane (the model superposed); SVG and PNG.

    Uses :func:`fescan.report.diagrams.draw_wire` (house style) when it is there: the
    reference panel picks the view plane and the model panel reuses it.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    try:
        from fescan.report.diagrams import draw_wire
    except ImportError:  # pragma: no cover - the report package is part of fescan
        draw_wire = None
    ref, model_sup = result.reference, result.model_in_reference_frame()
    titles = ("reference: " + ref.info.entry_id, "model, superposed: " + result.model.info.entry_id)
    fig = Figure(figsize=(7.2, 3.6))
    FigureCanvasAgg(fig)
    axes = [fig.add_axes((0.01 + 0.5 * k, 0.03, 0.48, 0.86)) for k in range(2)]
    if draw_wire is not None:
        info = draw_wire(axes[0], ref, title=titles[0])
        draw_wire(axes[1], model_sup, projection=getattr(info, "projection", None), title=titles[1])
    else:  # pragma: no cover
        _simple_panels(axes, (ref, model_sup), titles)
    paths = [base.with_suffix(".svg"), base.with_suffix(".png")]
    fig.savefig(paths[0], format="svg", metadata={"Date": None, "Creator": "fescan"})
    fig.savefig(paths[1], format="png", dpi=200, metadata={"Software": None})
    return paths


def _simple_panels(axes: list[Any], results: tuple[Any, Any], titles: tuple[str, str]) -> None:  # pragma: no cover
    """Plain fallback drawing: centres on the reference's two principal axes, same limits."""
    pts = np.asarray([c.centroid for r in results for c in r.cofactors] or [[0.0, 0.0, 0.0]], float)
    centre = pts.mean(axis=0)
    vt = np.linalg.svd(pts - centre)[2] if len(pts) > 1 else np.eye(3)
    plane = np.vstack([vt, np.eye(3)])[:2]
    lim = float(np.abs((pts - centre) @ plane.T).max()) + 3.0
    for ax, res, title in zip(axes, results, titles):
        xy = {c.uid: (np.asarray(c.centroid) - centre) @ plane.T for c in res.cofactors}
        for h in res.wire.hops:
            ax.plot(*zip(xy[h.donor], xy[h.acceptor]), color="black", linestyle="--" if h.gap else "-")
        for c in res.cofactors:
            ax.plot(*xy[c.uid], marker="o", color="grey")
            ax.text(*xy[c.uid], c.label, fontsize=6, parse_math=False)
        ax.set_title(title, fontsize=8, parse_math=False)
        ax.set_xlim(-lim, lim)
        ax.set_ylim(-lim, lim)
        ax.set_aspect("equal")
        ax.set_axis_off()


def _mapping_rows(result: CompareResult) -> list[list[str]]:
    return [[c["model_chain"], c["reference_chain"], c["model_residues"], c["reference_residues"], str(c["aligned"]),
             f"{c['identity']:.0%}", f"{c['offset']:+d}"] for c in result.superposition.chains]


_MAPPING_HEADERS = ["model chain", "reference chain", "model residues", "reference residues", "aligned",
                    "identical", "numbering offset"]


def compare_document(result: CompareResult, svg_text: str = "", png_name: str = "compare_wires.png") -> Document:
    """The comparison as a :class:`~fescan.report.content.Document` (verdict first, details after).

    Parameters
    ----------
    result : CompareResult
    svg_text : str, optional
        The side-by-side diagram (inlined into HTML).
    png_name : str, optional
        File name of the PNG beside the Markdown page.

    Returns
    -------
    Document
    """
    v = verdict(result)
    mid, rid = result.model.info.entry_id, result.reference.info.entry_id
    doc = Document(f"Model {mid} against reference {rid}")
    s = result.superposition
    doc.add(Heading(2, "Verdict", "verdict"), Paragraph(Run(v["summary"], strong=True)))
    if v["problems"]:
        doc.add(BulletList([Run(p["sentence"], strong=True) for p in v["problems"]]))
    if v["notes"]:
        doc.add(BulletList(list(v["notes"])))
    doc.add(Facts([
        ("Model", Run(result.model.path, code=True)), ("Reference", Run(result.reference.path, code=True)),
        ("Superposition", f"{s.method}, {s.n_pairs} pairs" + (f", RMSD {s.rmsd:.2f} Å" if s.rmsd is not None else "")),
    ] + ([("Superposition note", s.note)] if s.note else [])))
    doc.add(Heading(2, "Residue mapping", "mapping"))
    if s.chains:
        doc.add(Table(_MAPPING_HEADERS, _mapping_rows(result), frozenset({4, 5, 6}),
                      "Protein chains paired by sequence alignment (gemmi align_string_sequences); reference "
                      "number = model number + offset. Cofactors and ligands are renamed through this mapping."))
    else:
        doc.add(Paragraph("No protein chains could be aligned: cofactors were matched by position only."))
    if svg_text:
        doc.add(Heading(2, "Both wires", "wires"),
                Figure(svg_text, png_name, "Both wires side by side",
                       "Reference (left) and model superposed on it (right), drawn in one view plane."))
    doc.add(Heading(2, "Cofactors", "cofactors"), Table(_MATCH_HEADERS, _match_rows(result), frozenset({3})))
    for name, words in _details(result):
        doc.add(Paragraph(Run(name, strong=True)), BulletList(list(words)))
    if result.hops:
        rows = _hop_rows(result, time=duration, dash="\u2013")
        doc.add(Heading(2, "Reference wire, hop by hop", "hops"),
                Table(_hop_headers(result), rows, frozenset({0, 4, 7}),
                      "Model estimates; a hop is unchanged when R (within the tolerance), ΔG, λ and the ligation "
                      "of both partners are the same"))
    t = _interval_table(result)
    if t is not None:
        title, headers, rows, summary = t
        doc.add(Heading(2, "Model wire with intervals", "intervals"), Table(headers, rows, caption=title))
        if summary:
            doc.add(Paragraph(summary))
    doc.add(Notice("Estimates, not measurements.", CAUTION))
    return doc


def write_compare_report(result: CompareResult, out_dir: str | Path) -> dict[str, Path]:
    """Write the comparison as HTML (self-contained) and Markdown, with the wire diagram.

    Parameters
    ----------
    result : CompareResult
    out_dir : str or path-like
        Folder (created when missing).

    Returns
    -------
    dict of str to pathlib.Path
        ``html``, ``markdown``, ``svg``, ``png``.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    svg, png = _diagram(result, out / "compare_wires")
    doc = compare_document(result, svg.read_text(encoding="utf-8"), png.name)
    footer = [f"Written by fescan {__version__}. ", CAUTION]
    h, m = out / "compare.html", out / "compare.md"
    h.write_text(render_html(doc, footer=footer), encoding="utf-8")
    m.write_text(render_markdown(doc, footer=footer), encoding="utf-8")
    return {"html": h, "markdown": m, "svg": svg, "png": png}
