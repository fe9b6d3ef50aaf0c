"""Finishing the inventory of one model: alternative states, unique keys, groups not analysed."""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping
from dataclasses import replace

import gemmi

from fescan.cofactors.registry import ccd_table
from fescan.core.records import Cofactor, Flag

__all__ = ["with_states", "with_altloc_states", "unique_keys", "count_not_analysed"]


def with_states(cof: Cofactor, states: dict, keys: Mapping[int, str]) -> Cofactor:
    """Name the alternative states merged into this cofactor (see :mod:`fescan.cofactors.states`).

    Parameters
    ----------
    cof : Cofactor
    states : dict of int to list of AlternativeState
        From :func:`fescan.cofactors.states.find_alternative_states`.
    keys : mapping of int to str
        Residue index of each kept residue → its name as in
        :attr:`fescan.core.records.Cofactor.residues` (``"A/501 CLF"``).

    Returns
    -------
    Cofactor
        With ``states`` and a note when one of its residues has alternative states.
    """
    if not states:
        return cof
    labels = set(cof.residues)
    names: list[str] = []
    for kept, group in states.items():
        if keys.get(kept) in labels:
            names += [st.label for st in group]
    if not names:
        return cof
    flag = Flag("alternative_states", "note",
                f"modelled in {len(names)} overlapping states ({'; '.join(names)}): analysed as one cofactor, "
                f"in the state of highest occupancy")
    return replace(cof, states=tuple(names), flags=cof.flags + (flag,))


def with_altloc_states(cofactors: list[Cofactor], altloc_states: dict, policy: str = "occupancy") -> list[Cofactor]:
    """Name the altloc labels of each cofactor residue modelled in two or more states inside one residue.

    The reader keeps one label per residue (:func:`fescan.structure.altlocs.apply_altloc_policy`)
    and records what it saw; this puts it on the cofactors, e.g. ``("altloc A occ 0.60 (kept)",
    "altloc B occ 0.40")``, with a note. Alternative positions never reach the site search
    together (the dropped label is gone), so they cannot form a false multinuclear site.

    Parameters
    ----------
    cofactors : list of Cofactor
    altloc_states : dict
        :attr:`fescan.structure.reading.LoadedStructure.altloc_states`: ``(chain, seqnum,
        icode, residue name)`` → ``(label, mean occupancy, residue name, atoms)`` per label.
    policy : str, optional
        The altloc policy the reader applied: with ``"all"`` every label stays in the model and
        each part of the cofactor is marked ``(this part)`` instead of ``(kept)``.

    Returns
    -------
    list of Cofactor
        Same order; cofactors with no such residue are returned unchanged.
    """
    if not altloc_states:
        return list(cofactors)
    by_label = {f"{c}/{n}{i} {name}": v for (c, n, i, name), v in altloc_states.items()}
    mark = "this part" if policy == "all" else "kept"
    out = []
    for cof in cofactors:
        names: list[str] = []
        for res_label in cof.residues:
            labels = by_label.get(res_label)
            if not labels:
                continue
            held = {a.altloc for a in cof.atoms if a.altloc and f"{a.residue} {a.resname}" == res_label}
            several = len(cof.residues) > 1
            renamed = len({v[2] for v in labels}) > 1
            for label, occ, resname, _ in labels:
                who = f"{res_label} " if several else ""
                alias = f" {resname}" if renamed else ""
                names.append(f"{who}altloc {label}{alias} occ {occ:.2f}{f' ({mark})' if label in held else ''}")
        if not names:
            out.append(cof)
            continue
        flag = Flag("alternative_states", "note",
                    f"modelled in {len(names)} alternative locations inside one residue ({'; '.join(names)}); "
                    + ("each analysed as its own part" if policy == "all"
                       else f"the one marked kept is analysed (altloc policy {policy!r})"))
        out.append(replace(cof, states=cof.states + tuple(names), flags=cof.flags + (flag,)))
    return out


def unique_keys(cofactors: list[Cofactor]) -> list[Cofactor]:
    """Give a part suffix to cofactors that share a naming residue (altloc letter, else 1, 2...).

    Parameters
    ----------
    cofactors : list of Cofactor

    Returns
    -------
    list of Cofactor
    """
    groups: dict[str, list[int]] = defaultdict(list)
    for k, c in enumerate(cofactors):
        groups[c.key].append(k)
    out = list(cofactors)
    for members in groups.values():
        if len(members) < 2:
            continue
        alts = [{a.altloc for a in cofactors[k].atoms} for k in members]
        by_alt = all(len(a) == 1 and next(iter(a)) for a in alts) and len({next(iter(a)) for a in alts}) == len(alts)
        for n, k in enumerate(members, start=1):
            out[k] = replace(cofactors[k], part=next(iter(alts[n - 1])) if by_alt else str(n))
    return out


def count_not_analysed(model: gemmi.Model, cofactors: list[Cofactor] | None = None) -> dict[str, int]:
    """Residues of known redox-active groups that fescan does not model, by CCD code.

    Parameters
    ----------
    model : gemmi.Model
    cofactors : list of Cofactor, optional
        The cofactors found; pterin residues (MGD, MTE...) that are part of none
        (no Mo/W bound to their dithiolene) are then counted too.

    Returns
    -------
    dict of str to int
        For example ``{"CLA": 70, "PHO": 4}`` (codes of category ``not analysed``
        in the packaged CCD table), in code order.
    """
    table = ccd_table()
    wanted = {k for k, v in table.items() if v.category == "not analysed"}
    pterins = {k for k, v in table.items() if v.category == "pterin"} if cofactors is not None else set()
    used = {r for c in cofactors or [] for r in c.residues}
    counts: dict[str, int] = {}
    for ch in model:
        for res in ch:
            name = res.name
            if name in wanted or (name in pterins and f"{ch.name}/{res.seqid.num}{res.seqid.icode.strip()} {name}"
                                  not in used):
                counts[name] = counts.get(name, 0) + 1
    return dict(sorted(counts.items()))
