"""JSON helpers shared by every stage."""

from __future__ import annotations

import math
from typing import Any

__all__ = ["finite_json"]


def finite_json(obj: Any) -> Any:
    """Copy of a JSON-ready structure with NaN and infinite floats replaced by ``None``."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite_json(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite_json(v) for v in obj]
    return obj
