"""Columnar atom arrays extracted from a gemmi model, residue by residue.

Only the residues that matter are turned into numpy arrays: every non-standard,
non-water residue (cofactor candidates), and the residues around metal sites.
A Python loop over all atoms of a large model would cost more than reading it.
"""

from __future__ import annotations

from dataclasses import dataclass

import gemmi
import numpy as np
from scipy.spatial import cKDTree

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
        x, y, z = (float(v) for v in self.xyz[i])
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

    def subset(self, idx: np.ndarray) -> AtomArrays:
        """Return the rows ``idx`` as new arrays."""
        return AtomArrays(*(getattr(self, f)[idx] for f in self.__slots__))  # type: ignore[attr-defined]


class ModelIndex:
    """Residue-level index of one gemmi model, with lazy atom extraction.

    Parameters
    ----------
    model : gemmi.Model
        The model to index (kept alive by the caller).
    skip : frozenset of str, optional
        Residue names never treated as cofactor candidates (their atoms still
        count as surroundings of a metal site).
    """

    def __init__(self, model: gemmi.Model, skip: frozenset[str] = frozenset()) -> None:
        self.residues: list[tuple[str, gemmi.Residue]] = []
        reps: list[tuple[float, float, float]] = []
        cand: list[bool] = []
        for ch in model:
            cname = ch.name
            for res in ch:
                if len(res) == 0:
                    continue
                self.residues.append((cname, res))
                p = res[0].pos
                reps.append((p.x, p.y, p.z))
                rn = res.name
                cand.append(rn not in STANDARD_RESIDUES and rn not in WATER_NAMES and rn not in skip)
        self.rep_xyz = np.asarray(reps, dtype=float).reshape(-1, 3)
        self.is_candidate = np.asarray(cand, dtype=bool)
        self._rep_tree: cKDTree | None = None
        self.hidden: frozenset[int] = frozenset()

    def hide(self, res_ids) -> None:
        """Leave these residues out of every later extraction (alternative states of a kept residue)."""
        self.hidden = frozenset(int(r) for r in res_ids)
        for r in self.hidden:
            self.is_candidate[r] = False

    def extract(self, res_ids: np.ndarray | list[int]) -> AtomArrays:
        """Extract all atoms of the given residues (in the given order)."""
        cols: dict[str, list] = {k: [] for k in AtomArrays.__slots__}  # type: ignore[attr-defined]
        for rid in res_ids:
            cname, res = self.residues[int(rid)]
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
            self._rep_tree = cKDTree(self.rep_xyz)
        hits = self._rep_tree.query_ball_point(np.asarray(points, dtype=float), r=radius)
        ids = set()
        for h in hits:
            ids.update(h)
        return np.asarray(sorted(ids - self.hidden), dtype=int)

    def environment(self, points: np.ndarray, radius: float = _REP_RADIUS) -> AtomArrays:
        """Atoms of all residues (standard or not) near the given points."""
        return self.extract(self.residues_near(points, radius))


def index_model(model: gemmi.Model) -> ModelIndex:
    """Build the residue index of a model (see :class:`ModelIndex`)."""
    return ModelIndex(model)
