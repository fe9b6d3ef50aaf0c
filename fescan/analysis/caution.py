"""The caution printed with every rate and time fescan reports (a module of its own, so light importers need no scan)."""

from __future__ import annotations

__all__ = ["CAUTION"]

#: Printed with every rate and time fescan reports.
CAUTION = (
    "Rates and transfer times are estimates from the empirical Moser-Dutton tunnelling "
    "law (Page, Moser, Chen & Dutton 1999, Nature 402:47), good to about +/-0.8 decade "
    "for natural proteins; they are not measurements."
)
