"""Public functions that join stages: a survey that also writes reports.

The survey stage (:mod:`fescan.surveys`) never imports the report stage; this
module, above both, injects the report writers.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from typing import Any

from fescan.surveys.run import SurveySummary
from fescan.surveys.run import survey as _survey

__all__ = ["survey"]


def survey(inputs: Iterable[str | os.PathLike[str]] | str | os.PathLike[str],
           out_dir: str | os.PathLike[str], workers: int | None = None, *,
           report: bool = False, **kwargs: Any) -> SurveySummary:
    """Analyse many structure files into one set of tables; optionally write reports.

    Parameters
    ----------
    inputs, out_dir, workers, **kwargs
        As :func:`fescan.surveys.run.survey`.
    report : bool, optional
        Also write a report per structure and the survey page (loads matplotlib).

    Returns
    -------
    SurveySummary
    """
    if report:
        from fescan.report import write_report, write_survey_report

        kwargs.setdefault("report_writer", write_report)
        kwargs.setdefault("page_writer", write_survey_report)
    return _survey(inputs, out_dir, workers, report=report, **kwargs)
