"""The verdict on a comparison: implausible hops, in plain words, and notes.

Kept apart from the renderers (:mod:`fescan.report.compare_report`) so that
:meth:`CompareResult.to_dict` and every output say the same thing.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from fescan.analysis.scan import CAUTION

if TYPE_CHECKING:
    from fescan.comparison.compare import CompareResult

__all__ = ["hop_problems", "verdict", "cofactor_label", "ligand_words", "counterpart", "inherited_notes",
           "potential_changes"]


def cofactor_label(res: Any, uid: str | None) -> str:
    """The label of cofactor ``uid`` of a scan result, or "(missing)"."""
    if uid is None:
        return "(missing)"
    return res.cofactor(uid).label


def ligand_words(m: Any, brief: bool = False) -> list[str]:
    """What changed in a matched cofactor: every item, or counts only (``brief``)."""
    out = []
    if m.class_changed:
        out.append(f"class {m.reference_class} in the reference, {m.model_class} in the model")
    if m.incomplete and brief:
        out.append("incomplete cluster in the model")
    for what, items in (("lost", m.ligands_lost), ("added", m.ligands_added)):
        if items:
            out.append(f"{len(items)} ligand{'s' * (len(items) != 1)} {what}" if brief
                       else f"ligands {what}: " + ", ".join(items))
    if m.new_warnings:
        n = len(m.new_warnings)
        out += [f"{n} new warning{'s' * (n != 1)}"] if brief else [f"new warning: {w}" for w in m.new_warnings]
    return out


def hop_problems(result: CompareResult) -> list[dict[str, Any]]:
    """Implausible model hops along the reference wire, each with reasons in plain words.

    Returns
    -------
    list of dict
        ``step, hop`` (label), ``reasons`` (list of ``{"code", "text"}``) and ``sentence``;
        codes: ``missing_cofactor``, ``gap``, ``slow``, ``rate_drop``, ``misligated``.
    """
    ref, mod, o = result.reference, result.model, result.model.options
    by_model = {m.model: m for m in result.matches}
    out = []
    for h in result.hops:
        r, m = h.reference, h.model
        if h.status == "unchanged":  # what the reference already has is no fault of the model
            continue
        reasons: list[tuple[str, str]] = []
        if m is None:
            for uid, got in ((h.reference_donor, h.model_donor), (h.reference_acceptor, h.model_acceptor)):
                if got is None:
                    reasons.append(("missing_cofactor", f"{cofactor_label(ref, uid)} has no counterpart in the model"))
        else:
            also = " (also in the reference)"
            if m.gap:
                reasons.append(("gap", f"edge-to-edge {m.edge:.2f} Å is over the {o.gap_limit:g} Å limit"
                                + (also if r.gap else f" (reference {r.edge:.2f} Å)")))
            if m.slow:
                reasons.append(("slow", f"rate {m.k_forward:.2g}/s is below the {o.rate_threshold:g}/s threshold"
                                + (also if r.slow else "")))
            drop = m.log10_k_forward - r.log10_k_forward
            if drop < -result.settings["rate_drop_limit"]:
                reasons.append(("rate_drop", f"rate {-drop:.1f} decades below the reference "
                                f"(log10 k {r.log10_k_forward:.2f} → {m.log10_k_forward:.2f})"))
            for uid in (h.model_donor, h.model_acceptor):
                cm = by_model.get(uid)
                if cm is not None and cm.misligated:
                    reasons.append(("misligated", f"{cofactor_label(mod, uid)} is mis-ligated ("
                                    + ", ".join(ligand_words(cm, brief=True)) + ")"))
        if reasons:
            hop = f"{cofactor_label(ref, h.reference_donor)} > {cofactor_label(ref, h.reference_acceptor)}"
            out.append({"step": h.step, "hop": hop, "reasons": [{"code": c, "text": t} for c, t in reasons],
                        "sentence": f"hop {h.step} ({hop}): " + "; ".join(t for _, t in reasons)})
    return out


def verdict(result: CompareResult) -> dict[str, Any]:
    """The verdict: one summary sentence, the implausible hops, and notes.

    Returns
    -------
    dict
        ``summary`` (str), ``problems`` (see :func:`hop_problems`), ``notes`` (list of str).
    """
    ref, mod = result.reference, result.model
    probs = hop_problems(result)
    n = len(result.hops)
    if not n:
        summary = "The reference has no electron wire (" + ("; ".join(ref.wire.notes) or "no path") + \
                  "); only the cofactors were compared."
    elif not probs:
        worst = max((abs(h.delta("log10_k_forward") or 0.0) for h in result.hops), default=0.0)
        summary = f"The model keeps the reference wire: {n} hop{'s' * (n != 1)}, none implausible"
        summary += f"; the largest rate change is {worst:.2f} decades." if worst > 0.005 else "; no rate changes."
    else:
        summary = f"{len(probs)} of {n} hop{'s' * (n != 1)} of the model {'are' if len(probs) > 1 else 'is'} " \
                  "implausible (see the problems listed)."
    notes = inherited_notes(result)
    if result.missing:
        notes.append("missing in the model: " + ", ".join(cofactor_label(ref, u) for u in result.missing))
    if result.extra:
        notes.append("only in the model: " + ", ".join(cofactor_label(mod, u) for u in result.extra))
    for m in result.matches:
        words = ligand_words(m, brief=True)
        if words:
            notes.append(f"{cofactor_label(ref, m.reference)}: " + ", ".join(words) + " (details under Cofactors)")
    for m in result.moved():
        notes.append(f"{cofactor_label(ref, m.reference)} moved {m.displacement:.2f} Å")
    notes += potential_changes(result)
    if mod.wire.path and list(mod.wire.path) != [counterpart(result, u) for u in ref.wire.path]:
        notes.append("the model's fastest path differs: " + " > ".join(cofactor_label(mod, u) for u in mod.wire.path))
        notes += _model_path_problems(result)
    fit = result.superposition
    if fit.note:
        notes.insert(0, fit.note)
    if fit.n_pairs == 0 or (fit.rmsd is not None and fit.rmsd > 3.0):
        notes.insert(0, f"the superposition is poor ({fit.method}, {fit.n_pairs} pairs"
                        + (f", RMSD {fit.rmsd:.1f} Å" if fit.rmsd is not None else "")
                        + "): the two structures may not be the same protein; matches by position are unreliable")
    elif fit.n_pairs < 3:
        notes.insert(0, f"the superposition rests on {fit.n_pairs} {fit.method[:-1] if fit.n_pairs == 1 else fit.method}"
                        " only (one pair fixes a shift, two leave a rotation free): its RMSD says nothing about "
                        "the fit, and matches by position are unreliable")
    notes.append(CAUTION)
    return {"summary": summary, "problems": probs, "notes": notes}


def potential_changes(result: CompareResult) -> list[str]:
    """Matched cofactors whose potential on the wire differs between the two scans, and why.

    A cofactor's default potential may come from its context (a sub-class known from
    its neighbours): when the model lacks a neighbour, its partner may fall back to a
    class default, and the hop's ΔG changes though no atom moved.

    Returns
    -------
    list of str
        One note per cofactor whose potential changed (more than 1 mV).
    """
    out = []
    for m in result.matches:
        a, b = result.reference.potentials.get(m.reference), result.model.potentials.get(m.model)
        if a is None or b is None or abs(a.e_v - b.e_v) <= 1e-3:
            continue
        out.append(f"{cofactor_label(result.reference, m.reference)}: potential used {a.e_v:+.3f} V in the "
                   f"reference ({a.basis or a.origin}), {b.e_v:+.3f} V in the model ({b.basis or b.origin}); "
                   "the ΔG of its hops changes with it")
    return out


def _model_path_problems(result: CompareResult) -> list[str]:
    """Gaps and slow hops on the model's own path (when it differs from the reference's)."""
    mod = result.model
    out = []
    for h in mod.wire.hops:
        if h.gap or h.slow:
            what = "over the gap limit" if h.gap else "slower than the rate threshold"
            out.append(f"the model's path has a hop {what}: {cofactor_label(mod, h.donor)} > "
                       f"{cofactor_label(mod, h.acceptor)}, {h.edge:.2f} Å, hop time {h.hop_time:.3g} s "
                       "(model estimate)")
    return out


def inherited_notes(result: CompareResult) -> list[str]:
    """Unchanged hops that are over the gap limit or slow in the reference too (not the model's fault)."""
    o = result.model.options
    out = []
    for h in result.hops:
        if h.status != "unchanged" or h.model is None:
            continue
        what = [x for x, on in ((f"over the {o.gap_limit:g} Å gap limit", h.model.gap),
                                (f"slower than {o.rate_threshold:g}/s", h.model.slow)) if on]
        if what:
            hop = f"{cofactor_label(result.reference, h.reference_donor)} > " \
                  f"{cofactor_label(result.reference, h.reference_acceptor)}"
            out.append(f"hop {h.step} ({hop}) is unchanged and already {' and '.join(what)} in the reference")
    return out


def counterpart(result: CompareResult, ref_uid: str) -> str | None:
    return next((m.model for m in result.matches if m.reference == ref_uid), None)


