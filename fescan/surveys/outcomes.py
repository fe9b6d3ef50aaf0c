"""Rows and names a survey's parent and its workers both make (failures, report folders); no heavy import."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path
from typing import Any

__all__ = ["report_stem"]


def _failed_structure_row(path: str) -> dict[str, Any]:
    return {"file": path, "status": "failed"}


def _failure(path: str, error_class: str, message: str, reason: str, seconds: float) -> dict[str, Any]:
    return {"file": path, "status": "failed", "seconds": seconds,
            "structure": _failed_structure_row(path),
            "failure": {"file": path, "error_class": error_class, "message": message, "reason": reason}}


def report_stem(path: str) -> str:
    """A file-name-safe, unique stem for the per-structure report of ``path``."""
    name = Path(path).name
    name = name[:-3] if name.lower().endswith(".gz") else name
    safe = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or "structure"
    # hash of the path as given (not resolved), so the same command run elsewhere names folders alike
    digest = hashlib.sha1(Path(path).as_posix().encode("utf-8", "surrogateescape")).hexdigest()[:8]
    return f"{safe}-{digest}"
