"""fescan: redox cofactors, Fe-S cluster checks and electron-transfer wires in protein structures.

Public API::

    fescan.scan(path, entry=None, exit=None, **options) -> ScanResult
    fescan.log10_hop_rate(distance, dg, reorg=0.7, packing_density=0.76)
    fescan.compare(model_path, reference_path, **options) -> CompareResult
    fescan.survey(inputs, out_dir, workers=None, **options) -> SurveySummary
    fescan.write_report(result, out_dir) -> list[Path]      (HTML, Markdown, SVG/PNG diagram)
    fescan.write_survey_report(survey_dir) -> list[Path]
    fescan.reaction_gibbs_kj(n_electrons, delta_e_volts)    (ΔG = −nFΔE, kJ/mol)

Rates and times are estimates from the empirical Moser-Dutton law, not measurements.

The package face is lazy: ``import fescan`` loads nothing but the version and the
error classes; each name is imported from its stage on first use.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

from fescan.core.errors import (
    CofactorNotFound,
    ConfigError,
    FescanError,
    FescanWarning,
    StructureFileError,
)
from fescan.core.version import __version__

#: public name -> module that defines it (imported on first use)
_LAZY = {
    "scan": "fescan.analysis.scan",
    "ScanResult": "fescan.analysis.scan",
    "ScanOptions": "fescan.core.options",
    "log10_hop_rate": "fescan.transfer.rate_law",
    "reaction_gibbs_kj": "fescan.transfer.rate_law",
    "compare": "fescan.comparison.compare",
    "CompareResult": "fescan.comparison.compare",
    "survey": "fescan.api",
    "SurveySummary": "fescan.surveys.run",
    "write_report": "fescan.report",
    "write_survey_report": "fescan.report",
}

__all__ = [
    "__version__",
    *_LAZY,
    "FescanError",
    "StructureFileError",
    "CofactorNotFound",
    "ConfigError",
    "FescanWarning",
]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'fescan' has no attribute {name!r}")
    value = getattr(import_module(module), name)
    globals()[name] = value  # later lookups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))
