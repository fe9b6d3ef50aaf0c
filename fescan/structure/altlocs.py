"""Model choice, alternative locations and empty residues of a freshly read structure.

Altloc policies (see :func:`fescan.structure.reading.read_structure`): ``"occupancy"`` (default)
keeps, per residue, the alternative location with the highest summed occupancy
(ties: the first label alphabetically), atoms without an altloc always kept;
``"first"`` keeps the first label; ``"all"`` keeps every atom.
"""

from __future__ import annotations

import gemmi

from fescan.core.errors import EmptyStructureError, StructureFileError

__all__ = ["model_numbers", "choose_model", "remove_empty_residues", "apply_altloc_policy"]

_WITH_ALTLOC = gemmi.Selection(":!")  # atoms with an altloc (gemmi: "!" negates the list)
_TIE = 1e-6




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


def apply_altloc_policy(m: gemmi.Model, policy: str) -> None:
    """Keep one alternative location per residue, in place (see the module docstring).

    The atoms that carry an altloc label are copied out in C++ (the copy keeps
    every chain and residue, so its indices match the model's); only residues
    holding such atoms are then visited in Python.
    """
    if policy == "all" or m.count_atom_sites(_WITH_ALTLOC) == 0:
        return
    labelled = _WITH_ALTLOC.copy_model_selection(m)
    if len(labelled) != len(m):  # not expected: let gemmi keep the first altloc
        m.remove_alternative_conformations()
        return
    for ch, ch_labelled in zip(m, labelled):
        if ch_labelled.count_atom_sites() == 0:
            continue
        if len(ch_labelled) != len(ch):
            m.remove_alternative_conformations()
            return
        _resolve_chain(ch, ch_labelled, policy)


def _resolve_chain(ch: gemmi.Chain, labelled: gemmi.Chain, policy: str) -> None:
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
        if len(group) > 1:
            if policy == "occupancy":
                keep = min(group, key=lambda i: _variant_rank(labelled[i]))
            dropped.extend(i for i in group if i != keep)
        _resolve_residue(ch[keep], labelled[keep], policy)
    for i in sorted(dropped, reverse=True):
        del ch[i]


def _same_seqid(a: gemmi.Residue, b: gemmi.Residue) -> bool:
    """Whether two residues have the same sequence number and insertion code."""
    return a.seqid.num == b.seqid.num and a.seqid.icode == b.seqid.icode


def _variant_rank(labelled: gemmi.Residue) -> tuple[float, str]:
    """Sort key of a residue variant: highest altloc occupancy first, then its label."""
    total = sum(atom.occ for atom in labelled)
    return (-round(total, 6), labelled[0].altloc)


def _resolve_residue(res: gemmi.Residue, labelled: gemmi.Residue, policy: str) -> None:
    """Keep one altloc of ``res``; ``labelled`` holds its altloc atoms, in file order."""
    sums: dict[str, float] = {}
    for atom in labelled:
        sums[atom.altloc] = sums.get(atom.altloc, 0.0) + atom.occ
    if len(sums) < 2:
        return
    keep = labelled[0].altloc  # the first label met in the file
    if policy == "occupancy":
        top = max(sums.values())
        keep = min(label for label, total in sums.items() if total >= top - _TIE)
    for i in range(len(res) - 1, -1, -1):
        label = res[i].altloc
        if label != "\0" and label != keep:
            del res[i]
