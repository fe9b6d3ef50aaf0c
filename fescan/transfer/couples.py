"""Redox couples of cofactor classes: the packaged table and the class/sub-class lookup.

The table ``fescan/data/potentials.csv`` has one row per couple of a class and
sub-class (columns ``class, subclass, category, couple, step, e_v, e_low_v,
e_high_v, citation, citation_kind``):

* ``step`` is ``1e`` for a one-electron centre (Fe–S clusters, hemes, Cu...),
  ``ox/sq`` and ``sq/red`` for the two one-electron couples of a flavin or a
  quinone (oxidised/semiquinone and semiquinone/reduced);
* ``citation`` names a paper or handbook (author, year, journal volume:page);
  ``citation_kind`` is ``primary``, ``review`` or ``from memory`` (a value
  remembered, to be checked against the cited paper before it is relied on);
* an empty ``e_v`` means no class value is defensible (Mo/W-pterin sites, a
  linear [3Fe-4S], an unclassified metal): the potential is *undetermined* and
  must come from the user's parameter file;
* class ``*`` rows are the fallback of a category; class ``reservoir`` rows are
  the two-electron pools a wire draws from or feeds (NADH, quinone pools, H2...),
  ``e_v`` being the per-electron midpoint of the n-electron couple.

Lookup (:func:`default_couples`): the row of the cofactor's class and sub-class,
then the class row (sub-class empty), then the category fallback. A sub-class
row may give only one of a two-electron cofactor's couples (photosystem II QA
has no physiological second reduction); the other comes from the class row.
Every default says it is a class (or sub-class) default, not a value measured
for the protein at hand.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

__all__ = [
    "STEPS",
    "CITATION_KINDS",
    "CLASS_DEFAULT",
    "Potential",
    "CoupleRow",
    "couple_table",
    "default_couples",
    "subclass_steps",
    "reservoir_rows",
    "reservoir_potential",
    "undetermined",
]

#: Couples a cofactor can use: one-electron centre, or the two couples of a 2e cofactor.
STEPS: tuple[str, ...] = ("1e", "ox/sq", "sq/red")
#: Allowed values of the ``citation_kind`` column.
CITATION_KINDS: tuple[str, ...] = ("primary", "review", "from memory")
#: What every packaged value is, in the words outputs show.
CLASS_DEFAULT = "class default, not measured for this protein"

_COLUMNS = ("class", "subclass", "category", "couple", "step", "e_v", "e_low_v", "e_high_v",
            "citation", "citation_kind")
_FALLBACK = "*"
_RESERVOIR = "reservoir"
#: Class labels the detection stage writes for sites the table names otherwise.
_ALIASES = {"MoFe7S9": "FeMo-co", "MoFe7S9C": "FeMo-co", "MoFe7S9N": "FeMo-co", "FeMo-co": "FeMo-co",
            "Mn4CaO5": "Mn4Ca", "FeFe H-cluster": "H-cluster", "NiFe centre": "NiFe", "NiFeSe": "NiFe",
            "Mo-pterin": "molybdopterin", "W-pterin": "molybdopterin", "Mo/W-pterin": "molybdopterin"}


@dataclass(frozen=True, slots=True)
class Potential:
    """One redox couple of one cofactor, as used.

    Attributes
    ----------
    e_v : float
        Midpoint potential in V vs SHE (NaN when undetermined).
    low_v, high_v : float
        Range seen in proteins for the class (both equal ``e_v`` for a user value).
    source : str
        Citation (paper or handbook) or the user file.
    origin : str
        ``"default"`` (packaged table) or ``"user file <path>"``.
    status : str
        Citation kind of a default (``primary``, ``review``, ``from memory``),
        ``"user"`` for a user value, ``"undetermined"`` when no value exists.
    couple : str
        The couple (``"[4Fe-4S] 2+/1+"``, ``"FMN sq/red"``...).
    step : str
        One of :data:`STEPS`.
    basis : str
        Plain words on what the value is (``"class default, not measured for this
        protein"``, ``"sub-class default (HiPIP-type), not measured for this protein"``,
        ``"user value"``...).
    """

    e_v: float
    low_v: float
    high_v: float
    source: str
    origin: str
    status: str = ""
    couple: str = ""
    step: str = "1e"
    basis: str = ""

    @property
    def determined(self) -> bool:
        """Whether a number exists (a default or a user value)."""
        return math.isfinite(self.e_v)

    def to_dict(self) -> dict:
        """JSON-ready record (``e_v`` ``None`` when undetermined)."""
        def num(x: float) -> float | None:
            return x if math.isfinite(x) else None

        return {"couple": self.couple, "step": self.step, "e_v": num(self.e_v), "low_v": num(self.low_v),
                "high_v": num(self.high_v), "source": self.source, "origin": self.origin,
                "citation_kind": self.status, "basis": self.basis}


@dataclass(frozen=True, slots=True)
class CoupleRow:
    """One row of ``fescan/data/potentials.csv`` (see the module docstring)."""

    cls: str
    subclass: str
    category: str
    couple: str
    step: str
    e_v: float | None
    e_low_v: float | None
    e_high_v: float | None
    citation: str
    citation_kind: str

    def to_potential(self, basis: str) -> Potential:
        """This row as a default :class:`Potential` with the given basis words."""
        if self.e_v is None:
            return undetermined(self.couple, self.step, self.citation)
        return Potential(self.e_v, self.e_low_v, self.e_high_v, self.citation, "default",  # type: ignore[arg-type]
                         self.citation_kind, self.couple, self.step, basis)


def undetermined(couple: str, step: str, why: str) -> Potential:
    """An undetermined couple: no number, the reason in ``source``."""
    nan = math.nan
    return Potential(nan, nan, nan, why, "default", "undetermined", couple, step,
                     "undetermined: no class value; give it in a parameter file")


def _float(text: str) -> float | None:
    return float(text) if text.strip() else None


def _parse(rec: dict[str, str], line: int) -> CoupleRow:
    where = f"fescan/data/potentials.csv line {line}"
    try:
        row = CoupleRow(rec["class"].strip(), rec["subclass"].strip(), rec["category"].strip(),
                        rec["couple"].strip(), rec["step"].strip(), _float(rec["e_v"]), _float(rec["e_low_v"]),
                        _float(rec["e_high_v"]), rec["citation"].strip(), rec["citation_kind"].strip())
    except (KeyError, TypeError, ValueError, AttributeError) as exc:
        raise RuntimeError(f"{where}: malformed row ({exc})") from None
    if not row.cls or not row.category or not row.citation or not row.couple:
        raise RuntimeError(f"{where}: empty class, category, couple or citation")
    if row.step not in STEPS:
        raise RuntimeError(f"{where}: step {row.step!r} is not one of {STEPS}")
    if row.citation_kind not in CITATION_KINDS:
        raise RuntimeError(f"{where}: citation_kind {row.citation_kind!r} is not one of {CITATION_KINDS}")
    if row.e_v is not None and not (row.e_low_v is not None and row.e_high_v is not None
                                    and row.e_low_v <= row.e_v <= row.e_high_v):
        raise RuntimeError(f"{where}: e_v must lie within [e_low_v, e_high_v]")
    return row


@lru_cache(maxsize=1)
def couple_table() -> tuple[CoupleRow, ...]:
    """Return the packaged couples table, in file order.

    Examples
    --------
    >>> rows = couple_table()
    >>> next(r for r in rows if r.cls == "[4Fe-4S]" and r.subclass == "HiPIP-type").couple
    '[4Fe-4S] 3+/2+'
    """
    text = resources.files("fescan").joinpath("data").joinpath("potentials.csv").read_text("utf-8")
    reader = csv.DictReader(io.StringIO(text))
    if tuple(reader.fieldnames or ()) != _COLUMNS:
        raise RuntimeError(f"fescan/data/potentials.csv: columns must be {_COLUMNS}")
    rows = tuple(_parse(rec, i) for i, rec in enumerate(reader, start=2))
    keys = [(r.cls, r.subclass, r.category if r.cls == _FALLBACK else "", r.step) for r in rows]
    dup = {k for k in keys if keys.count(k) > 1}
    if dup:
        raise RuntimeError(f"fescan/data/potentials.csv: duplicate rows {sorted(dup)}")
    return rows


def _rows(cls: str, subclass: str, category: str = "") -> list[CoupleRow]:
    return [r for r in couple_table() if r.cls == cls and r.subclass == subclass
            and (cls != _FALLBACK or r.category == category)]


def default_couples(cls: str, category: str, subclass: str = "") -> tuple[Potential, ...]:
    """Return the default couples of a cofactor: one (``1e``) or two (``ox/sq``, ``sq/red``).

    Parameters
    ----------
    cls : str
        Class as :attr:`fescan.core.records.Cofactor.cls` writes it.
    category : str
        Category, for the fallback row when the class has none.
    subclass : str, optional
        Sub-class (``"HiPIP-type"``, ``"complex I"``, ``"His/Met"``...); empty
        falls back to the class row.

    Returns
    -------
    tuple of Potential
        Ordered ``(1e,)`` or ``(ox/sq, sq/red)``; an undetermined couple (NaN)
        when no row applies.

    Examples
    --------
    >>> [p.step for p in default_couples("FMN", "flavin")]
    ['ox/sq', 'sq/red']
    >>> default_couples("[4Fe-4S]", "iron-sulfur", "HiPIP-type")[0].e_v
    0.35
    >>> default_couples("[4Fe-4S]", "iron-sulfur", "HiPIP-type")[0].basis
    'sub-class default (HiPIP-type), not measured for this protein'
    """
    name = _ALIASES.get(cls, cls)
    base = [r for r in _rows(name, "") if not (r.cls == "[4Fe-3S]" and r.subclass)]
    basis = CLASS_DEFAULT
    if not base:
        base = _rows(_FALLBACK, "", category)
        basis = f"{category} default (class {cls} has no row), not measured for this protein"
    if not base:
        return (undetermined("unknown", "1e", f"no default for class {cls!r} (category {category!r})"),)
    by_step = {r.step: r.to_potential(basis) for r in base}
    if subclass:
        sub_basis = f"sub-class default ({subclass}), not measured for this protein"
        for r in _rows(name, subclass):
            if r.step in by_step or not by_step:
                by_step[r.step] = r.to_potential(sub_basis)
    if "1e" in by_step:
        return (by_step["1e"],)
    return tuple(by_step[s] for s in ("ox/sq", "sq/red") if s in by_step)


def subclass_steps(cls: str, subclass: str) -> frozenset[str]:
    """Steps the table gives for this sub-class (empty when it has no rows).

    A sub-class with only ``ox/sq`` (photosystem II QA, photosystem I A1) is a
    one-electron carrier in its protein: it never takes a second electron.
    """
    return frozenset(r.step for r in _rows(_ALIASES.get(cls, cls), subclass)) if subclass else frozenset()


def reservoir_rows() -> tuple[CoupleRow, ...]:
    """The reservoir (pool) rows of the table: NAD⁺/NADH, quinone pools, H⁺/H2..."""
    return tuple(r for r in couple_table() if r.cls == _RESERVOIR)


def reservoir_potential(name: str) -> Potential:
    """The packaged reservoir called *name* (its ``subclass`` column), as a Potential.

    Examples
    --------
    >>> reservoir_potential("NAD+/NADH").e_v
    -0.32
    """
    for r in reservoir_rows():
        if r.subclass == name:
            return r.to_potential("reservoir default (pool at standard conditions, pH 7)")
    raise KeyError(name)
