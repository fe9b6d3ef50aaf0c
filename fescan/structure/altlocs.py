"""Model choice, alternative locations and empty residues of a freshly read structure.

Altloc policies (see :func:`fescan.structure.reading.read_structure`): ``"occupancy"`` (default)
keeps, per residue, the alternative location with the highest summed occupancy
(ties: the first label alphabetically), atoms without an altloc always kept;
``"first"`` keeps the first label; ``"all"`` keeps every atom.

Whatever the policy, :func:`apply_altloc_policy` returns what it saw: per residue
with two or more altloc labels, each label's mean occupancy (the atoms of the
labels it drops are gone from the model afterwards, so this is the only trace of
a cofactor modelled in two states inside one residue).
"""

from __future__ import annotations

import gemmi

from fescan.core.errors import EmptyStructureError, StructureFileError

__all__ = ["model_numbers", "choose_model", "remove_empty_residues", "apply_altloc_policy", "AltlocStates"]

_WITH_ALTLOC = gemmi.Selection(":!")  # atoms with an altloc (gemmi: "!" negates the list)
_TIE = 1e-6
_WATER = frozenset({"HOH", "WAT", "DOD", "H2O"})

#: Residue ``(chain, seqnum, icode, name)`` → its altloc labels before the policy, as
#: ``(label, mean occupancy, residue name, number of atoms)`` in label order.
AltlocStates = dict[tuple[str, int, str, str], tuple[tuple[str, float, str, int], ...]]



def model_numbers(st: gemmi.Structure) -> list[int]:
    """Model numbers as in the file, or 1-based indices when those are unusable."""
    nums = [m.num for m in st]
    if all(n > 0 for n in nums) and len(set(nums)) == len(nums):
        return nums
    return list(range(1, len(nums) + 1))


def choose_model(name: str, numbers: list[int], counts: list[int], model: int) -> int:
    """Index of the requested model; raise when it is absent or empty."""
    if model in numbers:
        index = numbers.index(model)
    elif model == 1 and len(numbers) == 1:
        index = 0
    else:
        raise StructureFileError(
            f"{name}: no model {model}; the file has {len(numbers)} model(s):"
            f" {_number_ranges(numbers)}"
        )
    if counts[index] == 0:
        raise EmptyStructureError(
            f"{name}: model {numbers[index]} has no atoms (the file has {len(numbers)}"
            f" model(s): {_number_ranges(numbers)})"
        )
    return index


def _number_ranges(numbers: list[int]) -> str:
    """Compact list of model numbers, e.g. ``"1-16"`` or ``"1, 3-5"``."""
    parts: list[str] = []
    start = prev = numbers[0]
    for n in [*numbers[1:], None]:
        if n is not None and n == prev + 1:
            prev = n
            continue
        parts.append(str(start) if start == prev else f"{start}-{prev}")
        if n is not None:
            start = prev = n
    return ", ".join(parts)


def remove_empty_residues(m: gemmi.Model) -> None:
    """Drop residues (then chains) left without atoms, e.g. after hydrogen removal."""
    for ch in m:
        for i in range(len(ch) - 1, -1, -1):
            if len(ch[i]) == 0:
                del ch[i]
    for i in range(len(m) - 1, -1, -1):
        if len(m[i]) == 0:
            del m[i]


def apply_altloc_policy(m: gemmi.Model, policy: str) -> AltlocStates:
    """Keep one alternative location per residue, in place (see the module docstring).

    The atoms that carry an altloc label are copied out in C++ (the copy keeps
    every chain and residue, so its indices match the model's); only residues
    holding such atoms are then visited in Python.

    Parameters
    ----------
    m : gemmi.Model
        The model, changed in place (unless ``policy`` is ``"all"``).
    policy : {"occupancy", "first", "all"}
        Which alternative location to keep.

    Returns
    -------
    AltlocStates
        The labels of every non-water residue that had two or more, with their mean
        occupancies, as they were before the policy (empty when the file has none).
    """
    states: AltlocStates = {}
    if m.count_atom_sites(_WITH_ALTLOC) == 0:
        return states
    labelled = _WITH_ALTLOC.copy_model_selection(m)
    if len(labelled) != len(m):  # not expected: let gemmi keep the first altloc
        if policy != "all":
            m.remove_alternative_conformations()
        return states
    for ch, ch_labelled in zip(m, labelled):
        if ch_labelled.count_atom_sites() == 0:
            continue
        if len(ch_labelled) != len(ch):
            if policy != "all":
                m.remove_alternative_conformations()
            return states
        _resolve_chain(ch, ch_labelled, policy, states)
    return states


def _label_sums(labelled: gemmi.Residue) -> tuple[dict[str, float], dict[str, int]]:
    """Summed occupancy and atom count of each altloc label of one residue (its altloc atoms only)."""
    sums: dict[str, float] = {}
    counts: dict[str, int] = {}
    for atom in labelled:
        sums[atom.altloc] = sums.get(atom.altloc, 0.0) + atom.occ
        counts[atom.altloc] = counts.get(atom.altloc, 0) + 1
    return sums, counts


def _record(states: AltlocStates, chain: str, keys: list[gemmi.Residue], variants: list[gemmi.Residue],
            per_variant: list[tuple[dict[str, float], dict[str, int]]]) -> None:
    """Note the labels of one residue (or group of variants) under each residue of ``keys``."""
    sums: dict[str, float] = {}
    counts: dict[str, int] = {}
    names: dict[str, str] = {}
    for res, (s, c) in zip(variants, per_variant):
        for label, total in s.items():
            sums[label] = sums.get(label, 0.0) + total
            counts[label] = counts.get(label, 0) + c[label]
            names.setdefault(label, res.name)
    if len(sums) < 2:
        return
    value = tuple((label, sums[label] / counts[label], names[label], counts[label]) for label in sorted(sums))
    for res in keys:
        states[(chain, res.seqid.num, res.seqid.icode.strip(), res.name)] = value


def _resolve_chain(ch: gemmi.Chain, labelled: gemmi.Chain, policy: str, states: AltlocStates) -> None:
    """Resolve the altlocs of one chain; ``labelled`` holds its altloc atoms only."""
    hits = [i for i, res in enumerate(labelled) if len(res)]
    # Adjacent residues sharing a sequence id are variants of one residue
    # (microheterogeneity, e.g. SER altloc A / THR altloc B): keep one of them.
    groups: list[list[int]] = []
    for i in hits:
        if groups and groups[-1][-1] == i - 1 and _same_seqid(labelled[i], labelled[i - 1]):
            groups[-1].append(i)
        else:
            groups.append([i])
    dropped: list[int] = []
    for group in groups:
        keep = group[0]
        if len(group) > 1 and policy == "occupancy":
            keep = min(group, key=lambda i: _variant_rank(labelled[i]))
        sums = [_label_sums(labelled[i]) for i in group]
        if labelled[group[0]].name not in _WATER:
            keys = [ch[i] for i in group] if policy == "all" else [ch[keep]]
            _record(states, ch.name, keys, [labelled[i] for i in group], sums)
        if policy == "all":
            continue
        dropped.extend(i for i in group if i != keep)
        _resolve_residue(ch[keep], sums[group.index(keep)][0], policy, labelled[keep][0].altloc)
    for i in sorted(dropped, reverse=True):
        del ch[i]


def _same_seqid(a: gemmi.Residue, b: gemmi.Residue) -> bool:
    """Whether two residues have the same sequence number and insertion code."""
    return a.seqid.num == b.seqid.num and a.seqid.icode == b.seqid.icode


def _variant_rank(labelled: gemmi.Residue) -> tuple[float, str]:
    """Sort key of a residue variant: highest altloc occupancy first, then its label."""
    total = sum(atom.occ for atom in labelled)
    return (-round(total, 6), labelled[0].altloc)


def _resolve_residue(res: gemmi.Residue, sums: dict[str, float], policy: str, first: str) -> None:
    """Keep one altloc of ``res``; ``sums`` is its summed occupancy per label, ``first`` the first label met."""
    if len(sums) < 2:
        return
    keep = first  # the first label met in the file
    if policy == "occupancy":
        top = max(sums.values())
        keep = min(label for label, total in sums.items() if total >= top - _TIE)
    for i in range(len(res) - 1, -1, -1):
        label = res[i].altloc
        if label != "\0" and label != keep:
            del res[i]
