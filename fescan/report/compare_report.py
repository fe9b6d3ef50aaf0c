"""Words, text, HTML and Markdown of a model-versus-reference comparison.

:func:`hop_problems` and :func:`verdict` put the findings of
:func:`fescan.compare.compare` into plain words; :func:`render_compare_text` is the
terminal view; :func:`write_compare_report` writes ``compare.html`` (self-contained,
the diagram inline), ``compare.md`` and ``compare_wires.svg``/``.png``: both wires
side by side in one view plane (the model superposed on the reference). Every
string that comes from an input file is escaped. Rates and times are model
estimates (Moser–Dutton), and every output says so.
"""

from __future__ import annotations

import html
import math
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from fescan.analysis.scan import CAUTION
from fescan.comparison.verdict import cofactor_label as _label
from fescan.comparison.verdict import hop_problems, verdict
from fescan.comparison.verdict import ligand_words as _ligand_words
from fescan.report.text import format_time, table

if TYPE_CHECKING:  # pragma: no cover
    from fescan.comparison.compare import CompareResult

__all__ = ["hop_problems", "verdict", "render_compare_text", "write_compare_report", "md_escape"]

_MD_SPECIAL = re.compile(r"([\\`*_\[\]|#~])")  # inline Markdown; < > & are HTML-escaped first


def md_escape(text: object) -> str:
    """Escape a string for Markdown (HTML-escaped first, then Markdown punctuation).

    Examples
    --------
    >>> md_escape("A|B <x>")
    'A\\\\|B &lt;x&gt;'
    """
    return _MD_SPECIAL.sub(r"\\\1", html.escape(str(text), quote=False))


# ----------------------------------------------------------------------------- rows shared by all renderers


def _fmt(x: float | None, spec: str) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
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


def _hop_rows(result: CompareResult) -> list[list[str]]:
    rows = []
    for h in result.hops:
        r, m = h.reference, h.model

        def pair(a, b, spec):
            return f"{_fmt(a, spec)} → {_fmt(b, spec)}"

        rows.append([str(h.step), f"{_label(result.reference, h.reference_donor)} > "
                     f"{_label(result.reference, h.reference_acceptor)}", h.status,
                     pair(r.edge, m.edge if m else None, ".2f"), _fmt(h.delta("edge"), "+.2f"),
                     pair(r.dg, m.dg if m else None, "+.3f"),
                     pair(r.log10_k_forward, m.log10_k_forward if m else None, ".2f"),
                     _fmt(h.delta("log10_k_forward"), "+.2f"),
                     f"{format_time(r.hop_time)} → {format_time(m.hop_time) if m else '-'}"]
                    + ([f"{_fmt(h.rho_reference, '.2f')} → {_fmt(h.rho_model, '.2f')}"] if _has_rho(result) else []))
    return rows


def _has_rho(result: CompareResult) -> bool:
    return any(h.rho_reference is not None for h in result.hops)


def _hop_headers(result: CompareResult) -> list[str]:
    return (["hop", "reference hop", "status", "R Å (ref → model)", "ΔR Å", "ΔG eV", "log10 k", "Δlog10 k",
             "hop time"] + (["ρ measured"] if _has_rho(result) else []))


_MATCH_HEADERS = ["reference", "model", "matched by", "moved Å", "changes"]


def _details(result: CompareResult) -> list[tuple[str, list[str]]]:
    """Per changed cofactor: its label and every change in words."""
    return [(_label(result.reference, m.reference), _ligand_words(m)) for m in result.matches if _ligand_words(m)]


def _superposition_text(result: CompareResult) -> str:
    s = result.superposition
    rms = f", RMSD {s.rmsd:.2f} Å" if s.rmsd is not None else ""
    chains = ", ".join(f"{m}→{r}" for m, r in sorted(s.chain_map.items()))
    return f"superposition: {s.method} ({s.n_pairs} pairs{rms})" + (f"; chains model→reference {chains}" if chains else "")


def _interval_table(result: CompareResult) -> tuple[str, list[str], list[list[str]], str] | None:
    """Title, headers, rows and summary line of the model's wire with 95% intervals."""
    u = result.uncertainty
    if u is None or not u.hops:
        return None
    from fescan.report.text import format_time

    rows = []
    for h in u.hops:
        lo, hi = h.hop_time_interval("95%")
        rows.append([_label(result.model, h.donor), _label(result.model, h.acceptor),
                     f"{h.edge:.2f} ± {h.sigma_edge:.2f}", f"{h.log10_k:.2f}",
                     f"{h.log10_k_95[0]:.2f} to {h.log10_k_95[1]:.2f}", f"{format_time(lo)} to {format_time(hi)}"])
    basis = getattr(u, "basis", None)
    title = f"Model wire with intervals ({basis()})" if callable(basis) else "Model wire with 95% intervals"
    summary = ""
    if u.summed_hop_time_95:
        lo, hi = u.summed_hop_time_95
        summary = f"summed hop time {format_time(u.summed_hop_time)} (95%: {format_time(lo)} to {format_time(hi)})"
    if u.notes:
        summary = "; ".join(x for x in [summary, *u.notes] if x)
    return title, ["donor", "acceptor", "R Å (± σ)", "log10 k", "log10 k 95%", "hop time 95%"], rows, summary


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


def _html_table(headers: list[str], rows: list[list[str]]) -> str:
    head = "".join(f"<th>{html.escape(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _html_intervals(result: CompareResult) -> str:
    t = _interval_table(result)
    if t is None:
        return ""
    title, headers, rows, summary = t
    return (f"<h2>{html.escape(title)}</h2>" + _html_table(headers, rows)
            + (f"<p>{html.escape(summary)}</p>" if summary else ""))


def _md_table(headers: list[str], rows: list[list[str]]) -> str:
    out = ["| " + " | ".join(md_escape(h) for h in headers) + " |", "|" + "---|" * len(headers)]
    out += ["| " + " | ".join(md_escape(c) for c in r) + " |" for r in rows]
    return "\n".join(out)


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


_CSS = ("body{font-family:sans-serif;max-width:72em;margin:1em auto;color:#222}"
        "table{border-collapse:collapse;margin:.5em 0}td,th{border:1px solid #bbb;padding:2px 6px;font-size:90%}"
        "th{background:#eee}.caution{color:#633;font-size:90%}")


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
    v = verdict(result)
    e = html.escape
    svg_text = svg.read_text(encoding="utf-8")
    svg_text = svg_text[svg_text.find("<svg"):]
    parts = [
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
        f"<title>fescan comparison: {e(result.model.info.entry_id)} vs {e(result.reference.info.entry_id)}</title>",
        f"<style>{_CSS}</style></head><body>",
        f"<h1>Model {e(result.model.info.entry_id)} against reference {e(result.reference.info.entry_id)}</h1>",
        f"<p>model: {e(result.model.path)}<br>reference: {e(result.reference.path)}<br>"
        f"{e(_superposition_text(result))}</p>",
        f"<h2>Verdict</h2><p>{e(v['summary'])}</p><ul>"
        + "".join(f"<li><b>{e(p['sentence'])}</b></li>" for p in v["problems"])
        + "".join(f"<li>{e(n)}</li>" for n in v["notes"]) + "</ul>",
        "<h2>Both wires</h2>", f"<div>{svg_text}</div>",
        "<h2>Cofactors</h2>", _html_table(_MATCH_HEADERS, _match_rows(result)),
        "".join(f"<p>{e(name)}</p><ul>" + "".join(f"<li>{e(w)}</li>" for w in words) + "</ul>"
                for name, words in _details(result)),
        "<h2>Reference wire, hop by hop</h2>", _html_table(_hop_headers(result), _hop_rows(result)),
        _html_intervals(result),
        f"<p class=\"caution\">{e(CAUTION)}</p></body></html>",
    ]
    h = out / "compare.html"
    h.write_text("\n".join(parts) + "\n", encoding="utf-8")
    md = [f"# Model {md_escape(result.model.info.entry_id)} against reference "
          f"{md_escape(result.reference.info.entry_id)}", "",
          f"- model: {md_escape(result.model.path)}", f"- reference: {md_escape(result.reference.path)}",
          f"- {md_escape(_superposition_text(result))}", "", "## Verdict", "", md_escape(v["summary"]), ""]
    md += [f"- **{md_escape(p['sentence'])}**" for p in v["problems"]] + [f"- {md_escape(n)}" for n in v["notes"]]
    md += ["", "## Both wires", "", f"![both wires]({svg.name})", "", "## Cofactors", "",
           _md_table(_MATCH_HEADERS, _match_rows(result)), ""]
    for name, words in _details(result):
        md += [md_escape(name), ""] + [f"- {md_escape(w)}" for w in words] + [""]
    md += ["## Reference wire, hop by hop", "", _md_table(_hop_headers(result), _hop_rows(result)), ""]
    t = _interval_table(result)
    if t is not None:
        md += ["## " + md_escape(t[0]), "", _md_table(t[1], t[2]), ""] + ([md_escape(t[3]), ""] if t[3] else [])
    md += [f"*{md_escape(CAUTION)}*", ""]
    m = out / "compare.md"
    m.write_text("\n".join(md), encoding="utf-8")
    return {"html": h, "markdown": m, "svg": svg, "png": png}
