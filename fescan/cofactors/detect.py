"""Find every redox cofactor of one model: metal sites, hemes, flavins, quinones.

Two ways, which must agree:

1. by wwPDB CCD code, from the packaged table ``fescan/data/ccd_cofactors.csv``;
2. by geometry, whatever the names: metal sites from Fe/inorganic-S bonding
   (:mod:`fescan.cofactors.metal_sites`), a porphyrin around an Fe, an
   isoalloxazine ring (:mod:`fescan.cofactors.rings`).

Redox-active atom sets (used for edge-to-edge distances), per category:

* iron-sulfur, iron, copper, other metal sites: the core, i.e. the metal atoms
  plus inorganic S/Se bridges and interstitial C/N;
* flavin: the 14 atoms of the isoalloxazine rings plus their carbonyl O;
* quinone: the six ring carbons plus their terminal (carbonyl/hydroxyl) O;
* heme: the porphyrin macrocycle (4 pyrroles + 4 meso C) plus the Fe.

When ring perception fails (atoms missing) all atoms of the residue are used
and a note says so.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import replace

import gemmi
import numpy as np

from fescan.cofactors.atoms import AtomArrays, ModelIndex
from fescan.cofactors.inventory import count_not_analysed, unique_keys, with_states
from fescan.cofactors.ligation import (
    binding_motif,
    bond_margin,
    check_metal_site,
    find_ligands,
    occupancy_flags,
)
from fescan.cofactors.metal_sites import (
    METALS,
    SITE_METALS,
    STRUCTURAL_METALS,
    MetalSite,
    composition_string,
    core_class,
    find_metal_sites,
)
from fescan.cofactors.organic import OrganicMixin
from fescan.cofactors.pterins import PTERIN_METALS, bound_pterins
from fescan.cofactors.registry import METAL_ION_CODES, ccd_table
from fescan.cofactors.roles import assign_roles
from fescan.cofactors.states import find_alternative_states
from fescan.cofactors.subclasses import fes_pocket
from fescan.core.neighbours import NeighbourTree
from fescan.core.records import Cofactor, Flag

__all__ = ["find_cofactors", "count_not_analysed", "LOW_RESOLUTION_LIMIT"]

#: Data worse than this (Å) are checked against the wide bond windows.
LOW_RESOLUTION_LIMIT = 3.0
_HEME_N_MAX = 2.6  # Å Fe - pyrrole N
_ENV_ATOM_RADIUS = 6.0  # Å: any atom of a non-standard residue this close to a metal brings the residue in


def _rows_by_residue(atoms: AtomArrays) -> dict[int, np.ndarray]:
    """Residue id → its rows (ascending), residues in order of first row."""
    rid = np.asarray(atoms.res_id, dtype=np.int64)
    if not len(rid):
        return {}
    order = np.argsort(rid, kind="stable")
    ids, first, count = np.unique(rid[order], return_index=True, return_counts=True)
    out = {int(ids[k]): order[first[k]:first[k] + count[k]].astype(int) for k in np.argsort(order[first])}
    return out


class _Composition:
    """Per-residue atom counts of the candidate atoms (one vectorised pass)."""

    __slots__ = ("n", "c", "nitrogen", "o", "fe", "metal", "metal_or_mg")

    def __init__(self, atoms: AtomArrays) -> None:
        ids, inverse = np.unique(np.asarray(atoms.res_id, dtype=np.int64), return_inverse=True)
        keys = ids.tolist()
        el = atoms.element

        def count(mask: np.ndarray) -> dict[int, int]:
            return dict(zip(keys, np.bincount(inverse.reshape(-1), weights=mask, minlength=len(keys)).astype(int).tolist()))

        self.n = count(np.ones(len(el)))
        self.c = count(el == "C")
        self.nitrogen = count(el == "N")
        self.o = count(el == "O")
        self.fe = count(el == "FE")
        self.metal = count(np.isin(el, sorted(METALS | {"MG", "ZN"})))  # the quinone screen's metals
        self.metal_or_mg = count(np.isin(el, sorted(METALS | {"MG"})))  # the flavin screen's (Zn allowed)


def _is_heme_geometry(atoms: AtomArrays, rows: np.ndarray) -> int | None:
    """Row of the Fe of a porphyrin-like residue (Fe with >= 4 own N near), else None."""
    fe = [r for r in rows if atoms.element[r] == "FE"]
    if len(fe) != 1:
        return None
    n_rows = [r for r in rows if atoms.element[r] == "N"]
    close = sum(1 for r in n_rows if np.linalg.norm(atoms.xyz[r] - atoms.xyz[fe[0]]) < _HEME_N_MAX)
    return int(fe[0]) if close >= 4 else None


def _might_be_flavin(comp: _Composition, rid: int) -> bool:
    """Enough N and O for an isoalloxazine, and no redox metal or Mg (a Zn does not exclude it)."""
    return not comp.metal_or_mg[rid] and comp.n[rid] >= 16 and comp.nitrogen[rid] >= 4 and comp.o[rid] >= 2


class _Builder(OrganicMixin):
    """Collects cofactors of one model."""

    def __init__(self, model: gemmi.Model, model_number: int, resolution: float | None,
                 coordinate_error: float | None = None, structure: gemmi.Structure | None = None) -> None:
        self.table = ccd_table()
        skip = frozenset(k for k, v in self.table.items() if v.category == "not analysed")
        self.index = ModelIndex(model, skip=skip, structure=structure)
        cand = self.index.candidates()
        self.states = find_alternative_states(cand)
        hidden = [st.res_id for group in self.states.values() for st in group[1:]]
        self.index.hide(hidden)
        self.model_number = model_number
        self.margin = bond_margin(resolution, coordinate_error)
        self.cand = cand.subset(np.flatnonzero(~np.isin(cand.res_id, hidden))) if hidden else cand
        self.by_res = _rows_by_residue(self.cand)
        self.comp = _Composition(self.cand)
        self.cofactors: list[tuple[int, Cofactor]] = []
        self.pterin_codes = frozenset(k for k, v in self.table.items() if v.category == "pterin")
        self.pterin_res: set[int] = set()
        self._chain_len: dict[str, int] | None = None
        self._cand_tree = NeighbourTree(self.cand.xyz) if len(self.cand) else None
        self.env: AtomArrays | None = None
        self._env_key: dict[tuple[int, int], int] = {}
        self._env_tree: NeighbourTree | None = None

    def prepare_environment(self, points: np.ndarray, own: set[int] | None = None) -> None:
        """Extract, once, every residue near the given points (metal and heme Fe atoms).

        A residue is taken when its first atom lies within 12.5 Å of a point, or
        when it is a candidate (non-standard) residue with any atom within
        :data:`_ENV_ATOM_RADIUS` Å of a point, or when it holds a cofactor atom
        (``own``): a large residue (a pterin cofactor, a 60-atom ligand) whose
        first atom is far from its metal is never missing from the environment.
        """
        if not len(points):
            self.env = None
            return
        ids = set(self.index.residues_near(points, radius=12.5).tolist())
        if own:
            ids.update(int(r) for r in own)
        ids -= self.index.hidden
        if len(self.cand):
            tree = NeighbourTree(self.cand.xyz)
            for hit in tree.query_ball_point(np.asarray(points, dtype=float), r=_ENV_ATOM_RADIUS):
                ids.update(int(self.cand.res_id[j]) for j in hit)
        self.env = self.index.extract(np.asarray(sorted(ids), dtype=int))
        if self.env is not None and len(self.env):
            self._env_key = dict(zip(zip(self.env.res_id.tolist(), self.env.ordinal.tolist()),
                                     range(len(self.env))))
            self._env_tree = NeighbourTree(self.env.xyz)

    # -- helpers ---------------------------------------------------------
    def _record(self, atoms: AtomArrays, atom_rows, redox_rows, name_row: int, **fields) -> Cofactor:
        atom_list = [int(i) for i in atom_rows]
        refs = tuple(atoms.refs(atom_list))
        by_row = dict(zip(atom_list, refs))
        redox_list = [int(i) for i in redox_rows]
        missing = [i for i in redox_list if i not in by_row]
        if missing:
            by_row.update(zip(missing, atoms.refs(missing)))
        redox = tuple(by_row[i] for i in redox_list)
        centroid = tuple(float(v) for v in atoms.xyz[np.asarray(redox_rows, dtype=int)].mean(axis=0))
        occ = atoms.occ[np.asarray(atom_rows, dtype=int)]
        flags = list(fields.pop("flags", [])) + occupancy_flags(occ)
        residues = list(dict.fromkeys(f"{a.chain}/{a.seqnum}{a.icode} {a.resname}" for a in refs))
        return Cofactor(
            model=self.model_number,
            chain=str(atoms.chain[name_row]),
            seqnum=int(atoms.seqnum[name_row]),
            icode=str(atoms.icode[name_row]),
            residues=tuple(residues),
            atoms=refs,
            redox_atoms=redox,
            centroid=(round(centroid[0], 4), round(centroid[1], 4), round(centroid[2], 4)),
            mean_occupancy=float(np.mean(occ)),
            mean_b=float(np.mean(atoms.b[np.asarray(atom_rows, dtype=int)])),
            flags=tuple(flags),
            **fields,
        )

    def _env_rows(self, cand_rows) -> list[int]:
        key = self._env_key
        rid, ordn = self.cand.res_id, self.cand.ordinal
        return [key[(int(rid[c]), int(ordn[c]))] for c in cand_rows]

    # -- organic cofactors ----------------------------------------------
    def heme_iron(self) -> dict[int, int]:
        """Residue id -> candidate row of the Fe of every porphyrin-like residue."""
        out = {}
        for rid, rows in self.by_res.items():
            entry = self.table.get(str(self.cand.resname[rows[0]]))
            if (entry is not None and entry.category != "heme") or self.comp.fe[rid] != 1:
                continue
            fe = _is_heme_geometry(self.cand, rows)
            if fe is not None:
                out[rid] = fe
        return out

    def organic(self, heme_fe: dict[int, int]) -> None:
        """Hemes, flavins and quinones."""
        for rid, rows in self.by_res.items():
            rn = str(self.cand.resname[rows[0]])
            entry = self.table.get(rn)
            cat = entry.category if entry else None
            if cat in ("iron-sulfur", "copper", "pterin", "metal"):
                continue
            fe = heme_fe.get(rid)
            if cat == "heme" or (cat is None and fe is not None):
                self._heme(rid, rows, fe, entry)
            elif cat == "flavin" or (cat is None and _might_be_flavin(self.comp, rid)):
                if not self._flavin(rows, entry) and cat is None:
                    self._quinone_by_ring(rid, rows)
            elif cat == "quinone":
                self._quinone(rows, entry)
            elif cat is None:
                self._quinone_by_ring(rid, rows)

    def chain_residues(self) -> dict[str, int]:
        """Amino-acid residues per chain of the model (counted once)."""
        if self._chain_len is None:
            self._chain_len = self.index.amino_acids_per_chain()
        return self._chain_len

    def _ligand_rows(self, ligands) -> list[int]:
        env = self.env
        want = {(lig.atom.chain, lig.atom.seqnum, lig.atom.icode, lig.atom.name) for lig in ligands}
        nums = {lig.atom.seqnum for lig in ligands}
        rows = np.flatnonzero(np.isin(env.seqnum, list(nums)))
        return [int(i) for i in rows if (env.chain[i], int(env.seqnum[i]), env.icode[i], env.name[i]) in want]

    @staticmethod
    def _is_dithiolene(lig, pterins) -> bool:
        labels = {p.label for p in pterins}
        a = lig.atom
        return a.element == "S" and f"{a.chain}/{a.seqnum}{a.icode} {a.resname}" in labels

    # -- metal sites ----------------------------------------------------
    def find_sites(self, heme_fe: dict[int, int]) -> list[MetalSite]:
        """Metal sites by geometry (heme iron left out)."""
        codes = frozenset(k for k, v in self.table.items() if v.category == "iron-sulfur")
        return find_metal_sites(self.cand, exclude=set(heme_fe.values()), cluster_codes=codes)

    def metal_site(self, site: MetalSite) -> None:
        """Classify and check one metal site."""
        c = self.cand
        env = self.env
        core = site.core
        res_ids = sorted({int(c.res_id[i]) for i in core})
        atom_rows = np.concatenate([self.by_res[r] for r in res_ids])
        core_alts = {str(c.altloc[i]) for i in core} - {""}
        if core_alts:  # altloc="all": keep the atoms of this conformation only
            atom_rows = np.asarray([i for i in atom_rows if c.altloc[i] in core_alts or not c.altloc[i]], dtype=int)
        env_core = self._env_rows(core)
        env_metals = [e for e, ci in zip(env_core, core) if c.element[ci] in SITE_METALS]
        pterins = bound_pterins(c, self.by_res, [i for i in core if c.element[i] in PTERIN_METALS],
                                self.pterin_codes, tree=self._cand_tree)
        own = set(res_ids) | {p.res_id for p in pterins}
        ligs, clashes = find_ligands(env, env_metals, set(env_core), own, tree=self._env_tree)
        elements = [str(c.element[i]) for i in core]
        composition = composition_string(elements)
        category, cls = core_class(elements, site.bonds, core)
        if pterins:
            ligs = [(m, replace(lig, kind="dithiolene S") if self._is_dithiolene(lig, pterins) else lig)
                    for m, lig in ligs]
        ligands = [lig for _, lig in ligs]
        his_per_fe: dict[str, int] = defaultdict(int)
        cys = 0
        for m, lig in ligs:
            if lig.kind == "His N":
                his_per_fe[lig.metal] += 1
            if lig.kind == "Cys S":
                cys += 1
        if cls == "[2Fe-2S]" and any(v >= 2 for v in his_per_fe.values()):
            cls = "Rieske [2Fe-2S]"
        if cls == "mononuclear Fe" and cys >= 3 and not his_per_fe:
            cls = "Fe(Cys)4"
        names = {str(c.resname[i]) for i in core}
        code = names.pop() if len(res_ids) == 1 else None
        entry = self.table.get(code) if code else None
        if code is not None and entry is None and code not in METAL_ION_CODES and code not in STRUCTURAL_METALS:
            code = None  # UNL, LIG or a private name: not a CCD code of a cofactor
        detected_by = "geometry"
        expected = None
        if entry is not None:
            base = cls.replace("Rieske ", "")
            if base == entry.cls or cls == entry.cls:
                detected_by = "ccd+geometry"
            elif entry.category == "metal" and _same_metals(entry.composition, elements):
                # a named site (molybdate, H-cluster 2Fe unit, CODH C-cluster...): the code names what
                # the geometry cannot, and the metals agree
                detected_by, cls, category = "ccd+geometry", entry.cls, entry.category
            else:
                detected_by = "ccd"
                cls = entry.cls
                category = entry.category
            expected = (entry.composition or None) if entry.category != "metal" else None
        flags, coordination = check_metal_site(
            cls, composition, expected, env, env_core, ligs, clashes, self.margin
        )
        if entry is not None and detected_by == "ccd" and not any(f.code == "incomplete_cluster" for f in flags):
            flags.append(Flag("class_mismatch", "warning",
                              f"atoms form {core_class(elements, site.bonds, core)[1]} but the code says {entry.cls}"))
        first_metal = next((i for i in core if c.element[i] in METALS), next(i for i in core if c.element[i] in SITE_METALS))
        extra: dict = {"coordination": coordination}
        if category == "iron-sulfur" and "S" in elements:
            lig_rows = self._ligand_rows(ligands)
            extra["pocket"] = fes_pocket(env, env_core, lig_rows, self.chain_residues())
        redox_rows = list(core)
        if pterins:
            metal = next(str(c.element[i]) for i in core if c.element[i] in PTERIN_METALS).capitalize()
            n = len(pterins)
            cls = f"{metal}-bis-pterin" if n >= 2 else f"{metal}-pterin"
            if any(e not in PTERIN_METALS and e in METALS for e in elements):
                cls = f"{composition}-pterin"
            category = "metal"
            code = None if len(res_ids) > 1 or code not in METAL_ION_CODES else code
            detected_by = "geometry" if not any(p.label.split()[-1] in self.pterin_codes for p in pterins) else "ccd+geometry"
            extra["pterins"] = [p.label for p in pterins]
            extra["dithiolene_s"] = sum(len(p.sulfur_rows) for p in pterins)
            own_rows = {int(i) for i in atom_rows}
            for p in pterins:
                rows = [int(i) for i in self.by_res[p.res_id] if int(i) not in own_rows]
                atom_rows = np.concatenate([atom_rows, np.asarray(rows, dtype=int)])
                own_rows.update(rows)
                redox_rows += [r for r in list(p.ring_rows) + list(p.sulfur_rows) if r not in redox_rows]
            self.pterin_res.update(p.res_id for p in pterins)
        cof = self._record(
            c, atom_rows, redox_rows, first_metal, ccd_code=code, category=category, cls=cls,
            composition=composition, detected_by=detected_by, ligands=tuple(ligands), flags=flags,
            motif=binding_motif(ligands), extra=extra,
        )
        self.cofactors.append((int(c.res_id[first_metal]), cof))


def find_cofactors(model: gemmi.Model, *, model_number: int = 1, resolution: float | None = None,
                   coordinate_error: float | None = None, structure: gemmi.Structure | None = None) -> list[Cofactor]:
    """Find, classify and check every redox cofactor of one model.

    Parameters
    ----------
    model : gemmi.Model
        The model (hydrogens and unwanted altlocs already removed by the reader).
    model_number : int, optional
        Number of the model, recorded in each cofactor's id.
    resolution : float or None, optional
        Resolution of the data (Å); widens the bond windows (``ligation.bond_margin``).
    coordinate_error : float or None, optional
        Deposited overall coordinate error (Å), preferred over the resolution for that.
    structure : gemmi.Structure, optional
        The structure whose only model is ``model`` (as the reader leaves it): its
        atoms are then read in place instead of from a copy.

    Returns
    -------
    list of Cofactor
        In file order of the residue naming each cofactor.
    """
    b = _Builder(model, model_number, resolution, coordinate_error, structure)
    heme_fe = b.heme_iron()
    sites = b.find_sites(heme_fe)
    points = [b.cand.xyz[i] for i in heme_fe.values()]
    points += [b.cand.xyz[i] for s in sites for i in s.core if b.cand.element[i] in SITE_METALS]
    own = {int(b.cand.res_id[i]) for i in heme_fe.values()}
    own |= {int(b.cand.res_id[i]) for s in sites for i in s.core}
    b.prepare_environment(np.asarray(points, dtype=float).reshape(-1, 3), own)
    b.organic(heme_fe)
    for site in sites:
        b.metal_site(site)
    b.cofactors.sort(key=lambda t: t[0])
    kept = {}
    if b.states:
        c = b.cand
        for r in np.flatnonzero(np.isin(c.res_id, list(b.states))):
            kept.setdefault(int(c.res_id[r]), f"{c.chain[r]}/{int(c.seqnum[r])}{str(c.icode[r]).strip()} {c.resname[r]}")
    cofs = [with_states(cof, b.states, kept) for _, cof in b.cofactors]
    return assign_roles(unique_keys(cofs))


def _same_metals(expected: str, elements: list[str]) -> bool:
    """True when a table composition (``"MoO4"``, empty when unknown) names the same metals as the core."""
    if not expected:
        return True
    import re

    want = {e.upper() for e in re.findall(r"[A-Z][a-z]?", expected)} & METALS
    return want == {e for e in elements if e in METALS}
