"""Metal sites by geometry: Fe and inorganic S (and Mo, V, Ni, W, Cu, Mn, C/N) linked at bonding distance.

A bare Zn, Ca or Mg ion (its residue holds no C, N, S or P) is a site of its own, to be
listed apart with no redox role; it links to nothing but, for Ca, the Mn of a Mn4Ca cluster.

A site is a connected component of the graph whose nodes are metal atoms and
"inorganic" light atoms (an S, Se, C or N bonded to metals but to no organic
atom) and whose edges are metal-bridge bonds and short metal-metal contacts.
Residue and atom names play no part, except that all atoms of one residue with
a known Fe-S cluster CCD code are kept together.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

import numpy as np

from fescan.cofactors.atoms import AtomArrays
from fescan.core.arrays import distinct
from fescan.core.groups import Components
from fescan.core.neighbours import NeighbourTree, atom_distance
from fescan.core.records import ION_SITE_METALS

__all__ = [
    "METALS",
    "STRUCTURAL_METALS",
    "SITE_METALS",
    "MetalSite",
    "find_metal_sites",
    "composition_string",
    "core_class",
]

#: Redox metals that seed a site and bond to each other and to inorganic bridges.
METALS = frozenset({"FE", "NI", "MO", "V", "W", "CU", "MN", "CO"})
#: Metals with no redox role: a bare ion (a residue with no C, N, S or P) seeds a site of its own,
#: listed apart as structural (never on a wire); the one link kept is Ca to Mn (the Mn4CaO5 cluster).
STRUCTURAL_METALS = ION_SITE_METALS
#: Every element that can seed a metal site.
SITE_METALS = METALS | STRUCTURAL_METALS
_NOT_BARE = ("C", "N", "S", "P")
_BRIDGE_S = frozenset({"S", "SE"})
_INTERSTITIAL = frozenset({"C", "N"})
_ORGANIC = frozenset({"C", "N", "O", "P", "S", "SE"})

METAL_BRIDGE_MAX = 3.0  # Å metal - inorganic S/Se (a 2.8 Å stretched bond stays in)
METAL_METAL_MAX = 3.0  # Å direct metal-metal contact (Fe...Fe 2.7, Ni...Fe 2.9, Cu...Cu 2.5)
METAL_METAL_MIN = 1.9  # Å: metals closer than this are alternative positions of one atom (M-M bonds >= 2.2 Å)
MN_LINK_MAX = 3.6  # Å Mn...Mn and Mn...Ca in the Mn4Ca cluster (no oxo atoms in many models)
INTERSTITIAL_MAX = 2.3  # Å metal - interstitial carbide/nitride
ORGANIC_BOND_MAX = 1.95  # Å; a light atom this close to an organic atom is organic itself


@dataclass(slots=True)
class MetalSite:
    """Atoms of one metal site, as row indices into the candidate arrays.

    Attributes
    ----------
    core : list of int
        Metal atoms plus inorganic bridges/interstitials.
    bonds : list of tuple of int
        Core-core bonds (metal-bridge and metal-metal).
    """

    core: list[int]
    bonds: list[tuple[int, int]]


def _inorganic_mask(atoms: AtomArrays, tree: NeighbourTree, near_metal: np.ndarray) -> np.ndarray:
    """True for S/Se/C/N atoms near a metal with no organic neighbour within bonding distance.

    Only atoms within bridging distance of a metal (``near_metal``) are examined:
    an inorganic atom far from every metal can join no site anyway.
    """
    el = atoms.element
    mask = np.zeros(len(atoms), dtype=bool)
    cand = near_metal[np.isin(el[near_metal], list(_BRIDGE_S | _INTERSTITIAL))]
    if len(cand) == 0:
        return mask
    hits = tree.query_ball_point(atoms.xyz[cand], r=ORGANIC_BOND_MAX)
    for i, h in zip(cand, hits):
        if not any(j != i and el[j] in _ORGANIC for j in h):
            mask[i] = True
    return mask


def find_metal_sites(
    atoms: AtomArrays, exclude: set[int] | frozenset[int] = frozenset(), cluster_codes: frozenset[str] = frozenset()
) -> list[MetalSite]:
    """Group metal atoms and inorganic bridges into sites.

    Parameters
    ----------
    atoms : AtomArrays
        Atoms of the non-standard residues (cofactor candidates).
    exclude : set of int
        Rows to leave out (for example heme iron, which belongs to its porphyrin).
    cluster_codes : frozenset of str
        Residue names whose atoms are all kept in one site (known cluster codes).

    Returns
    -------
    list of MetalSite
        In order of the first core atom in the file.
    """
    n = len(atoms)
    if n == 0:
        return []
    el = atoms.element
    is_metal = np.isin(el, list(METALS))
    for i in exclude:
        is_metal[i] = False
    redox_seeds = np.flatnonzero(is_metal)
    bare = _bare_structural_ions(atoms)
    seeds = distinct(np.concatenate((redox_seeds, bare))).astype(int)
    if len(seeds) == 0:
        return []
    tree = NeighbourTree(atoms.xyz)
    near = sorted({j for h in tree.query_ball_point(atoms.xyz[redox_seeds], r=METAL_BRIDGE_MAX) for j in h})
    inorganic = _inorganic_mask(atoms, tree, np.asarray(near, dtype=int))
    links = Components(int(i) for i in seeds)
    bonds: list[tuple[int, int]] = []
    q, p, _ = tree.within(atoms.xyz[seeds], MN_LINK_MAX)
    for i, j in zip(seeds[q].tolist(), p.tolist()):
        if j == i or j in exclude:
            continue
        alt_i, alt_j = atoms.altloc[i], atoms.altloc[j]
        if alt_i and alt_j and alt_i != alt_j:
            continue  # two alternative conformations never bond
        d = atom_distance(atoms.xyz[i], atoms.xyz[j])
        ej = el[j]
        link = False
        if not is_metal[i]:  # a structural ion: only the Ca of the Mn4Ca cluster links (to Mn)
            if el[i] == "CA" and ej == "MN" and is_metal[j] and d <= MN_LINK_MAX:
                links.join(i, j)
            continue
        if is_metal[j] and d < METAL_METAL_MIN:
            continue  # two positions of one metal (alternative states), never a bond
        if is_metal[j] and d <= (MN_LINK_MAX if "MN" in (el[i], ej) else METAL_METAL_MAX):
            link = True
        elif inorganic[j] and ej in _BRIDGE_S and d <= METAL_BRIDGE_MAX:
            link = True
        elif inorganic[j] and ej in _INTERSTITIAL and d <= INTERSTITIAL_MAX:
            link = True
        elif ej == "CA" and el[i] == "MN" and d <= MN_LINK_MAX:
            link = True
        if link:
            links.join(i, j)
            if not (is_metal[j] and j < i):
                bonds.append((i, j))
    # keep every atom of a residue with a known cluster code in the same site
    if cluster_codes:
        by_res: dict[tuple[int, str], list[int]] = {}  # alternative conformations stay apart
        for i in np.flatnonzero(np.isin(atoms.resname, list(cluster_codes))):
            by_res.setdefault((int(atoms.res_id[i]), str(atoms.altloc[i])), []).append(int(i))
        for members in by_res.values():
            members = [m for m in members if m not in exclude]
            for m in members:
                links.add(m)
            for a, b in zip(members, members[1:]):
                links.join(a, b)
    seed_set = set(seeds.tolist())
    sites = []
    for comp in links.components():
        if not any(i in seed_set for i in comp):
            continue
        core = sorted(comp)
        cs = set(core)
        site_bonds = sorted({(min(a, b), max(a, b)) for a, b in bonds if a in cs and b in cs})
        sites.append(MetalSite(core=core, bonds=site_bonds))
    sites.sort(key=lambda s: s.core[0])
    return sites


def _bare_structural_ions(atoms: AtomArrays) -> np.ndarray:
    """Rows of Zn/Ca/Mg atoms whose residue holds no C, N, S or P (an ion, not a chlorophyll or a ZnPP)."""
    rows = np.flatnonzero(np.isin(atoms.element, list(STRUCTURAL_METALS)))
    if len(rows) == 0:
        return rows
    organic_res = distinct(atoms.res_id[np.isin(atoms.element, _NOT_BARE)])
    return rows[~np.isin(atoms.res_id[rows], organic_res)]


_ORDER = ("MO", "V", "W", "NI", "CU", "MN", "CO", "ZN", "CA", "MG", "FE", "S", "SE", "C", "N", "O")


def composition_string(elements: list[str] | np.ndarray) -> str:
    """Composition in the order other metals, Fe, S, then light atoms: ``"MoFe7S9C"``.

    Examples
    --------
    >>> composition_string(["FE", "S", "FE", "S"])
    'Fe2S2'
    """
    cnt = Counter(str(e) for e in elements)
    keys = sorted(cnt, key=lambda e: (_ORDER.index(e) if e in _ORDER else len(_ORDER), e))
    return "".join(f"{k.capitalize()}{cnt[k] if cnt[k] > 1 else ''}" for k in keys)


def core_class(elements: list[str], bonds: list[tuple[int, int]], rows: list[int]) -> tuple[str, str]:
    """Category and class of a metal site from its core composition and bonds.

    Parameters
    ----------
    elements : list of str
        Elements of the core atoms, parallel to ``rows``.
    bonds : list of tuple of int
        Core bonds between rows.
    rows : list of int
        Row indices of the core atoms.

    Returns
    -------
    tuple of str
        ``(category, class)``; ligand-dependent refinements (Rieske,
        Fe(Cys)4) are made later by the ligation step.
    """
    cnt = Counter(elements)
    n_fe, n_s = cnt.get("FE", 0), cnt.get("S", 0)
    others = {e for e in cnt if e not in ("FE", "S")}
    if n_fe and n_s and not others:
        if (n_fe, n_s) == (2, 2):
            return "iron-sulfur", "[2Fe-2S]"
        if (n_fe, n_s) == (4, 4):
            return "iron-sulfur", "[4Fe-4S]"
        if (n_fe, n_s) == (4, 3):
            return "iron-sulfur", "[4Fe-3S]"
        if (n_fe, n_s) == (3, 4):
            el = dict(zip(rows, elements))
            fe_per_s = Counter(
                b if el[a] == "FE" else a for a, b in bonds if {el[a], el[b]} == {"FE", "S"}
            )
            if any(v >= 3 for v in fe_per_s.values()):
                return "iron-sulfur", "[3Fe-4S]"
            return "iron-sulfur", "linear [3Fe-4S]"
        return "iron-sulfur", f"[{n_fe}Fe-{n_s}S]"
    if n_fe == 7 and n_s in (8, 9) and others & {"MO", "V"} and others <= {"MO", "V", "C", "N", "O"}:
        return "iron-sulfur", "FeMo-co" if "MO" in others else "FeV-co"  # nitrogenase cofactors
    if n_fe and n_s:
        return "iron-sulfur", composition_string(elements)
    if cnt.get("CU", 0) and set(cnt) == {"CU"}:
        return "copper", "Cu" if cnt["CU"] == 1 else ("CuA" if cnt["CU"] == 2 else f"Cu{cnt['CU']}")
    if set(cnt) == {"FE"}:
        return "iron", "mononuclear Fe" if n_fe == 1 else ("diiron" if n_fe == 2 else f"Fe{n_fe}")
    return "metal", composition_string(elements)
