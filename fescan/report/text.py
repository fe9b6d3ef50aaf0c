"""Plain-text rendering of one scan result for the terminal."""

from __future__ import annotations

import math
import re
from collections import Counter

from fescan.analysis.scan import CAUTION, ScanResult
from fescan.cofactors.ligation import ligand_counts
from fescan.core.numbers import format_quantity
from fescan.core.records import ION_SITE_METALS
from fescan.report.labels import DIGITS  # one number of significant digits for terminal and reports
from fescan.transfer.distances import EDGE_CONVENTION

__all__ = ["render_text", "format_time", "format_flux", "signed", "fixed", "ion_site_heading", "table",
           "strip_controls"]


# C0 controls but tab and newline, DEL and C1 controls: an ESC sequence in a title could
# otherwise recolour, retitle or clear the terminal the text is printed on.
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def strip_controls(text: str) -> str:
    """Remove terminal control characters (C0 but tab and newline, DEL, C1) from ``text``.

    Examples
    --------
    >>> strip_controls("FERREDOXIN\x1b]0;owned\x07 A")
    'FERREDOXIN]0;owned A'
    """
    return _CONTROL.sub("", text)


def format_time(seconds: float | None) -> str:
    """A time (s) with three significant digits and an SI prefix; ``"-"`` when undefined.

    Uses :func:`fescan.core.numbers.format_quantity`, as every time, rate and flux of the
    text output does.

    Examples
    --------
    >>> format_time(3.2e-6)
    '3.20 µs'
    >>> format_time(9.9996e-4)
    '1.00 ms'
    >>> format_time(None)
    '-'
    """
    if seconds is None or not math.isfinite(seconds):
        return "-"
    return format_quantity(float(seconds), "s", DIGITS)


def format_flux(per_s: float | None) -> str:
    """An electron flux (electrons s⁻¹) with three significant digits; ``"-"`` when undefined.

    Examples
    --------
    >>> format_flux(31234.5)
    '3.12×10^4 electrons/s'
    >>> format_flux(0.3729)
    '0.373 electrons/s'
    """
    if per_s is None or not math.isfinite(per_s):
        return "-"
    return format_quantity(float(per_s), "electrons/s", DIGITS)


def fixed(x: float, digits: int = 2) -> str:
    """Fixed-point text without a negative zero (``-0.001`` → ``'0.00'``).

    Examples
    --------
    >>> fixed(-0.001)
    '0.00'
    >>> fixed(-1.234)
    '-1.23'
    """
    v = round(float(x), digits)
    return f"{(0.0 if v == 0 else v):.{digits}f}"


def signed(x: float, digits: int = 3) -> str:
    """Fixed-point text with an explicit sign; a value that rounds to zero has none.

    Examples
    --------
    >>> signed(-1e-9)
    '0.000'
    >>> signed(0.05)
    '+0.050'
    """
    v = round(float(x), digits)
    return fixed(v, digits) if v == 0 else f"{v:+.{digits}f}"


def ion_site_heading(ions: list) -> str:
    """Heading of the Zn/Ca/Mg site table naming only the elements present.

    Parameters
    ----------
    ions : list of Cofactor
        The ion sites (``Cofactor.is_ion_site``).

    Returns
    -------
    str
        E.g. ``"Mg sites, listed apart: no redox role, never on a wire (1)"``.
    """
    present = {a.element.upper() for c in ions for a in c.redox_atoms} & ION_SITE_METALS
    names = [e.capitalize() for e in ("ZN", "CA", "MG") if e in present] or ["Metal ion"]
    listed = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    return f"{listed} sites, listed apart: no redox role, never on a wire ({len(ions)})"


def table(headers: list[str], rows: list[list[str]]) -> str:
    """Left-aligned text table with a rule under the header."""
    widths = [len(h) for h in headers]
    for r in rows:
        widths = [max(w, len(str(c))) for w, c in zip(widths, r)]
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths))
    out = [line.rstrip(), "  ".join("-" * w for w in widths)]
    out += ["  ".join(str(c).ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows]
    return "\n".join(out)


def _ligand_summary(c) -> str:
    if not c.ligands:
        return "-"
    return ", ".join(f"{n}x {k}" if n > 1 else k for k, n in ligand_counts(c.ligands))


def render_text(res: ScanResult, *, details: bool = True) -> str:
    """Render cofactors, ligands, flags and the wire as readable text.

    Parameters
    ----------
    res : ScanResult
    details : bool, optional
        Also list every ligand bond and every flag.

    Returns
    -------
    str
    """
    i = res.info
    lines = [f"{res.path}"]
    head = [x for x in (i.entry_id, i.title) if x]
    if head:
        lines.append("  " + " - ".join(head))
    res_txt = f"{i.resolution:.2f} Å" if i.resolution else "resolution not given"
    lines.append(f"  {i.method or 'method not given'}, {res_txt}, model {res.cofactors[0].model if res.cofactors else res.options.model} of {i.n_models}")
    lines += [f"  warning: {n}" for n in i.notes]
    lines += [f"  note: {n}" for n in getattr(res, "notes", [])]
    lines.append("")
    if not res.cofactors:
        lines.append("No redox cofactors found.")
        return strip_controls("\n".join(lines))
    rows = []
    ions = [c for c in res.cofactors if c.is_ion_site]
    for c in res.cofactors:
        if c.is_ion_site:
            continue
        warn = sum(1 for f in c.flags if f.severity == "warning")
        note = sum(1 for f in c.flags if f.severity == "note")
        fl = ", ".join(x for x in (f"{warn} warning{'s' * (warn != 1)}" if warn else "",
                                   f"{note} note{'s' * (note != 1)}" if note else "") if x) or "ok"
        pot = res.potentials[c.uid]
        rows.append([c.key, c.cls, c.role, c.ccd_code or "-", c.detected_by, str(len(c.atoms)), _ligand_summary(c),
                     c.motif or "-", signed(pot.e_v) if pot.determined else "undetermined", pot.couple or "-", fl])
    lines.append(f"Cofactors ({len(rows)})" if rows else "No redox cofactors found.")
    if rows:
        lines.append(table(["cofactor", "class", "role", "code", "found by", "atoms", "ligands", "motif", "E (V)",
                            "couple used",
                            "checks"], rows))
    if ions:
        lines.append("")
        lines.append(ion_site_heading(ions))
        lines.append(table(["site", "role", "code", "ligands", "why"],
                           [[c.key, c.role, c.ccd_code or "-", _ligand_summary(c), c.role_reason] for c in ions]))
    if details:
        for c in res.cofactors:
            if not c.ligands and not c.flags:
                continue
            lines.append("")
            lines.append(f"{c.label}  ({', '.join(c.residues[:4])}{' ...' if len(c.residues) > 4 else ''})")
            lig_rows = [[lig.metal, f"{lig.atom.resname} {lig.atom.residue}", lig.atom.name,
                         f"{lig.distance:.2f} Å", lig.kind] for lig in c.ligands]
            if lig_rows:
                lines += ["    " + ln for ln in table(["metal", "ligand", "atom", "distance", "kind"], lig_rows).splitlines()]
            for f in c.flags:
                lines.append(f"    [{f.severity}] {f.message}")
    if res.not_analysed:
        from fescan.cofactors.registry import ccd_table

        tab = ccd_table()
        lines += ["", "Not analysed (redox-active groups fescan does not model): " + ", ".join(
            f"{code} {tab[code].cls} x{n}" for code, n in res.not_analysed.items())]
    lines.append("")
    lines += _wire_text(res)
    if res.all_pairs:
        lines += ["", f"Fastest path of every connected pair ({len(res.all_pairs)})"]
        names = {c.uid: c.label for c in res.cofactors}
        rows = [[names[r["entry"]], names[r["exit"]], str(len(r["path"]) - 1), f"{r['max_edge_distance']:.2f}",
                 format_time(r["summed_hop_time_s"]),
                 ", ".join(x for x, on in (("gap", r["has_gap"]), ("slow hop", r["has_slow_hop"])) if on)]
                for r in res.all_pairs]
        lines.append(table(["entry", "exit", "hops", "longest hop Å", "sum of forward hop times", "remarks"], rows))
    return strip_controls("\n".join(lines))


def _wire_text(res: ScanResult) -> list[str]:
    w = res.wire
    o = res.options
    names = {c.uid: c.label for c in res.cofactors}
    rho = "ρ measured per hop" if o.packing == "measured" else f"ρ = {o.packing_density:g}"
    out = [f"Electron wire (λ = {o.reorg:g} eV, {rho}, gap limit {o.gap_limit:g} Å, "
           f"T = {o.temperature:g} K; symmetry mates {'included' if o.symmetry else 'not included'})",
           f"  distances: {EDGE_CONVENTION[o.edge_atoms]}"]
    if not w.path:
        out.append("  " + ("; ".join(w.notes) or "no wire"))
        if w.isolated:
            out.append("  isolated (no partner within the gap limit): " + ", ".join(names[u] for u in w.isolated))
        for grp in w.groups:
            out.append("  connected group: " + " + ".join(names[u] for u in grp))
        return out
    out.append(f"  entry {names[w.entry]} -> exit {names[w.exit]} ({w.how_chosen})")
    out.append("  path: " + " > ".join(names[u] for u in w.path))
    rows = []
    for k, h in enumerate(w.hops, 1):
        mark = []
        if h is w.bottleneck:
            mark.append("bottleneck")
        if h.gap:
            mark.append(f"GAP > {o.gap_limit:g} Å")
        if h.slow:
            mark.append(f"slower than {o.rate_threshold:g}/s")
        if h.symmetry:
            mark.append(f"symmetry mate {h.symmetry}")
        if h.crystal_contact:
            mark.append("possible crystal contact")
        rows.append([str(k), names[h.donor], names[h.acceptor], f"{h.edge:.2f}", f"{h.centre:.2f}",
                     signed(h.dg), fixed(h.reorg), fixed(h.packing_density), fixed(h.log10_k_forward),
                     format_time(h.hop_time), ", ".join(mark)])
    out.append(table(["hop", "donor", "acceptor", "edge Å", "centre Å", "ΔG eV", "λ eV", "ρ", "log10 k", "hop time",
                      "remarks"],
                     rows))
    out.append(f"  bottleneck: {names[w.bottleneck.donor]} > {names[w.bottleneck.acceptor]} "
               f"({w.bottleneck.edge:.2f} Å, {format_time(w.bottleneck.hop_time)}; {w.bottleneck_basis})")
    if w.slowest_hop is not None and w.slowest_hop is not w.bottleneck:
        out.append(f"  slowest forward hop: {names[w.slowest_hop.donor]} > {names[w.slowest_hop.acceptor]} "
                   f"({format_time(w.slowest_hop.hop_time)})")
    out.append(f"  gaps (hops over {o.gap_limit:g} Å): {len(w.gaps)}" + (" - " + "; ".join(
        f"{names[h.donor]} > {names[h.acceptor]} {h.edge:.2f} Å" for h in w.gaps) if w.gaps else ""))
    if w.slow_hops:
        out.append(f"  slow hops (within {o.gap_limit:g} Å, slower than {o.rate_threshold:g}/s): " + "; ".join(
            f"{names[h.donor]} > {names[h.acceptor]}" for h in w.slow_hops))
    couples = [f"{names[u]} at {res.potentials[u].step}" for u in w.path if res.potentials[u].step != "1e"]
    if couples:
        out.append("  two-electron cofactors work at: " + "; ".join(couples))
    out.append(f"  mean first-passage time, one electron entering an oxidised chain: "
               f"{format_time(w.mean_first_passage_time)}")
    out.append(f"  sum of forward hop times (ignores back hops; not a transit time): {format_time(w.summed_hop_time)}")
    ss = w.steady_state
    if ss and ss.get("flux_per_s") is not None:
        src, snk = ss["source"], ss["sink"]
        out.append(f"  steady state between reservoirs {src['pool']} ({signed(src['e_v'])} V) and {snk['pool']} "
                   f"({signed(snk['e_v'])} V): flux {format_flux(ss['flux_per_s'])}, transit time "
                   f"{format_time(ss['transit_time_s'])} (electrons on the path / flux)")
        sens = sorted(ss["sensitivity"].items(), key=lambda kv: -abs(kv[1] or 0.0))[:3]
        out.append("  potentials that drive the flux (d log10 flux / dE, per V): " + ", ".join(
            f"{names[u]} {signed(v, 1)}" for u, v in sens if v is not None))
    for cp in w.copies:
        out.append("  " + _copy_text(cp, names, o.cutoff))
    if w.branches:
        out.append("  side branches: " + "; ".join(
            f"{names[b['cofactor']]} (at {names[b['attached_to']]}, {b['edge_distance']:.1f} Å)" for b in w.branches))
    if w.isolated:
        out.append("  isolated (no partner within the gap limit): " + ", ".join(names[u] for u in w.isolated))
    for grp in w.groups:
        out.append("  other connected group (not joined to this wire): " + " + ".join(names[u] for u in grp))
    ion_sites = {c.uid for c in res.cofactors if getattr(c, "is_ion_site", False)}  # no redox role: no potential
    pots = Counter(p.basis if p.origin == "default" else p.origin for u, p in res.potentials.items()
                   if u not in ion_sites)
    out.append("  potentials: " + "; ".join(f"{k} ({n})" for k, n in pots.items()))
    for n in w.notes:
        out.append(f"  note: {n}")
    out.append("")
    out.append("Caution: " + CAUTION)
    return out


def _copy_text(cp: dict, names: dict[str, str], cutoff: float) -> str:
    """One line for another copy of the complex (``Wire.copies``), traced on its own."""
    head = "other copy of the complex, on its own (crystal-contact and symmetry-mate hops left out)"
    if cp["path"]:
        mfpt = cp.get("mean_first_passage_time_s")
        return (f"{head}: " + " > ".join(names[u] for u in cp["path"])
                + (f" (mean first-passage time {format_time(mfpt)})" if mfpt is not None else ""))
    if cp.get("entry") is None or cp.get("exit") is None:
        why = cp.get("how_chosen") or "no entry and exit"
    else:
        why = (f"no chain of relay hops within the {cutoff:g} Å cutoff joins "
               f"{names[cp['entry']]} and {names[cp['exit']]}")
    return f"{head}: no path ({why})"
