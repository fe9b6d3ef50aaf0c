"""fescan: redox cofactors, Fe-S cluster checks and electron-transfer wires in protein structures."""

from __future__ import annotations

__version__ = "0.1.0"
