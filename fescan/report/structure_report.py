"""The report of one structure: relay diagram, HTML page and Markdown page.

:func:`write_report` writes four files into a folder (names fixed, content
deterministic)::

    report.html   self-contained page (inline CSS, inline SVG, no scripts)
    report.md     the same content as Markdown, linking wire.png
    wire.svg      relay diagram
    wire.png      relay diagram, 300 dpi
"""

from __future__ import annotations

import logging
import math
from pathlib import Path
from typing import TYPE_CHECKING

from fescan.analysis.scan import CAUTION
from fescan.cofactors.ligation import ligand_counts
from fescan.core.errors import ConfigError
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
from fescan.report.diagrams import relay_diagram
from fescan.report.html import render_html
from fescan.report.labels import number, signed, volts
from fescan.report.markdown import render_markdown
from fescan.report.text import format_time

if TYPE_CHECKING:  # pragma: no cover
    from fescan.analysis.scan import ScanResult

__all__ = ["REPORT_FILES", "TIMES_EXPLAINED", "structure_document", "write_report"]

log = logging.getLogger(__name__)

#: File names written by :func:`write_report`, in the order returned.
REPORT_FILES = ("report.html", "report.md", "wire.svg", "wire.png")

#: What the two transfer times mean (model estimates, see fescan.wire).
TIMES_EXPLAINED = (
    "Two transfer times are given, both model estimates. The sum of hop times adds 1/k of each forward "
    "hop along the fastest path: an electron that never steps back. The mean first-passage time is the "
    "average time from arriving at the entry to first reaching the exit when the electron may hop forward "
    "and back between every pair of cofactors within the cutoff, side branches and parallel routes "
    "included. Uphill steps and detours make it longer than the sum; parallel routes can make it shorter."
)


def _structure_facts(res: ScanResult) -> Facts:
    i, o = res.info, res.options
    model = res.cofactors[0].model if res.cofactors else o.model
    cell = ("–" if i.cell is None else
            "a = {:.2f}, b = {:.2f}, c = {:.2f} Å; α = {:.1f}, β = {:.1f}, γ = {:.1f}°".format(*i.cell))
    return Facts([
        ("File", Run(res.path, code=True)),
        ("Entry", i.entry_id or "–"),
        ("Title", i.title or "not given in the file"),
        ("Method", i.method or "not given in the file"),
        ("Resolution", f"{i.resolution:.2f} Å" if i.resolution else "not given in the file"),
        ("Model", f"{model} of {i.n_models}"),
        ("Format", f"{i.file_format}{', gzip' if i.compressed else ''}; {i.n_atoms} atoms read, "
                   f"alternative locations: {i.altloc_policy}"),
        ("Crystal cell", cell + (f"; space group {i.spacegroup}" if i.spacegroup else "")),
    ])


def _ligand_summary(c) -> str:
    return ", ".join(f"{n}× {k}" for k, n in ligand_counts(c.ligands)) or "–"


def _checks(c) -> str:
    warn = sum(1 for f in c.flags if f.severity == "warning")
    note = sum(1 for f in c.flags if f.severity == "note")
    parts = ([f"{warn} warning{'s' * (warn != 1)}"] if warn else []) + ([f"{note} note{'s' * (note != 1)}"] if note
                                                                        else [])
    return ", ".join(parts) or "ok"


def _cofactor_table(res: ScanResult) -> Table:
    rows = []
    for c in res.cofactors:
        pot = res.potentials[c.uid]
        rows.append([Run(c.key, strong=True), c.cls, c.ccd_code or "–", c.detected_by, str(len(c.atoms)),
                     _ligand_summary(c), c.motif or "–", volts(pot.e_v, 3),
                     "user file" if pot.origin != "default" else "default", _checks(c)])
    return Table(["Cofactor", "Class", "Code", "Found by", "Atoms", "Ligands", "Motif", "E used", "E from",
                  "Checks"], rows, frozenset({4, 7}))


def _details(res: ScanResult) -> list:
    out: list = []
    for c in res.cofactors:
        if not c.ligands and not c.flags:
            continue
        out.append(Heading(3, c.label))
        out.append(Paragraph("Residues: " + ", ".join(c.residues)))
        if c.ligands:
            out.append(Table(["Metal", "Residue", "Atom", "Kind", "Distance (Å)"],
                             [[lig.metal, f"{lig.atom.resname} {lig.atom.residue}", lig.atom.name, lig.kind,
                               f"{lig.distance:.2f}"] for lig in c.ligands], frozenset({4})))
        if c.flags:
            out.append(BulletList([[Run(f.severity + ":", strong=True), f" {f.message} ", Run(f"({f.code})", code=True)]
                                   for f in c.flags]))
    return out or [Paragraph("No ligand bonds and no findings to list.")]


def _wire_blocks(res: ScanResult, svg: str) -> list:
    w, o = res.wire, res.options
    names = {c.uid: c.label for c in res.cofactors}
    caption = ("Cofactors drawn where they sit, seen along the direction in which the cofactor centres spread "
               "least (principal components). Heavy line: fastest path from entry (ring) to exit (ring); "
               "dashed with a break mark: a hop longer than the gap limit; grey: other pairs within the limit. "
               "Hop labels give the edge-to-edge distance and the estimated hop time.")
    out: list = [Heading(2, "Electron relay", "relay"),
                 Figure(svg, "wire.png", f"Relay diagram of {res.info.entry_id}", caption)]
    if not w.path:
        out.append(Paragraph("No relay path: " + ("; ".join(w.notes) or w.how_chosen or "no two cofactors.")))
    else:
        b = w.bottleneck
        gaps = "; ".join(f"{names[h.donor]} → {names[h.acceptor]}, {h.edge:.2f} Å"
                         + (" (over the gap limit)" if h.gap else "") + (" (slower than the threshold)" if h.slow else "")
                         for h in w.gaps) or f"none (every hop ≤ {o.gap_limit:g} Å and faster than {o.rate_threshold:g} s⁻¹)"
        out.append(Facts([
            ("Entry", names[w.entry]), ("Exit", names[w.exit]), ("Chosen", w.how_chosen),
            ("Path", " → ".join(names[u] for u in w.path)),
            ("Slowest hop", f"{names[b.donor]} → {names[b.acceptor]}, {b.edge:.2f} Å, {format_time(b.hop_time)}"),
            ("Gaps and slow hops", gaps),
        ]))
        rows = []
        for k, h in enumerate(w.hops, 1):
            notes = [x for x, on in (("slowest", h is b and len(w.hops) > 1), (f"gap > {o.gap_limit:g} Å", h.gap),
                                     ("slow", h.slow), (f"symmetry mate {h.symmetry}", bool(h.symmetry))) if on]
            rows.append([str(k), names[h.donor], names[h.acceptor], f"{h.edge:.2f}", f"{h.centre:.2f}",
                         signed(h.dg, 3), f"{h.reorg:.2f}", f"{getattr(h, 'packing_density', o.packing_density):.2f}",
                         number(h.log10_k_forward), number(h.log10_k_back),
                         format_time(h.hop_time), ", ".join(notes)])
        out.append(Table(["Hop", "Donor", "Acceptor", "Edge (Å)", "Centre (Å)", "ΔG (eV)", "λ (eV)", "ρ", "log10 k",
                          "log10 k back", "Hop time", "Notes"], rows, frozenset({0, 3, 4, 5, 6, 7, 8, 9, 10}),
                         "Hops of the fastest path (rates in s⁻¹, estimates)"))
        out.append(Heading(3, "Transfer time"))
        out.append(Facts([("Sum of hop times", format_time(w.summed_hop_time)),
                          ("Mean first-passage time", format_time(w.mean_first_passage_time))]))
        out.append(Paragraph(TIMES_EXPLAINED + _compare_times(w.summed_hop_time, w.mean_first_passage_time)))
    extra = []
    if w.branches:
        extra.append(("Side branches", "; ".join(f"{names[x['cofactor']]} (next to {names[x['attached_to']]}, "
                                                 f"{x['edge_distance']:.2f} Å)" for x in w.branches)))
    if w.isolated:
        extra.append((f"Isolated (no partner within {o.gap_limit:g} Å)", ", ".join(names[u] for u in w.isolated)))
    for n in w.notes if w.path else []:
        extra.append(("Note", n))
    if extra:
        out.append(Facts(extra))
    return out


def _compare_times(summed: float | None, mfpt: float | None) -> str:
    if not summed or not mfpt or not math.isfinite(summed) or not math.isfinite(mfpt):
        return ""
    ratio = mfpt / summed
    if abs(ratio - 1.0) < 0.05:
        return " Here the two agree within 5 %."
    if ratio > 1:
        times = f"{ratio:.0f}" if ratio >= 100 else f"{ratio:.2g}"
        return f" Here the mean first-passage time is {times} times the sum."
    return f" Here the mean first-passage time is {ratio:.2g} of the sum (parallel routes help)."


def _pairs_table(res: ScanResult) -> Table:
    rows = []
    for r in res.pair_records():
        a, b = res.cofactor(r["first"]), res.cofactor(r["second"])
        rows.append([a.label, b.label, f"{r['edge_distance']:.2f}", f"{r['centre_distance']:.2f}",
                     signed(r["dg_ev"], 3), number(r["log10_k_forward"]), number(r["log10_k_back"]),
                     "gap" if r["gap"] else "", r["symmetry"] or ""])
    return Table(["First", "Second", "Edge (Å)", "Centre (Å)", "ΔG (eV)", "log10 k", "log10 k back", "", "Symmetry"],
                 rows, frozenset({2, 3, 4, 5, 6}),
                 f"Every pair within {res.options.cutoff:g} Å edge to edge (ΔG and k from first to second)")


def _packing_text(o) -> str:
    if getattr(o, "packing", "default") == "measured":
        return (f"measured between each pair of cofactors (scale {getattr(o, 'packing_scale', 1.0):g}); "
                f"{o.packing_density:g} where it could not be measured")
    return f"{o.packing_density:g} for every hop"


def _parameter_blocks(res: ScanResult) -> list:
    o = res.options
    facts = Facts([
        ("Reorganisation energy λ", f"{o.reorg:g} eV (per hop unless a user file gives values)"),
        ("Packing density ρ", _packing_text(o)),
        ("Gap limit", f"{o.gap_limit:g} Å edge to edge"),
        ("Pair cutoff", f"{o.cutoff:g} Å edge to edge"),
        ("Temperature", f"{o.temperature:g} K"),
        ("Turnover threshold", f"{o.rate_threshold:g} s⁻¹"),
        ("Symmetry mates", "included" if o.symmetry else "not included (asymmetric unit only)"),
        ("Model and alternative locations", f"model {o.model}, altloc policy {o.altloc}"),
        ("Entry and exit", f"{o.entry or 'default'} → {o.exit or 'default'}"),
        ("Potentials file", Run(o.potentials_file, code=True) if o.potentials_file else "none (packaged defaults)"),
    ])
    rows = []
    for c in res.cofactors:
        p = res.potentials[c.uid]
        rows.append([c.label, volts(p.e_v, 3), f"{volts(p.low_v, 3)} to {volts(p.high_v, 3)}", p.couple or "–",
                     p.origin, p.status or "–", p.source])
    pots = Table(["Cofactor", "E used", "Typical range", "Couple", "Origin", "Status", "Source"], rows,
                 frozenset({1}), "Midpoint potentials (V vs SHE). Status FOUND: read in a source; "
                 "MEMORY: given from memory, to be checked.")
    return [Heading(2, "Parameters", "parameters"), facts, pots]


def structure_document(res: ScanResult, svg: str) -> Document:
    """The report of one result as a :class:`~fescan.report.content.Document`.

    Parameters
    ----------
    res : ScanResult
    svg : str
        Text of the relay diagram SVG (inlined into the HTML page).

    Returns
    -------
    Document
    """
    doc = Document(f"Electron relay report: {res.info.entry_id}")
    doc.add(_structure_facts(res), Notice("Estimates, not measurements.", CAUTION))
    doc.add(*_wire_blocks(res, svg))
    doc.add(Heading(2, "Cofactors", "cofactors"))
    doc.add(_cofactor_table(res) if res.cofactors else Paragraph("No redox cofactors found."))
    if res.cofactors:
        doc.add(Heading(2, "Ligands and checks", "checks"), *_details(res))
    if res.pairs:
        doc.add(Heading(2, "Cofactor pairs", "pairs"), _pairs_table(res))
    doc.add(*_parameter_blocks(res))
    return doc


def write_report(result: ScanResult, out_dir: str | Path) -> list[Path]:
    """Write the report of one structure (HTML, Markdown, SVG and PNG diagram) into a folder.

    Parameters
    ----------
    result : ScanResult
        From :func:`fescan.scan`.
    out_dir : str or path-like
        Folder to write into (created when missing).

    Returns
    -------
    list of pathlib.Path
        ``report.html``, ``report.md``, ``wire.svg``, ``wire.png`` in that order.

    Raises
    ------
    fescan.errors.ConfigError
        The folder cannot be created or written.
    """
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
        svg_path, png_path = relay_diagram(result, out / "wire")
        doc = structure_document(result, svg_path.read_text(encoding="utf-8"))
        footer = [f"Written by fescan {__version__}. ", CAUTION]
        subtitle = result.info.title or ""
        html_path, md_path = out / "report.html", out / "report.md"
        html_path.write_text(render_html(doc, subtitle=subtitle, footer=footer), encoding="utf-8")
        md_path.write_text(render_markdown(doc, subtitle=subtitle, footer=footer), encoding="utf-8")
    except OSError as exc:
        raise ConfigError(f"{out}: cannot write the report: {exc.strerror or exc}") from None
    log.info("report of %s written to %s", result.path, out)
    return [html_path, md_path, svg_path, png_path]
