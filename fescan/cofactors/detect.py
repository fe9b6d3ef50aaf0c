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

import gemmi
import numpy as np
from scipy.spatial import cKDTree

from fescan.cofactors.atoms import AtomArrays, ModelIndex
from fescan.cofactors.ligation import (
    binding_motif,
    bond_margin,
    check_metal_site,
    find_ligands,
    occupancy_flags,
)
from fescan.cofactors.metal_sites import (
    METALS,
    MetalSite,
    composition_string,
    core_class,
    find_metal_sites,
)
from fescan.cofactors.registry import METAL_ION_CODES, ccd_table
from fescan.cofactors.rings import isoalloxazine_atoms, porphyrin_atoms, quinone_ring_atoms
from fescan.core.records import Cofactor, Flag

__all__ = ["find_cofactors", "count_not_analysed", "LOW_RESOLUTION_LIMIT"]

#: Data worse than this (Å) are checked against the wide bond windows.
LOW_RESOLUTION_LIMIT = 3.0
_THIOETHER_MAX = 2.1  # Å heme vinyl C - Cys SG in c-type hemes
_CXXCH_SG_MAX = 3.6  # Å: a CxxC pair this close to the vinyl carbons is an unmodelled heme c link
_HEME_N_MAX = 2.6  # Å Fe - pyrrole N


def _rows_by_residue(atoms: AtomArrays) -> dict[int, np.ndarray]:
    out: dict[int, list[int]] = defaultdict(list)
    for i, r in enumerate(atoms.res_id):
        out[int(r)].append(i)
    return {k: np.asarray(v, dtype=int) for k, v in out.items()}


def _is_heme_geometry(atoms: AtomArrays, rows: np.ndarray) -> int | None:
    """Row of the Fe of a porphyrin-like residue (Fe with >= 4 own N near), else None."""
    fe = [r for r in rows if atoms.element[r] == "FE"]
    if len(fe) != 1:
        return None
    n_rows = [r for r in rows if atoms.element[r] == "N"]
    close = sum(1 for r in n_rows if np.linalg.norm(atoms.xyz[r] - atoms.xyz[fe[0]]) < _HEME_N_MAX)
    return int(fe[0]) if close >= 4 else None


def _might_be_flavin(atoms: AtomArrays, rows: np.ndarray) -> bool:
    el = [atoms.element[r] for r in rows]
    if any(e in METALS or e == "MG" for e in el):
        return False
    return len(rows) >= 16 and el.count("N") >= 4 and el.count("O") >= 2


class _Builder:
    """Collects cofactors of one model."""

    def __init__(self, model: gemmi.Model, model_number: int, resolution: float | None,
                 coordinate_error: float | None = None) -> None:
        self.table = ccd_table()
        skip = frozenset(k for k, v in self.table.items() if v.category == "not analysed")
        self.index = ModelIndex(model, skip=skip)
        self.model_number = model_number
        self.margin = bond_margin(resolution, coordinate_error)
        self.cand = self.index.candidates()
        self.by_res = _rows_by_residue(self.cand)
        self.cofactors: list[tuple[int, Cofactor]] = []
        self.env: AtomArrays | None = None
        self._env_key: dict[tuple[int, int], int] = {}
        self._env_tree: cKDTree | None = None

    def prepare_environment(self, points: np.ndarray) -> None:
        """Extract, once, every residue near the given points (metal and heme Fe atoms)."""
        self.env = self.index.environment(points, radius=12.5) if len(points) else None
        if self.env is not None and len(self.env):
            self._env_key = dict(zip(zip(self.env.res_id.tolist(), self.env.ordinal.tolist()),
                                     range(len(self.env))))
            self._env_tree = cKDTree(self.env.xyz)

    # -- helpers ---------------------------------------------------------
    def _record(self, atoms: AtomArrays, atom_rows, redox_rows, name_row: int, **fields) -> Cofactor:
        refs = tuple(atoms.ref(int(i)) for i in atom_rows)
        redox = tuple(atoms.ref(int(i)) for i in redox_rows)
        centroid = tuple(float(v) for v in atoms.xyz[np.asarray(redox_rows, dtype=int)].mean(axis=0))
        occ = atoms.occ[np.asarray(atom_rows, dtype=int)]
        flags = list(fields.pop("flags", [])) + occupancy_flags(occ)
        residues = []
        for i in atom_rows:
            lab = f"{atoms.chain[i]}/{atoms.seqnum[i]}{atoms.icode[i]} {atoms.resname[i]}"
            if lab not in residues:
                residues.append(lab)
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
            if entry is not None and entry.category != "heme":
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
            if cat in ("iron-sulfur", "copper"):
                continue
            fe = heme_fe.get(rid)
            if cat == "heme" or (cat is None and fe is not None):
                self._heme(rid, rows, fe, entry)
            elif cat == "flavin" or (cat is None and _might_be_flavin(self.cand, rows)):
                self._flavin(rows, entry)
            elif cat == "quinone":
                self._quinone(rows, entry)

    def _ring_or_all(self, rows, found, what: str) -> tuple[list[int], list[Flag]]:
        if found is None:
            return list(rows), [Flag("redox_atoms_fallback", "note",
                                     f"{what} not found in the atoms: all atoms used for distances")]
        return [int(rows[i]) for i in found], []

    def _flavin(self, rows: np.ndarray, entry) -> None:
        c = self.cand
        ring = isoalloxazine_atoms(c.xyz[rows], c.element[rows])
        if entry is None and ring is None:
            return  # an unknown residue that is no flavin
        redox, flags = self._ring_or_all(rows, ring, "isoalloxazine ring")
        code = str(c.resname[rows[0]])
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=code if entry else None, category="flavin",
            cls=entry.cls if entry else "flavin", composition=composition_string(c.element[rows]),
            detected_by=("ccd+geometry" if ring is not None else "ccd") if entry else "geometry",
            flags=flags,
        )
        self.cofactors.append((int(c.res_id[rows[0]]), cof))

    def _quinone(self, rows: np.ndarray, entry) -> None:
        c = self.cand
        ring = quinone_ring_atoms(c.xyz[rows], c.element[rows])
        redox, flags = self._ring_or_all(rows, ring, "quinone ring with two terminal O")
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=str(c.resname[rows[0]]), category="quinone",
            cls=entry.cls, composition=composition_string(c.element[rows]),
            detected_by="ccd+geometry" if ring is not None else "ccd", flags=flags,
        )
        self.cofactors.append((int(c.res_id[rows[0]]), cof))

    def _heme(self, rid: int, rows: np.ndarray, fe: int | None, entry) -> None:
        c = self.cand
        flags: list[Flag] = []
        cls = entry.cls if entry else "heme"
        ligands: list = []
        extra: dict = {}
        if fe is not None:
            local = porphyrin_atoms(c.xyz[rows], c.element[rows], int(np.flatnonzero(rows == fe)[0]))
            redox, flags = self._ring_or_all(rows, local, "porphyrin macrocycle")
            env = self.env
            env_rows = self._env_rows(rows)
            env_fe = env_rows[list(rows).index(fe)]
            ligs, _ = find_ligands(env, [env_fe], set(env_rows), {rid}, tree=self._env_tree)
            ligands = [lig for _, lig in ligs]
            extra["axial_ligands"] = [f"{lig.kind} {lig.atom.residue}" for lig in ligands]
            linked = self._thioether_cys(env, env_rows, _THIOETHER_MAX)
            extra["thioether_links"] = len(linked)
            if linked and cls in ("heme b", "heme"):
                flags.append(Flag("heme_reclassified", "note",
                                  f"filed as {c.resname[rows[0]]} but bound to {len(linked)} Cys by thioether "
                                  f"link{'s' if len(linked) > 1 else ''}: classed as heme c"))
                cls = "heme c"
            elif cls in ("heme b", "heme"):
                near = self._thioether_cys(env, env_rows, _CXXCH_SG_MAX)
                pair = [(a, b) for a in near for b in near if a[0] == b[0] and b[1] - a[1] == 3]
                if pair:
                    (ch, n1, _), (_, n2, _) = pair[0]
                    flags.append(Flag("heme_reclassified", "note",
                                      f"filed as {c.resname[rows[0]]} with no thioether bonds modelled, but Cys "
                                      f"{ch}/{n1} and {ch}/{n2} (a CxxC motif) reach the vinyl carbons within "
                                      f"{_CXXCH_SG_MAX} Å: classed as heme c"))
                    cls = "heme c"
        else:
            redox, flags = self._ring_or_all(rows, None, "heme iron")
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=str(c.resname[rows[0]]) if entry else None,
            category="heme", cls=cls, composition=composition_string(c.element[rows]),
            detected_by=("ccd+geometry" if fe is not None else "ccd") if entry else "geometry",
            ligands=tuple(ligands), flags=flags, extra=extra,
        )
        self.cofactors.append((rid, cof))

    @staticmethod
    def _thioether_cys(env: AtomArrays, heme_rows: list[int], max_d: float) -> list[tuple[str, int, str]]:
        """Cys residues (chain, number, icode) whose SG lies within ``max_d`` Å of a heme carbon."""
        sg = np.flatnonzero((env.element == "S") & (env.name == "SG"))
        carbons = [r for r in heme_rows if env.element[r] == "C"]
        if len(sg) == 0 or not carbons:
            return []
        d = np.linalg.norm(env.xyz[sg][:, None, :] - env.xyz[carbons][None, :, :], axis=2)
        linked = sg[np.any(d < max_d, axis=1)]
        return sorted({(str(env.chain[i]), int(env.seqnum[i]), str(env.icode[i])) for i in linked})

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
        env_metals = [e for e, ci in zip(env_core, core) if c.element[ci] in METALS]
        ligs, clashes = find_ligands(env, env_metals, set(env_core), set(res_ids), tree=self._env_tree)
        elements = [str(c.element[i]) for i in core]
        composition = composition_string(elements)
        category, cls = core_class(elements, site.bonds, core)
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
        if code is not None and entry is None and code not in METAL_ION_CODES:
            code = None  # UNL, LIG or a private name: not a CCD code of a cofactor
        detected_by = "geometry"
        expected = None
        if entry is not None:
            base = cls.replace("Rieske ", "")
            if base == entry.cls or cls == entry.cls:
                detected_by = "ccd+geometry"
            else:
                detected_by = "ccd"
                cls = entry.cls
                category = entry.category
            expected = entry.composition or None
        flags, coordination = check_metal_site(
            cls, composition, expected, env, env_core, ligs, clashes, self.margin
        )
        if entry is not None and detected_by == "ccd" and not any(f.code == "incomplete_cluster" for f in flags):
            flags.append(Flag("class_mismatch", "warning",
                              f"atoms form {core_class(elements, site.bonds, core)[1]} but the code says {entry.cls}"))
        first_metal = next(i for i in core if c.element[i] in METALS)
        cof = self._record(
            c, atom_rows, core, first_metal, ccd_code=code, category=category, cls=cls,
            composition=composition, detected_by=detected_by, ligands=tuple(ligands), flags=flags,
            motif=binding_motif(ligands), extra={"coordination": coordination},
        )
        self.cofactors.append((int(c.res_id[first_metal]), cof))


def find_cofactors(model: gemmi.Model, *, model_number: int = 1, resolution: float | None = None,
                   coordinate_error: float | None = None) -> list[Cofactor]:
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

    Returns
    -------
    list of Cofactor
        In file order of the residue naming each cofactor.
    """
    b = _Builder(model, model_number, resolution, coordinate_error)
    heme_fe = b.heme_iron()
    sites = b.find_sites(heme_fe)
    points = [b.cand.xyz[i] for i in heme_fe.values()]
    points += [b.cand.xyz[i] for s in sites for i in s.core if b.cand.element[i] in METALS]
    b.prepare_environment(np.asarray(points, dtype=float).reshape(-1, 3))
    b.organic(heme_fe)
    for site in sites:
        b.metal_site(site)
    b.cofactors.sort(key=lambda t: t[0])
    return _unique_keys([cof for _, cof in b.cofactors])


def _unique_keys(cofactors: list[Cofactor]) -> list[Cofactor]:
    """Give a part suffix to cofactors that share a naming residue (altloc letter, else 1, 2...)."""
    from dataclasses import replace

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


def count_not_analysed(model: gemmi.Model) -> dict[str, int]:
    """Residues of known redox-active groups that fescan does not model, by CCD code.

    Parameters
    ----------
    model : gemmi.Model

    Returns
    -------
    dict of str to int
        For example ``{"CLA": 70, "PHO": 4}`` (codes of category ``not analysed``
        in the packaged CCD table), in code order.
    """
    table = ccd_table()
    wanted = {k for k, v in table.items() if v.category == "not analysed"}
    counts: dict[str, int] = {}
    for ch in model:
        for res in ch:
            if res.name in wanted:
                counts[res.name] = counts.get(res.name, 0) + 1
    return dict(sorted(counts.items()))
