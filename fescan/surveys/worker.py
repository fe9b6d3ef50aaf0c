"""The per-file function of a survey: it runs in the worker processes.

Kept apart from :mod:`fescan.surveys.run` so that a worker (and the forkserver that
starts the workers) imports only what one structure's analysis needs: not pandas
nor pyarrow, which the survey's parent needs for its tables (a third of a second
and about 60 MB per process, paid at every survey's start).
"""

from __future__ import annotations

import os
import time
import traceback
from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import Any

from fescan.analysis.scan import scan
from fescan.analysis.tables import result_rows
from fescan.core.errors import FescanError
from fescan.core.records import CATEGORIES
from fescan.surveys.outcomes import _failure, report_stem
from fescan.surveys.prefilter import NO_CANDIDATE, can_hold_candidate

__all__ = ["analyse_file", "report_stem"]

_CATEGORY_COLUMNS = {c: "n_" + c.replace("-", "_") for c in CATEGORIES}


def _test_hooks(path: str) -> None:
    """Test-only misbehaviour, driven by environment variables (see :mod:`fescan.surveys.run`)."""
    env = os.environ
    if env.get("FESCAN_TEST_CRASH_MARKER") and env["FESCAN_TEST_CRASH_MARKER"] in path:
        os._exit(1)
    if env.get("FESCAN_TEST_HANG_MARKER") and env["FESCAN_TEST_HANG_MARKER"] in path:
        time.sleep(3600)
    if env.get("FESCAN_TEST_MEMORY_MARKER") and env["FESCAN_TEST_MEMORY_MARKER"] in path:
        import numpy as np

        hog = []
        while True:  # address space, untouched: fails fast under the cap without filling memory
            hog.append(np.empty(64 << 20, dtype=np.uint8))


def _no_candidate(path: str, seconds: float) -> dict[str, Any]:
    """Outcome of a file the prefilter set aside: a structures row, no other rows."""
    structure = {"file": path, **dict.fromkeys(_CATEGORY_COLUMNS.values(), 0), "n_cofactors": 0, "n_flags": 0,
                 "status": NO_CANDIDATE}
    return {"file": path, "status": NO_CANDIDATE, "seconds": seconds, "structure": structure, "rows": {}}


def analyse_file(path: str, options: dict[str, Any], report_dir: str | None = None,
                 report_writer: Callable[[Any, Path], Any] | None = None,
                 label: str | None = None, prefilter: bool = False) -> dict[str, Any]:
    """Analyse one file for a survey: :func:`fescan.scan` and the rows of every table.

    Parameters
    ----------
    path : str
        Structure file.
    options : dict
        Keyword options of :func:`fescan.scan`.
    report_dir : str or None
        With ``report_writer``: write this file's report into ``report_dir/<safe stem>``.
    report_writer : callable, optional
        ``report_writer(result, folder)`` writes one structure's report (injected by the
        caller, e.g. :func:`fescan.report.write_report`; the survey stage never imports
        the report stage). A module-level function, so it can be sent to workers.
    label : str, optional
        The path as the user gave it, for the ``file`` column and the messages, when
        ``path`` is that path made absolute (a Dask worker has another working folder).
    prefilter : bool, optional
        First ask :func:`fescan.surveys.prefilter.can_hold_candidate`; a file that cannot
        hold a redox cofactor becomes a row with status ``"no redox candidate"`` unparsed.

    Returns
    -------
    dict
        ``file``, ``status`` (``"ok"`` / ``"failed"``), ``seconds``, ``structure``
        (its row of the ``structures`` table), and ``rows`` (table name → rows,
        exactly the rows :func:`fescan.analysis.tables.result_tables` turns into frames)
        or ``failure`` (its row of the ``failures`` table, plus ``traceback`` for
        an unexpected error). Never raises for a bad file.
    """
    if label is not None and label != path:
        return _relabel(_analyse(path, options, report_dir, report_writer, label, prefilter), path, label)
    return _analyse(path, options, report_dir, report_writer, path, prefilter)


def _analyse(path: str, options: dict[str, Any], report_dir: str | None,
             report_writer: Callable[[Any, Path], Any] | None, label: str, prefilter: bool = False) -> dict[str, Any]:
    _test_hooks(path)
    t0 = time.perf_counter()
    if prefilter and not can_hold_candidate(path).candidate:
        return _no_candidate(path, time.perf_counter() - t0)
    try:
        res = scan(path, **options)
        res.path = label  # rows and reports name the file as the user gave it
        rows = result_rows(res)
    except MemoryError:
        raise  # the worker reports it (and is replaced)
    except FescanError as exc:
        return _failure(path, type(exc).__name__, str(exc), "error", time.perf_counter() - t0)
    except Exception as exc:  # a bug in fescan, not a bad file: keep the traceback
        out = _failure(path, type(exc).__name__, f"{path}: unexpected {type(exc).__name__}: {exc}",
                       "error", time.perf_counter() - t0)
        out["traceback"] = traceback.format_exc()
        return out
    seconds = time.perf_counter() - t0
    counts = Counter(c.category for c in res.cofactors)
    info = res.info
    structure = {
        "file": path, "entry_id": info.entry_id, "title": info.title, "method": info.method,
        "resolution": info.resolution, "n_models": info.n_models, "n_atoms": info.n_atoms,
        **{col: counts.get(cat, 0) for cat, col in _CATEGORY_COLUMNS.items()},
        "n_cofactors": len(res.cofactors), "n_flags": sum(len(c.flags) for c in res.cofactors),
        "status": "ok",
    }
    out: dict[str, Any] = {"file": path, "status": "ok", "seconds": seconds, "structure": structure, "rows": rows}
    if report_dir and report_writer is not None:
        try:
            report_writer(res, Path(report_dir) / report_stem(label))
        except Exception as exc:  # the analysis stands; the parent logs the report problem
            out["report_error"] = f"{type(exc).__name__}: {exc}"
    return out


def _relabel(value: Any, path: str, label: str) -> Any:
    """``value`` with every string holding ``path`` rewritten to ``label`` (file columns, messages)."""
    if isinstance(value, str):
        return value.replace(path, label) if path in value else value
    if isinstance(value, dict):
        return {k: _relabel(v, path, label) for k, v in value.items()}
    if isinstance(value, list):
        return [_relabel(v, path, label) for v in value]
    return value
