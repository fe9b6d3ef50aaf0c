"""Ligation and geometry checks of metal sites: ligands, coordination, bond windows, flags.

Each metal atom's ligands are the atoms outside the cofactor core within a
donor-specific distance (S/Se 3.0 Å, N/O 2.6 Å, Cl 2.8 Å; C 2.2 Å only inside the
cofactor's own residue, such as CO/CN on the [NiFe] iron). Bond lengths are
compared with the reference windows of ``fescan/data/bond_ranges.csv``
(cctbx restraint library values, Moriarty & Adams 2019 lineage; see the
``source`` column), widened on both sides by the coordinate error of the file
(:func:`bond_margin`), so a warning says the bond lies outside what the reference
and the precision of the model together allow.

Every iron of a standard Fe–S class is checked against what the class needs: its
bridging sulfides (3 in a cubane or [3Fe-4S], 2 in a [2Fe-2S]) and its terminal
protein ligands (4 minus the bridges). A missing bridge is reported as a missing
sulfide, a missing terminal ligand as a missing Cys (or Cys/His for a Rieske
centre), so a message never contradicts the ligand table printed beside it.
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass

import gemmi
import numpy as np

from fescan.cofactors.atoms import WATER_NAMES, AtomArrays
from fescan.cofactors.registry import bond_range
from fescan.core.neighbours import NeighbourTree, atom_distance, pairwise_distances
from fescan.core.records import Flag, Ligand

__all__ = [
    "LIGAND_MAX",
    "CLASH_MAX",
    "find_ligands",
    "ligand_kind",
    "binding_motif",
    "check_metal_site",
    "occupancy_flags",
    "ligand_counts",
    "bond_margin",
    "BondMargin",
    "BOND_Z",
    "STANDARD_FES_CLASSES",
]

#: Longest metal-ligand distance accepted per donor element (Å).
LIGAND_MAX = {"S": 3.0, "SE": 3.0, "N": 2.6, "O": 2.6, "CL": 2.8, "BR": 2.9}
_OWN_RESIDUE_CARBON_MAX = 2.2
#: Longer limits for a larger ion: Ca-O is about 2.4 Å and up to about 2.8 Å in 7-8-coordinate sites
#: (Harding 2006 Acta Cryst D62:678, values from memory); 3.0 Å allows for the error of 3 Å data.
_ION_LIGAND_MAX = {("CA", "O"): 3.0}
#: A non-bonded heavy atom closer than this to a core atom is a clash (Å).
CLASH_MAX = 2.5
#: Classes whose every Fe is expected to be four-coordinate.
STANDARD_FES_CLASSES = frozenset(
    {"[2Fe-2S]", "Rieske [2Fe-2S]", "[3Fe-4S]", "linear [3Fe-4S]", "[4Fe-4S]", "[4Fe-3S]", "Fe(Cys)4"}
)
#: Bridging (inorganic) sulfides each Fe binds in an intact cluster of the class.
EXPECTED_BRIDGES = {
    "[2Fe-2S]": 2, "Rieske [2Fe-2S]": 2, "[3Fe-4S]": 3, "[4Fe-4S]": 3, "Fe(Cys)4": 0,
}
#: z of the one-sided test on a bond length (95 %, one-sided normal quantile).
BOND_Z = 1.645
_EXPECTED_COMPOSITION = {
    "[2Fe-2S]": "Fe2S2",
    "Rieske [2Fe-2S]": "Fe2S2",
    "[3Fe-4S]": "Fe3S4",
    "linear [3Fe-4S]": "Fe3S4",
    "[4Fe-4S]": "Fe4S4",
    "[4Fe-3S]": "Fe4S3",
}


def ligand_kind(resname: str, atom_name: str, element: str) -> str:
    """Name the kind of a ligand atom the way the checks group them.

    Examples
    --------
    >>> ligand_kind("CYS", "SG", "S")
    'Cys S'
    >>> ligand_kind("HOH", "O", "O")
    'water O'
    """
    if resname in WATER_NAMES:
        return "water O"
    if element == "S" and atom_name == "SG":
        return "Cys S"
    if resname == "HIS" or (element == "N" and atom_name in ("ND1", "NE2")):
        return "His N"
    if resname == "MET" and element == "S":
        return "Met S"
    if element == "SE" and resname in ("SEC", "CSE"):
        return "Sec Se"
    if atom_name in ("O", "OXT") and element == "O":
        return "backbone O"
    if atom_name == "N" and element == "N":
        return "backbone N"
    aa = {"ASP": "Asp", "GLU": "Glu", "SER": "Ser", "THR": "Thr", "TYR": "Tyr", "LYS": "Lys",
          "ASN": "Asn", "GLN": "Gln", "ARG": "Arg", "CYS": "Cys"}
    if resname in aa:
        return f"{aa[resname]} {element.capitalize()}"
    return f"{resname} {element.capitalize()}"


def find_ligands(
    env: AtomArrays,
    metal_rows: Iterable[int],
    core_rows: set[int],
    own_res_ids: set[int],
    tree: NeighbourTree | None = None,
) -> tuple[list[tuple[int, Ligand]], list[tuple[int, int, float]]]:
    """Find the ligands of each metal atom and the clashes with the core.

    Parameters
    ----------
    env : AtomArrays
        Atoms around the site (cofactor atoms included).
    metal_rows : iterable of int
        Rows of ``env`` holding the site's metal atoms.
    core_rows : set of int
        Rows of the site's core (metals and bridges): never ligands.
    own_res_ids : set of int
        Residue ids of the cofactor itself (their C atoms may ligate, e.g. CO/CN).
    tree : fescan.core.neighbours.NeighbourTree, optional
        Neighbour search over ``env.xyz`` (built when not given).

    Returns
    -------
    ligands : list of (metal row, Ligand)
    clashes : list of (core row, other row, distance)
    """
    if tree is None:
        tree = NeighbourTree(env.xyz)
    ligands: list[tuple[int, Ligand]] = []
    ligand_rows: set[int] = set()
    alt = env.altloc
    metals = [int(m) for m in metal_rows]
    if metals:  # one batched search for every metal of the site
        q, p, _ = tree.within(env.xyz[metals], 3.0)
        near_metal = zip((metals[k] for k in q.tolist()), p.tolist())
    else:
        near_metal = iter(())
    for m, j in near_metal:
        if j in core_rows or (alt[m] and alt[j] and alt[j] != alt[m]):  # another conformation
            continue
        d = atom_distance(env.xyz[m], env.xyz[j])
        e = env.element[j]
        limit = _ION_LIGAND_MAX.get((env.element[m], e), LIGAND_MAX.get(e))
        if limit is None and e == "C" and int(env.res_id[j]) in own_res_ids:
            limit = _OWN_RESIDUE_CARBON_MAX
        if limit is None or d > limit:
            continue
        ref = env.ref(j)
        ligands.append(
            (m, Ligand(metal=str(env.name[m]), metal_element=str(env.element[m]), atom=ref,
                       distance=d, kind=ligand_kind(ref.resname, ref.name, ref.element)))
        )
        ligand_rows.add(j)
    ligands.sort(key=lambda t: (t[1].metal, t[1].distance))
    clashes = []
    core = sorted(int(c) for c in core_rows)
    if core:
        q, p, dist = tree.within(env.xyz[core], CLASH_MAX)
        taken = np.zeros(len(env), dtype=bool)
        taken[list(core_rows | ligand_rows)] = True
        own = np.asarray(sorted(own_res_ids), dtype=np.int64)
        other = ~taken[p] & ~(env.res_id[p][:, None] == own[None, :]).any(axis=1)
        for k, j in zip(q[other].tolist(), p[other].tolist()):
            c = core[k]
            if alt[c] and alt[j] and alt[j] != alt[c]:
                continue
            clashes.append((c, j, atom_distance(env.xyz[c], env.xyz[j])))
    return ligands, clashes


def binding_motif(ligands: Iterable[Ligand]) -> str | None:
    """Spacing of the ligating protein residues in sequence, e.g. ``"C-x2-C-x2-C-x3-C"``.

    Residues of other chains are written after a chain label (``"A: C-x2-C; B: C"``).
    Adjacent residues are joined without a gap (``"CC-x64-C"``).

    Examples
    --------
    >>> from fescan.core.records import AtomRef, Ligand
    >>> ligs = [Ligand("FE1", "FE", AtomRef("A", n, "", "CYS", "SG", "S", (0, 0, 0)), 2.3, "Cys S")
    ...         for n in (8, 11, 14, 18)]
    >>> binding_motif(ligs)
    'C-x2-C-x2-C-x3-C'
    """
    per_chain: dict[str, dict[tuple[int, str], str]] = defaultdict(dict)
    for lig in ligands:
        a = lig.atom
        if a.resname in WATER_NAMES:
            continue
        info = gemmi.find_tabulated_residue(a.resname)
        if info is None or not info.is_amino_acid():
            continue
        letter = info.one_letter_code.upper() or "X"
        per_chain[a.chain][(a.seqnum, a.icode)] = letter
    if not per_chain:
        return None
    parts = []
    for chain in sorted(per_chain, key=lambda c: -len(per_chain[c])):
        res = sorted(per_chain[chain])
        s = per_chain[chain][res[0]]
        for (prev, _), key in zip(res, res[1:]):
            gap = key[0] - prev - 1
            s += per_chain[chain][key] if gap <= 0 else f"-x{gap}-{per_chain[chain][key]}"
        parts.append((chain, s))
    if len(parts) == 1:
        return parts[0][1]
    return "; ".join(f"{c}: {s}" for c, s in parts)


def occupancy_flags(occ: np.ndarray) -> list[Flag]:
    """Flags for zero or partial occupancy of a cofactor's atoms."""
    flags = []
    n_zero = int(np.sum(occ <= 0.0))
    if n_zero:
        flags.append(Flag("zero_occupancy", "warning",
                          f"{n_zero} of {len(occ)} atoms have zero occupancy (not supported by the data)"))
    mean = float(np.mean(occ)) if len(occ) else 1.0
    if n_zero < len(occ) and mean < 0.99:
        flags.append(Flag("partial_occupancy", "note", f"partial occupancy (mean {mean:.2f})"))
    return flags


@dataclass(frozen=True, slots=True)
class BondMargin:
    """How much the reference bond windows are widened for one file.

    Attributes
    ----------
    margin : float
        Added to both ends of every window (Å): ``BOND_Z`` × σ_d.
    sigma_bond : float
        Spread of a bond length from coordinate error, σ_d = √2 · σ₁ (Å).
    reason : str
        Where σ₁ came from, in plain words (for the messages).
    """

    margin: float
    sigma_bond: float
    reason: str


def bond_margin(resolution: float | None = None, coordinate_error: float | None = None) -> BondMargin:
    """Widening of the bond windows from the coordinate error of the file.

    A file's overall coordinate error E (Å, a 3-D positional error: Cruickshank's
    DPI, Refmac's ESU or the Luzzati estimate as deposited) gives the error of one
    atom along one direction σ₁ = E / √3; without one, the rule of thumb E ≈ d_min / 10
    is used (from memory, no source). A bond length between two atoms with
    independent isotropic errors has σ_d = √2 · σ₁ (common practice, no source).
    The window is widened by ``BOND_Z`` · σ_d on each side, so a bond is flagged only
    when it lies outside the reference window by more than the one-sided 95 % error
    of the model. Without resolution or deposited error the windows are not widened.

    Parameters
    ----------
    resolution : float or None
        Resolution of the data (Å).
    coordinate_error : float or None
        Deposited overall coordinate error (Å), preferred over the resolution.

    Returns
    -------
    BondMargin

    Examples
    --------
    >>> round(bond_margin(resolution=3.0).margin, 3)
    0.403
    >>> bond_margin().margin
    0.0
    """
    if coordinate_error is not None and math.isfinite(coordinate_error) and coordinate_error > 0:
        e, why = float(coordinate_error), f"deposited coordinate error {coordinate_error:.2f} Å"
    elif resolution is not None and math.isfinite(resolution) and resolution > 0:
        e, why = 0.1 * float(resolution), f"coordinate error ≈ d_min/10 = {0.1 * resolution:.2f} Å at {resolution:.2f} Å"
    else:
        return BondMargin(0.0, 0.0, "no resolution or coordinate error given: reference window not widened")
    sigma_d = math.sqrt(2.0) * e / math.sqrt(3.0)
    return BondMargin(BOND_Z * sigma_d, sigma_d, why)


def ligand_counts(ligands: Iterable[Ligand]) -> list[tuple[str, int]]:
    """Count ligands, not bonds: one per ligating atom, whatever the metals it binds.

    A Cys SG that bridges the Ni and the Fe of a [NiFe] site is one Cys, not two.

    Parameters
    ----------
    ligands : iterable of Ligand

    Returns
    -------
    list of (kind, count)
        Sorted by kind.

    Examples
    --------
    >>> from fescan.core.records import AtomRef, Ligand
    >>> sg = AtomRef("A", 8, "", "CYS", "SG", "S", (0, 0, 0))
    >>> ligand_counts([Ligand("NI", "NI", sg, 2.3, "Cys S"), Ligand("FE", "FE", sg, 2.4, "Cys S")])
    [('Cys S', 1)]
    """
    seen: dict[str, set[tuple]] = defaultdict(set)
    for lig in ligands:
        a = lig.atom
        seen[lig.kind].add((a.chain, a.seqnum, a.icode, a.name, a.altloc))
    return sorted((k, len(v)) for k, v in seen.items())


def _window_flag(bond: str, cls: str, label: str, d: float, margin: BondMargin) -> Flag | None:
    br = bond_range(bond, cls)
    if br is None:
        return None
    lo, hi = br.low, br.high
    wlo, whi = lo - margin.margin, hi + margin.margin
    d = round(d, 2)  # judge the value as the ligand table prints it, so the two never disagree
    if wlo <= d <= whi:
        return None
    word = "stretched" if d > whi else "compressed"
    widened = (f"; {wlo:.2f}-{whi:.2f} Å allowing for the {margin.reason}" if margin.margin > 0
               else f"; {margin.reason}")
    memory = " (reference window from memory)" if br.status == "MEMORY" else ""
    return Flag(f"{word}_bond", "warning",
                f"{bond} {label} {d:.2f} Å is {word}: expected {lo:.2f}-{hi:.2f} Å for {cls}{widened}{memory}")


def _nearest_hint(env: AtomArrays, m: int, skip: set[int]) -> str:
    """Name the nearest protein side-chain atom beyond the ligand cut-off (a hint, within 5 Å)."""
    d = pairwise_distances(env.xyz[m][None, :], env.xyz)[0]
    best = None
    for j in np.argsort(d):
        if d[j] > 5.0:
            break
        if j in skip or d[j] < 1e-6 or str(env.name[j]) in ("N", "C", "O", "CA") or env.element[j] == "C" \
                and str(env.name[j]) != "CB":
            continue
        info = gemmi.find_tabulated_residue(str(env.resname[j]))
        if info is None or not info.is_amino_acid():
            continue
        best = j
        break
    if best is None:
        return "no protein side chain within 5 Å"
    return f"nearest side-chain atom {env.resname[best]} {env.chain[best]}/{env.seqnum[best]}{env.icode[best]} " \
           f"{env.name[best]} at {d[best]:.2f} Å"


def check_metal_site(
    cls: str,
    composition: str,
    expected_composition: str | None,
    env: AtomArrays,
    core_rows: list[int],
    ligands: list[tuple[int, Ligand]],
    clashes: list[tuple[int, int, float]],
    margin: BondMargin | None = None,
) -> tuple[list[Flag], dict[str, int]]:
    """Run the ligation and geometry checks of one metal site.

    Parameters
    ----------
    cls : str
        Class label (``"[4Fe-4S]"``...).
    composition, expected_composition : str
        Core composition found, and the one the class or CCD code implies.
    env : AtomArrays
        Atoms around the site.
    core_rows : list of int
        Rows of the core atoms in ``env``.
    ligands, clashes :
        As returned by :func:`find_ligands`.
    margin : BondMargin, optional
        Widening of the bond windows for the file's coordinate error (:func:`bond_margin`);
        none when not given.

    Returns
    -------
    flags : list of Flag
        Severity ``"warning"`` (probably a modelling problem) or ``"note"`` (unusual but
        known in nature).
    coordination : dict of str to int
        Coordination number of each metal atom (bridges plus ligands).
    """
    margin = margin or BondMargin(0.0, 0.0, "reference window not widened")
    flags: list[Flag] = []
    el = env.element
    metals = [r for r in core_rows if el[r] not in ("S", "SE", "C", "N", "O", "CA")]
    bridges = [r for r in core_rows if el[r] in ("S", "SE")]
    lig_by_metal: dict[int, list[Ligand]] = defaultdict(list)
    for m, lig in ligands:
        lig_by_metal[m].append(lig)
    coordination: dict[str, int] = {}
    expected = expected_composition or _EXPECTED_COMPOSITION.get(cls)
    n_bridges_expected = EXPECTED_BRIDGES.get(cls)
    short_of_bridge: list[str] = []
    for m in metals:
        mname = str(env.name[m])
        n_bridge = 0
        bonded = []
        for s in bridges:
            d = atom_distance(env.xyz[m], env.xyz[s])
            if d <= 3.0:
                n_bridge += 1
                bonded.append(f"{env.name[s]} {d:.2f} Å")
                if el[m] == "FE":
                    f = _window_flag("Fe-S(inorganic)", cls, f"{mname}-{env.name[s]}", d, margin)
                    if f:
                        flags.append(f)
        ligs = lig_by_metal.get(m, [])
        cn = n_bridge + len(ligs)
        coordination[mname] = cn
        if cls not in STANDARD_FES_CLASSES or el[m] != "FE":
            continue
        if n_bridges_expected is not None and n_bridge < n_bridges_expected:
            short_of_bridge.append(f"{mname} ({n_bridge} of {n_bridges_expected})")
        n_terminal_expected = 4 - (n_bridges_expected if n_bridges_expected is not None else n_bridge)
        if n_bridges_expected is not None and len(ligs) < n_terminal_expected:
            want = "a Cys or His" if cls == "Rieske [2Fe-2S]" else "a Cys"
            missing = n_terminal_expected - len(ligs)
            have = f"; bound: {', '.join(f'{lig.kind} {lig.atom.residue}' for lig in ligs)}" if ligs else ""
            flags.append(Flag("missing_ligand", "warning",
                              f"{mname} lacks {missing if missing > 1 else 'its'} terminal protein "
                              f"ligand{'s' * (missing > 1)} ({want} expected within {LIGAND_MAX['S']:.1f} Å{have}; "
                              f"{_nearest_hint(env, m, set(core_rows))})"))
        elif n_bridges_expected is None and cn < 4:
            flags.append(Flag("missing_ligand", "warning",
                              f"{mname} is {cn}-coordinate ({n_bridge} bridging S, {len(ligs)} terminal "
                              f"ligand{'s' * (len(ligs) != 1)}); 4 expected"))
        if cn > 4:
            partners = bonded + [f"{lig.kind} {lig.atom.residue} {lig.distance:.2f} Å" for lig in ligs]
            flags.append(Flag("extra_ligand", "warning",
                              f"{mname} is {cn}-coordinate ({', '.join(partners)}); 4 expected"))
        for lig in ligs:
            label = f"{mname}-{lig.atom.resname} {lig.atom.residue} {lig.atom.name}"
            if lig.kind == "Cys S":
                f = _window_flag("Fe-S(Cys)", cls, label, lig.distance, margin)
            elif lig.kind == "His N":
                f = _window_flag("Fe-N(His)", cls, label, lig.distance, margin)
                if cls != "Rieske [2Fe-2S]":
                    flags.append(Flag("non_cys_ligand", "note",
                                      f"{mname} is bound by His {lig.atom.residue} {lig.atom.name} "
                                      f"instead of Cys (known in some clusters)"))
            elif lig.kind == "Met S":
                f = _window_flag("Fe-S(Met)", cls, label, lig.distance, margin)
            else:
                f = None
                known = lig.kind.split()[0] in ("Asp", "Glu", "Ser", "water", "Cys")
                flags.append(Flag("non_cys_ligand" if known else "unexpected_ligand",
                                  "note" if known else "warning",
                                  f"{mname} is bound by {lig.kind} of {lig.atom.resname} "
                                  f"{lig.atom.residue} ({lig.distance:.2f} Å)"))
            if f:
                flags.append(f)
    which = _missing_core_atoms(env, bridges, composition, expected)
    bound = f"; bridging S bound by {', '.join(short_of_bridge)}" if short_of_bridge else ""
    if expected and composition != expected:
        flags.insert(0, Flag("incomplete_cluster", "warning",
                             f"incomplete cluster: core {composition} found, {expected} expected for {cls}"
                             f"{which}{bound}"))
    elif short_of_bridge:
        flags.insert(0, Flag("missing_sulfide", "warning", f"missing bridging sulfide{bound}"))
    fe_rows = [m for m in metals if el[m] == "FE"]
    for i, a in enumerate(fe_rows):
        for b in fe_rows[i + 1:]:
            d = atom_distance(env.xyz[a], env.xyz[b])
            if d < 3.4:
                f = _window_flag("Fe...Fe", cls, f"{env.name[a]}-{env.name[b]}", d, margin)
                if f:
                    flags.append(f)
    for c, j, d in clashes:
        flags.append(Flag("clash", "warning",
                          f"clash: {env.resname[j]} {env.chain[j]}/{env.seqnum[j]}{env.icode[j]} "
                          f"{env.name[j]} is {d:.2f} Å from {env.name[c]} and not a ligand"))
    return flags, coordination


def _missing_core_atoms(env: AtomArrays, bridges: list[int], composition: str, expected: str | None) -> str:
    """``"; sulfide S3 absent"`` when the CCD names (S1..Sn) show which bridge is missing, else ''."""
    if not expected:
        return ""

    want = {e.upper(): int(n or 1) for e, n in re.findall(r"([A-Z][a-z]?)(\d*)", expected)}
    n_s = want.get("S", 0)
    names = {str(env.name[r]) for r in bridges}
    if n_s <= len(bridges) or not names or not all(re.fullmatch(r"S\d", n) for n in names):
        return ""
    absent = [f"S{k}" for k in range(1, n_s + 1) if f"S{k}" not in names]
    if len(absent) != n_s - len(bridges):
        return f": {n_s - len(bridges)} inorganic sulfide(s) missing"
    return f": sulfide {', '.join(absent)} is missing"
