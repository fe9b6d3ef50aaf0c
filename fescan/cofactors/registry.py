"""Packaged data tables: CCD code -> cofactor class, and reference bond ranges.

Both tables live in ``fescan/data`` as CSV files with a ``source`` and a ``status``
column (FOUND / FOUND (secondary) / MEMORY, as in the project's reference notes).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

__all__ = [
    "CcdEntry",
    "BondRange",
    "ccd_table",
    "bond_ranges",
    "bond_range",
    "UNKNOWN_LIGAND_CODES",
    "METAL_ION_CODES",
]

#: Residue names that mean "some ligand" rather than a real CCD component.
UNKNOWN_LIGAND_CODES = frozenset({"UNL", "LIG", "UNK", "UNX", "DUM", "XXX", "LG1", "LG2"})

#: Single-ion CCD codes whose residue name we keep as the cofactor's code.
METAL_ION_CODES = frozenset(
    {"FE", "FE2", "FE3", "CU", "CU1", "CU3", "NI", "NI3", "3NI", "MN", "MN3", "MO", "4MO", "6MO", "V", "W", "CO", "3CO"}
)


@dataclass(frozen=True, slots=True)
class CcdEntry:
    """One row of the CCD cofactor table.

    Attributes
    ----------
    code : str
        wwPDB CCD three-letter code.
    category : str
        Cofactor category (``"iron-sulfur"``, ``"flavin"``...).
    cls : str
        Class label as the trade writes it.
    composition : str
        Expected core composition for clusters (``"Fe4S4"``), empty otherwise.
    redox_atoms : str
        Rule naming the redox-active atom set: ``core``, ``isoalloxazine``,
        ``quinone_ring``, ``porphyrin`` or ``pterin``.
    source, status : str
        Where the row comes from, and how sure that is.
    role : str
        Role the code implies (``relay``, ``catalytic``, ``structural``,
        ``ion or additive``), ``by site`` when the site's geometry decides, or
        ``not analysed``.
    subclass : str
        Sub-class the code implies (``"P-cluster"``, ``"CuA"``...), empty otherwise.
    """

    code: str
    category: str
    cls: str
    composition: str
    redox_atoms: str
    source: str
    status: str
    role: str = ""
    subclass: str = ""


@dataclass(frozen=True, slots=True)
class BondRange:
    """Reference window of one bond type in one cluster class (Å)."""

    bond: str
    cluster_class: str
    ideal: float
    sigma: float
    low: float
    high: float
    low_res_low: float
    low_res_high: float
    source: str
    status: str

    def window(self, low_resolution: bool) -> tuple[float, float]:
        """Return the accepted (low, high) range, wider for low-resolution data."""
        if low_resolution:
            return self.low_res_low, self.low_res_high
        return self.low, self.high


def _rows(name: str) -> list[dict[str, str]]:
    text = resources.files("fescan.data").joinpath(name).read_text(encoding="utf-8")
    return list(csv.DictReader(text.splitlines()))


@lru_cache(maxsize=1)
def ccd_table() -> dict[str, CcdEntry]:
    """Return the packaged CCD cofactor table keyed by code.

    Returns
    -------
    dict of str to CcdEntry

    Examples
    --------
    >>> ccd_table()["SF4"].cls
    '[4Fe-4S]'
    """
    out = {}
    for r in _rows("ccd_cofactors.csv"):
        out[r["code"]] = CcdEntry(
            code=r["code"],
            category=r["category"],
            cls=r["class"],
            composition=r["composition"],
            redox_atoms=r["redox_atoms"],
            source=r["source"],
            status=r["status"],
            role=r.get("role", "") or "",
            subclass=r.get("subclass", "") or "",
        )
    return out


@lru_cache(maxsize=1)
def bond_ranges() -> dict[tuple[str, str], BondRange]:
    """Return the reference bond windows keyed by (bond, cluster class)."""
    out = {}
    for r in _rows("bond_ranges.csv"):
        br = BondRange(
            bond=r["bond"],
            cluster_class=r["cluster_class"],
            ideal=float(r["ideal"]),
            sigma=float(r["sigma"]),
            low=float(r["low"]),
            high=float(r["high"]),
            low_res_low=float(r["low_res_low"]),
            low_res_high=float(r["low_res_high"]),
            source=r["source"],
            status=r["status"],
        )
        out[(br.bond, br.cluster_class)] = br
    return out


def bond_range(bond: str, cluster_class: str) -> BondRange | None:
    """Return the window for a bond type in a class (Rieske uses the [2Fe-2S] rows)."""
    base = cluster_class.replace("Rieske ", "").replace("linear ", "")
    return bond_ranges().get((bond, base))
