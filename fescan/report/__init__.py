"""Reports of fescan results: relay diagrams, structure reports and survey reports.

Public API::

    write_report(result, out_dir) -> list[Path]          report.html, report.md, wire.svg, wire.png
    write_survey_report(survey_dir, out_dir=None)        index.html and figures/ of a survey folder
    relay_diagram(result, out_base) -> list[Path]        <out_base>.svg and <out_base>.png
    draw_wire(ax, result, *, projection=None, title=None, legend=False, extent=None)
                                                         the relay diagram on a given matplotlib Axes

Rates and times shown are estimates from the empirical Moser-Dutton law, and every
page says so. The package face is lazy: importing ``fescan.report.text`` (the terminal
output of one scan) loads no matplotlib; the names below are imported on first use.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

#: public name -> module that defines it (imported on first use)
_LAZY = {
    "write_report": "fescan.report.structure_report",
    "write_survey_report": "fescan.report.survey_report",
    "relay_diagram": "fescan.report.diagrams",
    "draw_wire": "fescan.report.diagrams",
    "Projection": "fescan.report.projection",
    "principal_projection": "fescan.report.projection",
}

__all__ = ["write_report", "write_survey_report", "relay_diagram", "draw_wire", "Projection",
           "principal_projection"]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'fescan.report' has no attribute {name!r}")
    value = getattr(import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))
