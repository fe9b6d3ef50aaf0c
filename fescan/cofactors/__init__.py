"""Finding and classifying redox cofactors: CCD table, atom extraction, rings, metal sites."""

from __future__ import annotations

from fescan.cofactors.detect import count_not_analysed, find_cofactors

__all__ = ["find_cofactors", "count_not_analysed"]
