"""Ligation and geometry checks of metal sites: ligands, coordination, bond windows, flags.

Each metal atom's ligands are the atoms outside the cofactor core within a
donor-specific distance (S/Se 3.0 Å, N/O 2.6 Å, Cl 2.8 Å; C 2.2 Å only inside the
cofactor's own residue, such as CO/CN on the [NiFe] iron). Bond lengths are
compared with the reference windows of ``fescan/data/bond_ranges.csv``
(cctbx restraint library values, Moriarty & Adams 2019 lineage; see the
``source`` column), widened for data worse than 3.0 Å resolution.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable

import gemmi
import numpy as np
from scipy.spatial import cKDTree

from fescan.cofactors.atoms import WATER_NAMES, AtomArrays
from fescan.cofactors.registry import bond_range
from fescan.core.records import Flag, Ligand

__all__ = [
    "LIGAND_MAX",
    "CLASH_MAX",
    "find_ligands",
    "ligand_kind",
    "binding_motif",
    "check_metal_site",
    "occupancy_flags",
    "STANDARD_FES_CLASSES",
]

#: Longest metal-ligand distance accepted per donor element (Å).
LIGAND_MAX = {"S": 3.0, "SE": 3.0, "N": 2.6, "O": 2.6, "CL": 2.8, "BR": 2.9}
_OWN_RESIDUE_CARBON_MAX = 2.2
#: A non-bonded heavy atom closer than this to a core atom is a clash (Å).
CLASH_MAX = 2.5
#: Classes whose every Fe is expected to be four-coordinate.
STANDARD_FES_CLASSES = frozenset(
    {"[2Fe-2S]", "Rieske [2Fe-2S]", "[3Fe-4S]", "linear [3Fe-4S]", "[4Fe-4S]", "[4Fe-3S]", "Fe(Cys)4"}
)
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
    tree: cKDTree | None = None,
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
    tree : scipy.spatial.cKDTree, optional
        KD-tree over ``env.xyz`` (built when not given).

    Returns
    -------
    ligands : list of (metal row, Ligand)
    clashes : list of (core row, other row, distance)
    """
    if tree is None:
        tree = cKDTree(env.xyz)
    ligands: list[tuple[int, Ligand]] = []
    ligand_rows: set[int] = set()
    for m in metal_rows:
        for j in tree.query_ball_point(env.xyz[m], r=3.0):
            if j in core_rows:
                continue
            e = env.element[j]
            d = float(np.linalg.norm(env.xyz[m] - env.xyz[j]))
            limit = LIGAND_MAX.get(e)
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
    for c in sorted(core_rows):
        for j in tree.query_ball_point(env.xyz[c], r=CLASH_MAX):
            if j in core_rows or j in ligand_rows or int(env.res_id[j]) in own_res_ids:
                continue
            clashes.append((c, j, float(np.linalg.norm(env.xyz[c] - env.xyz[j]))))
    return ligands, clashes


def binding_motif(ligands: Iterable[Ligand]) -> str | None:
    """Spacing of the ligating protein residues in sequence, e.g. ``"C-x2-C-x2-C-x3-C"``.

    Residues of other chains are written after a chain label (``"A: C-x2-C; B: C"``).
    Adjacent residues are joined without a gap (``"CC-x64-C"``).

    Examples
    --------
    >>> from fescan.model import AtomRef, Ligand
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


def _window_flag(bond: str, cls: str, label: str, d: float, low_res: bool) -> Flag | None:
    br = bond_range(bond, cls)
    if br is None:
        return None
    lo, hi = br.window(low_res)
    d = round(d, 3)  # judge the value as printed, so a message never contradicts itself
    if d > hi:
        return Flag("stretched_bond", "warning",
                    f"{bond} {label} {d:.3f} Å is stretched (expected {lo:.3f}-{hi:.3f} Å for {cls}; {br.status})")
    if d < lo:
        return Flag("compressed_bond", "warning",
                    f"{bond} {label} {d:.3f} Å is compressed (expected {lo:.3f}-{hi:.3f} Å for {cls}; {br.status})")
    return None


def check_metal_site(
    cls: str,
    composition: str,
    expected_composition: str | None,
    env: AtomArrays,
    core_rows: list[int],
    ligands: list[tuple[int, Ligand]],
    clashes: list[tuple[int, int, float]],
    low_resolution: bool = False,
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
    low_resolution : bool
        Use the wide bond windows (data worse than 3.0 Å).

    Returns
    -------
    flags : list of Flag
    coordination : dict of str to int
        Coordination number of each metal atom (bridges plus ligands).
    """
    flags: list[Flag] = []
    el = env.element
    metals = [r for r in core_rows if el[r] not in ("S", "SE", "C", "N", "O", "CA")]
    bridges = [r for r in core_rows if el[r] in ("S", "SE")]
    lig_by_metal: dict[int, list[Ligand]] = defaultdict(list)
    for m, lig in ligands:
        lig_by_metal[m].append(lig)
    coordination: dict[str, int] = {}
    expected = expected_composition or _EXPECTED_COMPOSITION.get(cls)
    if expected and composition != expected:
        flags.append(Flag("incomplete_cluster", "warning",
                          f"incomplete cluster: core {composition} found, {expected} expected for {cls}"))
    for m in metals:
        mname = str(env.name[m])
        n_bridge = 0
        bonded = []
        for s in bridges:
            d = float(np.linalg.norm(env.xyz[m] - env.xyz[s]))
            if d <= 3.0:
                n_bridge += 1
                bonded.append(f"{env.name[s]} {d:.2f} Å")
                if el[m] == "FE":
                    f = _window_flag("Fe-S(inorganic)", cls, f"{mname}-{env.name[s]}", d, low_resolution)
                    if f:
                        flags.append(f)
        ligs = lig_by_metal.get(m, [])
        cn = n_bridge + len(ligs)
        coordination[mname] = cn
        if cls not in STANDARD_FES_CLASSES or el[m] != "FE":
            continue
        if cn < 4:
            flags.append(Flag("missing_ligand", "warning",
                              f"{mname} is {cn}-coordinate: no terminal ligand within "
                              f"{LIGAND_MAX['S']:.1f} Å (missing ligand)"))
        elif cn > 4:
            partners = bonded + [f"{lig.kind} {lig.atom.residue} {lig.distance:.2f} Å" for lig in ligs]
            flags.append(Flag("extra_ligand", "warning",
                              f"{mname} is {cn}-coordinate ({', '.join(partners)}); 4 expected"))
        for lig in ligs:
            label = f"{mname}-{lig.atom.resname} {lig.atom.residue} {lig.atom.name}"
            if lig.kind == "Cys S":
                f = _window_flag("Fe-S(Cys)", cls, label, lig.distance, low_resolution)
            elif lig.kind == "His N":
                f = _window_flag("Fe-N(His)", cls, label, lig.distance, low_resolution)
                if cls != "Rieske [2Fe-2S]":
                    flags.append(Flag("non_cys_ligand", "note",
                                      f"{mname} is bound by His {lig.atom.residue} {lig.atom.name} "
                                      f"instead of Cys (known in some clusters)"))
            elif lig.kind == "Met S":
                f = _window_flag("Fe-S(Met)", cls, label, lig.distance, low_resolution)
            else:
                f = None
                known = lig.kind.split()[0] in ("Asp", "Glu", "Ser", "water", "Cys")
                flags.append(Flag("non_cys_ligand" if known else "unexpected_ligand",
                                  "note" if known else "warning",
                                  f"{mname} is bound by {lig.kind} of {lig.atom.resname} "
                                  f"{lig.atom.residue} ({lig.distance:.2f} Å)"))
            if f:
                flags.append(f)
    fe_rows = [m for m in metals if el[m] == "FE"]
    for i, a in enumerate(fe_rows):
        for b in fe_rows[i + 1:]:
            d = float(np.linalg.norm(env.xyz[a] - env.xyz[b]))
            if d < 3.4:
                f = _window_flag("Fe...Fe", cls, f"{env.name[a]}-{env.name[b]}", d, low_resolution)
                if f:
                    flags.append(f)
    for c, j, d in clashes:
        flags.append(Flag("clash", "warning",
                          f"clash: {env.resname[j]} {env.chain[j]}/{env.seqnum[j]}{env.icode[j]} "
                          f"{env.name[j]} is {d:.2f} Å from {env.name[c]} and not a ligand"))
    return flags, coordination

