"""Typed records shared by every stage: atoms, ligands, flags and cofactors.

Records are frozen dataclasses holding plain Python values (tuples, floats,
strings), so they pickle cheaply for worker processes and compare by value.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

__all__ = [
    "AtomRef",
    "Ligand",
    "Flag",
    "Cofactor",
    "residue_key",
    "CATEGORIES",
    "ROLES",
    "ION_SITE_METALS",
]

#: Cofactor categories, in the order tables list them.
CATEGORIES: tuple[str, ...] = (
    "iron-sulfur",
    "flavin",
    "quinone",
    "heme",
    "copper",
    "iron",
    "metal",
)


#: Roles a cofactor can play in electron transfer (see :class:`Cofactor`).
ROLES: tuple[str, ...] = ("relay", "catalytic", "structural", "ion or additive")


#: Metals with no redox chemistry in proteins: a site holding only these is listed apart
#: (role structural or ion or additive), never counted as a redox cofactor nor put on a wire.
ION_SITE_METALS = frozenset({"ZN", "CA", "MG"})
_LIGHT = frozenset({"S", "SE", "C", "N", "O"})


def residue_key(chain: str, seqnum: int, icode: str = "") -> str:
    """Return the selector string ``CHAIN/RESNUM[ICODE]`` of a residue.

    Parameters
    ----------
    chain : str
        Chain name (author chain id).
    seqnum : int
        Residue sequence number (author numbering).
    icode : str, optional
        Insertion code, empty when there is none.

    Returns
    -------
    str
        For example ``"B/245"`` or ``"A/52A"``.

    Examples
    --------
    >>> residue_key("B", 245)
    'B/245'
    >>> residue_key("A", 52, "A")
    'A/52A'
    """
    return f"{chain}/{seqnum}{icode.strip()}"


@dataclass(frozen=True, slots=True)
class AtomRef:
    """One atom, named as the file names it, with its coordinates.

    Attributes
    ----------
    chain, seqnum, icode, resname, name, element, altloc :
        Identity of the atom as written in the file (element upper-case, e.g. ``"FE"``).
    xyz : tuple of float
        Cartesian coordinates in Å.
    occupancy, b_iso : float
        Occupancy (0-1) and isotropic B-factor (Å²).
    """

    chain: str
    seqnum: int
    icode: str
    resname: str
    name: str
    element: str
    xyz: tuple[float, float, float]
    occupancy: float = 1.0
    b_iso: float = 0.0
    altloc: str = ""

    @property
    def residue(self) -> str:
        """Selector of the residue holding the atom (``CHAIN/RESNUM``)."""
        return residue_key(self.chain, self.seqnum, self.icode)

    def label(self) -> str:
        """Short human label, e.g. ``"CYS A/8 SG"``."""
        return f"{self.resname} {self.residue} {self.name}"


@dataclass(frozen=True, slots=True)
class Ligand:
    """A bond from a cofactor metal atom to an atom outside the cofactor core.

    Attributes
    ----------
    metal : str
        Name of the metal atom in the cofactor (e.g. ``"FE1"``).
    metal_element : str
        Element of that metal (``"FE"``, ``"NI"``...).
    atom : AtomRef
        The ligating atom (for example Cys SG or His NE2).
    distance : float
        Metal–ligand distance in Å.
    kind : str
        ``"Cys S"``, ``"His N"``, ``"Met S"``, ``"O"``... as the checks group them.
    """

    metal: str
    metal_element: str
    atom: AtomRef
    distance: float
    kind: str


@dataclass(frozen=True, slots=True)
class Flag:
    """A finding of the checks, in plain words.

    Attributes
    ----------
    code : str
        Stable machine-readable code, e.g. ``"missing_ligand"``.
    severity : str
        ``"warning"`` (probably a modelling problem) or ``"note"`` (unusual but
        known in nature, for information).
    message : str
        Plain-language sentence for people.
    """

    code: str
    severity: str
    message: str


@dataclass(frozen=True, slots=True)
class Cofactor:
    """One redox cofactor found in a structure.

    Attributes
    ----------
    model : int
        Model number the cofactor was read from.
    chain, seqnum, icode : str, int, str
        Residue that names the cofactor (for a cluster spread over several
        residues, the residue of its first metal atom).
    ccd_code : str or None
        wwPDB CCD code when the cofactor is one residue with a known code;
        ``None`` when it was found by geometry alone.
    category : str
        One of :data:`CATEGORIES`.
    cls : str
        Class as the trade writes it (``"[4Fe-4S]"``, ``"Rieske [2Fe-2S]"``, ``"FMN"``, ``"heme c"``).
    composition : str
        Element composition of the core (e.g. ``"Fe4S4"``).
    residues : tuple of str
        Every residue (``CHAIN/RESNUM RESNAME``) whose atoms make up the cofactor.
    atoms : tuple of AtomRef
        All (non-hydrogen) atoms of the cofactor.
    redox_atoms : tuple of AtomRef
        The redox-active subset used for edge-to-edge distances.
    centroid : tuple of float
        Mean position of the redox-active atoms (Å).
    mean_occupancy, mean_b : float
        Means over all atoms of the cofactor.
    detected_by : str
        ``"ccd+geometry"`` when both ways agree, else ``"ccd"`` or ``"geometry"``.
    ligands : tuple of Ligand
        Bonds from cofactor metals to atoms outside the core.
    flags : tuple of Flag
        Findings of the ligation and geometry checks.
    motif : str or None
        Spacing of the ligating protein residues in sequence (``"C-x2-C-x2-C-x3-C"``).
    part : str
        Suffix that tells apart several cofactors named by the same residue
        (altloc letter or a running number); empty otherwise.
    role : str
        One of :data:`ROLES`: ``"relay"`` (carries single electrons through a
        chain), ``"catalytic"`` (a multi-electron active site: a wire may start or
        end there, never pass through), ``"structural"`` (a metal with no redox role
        at that site) or ``"ion or additive"`` (oxoanions, adventitious ions,
        additives). Only relays and catalytic sites enter the wire.
    role_reason : str
        Why the role was given, in plain words (table row, geometry, user file).
    subclass : str
        Finer type that decides the redox couple (``"HiPIP-type"``,
        ``"ferredoxin-type"``, ``"bc1/b6f-type"``, ``"His/Met"``, ``"type 1"``...);
        empty when undetermined.
    states : tuple of str
        Alternative states modelled on top of each other and merged into this one
        cofactor (``"CLF A/1001 occ 0.5"``...); empty for a single state.
    """

    model: int
    chain: str
    seqnum: int
    icode: str
    ccd_code: str | None
    category: str
    cls: str
    composition: str
    residues: tuple[str, ...]
    atoms: tuple[AtomRef, ...]
    redox_atoms: tuple[AtomRef, ...]
    centroid: tuple[float, float, float]
    mean_occupancy: float
    mean_b: float
    detected_by: str
    ligands: tuple[Ligand, ...] = ()
    flags: tuple[Flag, ...] = ()
    motif: str | None = None
    part: str = ""
    role: str = "relay"
    role_reason: str = ""
    subclass: str = ""
    states: tuple[str, ...] = ()
    extra: dict[str, Any] = field(default_factory=dict, compare=False, hash=False)
    _uid: str = field(init=False, default="", repr=False, compare=False, hash=False)

    def __post_init__(self) -> None:
        # the id is asked for at every graph step: made once (``replace`` makes it again)
        object.__setattr__(self, "_uid", f"{self.model}:{self.key}:{self.ccd_code or '-'}")

    @property
    def key(self) -> str:
        """Selector ``CHAIN/RESNUM[ICODE]``, unique within a model.

        When one residue holds several cofactors (two clusters in one UNL
        residue, or alternative conformations kept with ``altloc="all"``), each
        gets a part suffix: ``A/501#2`` or ``A/56#B``.
        """
        base = residue_key(self.chain, self.seqnum, self.icode)
        return f"{base}#{self.part}" if self.part else base

    @property
    def uid(self) -> str:
        """Stable id: ``MODEL:CHAIN/RESNUM[ICODE]:CODE`` (``CODE`` is ``-`` when none)."""
        return self._uid

    @property
    def is_ion_site(self) -> bool:
        """True for a Zn, Ca or Mg site (:data:`ION_SITE_METALS`), listed apart from the redox cofactors."""
        metals = {a.element for a in self.redox_atoms} - _LIGHT
        return bool(metals) and metals <= ION_SITE_METALS

    @property
    def label(self) -> str:
        """Short human label, e.g. ``"[4Fe-4S] A/56"``."""
        return f"{self.cls} {self.key}"

    def to_dict(self, *, with_atoms: bool = False) -> dict[str, Any]:
        """Return a JSON-ready record of the cofactor.

        Parameters
        ----------
        with_atoms : bool, optional
            Also list every atom and the redox-active atoms (large).

        Returns
        -------
        dict
            Keys ``id, model, chain, resnum, icode, ccd_code, category, class,
            composition, residues, n_atoms, n_redox_atoms, centroid,
            mean_occupancy, mean_b, detected_by, ligands, flags, motif``.
        """
        rec: dict[str, Any] = {
            "id": self.uid,
            "selector": self.key,
            "model": self.model,
            "chain": self.chain,
            "resnum": self.seqnum,
            "icode": self.icode,
            "ccd_code": self.ccd_code,
            "category": self.category,
            "class": self.cls,
            "composition": self.composition,
            "residues": list(self.residues),
            "n_atoms": len(self.atoms),
            "n_redox_atoms": len(self.redox_atoms),
            "redox_atom_names": [a.name for a in self.redox_atoms],
            "centroid": [round(c, 3) for c in self.centroid],
            "mean_occupancy": round(self.mean_occupancy, 3),
            "mean_b": round(self.mean_b, 2),
            "detected_by": self.detected_by,
            "role": self.role,
            "role_reason": self.role_reason,
            "subclass": self.subclass,
            "states": list(self.states),
            "ligands": [
                {
                    "metal": lig.metal,
                    "residue": lig.atom.residue,
                    "resname": lig.atom.resname,
                    "atom": lig.atom.name,
                    "element": lig.atom.element,
                    "kind": lig.kind,
                    "distance": round(lig.distance, 3),
                }
                for lig in self.ligands
            ],
            "flags": [asdict(f) for f in self.flags],
            "motif": self.motif,
        }
        rec.update(self.extra)
        if with_atoms:
            rec["atoms"] = [asdict(a) for a in self.atoms]
            rec["redox_atoms"] = [asdict(a) for a in self.redox_atoms]
        return rec
