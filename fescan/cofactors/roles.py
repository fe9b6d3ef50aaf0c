"""Roles and sub-classes of the cofactors of one model.

Every cofactor gets a role (:data:`fescan.core.records.ROLES`):

* ``relay``: carries single electrons through a chain (Fe-S clusters, hemes,
  CuA, type 1 Cu, flavins, quinones);
* ``catalytic``: a multi-electron active site where electrons start or end
  ([NiFe], the [FeFe] H-cluster, FeMo-co, Mo/W-pterin sites, CuZ, Mn4CaO5,
  heme a3 + CuB, type 2 / type 3 / trinuclear Cu, non-heme Fe and diiron sites,
  a single Mn held by His and Asp/Glu as in Mn superoxide dismutase);
* ``structural``: a metal with no redox role at that site (the Mn/Mg site of
  cytochrome c oxidase, the non-heme Fe between QA and QB, Zn/Ca/Mg held by
  two or more protein residues);
* ``ion or additive``: oxoanions (MoO4, WO4, VO4), metals with no protein
  ligand sphere (a Zn/Ca/Mg with at most one protein residue), and anything not
  recognised that should stay off the wire.

The role comes from the packaged CCD table when the code fixes it, else from
the site's geometry: its ligand set, nuclearity and neighbours. A user file can
override it (:func:`apply_role_overrides`). Two sites bridged by a shared
protein ligand (the Cys that joins the [4Fe-4S] and the 2Fe subcluster of the
H-cluster, or Ni and Fe of a [NiFe] site modelled apart) become one site.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import replace

import numpy as np

from fescan.cofactors.metal_sites import STRUCTURAL_METALS, composition_string
from fescan.cofactors.registry import ccd_table
from fescan.cofactors.subclasses import fes_subclass, heme_ligation, rieske_subclass
from fescan.core.errors import ConfigError
from fescan.core.records import ROLES, Cofactor

__all__ = ["assign_roles", "apply_role_overrides", "merge_bridged_sites"]

_CU_CU_CLUSTER = 5.0  # Å Cu...Cu within a type 3 pair or trinuclear cluster (about 3.4-4.5 Å)
_CUB_HEME_FE = 6.0  # Å CuB...Fe(heme a3) is about 4.5-5 Å (Tsukihara et al. 1995 Science 269:1069)
_QUINONE_FE = 10.0  # Å non-heme Fe to the quinone ring centre (about 7-8 Å in reaction centres)
_OXIDASE_MN = 16.0  # Å Mn/Mg of cytochrome c oxidase to the heme a/a3 irons (about 11-13 Å)
_PROTEIN_KINDS = ("Cys S", "His N", "Met S", "Sec Se", "backbone O", "backbone N")
_FES_RELAY = frozenset({"[2Fe-2S]", "Rieske [2Fe-2S]", "[3Fe-4S]", "linear [3Fe-4S]", "[4Fe-4S]", "[4Fe-3S]",
                        "[8Fe-7S]"})


def _protein_ligands(cof: Cofactor) -> list:
    out = []
    for lig in cof.ligands:
        k = lig.kind
        if k in _PROTEIN_KINDS or k.split()[0] in ("Asp", "Glu", "Ser", "Thr", "Tyr", "Lys", "Asn", "Gln", "Arg"):
            out.append(lig)
    return out


def _metals(cof: Cofactor) -> Counter:
    return Counter(a.element for a in cof.redox_atoms if a.element not in ("S", "SE", "C", "N", "O"))


def _fe_xyz(cof: Cofactor) -> np.ndarray | None:
    fe = [a.xyz for a in cof.redox_atoms if a.element == "FE"]
    return np.asarray(fe[0], dtype=float) if fe else None


def _dist(a, b) -> float:
    return float(np.linalg.norm(np.asarray(a, dtype=float) - np.asarray(b, dtype=float)))


def _min_metal_distance(a: Cofactor, b: Cofactor, el_a: str, el_b: str) -> float:
    xa = [x.xyz for x in a.redox_atoms if x.element == el_a]
    xb = [x.xyz for x in b.redox_atoms if x.element == el_b]
    if not xa or not xb:
        return float("inf")
    d = np.linalg.norm(np.asarray(xa)[:, None, :] - np.asarray(xb)[None, :, :], axis=2)
    return float(d.min())


# -- merging ----------------------------------------------------------------
def _shared_ligands(a: Cofactor, b: Cofactor) -> set[tuple]:
    ka = {(lig.atom.chain, lig.atom.seqnum, lig.atom.icode, lig.atom.name) for lig in a.ligands
          if lig.kind in ("Cys S", "Sec Se")}
    kb = {(lig.atom.chain, lig.atom.seqnum, lig.atom.icode, lig.atom.name) for lig in b.ligands
          if lig.kind in ("Cys S", "Sec Se")}
    return ka & kb


def _merge(a: Cofactor, b: Cofactor, cls: str, category: str, shared: set[tuple]) -> Cofactor:
    atoms = a.atoms + tuple(x for x in b.atoms if x not in a.atoms)
    redox = a.redox_atoms + tuple(x for x in b.redox_atoms if x not in a.redox_atoms)
    residues = a.residues + tuple(r for r in b.residues if r not in a.residues)
    ligands = tuple(sorted(a.ligands + b.ligands, key=lambda lig: (lig.metal, lig.distance)))
    xyz = np.asarray([x.xyz for x in redox], dtype=float)
    centroid = tuple(round(float(v), 4) for v in xyz.mean(axis=0))
    extra = dict(b.extra)
    extra.update(a.extra)
    extra["merged_from"] = [a.label, b.label]
    extra["bridging_ligands"] = [f"{c}/{n}{i} {name}" for c, n, i, name in sorted(shared)]
    flags = a.flags + tuple(f for f in b.flags if f not in a.flags)
    return replace(
        a, ccd_code=None, category=category, cls=cls,
        composition=composition_string([x.element for x in redox if x.element not in ("C", "N", "O")]),
        residues=residues, atoms=atoms, redox_atoms=redox, centroid=centroid,  # type: ignore[arg-type]
        mean_occupancy=float(np.mean([x.occupancy for x in atoms])),
        mean_b=float(np.mean([x.b_iso for x in atoms])), ligands=ligands, flags=flags, extra=extra,
    )


def _is_two_fe(c: Cofactor) -> bool:
    m = _metals(c)
    return (set(m) == {"FE"} and m["FE"] == 2 and c.category != "iron-sulfur") or c.cls == "H-cluster"


def merge_bridged_sites(cofactors: Sequence[Cofactor]) -> list[Cofactor]:
    """Join metal sites bridged by a shared Cys/Sec ligand into one catalytic site.

    Two cases are joined: a [4Fe-4S] and a 2Fe site (the H-cluster of [FeFe]
    hydrogenases; Peters et al. 1998 Science 282:1853), and a Ni site with an Fe
    site ([NiFe] hydrogenase with Ni and Fe(CN)2CO modelled as separate residues
    more than 3 Å apart; Volbeda et al. 1995 Nature 373:580). Relay clusters
    bridged to each other are left alone.
    """
    out = list(cofactors)
    changed = True
    while changed:
        changed = False
        # only metal sites holding a Cys/Sec ligand can be bridged (Zn/Ca/Mg ions never are)
        cand = [k for k, c in enumerate(out) if c.category not in ("heme", "flavin", "quinone")
                and not c.is_ion_site and any(lig.kind in ("Cys S", "Sec Se") for lig in c.ligands)]
        for n, i in enumerate(cand):
            for j in cand[n + 1:]:
                a, b = out[i], out[j]
                shared = _shared_ligands(a, b)
                if not shared:
                    continue
                pair = {a.cls, b.cls}
                ma, mb = _metals(a), _metals(b)
                if "[4Fe-4S]" in pair and (_is_two_fe(a) or _is_two_fe(b)):
                    first, second = (a, b) if a.cls == "[4Fe-4S]" else (b, a)
                    merged = _merge(first, second, "H-cluster", "iron-sulfur", shared)
                elif ("NI" in ma and "FE" in mb and "S" not in mb) or ("NI" in mb and "FE" in ma and "S" not in ma):
                    first, second = (a, b) if "NI" in ma else (b, a)
                    merged = _merge(first, second, "NiFe", "metal", shared)
                else:
                    continue
                out[i] = merged
                del out[j]
                changed = True
                break
            if changed:
                break
    return out


# -- roles --------------------------------------------------------------------
def _by_table(cof: Cofactor) -> tuple[str, str, str] | None:
    """(role, subclass, reason) fixed by the CCD code, else None."""
    if cof.ccd_code is None:
        return None
    entry = ccd_table().get(cof.ccd_code)
    if entry is None or entry.role not in ROLES:
        return None
    return entry.role, entry.subclass, f"CCD code {cof.ccd_code} ({entry.cls}): {entry.source}"


def _copper(cof: Cofactor, others: Sequence[Cofactor]) -> tuple[str, str, str]:
    m = _metals(cof)
    prot = _protein_ligands(cof)
    kinds = Counter(lig.kind for lig in prot)
    if cof.cls == "CuZ" or (m["CU"] == 4 and "S" in {a.element for a in cof.redox_atoms}):
        return "catalytic", "CuZ", "four Cu around a bridging sulfide: CuZ of nitrous oxide reductase"
    if m["CU"] == 2 and kinds["Cys S"] >= 2:
        return "relay", "CuA", "two Cu bridged by two Cys: the mixed-valence CuA relay"
    if m["CU"] >= 2:
        return "catalytic", "type 3", f"{m['CU']} Cu in contact without Cys bridges: a coupled type 3 site"
    if len(prot) <= 1:
        return "ion or additive", "", f"Cu with {len(prot)} protein ligand(s): no binding site, an adventitious ion"
    for o in others:
        if o.category == "heme" and _min_metal_distance(cof, o, "CU", "FE") <= _CUB_HEME_FE:
            return "catalytic", "CuB", f"Cu {_min_metal_distance(cof, o, 'CU', 'FE'):.1f} Å from the iron of {o.label}: CuB of the binuclear O2 site"
    near_cu = [o for o in others if o is not cof and o.category == "copper"
               and _min_metal_distance(cof, o, "CU", "CU") <= _CU_CU_CLUSTER]
    if len(near_cu) >= 2:
        return "catalytic", "trinuclear", "Cu within 5 Å of two other Cu: the trinuclear (type 2 + type 3) cluster"
    if len(near_cu) == 1:
        if _copper_has_partner_pair(near_cu[0], others, cof):
            return "catalytic", "trinuclear", "Cu within 5 Å of Cu that is part of a trinuclear cluster"
        return "catalytic", "type 3", f"Cu within {_CU_CU_CLUSTER:g} Å of {near_cu[0].label}: a type 3 pair"
    if kinds["Cys S"] >= 1 and kinds["His N"] >= 1:
        return "relay", "type 1", f"Cu bound by {kinds['Cys S']} Cys and {kinds['His N']} His: a type 1 (blue) relay"
    return "catalytic", "type 2", f"Cu with N/O protein ligands ({', '.join(sorted(kinds))}) and no Cys: a type 2 site"


def _copper_has_partner_pair(partner: Cofactor, others: Sequence[Cofactor], me: Cofactor) -> bool:
    n = [o for o in others if o is not partner and o is not me and o.category == "copper"
         and _min_metal_distance(partner, o, "CU", "CU") <= _CU_CU_CLUSTER]
    return bool(n)


def _heme(cof: Cofactor, others: Sequence[Cofactor]) -> tuple[str, str, str]:
    lig = heme_ligation(cof.ligands)
    for o in others:
        if o.category == "copper" and _min_metal_distance(cof, o, "FE", "CU") <= _CUB_HEME_FE:
            d = _min_metal_distance(cof, o, "FE", "CU")
            sub = "heme a3" if cof.cls == "heme a" else "high-spin next to CuB"
            return "catalytic", sub, (f"heme iron {d:.1f} Å from the Cu of {o.label} ({lig or 'no axial ligand found'}): "
                                      "the high-spin heme of the binuclear heme-CuB O2 site")
    tab = _by_table(cof)
    if tab is not None and tab[0] == "catalytic":
        return "catalytic", lig, tab[2]
    reason = f"heme with axial ligation {lig}" if lig else "heme with no axial protein ligand found"
    return "relay", lig, reason + ": a one-electron relay"


def _iron(cof: Cofactor, others: Sequence[Cofactor]) -> tuple[str, str, str]:
    m = _metals(cof)
    prot = _protein_ligands(cof)
    kinds = Counter(lig.kind for lig in prot)
    if cof.cls == "Fe(Cys)4":
        return "relay", "rubredoxin", "Fe bound by four Cys: a rubredoxin-type relay"
    if m["FE"] == 1:
        if len(prot) <= 1:
            return "ion or additive", "", f"Fe with {len(prot)} protein ligand(s): no binding site, an adventitious ion"
        quin = [o for o in others if o.category == "quinone" and _dist(o.centroid, _fe_xyz(cof)) <= _QUINONE_FE]
        if quin or kinds["His N"] >= 4:
            where = (f"between the quinones {', '.join(o.label for o in quin)}" if len(quin) >= 2
                     else f"next to {quin[0].label}" if quin else "with four His (as between QA and QB)")
            return "structural", "", (f"non-heme Fe {where}: the acceptor-side iron of type II reaction centres "
                                      "does not carry the electron from QA to QB (Ferreira et al. 2004 Science "
                                      "303:1831)")
        active = _his_carboxylate_site("Fe", prot)
        if active is not None:
            return "catalytic", *active
        return "catalytic", "", f"mononuclear non-heme Fe with {len(prot)} protein ligands: an active site"
    if m["FE"] <= 4:
        return "catalytic", "", f"{m['FE']} Fe with no sulfide (diiron-type): an active site"
    return "ion or additive", "", f"{m['FE']} Fe atoms with no Fe-S cluster pattern: not recognised, kept off the wire"


def _metal(cof: Cofactor, others: Sequence[Cofactor]) -> tuple[str, str, str]:
    m = _metals(cof)
    prot = _protein_ligands(cof)
    kinds = Counter(lig.kind for lig in prot)
    if cof.extra.get("pterins"):
        return "catalytic", "bis-pterin" if len(cof.extra["pterins"]) >= 2 else "mono-pterin", (
            f"{'/'.join(sorted(x.capitalize() for x in m if x in ('MO', 'W')))} bound by the dithiolene of "
            f"{', '.join(cof.extra['pterins'])}: a Mo/W-pterin active site (Hille 1996 Chem Rev 96:2757)")
    if "NI" in m and "FE" in m:
        if "S" in {a.element for a in cof.redox_atoms}:
            return "catalytic", "CODH C-cluster", "Ni and Fe with sulfide: the C-cluster of CO dehydrogenase"
        sub = "NiFeSe" if kinds["Sec Se"] else "NiFe"
        n_res = len({(lig.atom.chain, lig.atom.seqnum, lig.atom.icode) for lig in prot
                     if lig.kind in ("Cys S", "Sec Se")})
        return "catalytic", sub, (f"Ni and Fe held by {n_res} Cys/Sec: the [{sub}] active site "
                                  "(Volbeda et al. 1995 Nature 373:580)")
    if m["MN"] >= 3:
        return "catalytic", "Mn4CaO5", f"cluster of {m['MN']} Mn{' and Ca' if m['CA'] else ''}: the water-oxidising Mn4CaO5 site"
    if set(m) & {"MO", "W", "V"}:
        if len(prot) <= 1:
            return "ion or additive", "", ("Mo/W/V with no pterin dithiolene and no protein ligand sphere: "
                                           "an oxoanion or ion bound from the solution")
        return "ion or additive", "", (f"Mo/W/V with {len(prot)} protein ligands but no pterin dithiolene: "
                                       "not a Mo/W-pterin site, kept off the wire")
    if set(m) <= STRUCTURAL_METALS:
        return _structural_ion(cof, others, m, prot)
    if len(prot) <= 1:
        el = "/".join(sorted(x.capitalize() for x in m))
        return "ion or additive", "", f"{el} with {len(prot)} protein ligand(s): no binding site, an adventitious ion"
    if m.get("NI") and kinds["Cys S"] >= 2:
        return "catalytic", "", f"Ni bound by {kinds['Cys S']} Cys: a Ni active site"
    if m.get("MN"):
        oxidase = _oxidase_heme(cof, others, "MN")
        if oxidase is not None:
            return "structural", "", (f"Mn {_OXIDASE_MN:g} Å or less from {oxidase.label}: the Mg/Mn site of "
                                      "cytochrome c oxidase, no redox role (Svensson-Ek et al. 2002 J Mol Biol "
                                      "321:329)")
        if sum(m.values()) == 1:
            active = _his_carboxylate_site("Mn", prot)
            if active is not None:
                return "catalytic", *active
    el = "/".join(sorted(x.capitalize() for x in m))
    what = f"single {el}" if sum(m.values()) == 1 else f"{composition_string(list(m.elements()))} site"
    return "structural", "", (f"{what} with {len(prot)} protein ligands ({_ligand_set(prot)}) and no cluster: "
                              "no redox role assumed at this site (override in the parameter file if it is "
                              "catalytic)")


def _his_carboxylate_site(el: str, prot: Sequence) -> tuple[str, str] | None:
    """(sub-class, reason) of a mononuclear Mn/Fe held by His and Asp/Glu, the active-site sets; else None.

    Three His and one Asp/Glu: the Mn and Fe superoxide dismutase site (Borgstahl et al. 1992
    Cell 71:107); two His and one Asp/Glu: the 2-His-1-carboxylate facial triad of mononuclear
    O2-activating enzymes (Hegg & Que 1997 Eur J Biochem 250:625).
    """
    kinds = Counter(lig.kind for lig in prot)
    his, carboxylate = kinds["His N"], kinds["Asp O"] + kinds["Glu O"]
    if his >= 3 and carboxylate >= 1:
        return "SOD-type", (f"mononuclear {el} bound by {_ligand_set(prot)}: the 3 His + 1 Asp set of the Mn and Fe "
                            "superoxide dismutase active site (Borgstahl et al. 1992 Cell 71:107)")
    if his >= 2 and carboxylate >= 1:
        return "2-His-1-carboxylate", (f"mononuclear {el} bound by {_ligand_set(prot)}: the 2-His-1-carboxylate "
                                       "facial triad of mononuclear O2-activating enzymes (Hegg & Que 1997 Eur J "
                                       "Biochem 250:625)")
    return None


def _oxidase_heme(cof: Cofactor, others: Sequence[Cofactor], element: str) -> Cofactor | None:
    """The heme a/o within :data:`_OXIDASE_MN` Å of the site's ``element`` atom (the oxidase Mg/Mn site)."""
    xyz = next((a.xyz for a in cof.redox_atoms if a.element == element), None)
    if xyz is None:
        return None
    for o in others:
        if o.category == "heme" and o.cls in ("heme a", "heme o") and _fe_xyz(o) is not None \
                and _dist(_fe_xyz(o), xyz) <= _OXIDASE_MN:
            return o
    return None


def _ligand_set(prot: Sequence) -> str:
    """Protein ligands counted by residue, e.g. ``"3 His and 1 Asp"`` or ``"2 Asp, 1 Glu and 1 backbone O"``."""
    residues: dict[tuple, str] = {}
    for lig in prot:
        a = lig.atom
        kind = lig.kind if lig.kind.startswith("backbone") else lig.kind.split()[0]
        residues.setdefault((a.chain, a.seqnum, a.icode, kind), kind)
    cnt = Counter(residues.values())
    parts = [f"{n} {k}" for k, n in sorted(cnt.items(), key=lambda t: (-t[1], t[0]))]
    if not parts:
        return "no protein ligand"
    return parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]


def _n_ligand_residues(prot: Sequence) -> int:
    return len({(lig.atom.chain, lig.atom.seqnum, lig.atom.icode) for lig in prot})


_ION_NAMES = {"ZN": "zinc", "CA": "calcium", "MG": "magnesium"}


def _structural_ion(cof: Cofactor, others: Sequence[Cofactor], m: Counter,
                    prot: Sequence) -> tuple[str, str, str]:
    """Role of a Zn, Ca or Mg site: structural with two or more protein ligand residues, else an ion.

    These metals have no redox chemistry in proteins (one oxidation state, closed-shell
    Zn(II), Ca(II), Mg(II)); they are listed apart and never put on a wire.
    """
    el = "/".join(sorted(x.capitalize() for x in m))
    n_res = _n_ligand_residues(prot)
    waters = sum(1 for lig in cof.ligands if lig.kind == "water O")
    own = {id(lig) for lig in prot}
    groups = sorted({lig.atom.resname for lig in cof.ligands if id(lig) not in own and lig.kind != "water O"})
    extra = [f"{waters} water"] if waters else []
    extra += groups
    wet = f" (+{', '.join(extra)})" if extra else ""
    if n_res <= 1:
        return "ion or additive", "", (f"{el} bound by {_ligand_set(prot)}{wet}: fewer than two protein "
                                       "residues hold it: an ion from the solution or carried by a bound ligand, no redox role")
    if "MG" in m:
        oxidase = _oxidase_heme(cof, others, "MG")
        if oxidase is not None:
            return "structural", "", (f"Mg bound by {_ligand_set(prot)}{wet}, {_OXIDASE_MN:g} Å or less from "
                                      f"{oxidase.label}: the Mg/Mn site of cytochrome c oxidase, no redox role "
                                      "(Svensson-Ek et al. 2002 J Mol Biol 321:329)")
    names = "/".join(_ION_NAMES[x] for x in sorted(m))
    return "structural", "", (f"{el} bound by {_ligand_set(prot)}{wet}: a structural {names} site, "
                              "no redox role")


def _role_of(cof: Cofactor, others: Sequence[Cofactor], clusters_per_chain: Counter) -> tuple[str, str, str]:
    cat = cof.category
    if cat == "heme":
        return _heme(cof, others)
    if cat == "copper":
        return _copper(cof, others)
    if cat == "flavin":
        return "relay", "", f"{cof.cls}: flavins relay one electron at a time"
    if cat == "quinone":
        return "relay", "", f"{cof.cls}: quinones relay electrons in transfer chains"
    tab = _by_table(cof)
    if cat == "iron-sulfur":
        if cof.cls == "H-cluster":
            return "catalytic", "H-cluster", ("[4Fe-4S] bridged by a Cys to a 2Fe subcluster: the H-cluster of "
                                              "[FeFe] hydrogenase (Peters et al. 1998 Science 282:1853)")
        if cof.cls in ("FeMo-co", "FeV-co"):
            return "catalytic", cof.cls, f"{cof.cls}: the nitrogenase active site (Spatzal et al. 2011 Science 334:940)"
        if cof.cls == "[8Fe-7S]":
            return "relay", "P-cluster", "[8Fe-7S]: the nitrogenase P-cluster relays electrons to FeMo-co"
        if "NI" in _metals(cof):
            return "catalytic", "CODH C-cluster", "Ni-Fe-S cluster: the C-cluster of CO dehydrogenase"
        if cof.cls == "[4Fe-4S]":
            chain = _main_chain(cof)
            sub, why = fes_subclass(cof, clusters_per_chain.get(chain, 1))
            return "relay", sub, why
        if cof.cls == "Rieske [2Fe-2S]":
            sub, why = rieske_subclass(cof)
            return "relay", sub, why
        if cof.cls in _FES_RELAY:
            return "relay", "", f"{cof.cls} cluster: a one-electron relay"
        if tab is not None:
            return tab
        if _metals(cof)["FE"] > 8:
            return "ion or additive", "", (f"{cof.cls}: no known Fe-S cluster has more than eight Fe; "
                                           "not recognised, kept off the wire")
        return "relay", "", f"Fe-S cluster {cof.cls}: taken as a relay"
    if tab is not None and tab[0] != "relay":
        return tab
    if cat == "iron":
        return _iron(cof, others)
    return _metal(cof, others)


def _main_chain(cof: Cofactor) -> str:
    chains = [lig.atom.chain for lig in cof.ligands if lig.kind == "Cys S"]
    return max(sorted(set(chains)), key=chains.count) if chains else cof.chain


def assign_roles(cofactors: Sequence[Cofactor]) -> list[Cofactor]:
    """Merge bridged sites, then give every cofactor its role, sub-class and reason.

    Parameters
    ----------
    cofactors : sequence of Cofactor
        The cofactors of one model, as found.

    Returns
    -------
    list of Cofactor
        Same order (merged sites take the place of their first part).
    """
    cofs = merge_bridged_sites(cofactors)
    per_chain: Counter = Counter(_main_chain(c) for c in cofs if c.category == "iron-sulfur")
    out = []
    for c in cofs:
        role, sub, why = _role_of(c, cofs, per_chain)
        out.append(replace(c, role=role, subclass=sub, role_reason=why))
    return out


def apply_role_overrides(cofactors: Sequence[Cofactor], mapping: Mapping[str, str], origin: str = "user file") -> list[Cofactor]:
    """Set the role of cofactors named by selector (``"A/557"``) from a user mapping.

    Parameters
    ----------
    cofactors : sequence of Cofactor
    mapping : mapping of str to str
        Selector (:attr:`Cofactor.key`) → role (one of :data:`ROLES`).
    origin : str, optional
        Where the mapping comes from, for the reason.

    Returns
    -------
    list of Cofactor

    Raises
    ------
    fescan.core.errors.ConfigError
        If a role is not one of :data:`ROLES` or a selector matches no cofactor.
    """
    keys = {c.key for c in cofactors}
    for sel, role in mapping.items():
        if role not in ROLES:
            raise ConfigError(f"{origin}: role {role!r} for {sel} is not one of {', '.join(ROLES)}")
        if sel not in keys:
            raise ConfigError(f"{origin}: role given for {sel}, which names no cofactor; cofactors: "
                              f"{', '.join(sorted(keys)) or 'none'}")
    out = []
    for c in cofactors:
        if c.key in mapping and mapping[c.key] != c.role:
            out.append(replace(c, role=mapping[c.key],
                               role_reason=f"set to {mapping[c.key]} by the {origin} (was {c.role}: {c.role_reason})"))
        else:
            out.append(c)
    return out
