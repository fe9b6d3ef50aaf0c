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
"""

from __future__ import annotations

__version__ = "0.1.0"

from fescan.compare import CompareResult, compare  # noqa: E402
from fescan.errors import (  # noqa: E402
    CofactorNotFound,
    ConfigError,
    FescanError,
    FescanWarning,
    StructureFileError,
)
from fescan.kinetics import log10_hop_rate, reaction_gibbs_kj  # noqa: E402
from fescan.options import ScanOptions  # noqa: E402
from fescan.scan import ScanResult, scan  # noqa: E402
from fescan.survey import SurveySummary, survey  # noqa: E402

__all__ = [
    "__version__",
    "scan",
    "ScanResult",
    "ScanOptions",
    "log10_hop_rate",
    "reaction_gibbs_kj",
    "write_report",
    "write_survey_report",
    "compare",
    "CompareResult",
    "survey",
    "SurveySummary",
    "FescanError",
    "StructureFileError",
    "CofactorNotFound",
    "ConfigError",
    "FescanWarning",
]


def __getattr__(name: str):  # the report functions load matplotlib: import them on first use
    if name in ("write_report", "write_survey_report"):
        from fescan import report

        return getattr(report, name)
    raise AttributeError(f"module 'fescan' has no attribute {name!r}")
