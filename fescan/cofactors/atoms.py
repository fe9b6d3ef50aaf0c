"""Columnar atom arrays extracted from a gemmi model, residue by residue.

Only the residues that matter are turned into numpy arrays: every non-standard,
non-water residue (cofactor candidates), and the residues around metal sites.
A Python loop over all atoms of a large model would cost more than reading it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import gemmi
import numpy as np

from fescan.core.neighbours import NeighbourTree
from fescan.core.records import AtomRef

__all__ = ["STANDARD_RESIDUES", "WATER_NAMES", "AtomArrays", "ModelIndex", "index_model"]

#: Polymer residues that never hold a cofactor (amino acids and nucleotides).
STANDARD_RESIDUES = frozenset(
    "ALA ARG ASN ASP CYS GLN GLU GLY HIS ILE LEU LYS MET PHE PRO SER THR TRP TYR VAL "
    "MSE SEC PYL HSD HSE HSP HID HIE HIP CYX CYM ASH GLH LYN "
    "A C G U I DA DC DG DT DU DI N DN".split()
)
#: Residue names of water.
WATER_NAMES = frozenset({"HOH", "WAT", "DOD", "H2O", "TIP", "TIP3", "SOL"})

_REP_RADIUS = 12.5  # Å: ligand (3 Å) + core (2.5 Å) + residue extent from its first atom (< 7.5 Å)


@dataclass(slots=True)
class AtomArrays:
    """Atoms as parallel numpy arrays (one row per atom).

    Attributes
    ----------
    xyz : ndarray, shape=(n, 3)
        Coordinates in Å.
    element : ndarray of str
        Upper-case element symbols (``"FE"``, ``"S"``).
    name, resname, chain, icode, altloc : ndarray of str
    seqnum : ndarray of int
    occ, b : ndarray of float
    res_id : ndarray of int
        Index of the residue in :class:`ModelIndex` (same value = same residue).
    standard : ndarray of bool
        True for atoms of standard polymer residues or water.
    ordinal : ndarray of int
        Position of the atom inside its residue (with ``res_id``, a unique key).
    """

    xyz: np.ndarray
    element: np.ndarray
    name: np.ndarray
    resname: np.ndarray
    chain: np.ndarray
    seqnum: np.ndarray
    icode: np.ndarray
    altloc: np.ndarray
    occ: np.ndarray
    b: np.ndarray
    res_id: np.ndarray
    standard: np.ndarray
    ordinal: np.ndarray

    def __len__(self) -> int:
        return len(self.xyz)

    def ref(self, i: int) -> AtomRef:
        """Return atom ``i`` as an :class:`AtomRef`."""
        x, y, z = self.xyz[i].tolist()
        return AtomRef(
            chain=str(self.chain[i]),
            seqnum=int(self.seqnum[i]),
            icode=str(self.icode[i]),
            resname=str(self.resname[i]),
            name=str(self.name[i]),
            element=str(self.element[i]),
            xyz=(round(x, 4), round(y, 4), round(z, 4)),
            occupancy=float(self.occ[i]),
            b_iso=float(self.b[i]),
            altloc=str(self.altloc[i]),
        )

    def refs(self, rows) -> list[AtomRef]:
        """Return the atoms ``rows`` as :class:`AtomRef` (columns gathered once, not atom by atom)."""
        idx = np.asarray(rows, dtype=np.intp).reshape(-1)
        cols = zip(self.chain[idx].tolist(), self.seqnum[idx].tolist(), self.icode[idx].tolist(),
                   self.resname[idx].tolist(), self.name[idx].tolist(), self.element[idx].tolist(),
                   self.xyz[idx].tolist(), self.occ[idx].tolist(), self.b[idx].tolist(),
                   self.altloc[idx].tolist())
        # tolist() gives Python str, int and float already: no per-value conversion
        return [AtomRef(c, n, i, r, a, e, (round(x, 4), round(y, 4), round(z, 4)), o, b, al)
                for c, n, i, r, a, e, (x, y, z), o, b, al in cols]

    def subset(self, idx: np.ndarray) -> AtomArrays:
        """Return the rows ``idx`` as new arrays."""
        return AtomArrays(*(getattr(self, f)[idx] for f in self.__slots__))  # type: ignore[attr-defined]


_NAME_WIDTH = 8  # gemmi.FlatStructure keeps at most 8 bytes of a chain, residue or atom name


@lru_cache(maxsize=1)
def _element_names() -> np.ndarray:
    """Upper-case element symbol by atomic number (gemmi's numbering; 0 is ``X``)."""
    return np.asarray([gemmi.Element(z).name.upper() for z in range(119)], dtype=object)


def _text(arr: np.ndarray) -> np.ndarray:
    """Bytes array (``S8``) → object array of ``str``."""
    return arr.astype(f"U{max(arr.dtype.itemsize, 1)}").astype(object)


def _chars(codes: np.ndarray, blank: int) -> np.ndarray:
    """One-byte codes → object array of one-character ``str`` (``""`` for ``blank`` and 0)."""
    table = np.asarray([""] + [chr(k) for k in range(1, 256)], dtype=object)
    table[blank] = ""
    return table[codes.astype(np.uint8)]


def _ends(model: gemmi.Model) -> list[tuple[float, float, float]]:
    """Positions of the first and last atom of the model (empty when it has none)."""
    chains = [ch for ch in model if len(ch)]
    if not chains:
        return []
    first = next((res[0] for res in chains[0] if len(res)), None)
    tail = chains[-1]
    last = next((tail[k][len(tail[k]) - 1] for k in range(len(tail) - 1, -1, -1) if len(tail[k])), None)
    return [a.pos.tolist() for a in (first, last) if a is not None]


def _looks_same(a: gemmi.Model, b: gemmi.Model) -> bool:
    """Whether ``a`` is (as far as a cheap look tells) the model ``b``: same atom count, same end atoms."""
    return a.count_atom_sites() == b.count_atom_sites() and _ends(a) == _ends(b)


class _Flat:
    """The model's atoms as whole-model numpy columns, read by gemmi in compiled code."""

    __slots__ = ("pos", "elements", "names", "resnames", "chains", "resnums", "icodes", "altlocs", "occ", "b")

    def __init__(self, model: gemmi.Model, structure: gemmi.Structure | None = None) -> None:
        if structure is not None and len(structure) == 1 and _looks_same(structure[0], model):
            st = structure  # the model is the structure's only one: read in place
        else:
            st = gemmi.Structure()
            st.add_model(model)  # a copy: FlatStructure takes a structure, the caller's stays untouched
        flat = gemmi.FlatStructure(st)
        flat.strings_as_numbers = False
        self.pos = flat.pos
        self.elements = flat.elements
        self.names = flat.atom_names
        self.resnames = flat.residue_names
        self.chains = flat.chain_ids
        self.resnums = flat.resnums
        self.icodes = flat.icodes
        self.altlocs = flat.altlocs
        self.occ = flat.occ
        self.b = flat.b_iso

    def faithful(self) -> bool:
        """False when a name may have been cut to 8 bytes or is not ASCII (then the loop is used)."""
        for arr in (self.names, self.resnames, self.chains):
            if len(arr) == 0:
                continue
            raw = arr.view(np.uint8).reshape(len(arr), -1)
            if raw.shape[1] >= _NAME_WIDTH and raw[:, _NAME_WIDTH - 1].any():
                return False
            if (raw >= 128).any():
                return False
        return True


class ModelIndex:
    """Residue-level index of one gemmi model, with lazy atom extraction.

    The atoms are read once as whole-model numpy columns (``gemmi.FlatStructure``,
    compiled code); extracting residues is then array indexing, with no Python loop
    over atoms. Only a names check (longer than gemmi's 8-byte columns, or not ASCII)
    falls back to reading the atoms one by one, with the same results.

    Parameters
    ----------
    model : gemmi.Model
        The model to index (kept alive by the caller).
    skip : frozenset of str, optional
        Residue names never treated as cofactor candidates (their atoms still
        count as surroundings of a metal site).
    bulk : bool, optional
        Read the columns in compiled code (default). ``False`` reads atom by atom
        (the reference the bulk path is tested against).
    structure : gemmi.Structure, optional
        The structure whose only model is ``model``: its columns are read in place
        (without it, from a copy of the model).
    """

    def __init__(self, model: gemmi.Model, skip: frozenset[str] = frozenset(), *, bulk: bool = True,
                 structure: gemmi.Structure | None = None) -> None:
        self._model = model
        chains = list(model)
        self._chain_names = [ch.name for ch in chains]
        self._flat: _Flat | None = None
        n_atoms, chain_atoms = 0, []
        if bulk:
            chain_atoms = [ch.count_atom_sites() for ch in chains]
            n_atoms = sum(chain_atoms)
            try:
                flat: _Flat | None = _Flat(model, structure)
            except (RuntimeError, ValueError):  # gemmi refuses names longer than its columns
                flat = None
            if flat is not None and len(flat.pos) == n_atoms and flat.faithful():
                self._flat = flat
        if self._flat is None or not self._residues_from_columns(self._flat, chains, chain_atoms):
            self._residues_from_model(chains)
        if self._flat is not None:
            first = self._start
            self.rep_xyz = np.array(self._flat.pos[first], dtype=float).reshape(-1, 3)
            raw_names = self._flat.resnames[first]
            if len(first):  # names decoded once per distinct name, not once per residue
                codes, inverse = np.unique(raw_names, return_inverse=True)
                names = _text(codes)
            else:
                names, inverse = np.zeros(0, dtype=object), np.zeros(0, dtype=np.intp)
        else:
            # residue lists by the same (chain, residue) order; gemmi objects only on this path
            residues = [res for ch in chains for res in ch if len(res)]
            self.rep_xyz = np.asarray([res[0].pos.tolist() for res in residues], dtype=float).reshape(-1, 3)
            self._residues = residues
            listed = np.asarray([res.name for res in residues], dtype=object)
            names, inverse = np.unique(listed.astype(str), return_inverse=True) if len(listed) \
                else (np.zeros(0, dtype=str), np.zeros(0, dtype=np.intp))
            names = names.astype(object)
        inverse = np.asarray(inverse, dtype=np.intp).reshape(-1)
        self._res_names = names[inverse] if len(inverse) else np.zeros(0, dtype=object)
        self._name_table, self._name_of = names, inverse
        std = np.asarray([n in STANDARD_RESIDUES or n in WATER_NAMES for n in names], dtype=bool)
        skipped = np.asarray([n in skip for n in names], dtype=bool)
        self._standard = std[inverse].reshape(-1)
        self.is_candidate = ~(std | skipped)[inverse].reshape(-1)
        self._rep_tree: NeighbourTree | None = None
        self.hidden: frozenset[int] = frozenset()

    def _residues_from_model(self, chains: list) -> None:
        """Residue sizes, first rows and chains, residue by residue (the reference)."""
        sizes = [[len(res) for res in ch] for ch in chains]
        per_chain = np.asarray([len(s) for s in sizes], dtype=np.intp)
        size_all = np.asarray([n for s in sizes for n in s], dtype=np.intp)
        start_all = np.cumsum(size_all) - size_all
        chain_all = np.repeat(np.arange(len(chains)), per_chain)
        keep = size_all > 0  # empty residues are not indexed
        self._size, self._start, self._chain_of = size_all[keep], start_all[keep], chain_all[keep]

    def _residues_from_columns(self, flat: _Flat, chains: list, chain_atoms: list[int]) -> bool:
        """Residue sizes, first rows and chains from the atom columns; False when they cannot be trusted.

        A residue starts where the chain, number, insertion code or name changes.
        Every such change is a true residue start, so when their count equals the
        model's number of residues (no empty residue, no two neighbours with the
        same id) the residues are exactly these; otherwise the model is walked.
        """
        chain_of_atom = np.repeat(np.arange(len(chains)), chain_atoms)
        n = len(chain_of_atom)
        if n == 0:
            return False
        change = np.ones(n, dtype=bool)
        change[1:] = ((chain_of_atom[1:] != chain_of_atom[:-1]) | (flat.resnums[1:] != flat.resnums[:-1])
                      | (flat.icodes[1:] != flat.icodes[:-1]) | (flat.resnames[1:] != flat.resnames[:-1]))
        start = np.flatnonzero(change)
        if len(start) != sum(len(ch) for ch in chains):
            return False
        self._start = start.astype(np.intp)
        self._size = np.diff(np.append(start, n)).astype(np.intp)
        self._chain_of = chain_of_atom[start]
        return True

    def hide(self, res_ids) -> None:
        """Leave these residues out of every later extraction (alternative states of a kept residue)."""
        self.hidden = frozenset(int(r) for r in res_ids)
        for r in self.hidden:
            self.is_candidate[r] = False

    def amino_acids_per_chain(self) -> dict[str, int]:
        """Number of amino-acid residues (gemmi's table of components) in each chain."""
        if not len(self._res_names):
            return {}
        names, inverse = self._name_table, self._name_of
        amino = np.asarray([(info := gemmi.find_tabulated_residue(str(n))) is not None and info.is_amino_acid()
                            for n in names], dtype=bool)
        counts = np.bincount(self._chain_of[amino[inverse.reshape(-1)]], minlength=len(self._chain_names))
        out: dict[str, int] = {}
        for k, n in enumerate(counts.tolist()):  # two chains may share a name: count them together
            if n:
                out[self._chain_names[k]] = out.get(self._chain_names[k], 0) + n
        return out

    @property
    def n_residues(self) -> int:
        """Number of (non-empty) residues indexed."""
        return len(self._size)

    def extract(self, res_ids: np.ndarray | list[int]) -> AtomArrays:
        """Extract all atoms of the given residues (in the given order)."""
        ids = np.asarray(res_ids, dtype=np.intp).reshape(-1)
        if self._flat is None:
            return self._extract_loop(ids)
        sz = self._size[ids]
        which = np.repeat(np.arange(len(ids)), sz)
        ordinal = np.arange(int(sz.sum())) - np.repeat(np.cumsum(sz) - sz, sz)
        rows = self._start[ids][which] + ordinal
        f = self._flat
        icode = _chars(f.icodes[rows], ord(" "))
        return AtomArrays(
            xyz=np.array(f.pos[rows], dtype=float).reshape(-1, 3),
            element=_element_names()[f.elements[rows]],
            name=_text(f.names[rows]),
            resname=self._res_names[ids][which],
            chain=np.asarray(self._chain_names, dtype=object)[self._chain_of[ids]][which]
            if len(ids) else np.zeros(0, dtype=object),
            seqnum=f.resnums[rows].astype(int),
            icode=icode,
            altloc=_chars(f.altlocs[rows], 0),
            occ=f.occ[rows].astype(float),
            b=f.b[rows].astype(float),
            res_id=ids[which].astype(int),
            standard=self._standard[ids][which],
            ordinal=ordinal.astype(int),
        )

    def _extract_loop(self, res_ids: np.ndarray) -> AtomArrays:
        """Atom-by-atom extraction (the reference; used when the bulk columns cannot be)."""
        residues = getattr(self, "_residues", None)
        if residues is None:
            residues = self._residues = [res for ch in self._model for res in ch if len(res)]
        cols: dict[str, list] = {k: [] for k in AtomArrays.__slots__}  # type: ignore[attr-defined]
        for rid in res_ids:
            res = residues[int(rid)]
            cname = self._chain_names[int(self._chain_of[int(rid)])]
            rn = res.name
            std = rn in STANDARD_RESIDUES or rn in WATER_NAMES
            num = res.seqid.num
            ic = res.seqid.icode.strip()
            for k, a in enumerate(res):
                p = a.pos
                cols["xyz"].append((p.x, p.y, p.z))
                cols["element"].append(a.element.name.upper())
                cols["name"].append(a.name)
                cols["resname"].append(rn)
                cols["chain"].append(cname)
                cols["seqnum"].append(num)
                cols["icode"].append(ic)
                cols["altloc"].append(a.altloc if a.altloc != "\x00" else "")
                cols["occ"].append(a.occ)
                cols["b"].append(a.b_iso)
                cols["res_id"].append(int(rid))
                cols["standard"].append(std)
                cols["ordinal"].append(k)
        n = len(cols["xyz"])
        return AtomArrays(
            xyz=np.asarray(cols["xyz"], dtype=float).reshape(n, 3),
            element=np.asarray(cols["element"], dtype=object),
            name=np.asarray(cols["name"], dtype=object),
            resname=np.asarray(cols["resname"], dtype=object),
            chain=np.asarray(cols["chain"], dtype=object),
            seqnum=np.asarray(cols["seqnum"], dtype=int),
            icode=np.asarray(cols["icode"], dtype=object),
            altloc=np.asarray(cols["altloc"], dtype=object),
            occ=np.asarray(cols["occ"], dtype=float),
            b=np.asarray(cols["b"], dtype=float),
            res_id=np.asarray(cols["res_id"], dtype=int),
            standard=np.asarray(cols["standard"], dtype=bool),
            ordinal=np.asarray(cols["ordinal"], dtype=int),
        )

    def candidates(self) -> AtomArrays:
        """Atoms of every non-standard, non-water residue."""
        return self.extract(np.flatnonzero(self.is_candidate))

    def residues_near(self, points: np.ndarray, radius: float = _REP_RADIUS) -> np.ndarray:
        """Indices of residues whose first atom lies within ``radius`` Å of any point."""
        if len(points) == 0 or len(self.rep_xyz) == 0:
            return np.zeros(0, dtype=int)
        if self._rep_tree is None:
            self._rep_tree = NeighbourTree(self.rep_xyz)
        hits = self._rep_tree.query_ball_point(np.asarray(points, dtype=float).reshape(-1, 3), r=radius)
        ids = {i for h in hits for i in h} - self.hidden
        return np.asarray(sorted(ids), dtype=int)

    def environment(self, points: np.ndarray, radius: float = _REP_RADIUS) -> AtomArrays:
        """Atoms of all residues (standard or not) near the given points."""
        return self.extract(self.residues_near(points, radius))


def index_model(model: gemmi.Model) -> ModelIndex:
    """Build the residue index of a model (see :class:`ModelIndex`)."""
    return ModelIndex(model)
