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
from typing import TYPE_CHECKING, Any

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
    Inline,
    Notice,
    Paragraph,
    Run,
    Table,
)
from fescan.report.diagrams import relay_diagram
from fescan.report.html import render_html
from fescan.report.labels import (
    duration,
    number,
    plural,
    quantity,
    signed,
    structure_name,
    tidy_numbers,
    volts,
)
from fescan.report.markdown import render_markdown
from fescan.report.references import (
    BOND_WINDOWS,
    COORDINATE_ERROR,
    CORE_GEOMETRY,
    KINETIC_MODEL,
    RATE_LAW,
    RATE_LAW_1992,
    STRESS_LAYOUT,
    References,
)

if TYPE_CHECKING:  # pragma: no cover
    from fescan.analysis.scan import ScanResult

__all__ = ["REPORT_FILES", "TIMES_EXPLAINED", "POTENTIAL_STATUS", "SUMMED_TIME_NAME", "INTERVAL_SENTENCE",
           "structure_document", "write_report", "endpoints_text", "site_capacities"]

log = logging.getLogger(__name__)

#: File names written by :func:`write_report`, in the order returned.
REPORT_FILES = ("report.html", "report.md", "wire.svg", "wire.png")

#: The words of the potentials table's Status column (``Potential.status``, the ``citation_kind``
#: of the scan's JSON): the citation kinds of the packaged table, a user value, no value.
POTENTIAL_STATUS = {
    "primary": "read in the original paper",
    "review": "read in a review or handbook",
    "from memory": "a remembered value, to be checked against the cited source",
    "user": "given in the potentials file",
    "undetermined": "no value exists; hops to and from it assume ΔG = 0",
}

#: Name of Σ 1/k along the path, as the terminal output and the survey tables call it.
SUMMED_TIME_NAME = "Sum of forward hop times (ignores back hops; not a transit time)"

#: What the 95 % interval of the summed time covers, in one plain sentence (the method: Parameters).
INTERVAL_SENTENCE = ("The interval covers the coordinate error, the reorganisation energy and the rate law's own "
                     "scatter; how it is computed is under Parameters.")

#: What the two transfer times mean (model estimates, see fescan.transfer.paths).
TIMES_EXPLAINED = (
    "Two transfer times are given, both model estimates. The sum of forward hop times adds 1/k of each forward "
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
    items = [
        ("File", Run(res.path, code=True)),
        ("Entry", i.entry_id or "–"),
        ("Title", i.title or "not given in the file"),
        ("Method", i.method or "not given in the file"),
        ("Resolution", f"{i.resolution:.2f} Å" if i.resolution else "not given in the file"),
        ("Model", f"{model} of {i.n_models}"),
        ("Format", f"{i.file_format}{', gzip' if i.compressed else ''}; {i.n_atoms} atoms read, "
                   f"alternative locations: {i.altloc_policy}"),
        ("Crystal cell", cell + (f"; space group {i.spacegroup}" if i.spacegroup else "")),
    ]
    items += [("File note", n) for n in i.notes]
    items += [("Note", n) for n in getattr(res, "notes", None) or []]
    return Facts(items)


def _ligand_summary(c) -> str:
    return ", ".join(f"{n}× {k}" for k, n in ligand_counts(c.ligands)) or "–"


def _checks(c) -> str:
    warn = sum(1 for f in c.flags if f.severity == "warning")
    note = sum(1 for f in c.flags if f.severity == "note")
    parts = ([f"{warn} warning{'s' * (warn != 1)}"] if warn else []) + ([f"{note} note{'s' * (note != 1)}"] if note
                                                                        else [])
    return ", ".join(parts) or "ok"


def _potentials_caption(shown: set[str]) -> str:
    """Caption of the potentials table: the meaning of each Status word the table shows."""
    words = "; ".join(f"{w}: {meaning}" for w, meaning in POTENTIAL_STATUS.items() if w in shown)
    status = f" Status {words}." if words else ""
    return f"Midpoint potentials (V vs SHE).{status} Sources are listed under References."


def _role(c) -> str:
    role = getattr(c, "role", "") or "–"
    sub = getattr(c, "subclass", "")
    return f"{role} ({sub})" if sub else role


def _cofactor_table(res: ScanResult, refs: References) -> Table:
    rows = []
    for c in res.cofactors:
        if c.is_ion_site:  # listed apart (section "Not analysed and off the wire")
            continue
        pot = res.potentials.get(c.uid)
        e = "–" if pot is None else volts(pot.e_v, 3) + (f" {refs.cite(pot.source)}" if pot.origin == "default"
                                                         else " (user file)")
        rows.append([Run(c.key, strong=True), c.cls, _role(c), c.ccd_code or "–", c.detected_by, str(len(c.atoms)),
                     _ligand_summary(c), c.motif or "–", e, _checks(c)])
    return Table(["Cofactor", "Class", "Role (sub-class)", "Code", "Found by", "Atoms", "Ligands (count)", "Motif",
                  "E used", "Checks"], rows, frozenset({5}),
                 "Ligands are counted once per ligating atom (a Cys bridging two metals counts once).")


def _details(res: ScanResult) -> list:
    rows, findings = [], []
    for c in res.cofactors:
        if c.ligands:
            rows.append([Run(c.key, strong=True), c.cls, "; ".join(
                f"{lig.metal}–{lig.atom.resname} {lig.atom.residue} {lig.atom.name} {lig.distance:.2f}"
                for lig in c.ligands)])
        for f in c.flags:
            findings.append([Run(f"{c.label}, {f.severity}:", strong=True), f" {f.message} ",
                             Run(f"({f.code})", code=True)])
        reason = getattr(c, "role_reason", "")
        if reason:
            findings.append([Run(f"{c.label}, role:", strong=True), f" {_role(c)}: {reason}"])
        for st in getattr(c, "states", ()) or ():
            findings.append([Run(f"{c.label}, state:", strong=True), f" {st}"])
    out: list = []
    if rows:
        out.append(Table(["Cofactor", "Class", "Ligand bonds: metal–residue atom, distance (Å)"], rows,
                         caption="Every metal–ligand distance within the donor's cut-off (S 3.0 Å, N/O 2.6 Å)"))
    if findings:
        out.append(BulletList(findings))
    return out or [Paragraph("No ligand bonds and no findings to list.")]


def _steady_state(res: ScanResult) -> dict | None:
    """The steady-state model of the wire when the scan computed one (else None)."""
    ss = getattr(res.wire, "steady_state", None)
    if ss is None:
        try:
            ss = res.wire.to_dict().get("steady_state")
        except Exception:  # noqa: BLE001 - a report never fails on an optional section
            ss = None
    if ss is not None and not isinstance(ss, dict):
        ss = ss.to_dict() if hasattr(ss, "to_dict") else None
    return ss or None


def _time_interval(res: ScanResult) -> tuple[float, float, str] | None:
    """95 % interval of the summed hop time and what it covers, when it can be computed."""
    if not res.wire.hops:
        return None
    try:
        from fescan.transfer.uncertainty import wire_uncertainty

        u = wire_uncertainty(res)
    except Exception as exc:  # noqa: BLE001 - the interval is optional; the report says it is missing
        log.info("no interval for %s: %s", res.path, exc)
        return None
    iv = getattr(u, "summed_hop_time_95", None)
    if iv and all(x is not None and math.isfinite(x) for x in iv):
        basis = u.basis() if callable(getattr(u, "basis", None)) else "coordinate and potential spread only"
        return float(iv[0]), float(iv[1]), str(basis)
    return None


def _with_interval(value: float | None, iv: tuple[float, float, str] | None) -> str:
    """The summed time with its 95 % interval and one short sentence on what the interval covers."""
    text = duration(value)
    if iv is None or value is None or not math.isfinite(value):
        return text
    return f"{text} (95 % interval {duration(iv[0])} to {duration(iv[1])}). {INTERVAL_SENTENCE}"


def _not_analysed_words(res: ScanResult) -> list[str]:
    from fescan.cofactors.registry import ccd_table

    tab = ccd_table()
    return [f"{n} × {tab[code].cls if code in tab else code} ({code})" for code, n in res.not_analysed.items()]


def _off_wire(res: ScanResult) -> list[dict]:
    return list(getattr(res, "off_wire", []) or [])


def _n_redox(res: ScanResult) -> int:
    return sum(1 for c in res.cofactors if not c.is_ion_site)


def _ions_apart(res: ScanResult) -> str:
    n = len(res.cofactors) - _n_redox(res)
    return f" ({n} Zn/Ca/Mg site{'s' * (n != 1)} listed apart, off the wire)" if n else ""


def _summary_blocks(res: ScanResult, refs: References, interval: tuple[float, float] | None) -> list:
    w, o = res.wire, res.options
    names = {c.uid: c.label for c in res.cofactors}
    items: list[tuple[str, Inline]] = []
    i = res.info
    entry = f" (entry {i.entry_id})" if i.entry_id and i.entry_id.lower() != _name(res).lower() else ""
    items.append(("Structure", f"{_name(res)}{entry}: {i.method or 'method not given'}, "
                               f"{f'{i.resolution:.2f} Å' if i.resolution else 'resolution not given'}; "
                               f"{plural(_n_redox(res), 'redox cofactor')} found{_ions_apart(res)}"))
    if w.path:
        items.append(("Wire", f"{names[w.entry]} → {names[w.exit]}: {plural(len(w.path), 'cofactor')}, "
                              f"{plural(len(w.hops), 'hop')}"))
        items.append(("Direction", w.how_chosen or "–"))
        items.append((SUMMED_TIME_NAME, [_with_interval(w.summed_hop_time, interval), " ", refs.cite(RATE_LAW)]))
        items.append(("Mean first-passage time", duration(w.mean_first_passage_time)))
        ss = _steady_state(res)
        if ss and ss.get("flux_per_s") is not None:
            items.append(("Steady-state flux", f"{quantity(ss['flux_per_s'], 'electrons s⁻¹')} (model estimate) "
                                               f"{refs.cite(KINETIC_MODEL)}"))
        b = w.bottleneck
        if b is not None:
            items.append(("Bottleneck", f"{names[b.donor]} → {names[b.acceptor]}: {b.edge:.2f} Å edge to edge, "
                                        f"ΔG {signed(b.dg, 3)} eV, hop time {duration(b.hop_time)}"))
    else:
        items.append(("Wire", "none: " + (tidy_numbers("; ".join(w.notes)) or w.how_chosen or "fewer than two cofactors")))
    problems: list[str] = []
    warned = [c for c in res.cofactors if any(f.severity == "warning" for f in c.flags)]
    if warned:
        n = sum(1 for c in warned for f in c.flags if f.severity == "warning")
        problems.append(f"{n} ligation or geometry warning{'s' * (n != 1)} on {len(warned)} cofactor"
                        f"{'s' * (len(warned) != 1)}: " + "; ".join(
                            f"{c.label}: {next(f.message for f in c.flags if f.severity == 'warning')}"
                            for c in warned[:4]) + (" …" if len(warned) > 4 else ""))
    for h in w.gaps:
        problems.append(f"{names[h.donor]} → {names[h.acceptor]}: {h.edge:.2f} Å"
                        + (f", over the {o.gap_limit:g} Å gap limit" if h.gap else "")
                        + (f", slower than {o.rate_threshold:g} s⁻¹" if h.slow else ""))
    if res.not_analysed:
        problems.append("present but not analysed (the wire ignores them): " + ", ".join(_not_analysed_words(res)))
    off = _off_wire(res)
    if off and not any("kept off the wire" in n for n in w.notes):
        problems.append(f"{len(off)} kept off the wire: " + ", ".join(f"{x.get('label', x.get('id'))} "
                                                                    f"({x.get('role', '')})" for x in off))
    if w.groups:
        problems.append(f"{len(w.groups)} other group{'s' * (len(w.groups) != 1)} of cofactors not joined to the wire "
                        "(drawn in their own panels)")
    if w.isolated:
        problems.append(f"{len(w.isolated)} isolated cofactor{'s' * (len(w.isolated) != 1)} "
                        f"(no partner within {o.gap_limit:g} Å)")
    problems += [tidy_numbers(n) for n in w.notes] if w.path else []
    problems += [tidy_numbers(str(n)) for n in getattr(res, "notes", None) or []]
    out: list = [Heading(2, "Summary", "summary"), Facts(items)]
    out.append(Heading(3, "Problems and notes"))
    out.append(BulletList(problems) if problems else Paragraph("None: every cluster passes the checks and every hop "
                                                               "lies within the gap limit."))
    out.append(Notice("Estimates, not measurements.", [CAUTION, " ", refs.cite(RATE_LAW)]))
    return out


def _wire_blocks(res: ScanResult, svg: str, refs: References, interval) -> list:
    w, o = res.wire, res.options
    names = {c.uid: c.label for c in res.cofactors}
    caption = ["One panel per group of cofactors (the wire's group first; other copies or chains after it). "
               "The 3-D arrangement is laid flat by stress majorisation from the principal-component view, which "
               "keeps the wire's hops at their true centre-to-centre length; a scale bar is drawn only when every "
               "hop is within 10 %. Heavy line: the path from entry (ring) to exit (ring); grey halo: the bottleneck, "
               "the hop with the largest flux control in the steady state (else the slowest forward hop); grey: "
               "other pairs within the limit; dashed with a break mark: a hop over the gap limit; faint: cofactors "
               "off the wire; black disc with “!”: a cofactor with a check warning (listed under Ligands and checks). "
               "Hop labels give the edge-to-edge distance and the estimated hop time; values shared by a whole "
               "class are in the legend. ", refs.cite(STRESS_LAYOUT)]
    out: list = [Heading(2, "Electron relay", "relay"),
                 Figure(svg, "wire.png", f"Relay diagram of {_name(res)}", caption)]
    if not w.path:
        out.append(Paragraph("No relay path: " + ("; ".join(w.notes) or w.how_chosen or "no two cofactors.")))
    else:
        b = w.bottleneck
        gaps = "; ".join(f"{names[h.donor]} → {names[h.acceptor]}, {h.edge:.2f} Å"
                         + (" (over the gap limit)" if h.gap else "") + (" (slower than the threshold)" if h.slow else "")
                         for h in w.gaps) or f"none (every hop ≤ {o.gap_limit:g} Å and faster than {o.rate_threshold:g} s⁻¹)"
        # the bottleneck is the hop of largest flux control (steady state), else the slowest forward hop;
        # when the two differ the slowest forward hop is named too (as in the terminal view)
        sh = w.slowest_hop
        slowest = ([("Slowest forward hop", f"{names[sh.donor]} → {names[sh.acceptor]}, {sh.edge:.2f} Å, "
                                            f"{duration(sh.hop_time)}")]
                   if sh is not None and sh is not b else [])
        out.append(Facts([
            ("Entry", names[w.entry]), ("Exit", names[w.exit]), ("Direction chosen", w.how_chosen),
            ("Path", " → ".join(names[u] for u in w.path)),
            ("Bottleneck", f"{names[b.donor]} → {names[b.acceptor]}, {b.edge:.2f} Å, {duration(b.hop_time)}; "
                           f"basis: {w.bottleneck_basis}"),
            *slowest,
            ("Gaps and slow hops", gaps),
        ]))
        rows = []
        for k, h in enumerate(w.hops, 1):
            many = len(w.hops) > 1
            notes = [x for x, on in (("bottleneck", h is b and many),
                                     ("slowest forward hop", h is w.slowest_hop and h is not b and many),
                                     (f"gap > {o.gap_limit:g} Å", h.gap),
                                     ("slow", h.slow), (f"symmetry mate {h.symmetry}", bool(h.symmetry))) if on]
            rows.append([str(k), names[h.donor], names[h.acceptor], f"{h.edge:.2f}", f"{h.centre:.2f}",
                         signed(h.dg, 3), f"{h.reorg:.2f}", f"{getattr(h, 'packing_density', o.packing_density):.2f}",
                         number(h.log10_k_forward), number(h.log10_k_back),
                         duration(h.hop_time), ", ".join(notes)])
        out.append(Table(["Hop", "Donor", "Acceptor", "Edge (Å)", "Centre (Å)", "ΔG (eV)", "λ (eV)", "ρ", "log10 k",
                          "log10 k back", "Hop time", "Notes"], rows, frozenset({0, 3, 4, 5, 6, 7, 8, 9, 10}),
                         "Hops of the fastest path (rates in s⁻¹, estimates)"))
        out.append(Heading(3, "Transfer time"))
        out.append(Facts([(SUMMED_TIME_NAME, _with_interval(w.summed_hop_time, interval)),
                          ("Mean first-passage time", duration(w.mean_first_passage_time))]))
        out.append(Paragraph(TIMES_EXPLAINED + _compare_times(w.summed_hop_time, w.mean_first_passage_time)))
        out += _steady_state_blocks(res, refs)
    extra = []
    if w.branches:
        extra.append(("Side branches", "; ".join(f"{names[x['cofactor']]} (next to {names[x['attached_to']]}, "
                                                 f"{x['edge_distance']:.2f} Å)" for x in w.branches)))
    if w.isolated:
        extra.append((f"Isolated (no partner within {o.gap_limit:g} Å)", ", ".join(names[u] for u in w.isolated)))
    for grp in w.groups:
        extra.append(("Other connected group", " + ".join(names[u] for u in grp)))
    for cp in getattr(w, "copies", None) or []:
        text = " → ".join(names.get(u, u) for u in cp.get("path", [])) or "no path"
        if cp.get("mean_first_passage_time_s") is not None:
            text += f" (mean first passage {duration(cp['mean_first_passage_time_s'])})"
        extra.append(("Other copy", text))
    for n in w.notes if w.path else []:
        extra.append(("Note", tidy_numbers(n)))
    if extra:
        out.append(Facts(extra))
    return out


def _num(v: Any, digits: int = 3) -> str:
    return number(v, digits) if isinstance(v, (int, float)) else ("–" if v is None else str(v))


def site_capacities(ss: dict, sites: list | None = None) -> dict[str, int]:
    """Electrons each site of the steady-state record can hold (1, or 2 for a two-electron site).

    Read from the record itself: a site's couples (``sensitivity_couples``: one per
    electron) or its distribution over 0, 1 (, 2) electrons (``distribution``), each
    given by uid or as a list in the order of ``sites``. Sites with neither are left out.

    Parameters
    ----------
    ss : dict
        The steady-state record of the wire (``Wire.steady_state``).
    sites : list of str, optional
        Uids of the sites, in the order of list-valued fields.

    Returns
    -------
    dict of str to int
    """
    out: dict[str, int] = {}
    order = list(sites) if isinstance(sites, (list, tuple)) else []
    for key, extra in (("distribution", -1), ("sensitivity_couples", 0)):
        val = ss.get(key)
        if isinstance(val, list):
            val = dict(zip(order, val))
        if not isinstance(val, dict):
            continue
        for uid, per in val.items():
            if isinstance(per, (list, tuple)) and len(per) + extra >= 1:
                out.setdefault(uid, len(per) + extra)
    return out


def _steady_state_blocks(res: ScanResult, refs: References) -> list:
    """The steady state between the reservoirs, as the kinetic model gives it (absent: nothing)."""
    ss = _steady_state(res)
    if not ss:
        return []
    names = {c.uid: c.label for c in res.cofactors}
    out: list = [Heading(3, "Steady state (model estimate)")]
    facts = []
    if ss.get("flux_per_s") is not None:
        facts.append(("Electron flux", f"{quantity(ss['flux_per_s'], 'electrons s⁻¹')} {refs.cite(KINETIC_MODEL)}"))
    for key, label in (("source", "Source reservoir"), ("sink", "Sink reservoir")):
        r = ss.get(key)
        if isinstance(r, dict):
            facts.append((label, f"{r.get('pool', '')} at {volts(r['e_v'], 3) if r.get('e_v') is not None else '–'}"
                          + (f" {refs.cite(r['source'])}" if r.get("source") else "")))
    if ss.get("transit_time_s") is not None:
        facts.append(("Transit time", f"{duration(ss['transit_time_s'])} (electrons on the path / flux)"))
    for key in ("method", "note"):
        if ss.get(key):
            facts.append((key.capitalize(), str(ss[key])))
    if facts:
        out.append(Facts(facts))
    occ, sens = ss.get("occupancy") or {}, ss.get("sensitivity") or {}
    sites = ss.get("sites") or list(res.wire.path)
    if isinstance(occ, list):
        occ = dict(zip(sites, occ))
    if isinstance(sens, list):
        sens = dict(zip(sites, sens))
    uids = [u for u in res.wire.path if u in occ or u in sens]
    if uids:
        caps = site_capacities(ss, sites)
        out.append(Table(["Cofactor", "Electrons held (mean)", "Capacity (electrons)", "d log10 flux / dE (per V)"],
                         [[names.get(u, u), _num(occ.get(u), 2), str(caps[u]) if u in caps else "–",
                           _num(sens.get(u), 2)] for u in uids],
                         frozenset({1, 2, 3}),
                         "Mean number of electrons each site holds at steady state (0 up to its capacity: 1, or 2 "
                         "for a two-electron site) and the sensitivity of the flux to its potential"))
    ctl = ss.get("control") or []
    rows = []
    if isinstance(ctl, dict):
        rows = [[str(k), _num(v)] for k, v in ctl.items()]
    else:
        steps = ss.get("steps") or []
        for k, c in enumerate(ctl):
            if isinstance(c, dict):
                rows.append([f"{names.get(c.get('donor'), c.get('donor'))} → "
                             f"{names.get(c.get('acceptor'), c.get('acceptor'))}", _num(c.get("coefficient"))])
            elif k < len(steps):
                a, b = steps[k][:2]
                rows.append([f"{names.get(a, a)} → {names.get(b, b)}", _num(c)])
    if rows:
        out.append(Table(["Step", "Flux control coefficient"], rows, frozenset({1}),
                         "Share of the control of the flux held by each step (the coefficients sum to 1)"))
    return out


def _compare_times(summed: float | None, mfpt: float | None) -> str:
    if not summed or not mfpt or not math.isfinite(summed) or not math.isfinite(mfpt):
        return ""
    ratio = mfpt / summed
    if abs(ratio - 1.0) < 0.05:
        return " Here the two agree within 5 %."
    if ratio > 1:
        return f" Here the mean first-passage time is {quantity(ratio)} times the sum."
    return f" Here the mean first-passage time is {quantity(ratio)} of the sum (parallel routes help)."


def _outside_blocks(res: ScanResult) -> list:
    """Groups present in the file that the wire does not use, said as the terminal says them."""
    items = []
    if res.not_analysed:
        items.append(("Not analysed (redox-active groups fescan does not model)", ", ".join(_not_analysed_words(res))))
    for x in _off_wire(res):
        items.append((f"Off the wire: {x.get('label', x.get('id'))}", f"{x.get('role', '')}: {x.get('reason', '')}"))
    if not items:
        return []
    return [Heading(2, "Not analysed and off the wire", "outside"), Facts(items),
            Paragraph("These groups are in the file but take no part in the wire: a chlorophyll or pheophytin "
                      "chain, for instance, may carry electrons that the wire above does not show.")]


def _pairs_table(res: ScanResult) -> list:
    o = res.options
    rows = []
    recs = res.pair_records()
    for r in recs:
        if r["edge_distance"] > o.gap_limit:
            continue
        a, b = res.cofactor(r["first"]), res.cofactor(r["second"])
        rows.append([a.label, b.label, f"{r['edge_distance']:.2f}", f"{r['centre_distance']:.2f}",
                     signed(r["dg_ev"], 3), number(r["log10_k_forward"]), number(r["log10_k_back"]),
                     r["symmetry"] or ""])
    more = len(recs) - len(rows)
    out: list = [Heading(2, "Cofactor pairs", "pairs")]
    if rows:
        out.append(Table(["First", "Second", "Edge (Å)", "Centre (Å)", "ΔG (eV)", "log10 k", "log10 k back",
                          "Symmetry"], rows, frozenset({2, 3, 4, 5, 6}),
                         f"Pairs within the {o.gap_limit:g} Å gap limit, edge to edge (ΔG and k from first to second)"))
    out.append(Paragraph(f"{more} further pair{'s' * (more != 1)} between {o.gap_limit:g} and {o.cutoff:g} Å are in "
                         "the JSON and table outputs." if more else f"No other pair within {o.cutoff:g} Å."))
    return out


def _packing_text(o) -> str:
    if getattr(o, "packing", "default") == "measured":
        return (f"measured between each pair of cofactors (scale {getattr(o, 'packing_scale', 1.0):g}); "
                f"{o.packing_density:g} where it could not be measured")
    return f"{o.packing_density:g} for every hop"


def endpoints_text(res: ScanResult) -> str:
    """How the wire's entry and exit were chosen: given by the user, or by fescan from the chemistry.

    Uses the scan's own account (``Wire.how_chosen``) when there is one.

    Parameters
    ----------
    res : ScanResult

    Returns
    -------
    str
    """
    o, w = res.options, res.wire
    names = {c.uid: c.label for c in res.cofactors}
    how = (getattr(w, "how_chosen", "") or "").strip()
    ends = f"{names.get(w.entry, w.entry)} → {names.get(w.exit, w.exit)}" if w.entry and w.exit else ""
    if o.entry or o.exit:
        given = f"given: {o.entry or 'not given'} → {o.exit or 'not given'}"
        return "; ".join(x for x in (given, how) if x)
    if how.startswith("chemistry: "):
        why = f"chosen by fescan from the cofactors' chemistry ({how[len('chemistry: '):]})"
    elif how.startswith("default: "):
        why = f"chosen by fescan, no chemistry rule applying ({how[len('default: '):]})"
    elif how:
        why = f"chosen by fescan ({how})"
    else:
        why = "chosen by fescan"
    return f"{ends}, {why}" if ends else why


#: Formulas of the interval's method text in ASCII, and as the reports print them.
_FORMULAS = (("sigma(x) = sqrt(B / 8 pi^2)", "σ(x) = √(B / 8π²)"),)


def _method_text(text: str) -> str:
    """The interval's method text with its formulas in print form (Parameters section)."""
    for ascii_form, printed in _FORMULAS:
        text = text.replace(ascii_form, printed)
    return text


def _name(res: ScanResult) -> str:
    """The structure's name in titles: its file name (:func:`fescan.report.labels.structure_name`)."""
    return structure_name(res.path) if getattr(res, "path", None) else res.info.entry_id


def _parameter_blocks(res: ScanResult, refs: References, interval: tuple[float, float, str] | None = None) -> list:
    o = res.options
    law = refs.cite(RATE_LAW, RATE_LAW_1992)
    facts = Facts([
        ("Rate law", f"log10 k = 13 − (1.2 − 0.8ρ)(R − 3.6) − 3.1(ΔG + λ)²/λ, R edge to edge (Å); uphill hops by "
                     f"detailed balance at T {law}"),
        ("Reorganisation energy λ", f"{o.reorg:g} eV (per hop unless a user file gives values)"),
        ("Packing density ρ", _packing_text(o)),
        ("Gap limit", f"{o.gap_limit:g} Å edge to edge {refs.cite(RATE_LAW)}"),
        ("Pair cutoff", f"{o.cutoff:g} Å edge to edge"),
        ("Temperature", f"{o.temperature:g} K"),
        ("Turnover threshold", f"{o.rate_threshold:g} s⁻¹"),
        ("Bond windows", f"reference windows {refs.cite(BOND_WINDOWS, CORE_GEOMETRY)} widened by 1.645 × √2 × "
                         f"σ₁ for the coordinate error of the file {refs.cite(COORDINATE_ERROR)}"),
        ("Symmetry mates", "included" if o.symmetry else "not included (asymmetric unit only)"),
        ("Model and alternative locations", f"model {o.model}, altloc policy {o.altloc}"),
        ("Entry and exit", endpoints_text(res)),
        *([("Interval of the sum of forward hop times", _method_text(interval[2]))] if interval else []),
        ("Potentials file", Run(o.potentials_file, code=True) if o.potentials_file else "none (packaged defaults)"),
    ])
    rows = []
    for c in res.cofactors:
        p = res.potentials.get(c.uid)
        if p is None:
            continue
        src = refs.cite(p.source) if p.origin == "default" else p.origin
        step = getattr(p, "step", "")
        couple = (p.couple or "–") + (f"; works at {step}" if step and step != "1e" else "")
        rows.append([c.label, volts(p.e_v, 3), f"{volts(p.low_v, 3)} to {volts(p.high_v, 3)}", couple,
                     p.status or "–", src])
    pots = Table(["Cofactor", "E used", "Typical range", "Couple", "Status", "Source"], rows,
                 frozenset({1}), _potentials_caption({row[4] for row in rows}))
    return [Heading(2, "Parameters", "parameters"), facts, pots]


def structure_document(res: ScanResult, svg: str) -> Document:
    """The report of one result as a :class:`~fescan.report.content.Document`.

    A one-screen summary comes first (wire, transfer time with its interval,
    bottleneck, problems), the details after it, and the sources of every default
    once, numbered, at the end.

    Parameters
    ----------
    res : ScanResult
    svg : str
        Text of the relay diagram SVG (inlined into the HTML page).

    Returns
    -------
    Document
    """
    refs = References()
    interval = _time_interval(res)
    doc = Document(f"Electron relay report: {_name(res)}")
    doc.add(*_summary_blocks(res, refs, interval))
    doc.add(*_wire_blocks(res, svg, refs, interval))
    doc.add(*_outside_blocks(res))
    doc.add(Heading(2, "Cofactors", "cofactors"))
    doc.add(_cofactor_table(res, refs) if _n_redox(res) else Paragraph("No redox cofactors found."))
    if res.cofactors:
        doc.add(Heading(2, "Ligands and checks", "checks"), *_details(res))
    if res.pairs:
        doc.add(*_pairs_table(res))
    doc.add(*_parameter_blocks(res, refs, interval))
    doc.add(Heading(2, "Structure file", "file"), _structure_facts(res))
    doc.add(*refs.blocks())
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
    fescan.core.errors.ConfigError
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
