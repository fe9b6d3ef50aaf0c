"""Reports of fescan results: relay diagrams, structure reports and survey reports.

Public API::

    write_report(result, out_dir) -> list[Path]          report.html, report.md, wire.svg, wire.png
    write_survey_report(survey_dir, out_dir=None)        index.html and figures/ of a survey folder
    relay_diagram(result, out_base) -> list[Path]        <out_base>.svg and <out_base>.png
    draw_wire(ax, result, *, projection=None, title=None, legend=False, extent=None)
                                                         the relay diagram on a given matplotlib Axes

Rates and times shown are estimates from the empirical Moser-Dutton law, and every
page says so. Importing this package imports matplotlib (Agg canvas, no pyplot).
"""

from __future__ import annotations

from fescan.report.diagrams import draw_wire, relay_diagram
from fescan.report.projection import Projection, principal_projection
from fescan.report.structure_report import write_report
from fescan.report.survey_report import write_survey_report

__all__ = ["write_report", "write_survey_report", "relay_diagram", "draw_wire", "Projection",
           "principal_projection"]
