"""The function a survey sends to its workers, importing nothing heavy.

The parent sends :func:`analyse_file` (this module's, a reference the workers
unpickle without importing the survey's tables); the analysis itself lives in
:mod:`fescan.surveys.worker`, imported in the workers (and their forkserver) only,
so the parent never loads the scan machinery.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

__all__ = ["analyse_file"]


def analyse_file(path: str, options: dict[str, Any], report_dir: str | None = None,
                 report_writer: Callable[[Any, Path], Any] | None = None,
                 label: str | None = None, prefilter: bool = False) -> dict[str, Any]:
    """Analyse one file for a survey (see :func:`fescan.surveys.worker.analyse_file`).

    Imports the analysis on first call, so that the process sending this function
    (the survey's parent) never does.
    """
    from fescan.surveys.worker import analyse_file as analyse

    return analyse(path, options, report_dir, report_writer, label, prefilter)
