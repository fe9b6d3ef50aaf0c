"""Finding and classifying redox cofactors: CCD table, atom extraction, rings, metal sites."""

from __future__ import annotations

from fescan.cofactors.detect import find_cofactors

__all__ = ["find_cofactors"]
