"""Survey many structure files: parallel, crash-proof, resumable, with one table per kind.

:func:`survey` finds the structure files among its inputs (files, folders searched
recursively, glob patterns), runs :func:`analyse_file` — :func:`fescan.scan` plus
the row builders of :mod:`fescan.analysis.tables` — on each in worker processes, streams the
results to part files in the output folder as they come and merges them at the
end. One file that raises, runs over its time limit, exhausts its memory cap or
kills its worker is recorded in ``failures`` and the others go on. A rerun into
the same folder skips the files already done (see :mod:`fescan.surveys.store`);
engine ``"dask"`` runs the same function on Dask distributed.

Tables (``OUT/<name>.parquet``, or ``.csv``; columns declared once in
:data:`fescan.analysis.tables.SCHEMAS`, full list below and in ``docs/survey_tables.md``)
-----------------------------------------------------------------------------
``structures``
    One row per input file, ``status`` ``ok`` or ``failed``: entry id, title,
    method, resolution (Å), models, atoms, cofactors per category, flags, and the
    wall time of its analysis (s).
``failures``
    One row per failed file: exception class (``Timeout`` and ``WorkerCrash``
    for the parent's findings), message, and ``reason``: ``error`` (the file is
    bad: a :class:`~fescan.core.errors.FescanError`; any other class is a bug in
    fescan and is logged as one), ``timeout``, ``memory`` or ``crash``.
``cofactors``, ``ligands``, ``flags``, ``pairs``, ``hops``, ``wires``
    The tables of :func:`fescan.analysis.tables.result_tables` of every file that
    succeeded, rows of all files together (``file`` tells them apart). Rates
    and times (``log10_k_*``, ``*_time_s``) are Moser-Dutton model estimates,
    not measurements.

Parquet tables keep the declared pandas dtypes (``pandas.read_parquet`` gives
``string``, ``Int64``, ``boolean``, ``float64``); read CSV tables with
:func:`fescan.surveys.store.read_table` to get them (in CSV an empty string and a
missing value look the same). Rows come in the order files finished: sort by
``file`` for a stable order.

Test-only hooks (environment variables; never set them in production): a worker
handling a file whose path contains the value of ``FESCAN_TEST_CRASH_MARKER``
calls ``os._exit(1)``; of ``FESCAN_TEST_HANG_MARKER`` sleeps for an hour; of
``FESCAN_TEST_MEMORY_MARKER`` allocates memory until it fails.
"""

from __future__ import annotations

import glob
import gzip
import logging
import os
import re
import stat
import sys
import time
import zlib
from collections import Counter
from collections.abc import Callable, Iterable
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

from fescan.analysis.caution import CAUTION
from fescan.analysis.tables import SCHEMAS
from fescan.core.errors import ConfigError, StructureNotFound
from fescan.core.options import ScanOptions
from fescan.structure.reading import detect_format
from fescan.surveys.backends import DaskEngine, ProcessPool, TaskResult, default_workers
from fescan.surveys.outcomes import _failure, report_stem
from fescan.surveys.prefilter import NO_CANDIDATE
from fescan.surveys.store import TABLE_NAMES, FileKey, SurveyStore, file_key
from fescan.surveys.tasks import analyse_file

__all__ = ["STRUCTURE_SUFFIXES", "FAILED_FILES_LISTED", "SurveySummary", "analyse_file", "find_structure_files", "read_file_list", "survey"]

logger = logging.getLogger(__name__)

#: File name endings taken from folders without looking inside (each also with ``.gz``).
STRUCTURE_SUFFIXES: tuple[str, ...] = (".pdb", ".ent", ".cif", ".mmcif")

_GLOB_CHARS = re.compile(r"[*?\[]")
_SNIFF_BYTES = 65536
_FLUSH_SECONDS = 5.0
#: Share of a batch a file set aside by the prefilter takes: its row is cheap to redo after a
#: crash, and committing every 32 of them made the parent's writes the bottleneck of an archive survey.
_SET_ASIDE_WEIGHT = 1.0 / 16
#: Failed files the terminal summary names one by one (the rest are counted and point to the table).
FAILED_FILES_LISTED = 20
_MESSAGE_CHARS = 200


# --- finding the input files -----------------------------------------------------------


def _has_structure_suffix(name: str) -> bool:
    low = name.lower()
    low = low[:-3] if low.endswith(".gz") else low
    return low.endswith(STRUCTURE_SUFFIXES)


def _looks_like_structure(path: Path) -> bool:
    """Whether a file of another name holds structure text (gzipped or not), from its start."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(_SNIFF_BYTES)
        if head.startswith(b"\x1f\x8b"):
            with gzip.open(path, "rb") as fh:
                head = fh.read(_SNIFF_BYTES)
    except (OSError, EOFError, ValueError, zlib.error):
        return False
    if b"\0" in head:
        return False
    return detect_format(head) != "unknown"


def _special_kind(mode: int) -> str:
    for test, kind in ((stat.S_ISFIFO, "a FIFO"), (stat.S_ISCHR, "a character device"),
                       (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return kind
    return "not a regular file"


def _walk(folder: Path, skip: Path | None, warn: Callable[[str], None] = logger.warning) -> Iterable[Path]:
    """Structure files under ``folder``, following symbolic links once; what is left out is told to ``warn``.

    A folder reached a second time (a symbolic-link loop, or two links to one folder) is
    searched once. FIFOs, devices and sockets with a structure file name are yielded
    (the survey gives them a failure row); others, and broken links, are warned about.
    """
    visited: set[tuple[int, int]] = set()

    def on_error(exc: OSError) -> None:
        warn(f"{exc.filename}: folder not searched ({exc.strerror or exc})")

    for root, dirs, files in os.walk(folder, followlinks=True, onerror=on_error):
        here = Path(root)
        try:
            st = os.stat(here)
        except OSError as exc:
            warn(f"{here}: folder not searched ({exc.strerror or exc})")
            dirs[:] = []
            continue
        if (st.st_dev, st.st_ino) in visited:
            warn(f"{here}: folder already searched (reached again through a symbolic link): not searched twice")
            dirs[:] = []
            continue
        visited.add((st.st_dev, st.st_ino))
        dirs[:] = sorted(d for d in dirs if not d.startswith(".")
                         and (skip is None or (here / d).resolve() != skip))
        for f in sorted(files):
            p = here / f
            if f.startswith("."):
                continue
            try:
                mode = os.stat(p).st_mode
            except OSError as exc:
                warn(f"{p}: skipped ({'broken symbolic link' if p.is_symlink() else exc.strerror or exc})")
                continue
            if not stat.S_ISREG(mode):
                if _has_structure_suffix(f):
                    yield p  # its failure row says what it is
                else:
                    warn(f"{p}: skipped ({_special_kind(mode)})")
                continue
            if _has_structure_suffix(f) or _looks_like_structure(p):
                yield p


def read_file_list(path: str | os.PathLike[str]) -> list[str]:
    """Structure paths listed in a text file, one per line.

    Blank lines and lines starting with ``#`` are skipped; a relative path is taken
    from the list file's folder (so a list written inside a mirror travels with it).

    Parameters
    ----------
    path : path-like
        The list file.

    Returns
    -------
    list of str

    Raises
    ------
    fescan.core.errors.StructureNotFound
        The list file cannot be read.
    """
    where = Path(path)
    try:
        text = where.read_text(encoding="utf-8", errors="replace")
    except OSError as exc:
        raise StructureNotFound(f"{where}: cannot read the file list ({exc.strerror or exc})") from None
    base = where.parent
    out = []
    for line in text.splitlines():
        line = line.strip()
        if not line or line.startswith("#"):
            continue
        p = Path(line)
        out.append(str(p if p.is_absolute() else base / p))
    return out


def find_structure_files(inputs: Iterable[str | os.PathLike[str]],
                         exclude: str | os.PathLike[str] | None = None, *,
                         missing: list[str] | None = None,
                         warnings: list[str] | None = None) -> list[str]:
    """List the structure files of the inputs, each once, in input order.

    Parameters
    ----------
    inputs : iterable of str or path-like
        Files (taken whatever their name), folders (searched recursively,
        following symbolic links, each folder once: files ending in .pdb, .ent,
        .cif, .mmcif, each optionally .gz, plus files of other names whose
        content is PDB or mmCIF text; hidden files and folders are skipped) and
        glob patterns (``**`` matches folders).
    exclude : path-like, optional
        A folder never searched (the survey's output folder).
    missing : list, optional
        When given, inputs that do not exist (or patterns matching nothing) are
        appended to it instead of raising.
    warnings : list, optional
        When given, what the folder walk left out (broken links, FIFOs and devices
        without a structure name, unreadable folders, loops) is appended to it;
        it is logged as a warning either way.

    Returns
    -------
    list of str
        Paths as found (not resolved); a file reached twice is listed once.

    Raises
    ------
    fescan.core.errors.StructureNotFound
        An input does not exist or a pattern matches nothing (unless ``missing`` is given).
    """
    skip = Path(exclude).resolve() if exclude is not None else None

    def warn(text: str) -> None:
        logger.warning("%s", text)
        if warnings is not None:
            warnings.append(text)

    seen: set[str] = set()
    out: list[str] = []
    for item in inputs:
        text = os.fspath(item)
        if os.path.exists(text) or os.path.islink(text):
            matches = [text]
        elif _GLOB_CHARS.search(text):
            matches = sorted(glob.glob(text, recursive=True))
            if not matches:
                if missing is None:
                    raise StructureNotFound(f"{text}: the pattern matches no file")
                missing.append(text)
        else:
            if missing is None:
                raise StructureNotFound(f"{text}: no such file or folder")
            missing.append(text)
            matches = []
        for m in matches:
            p = Path(m)
            found = _walk(p, skip, warn) if p.is_dir() else [p]
            for f in found:
                key = str(f.resolve())
                if key not in seen:
                    seen.add(key)
                    out.append(str(f))
    return out


# --- the survey ------------------------------------------------------------------------


@dataclass
class SurveySummary:
    """What a survey did and what its tables hold.

    Attributes
    ----------
    out_dir : str
        Output folder.
    tables : dict of str to str
        Table name → merged table file.
    n_files : int
        Structure files found in the inputs.
    n_skipped : int
        Files already done in an earlier run into ``out_dir`` (not analysed again).
    n_ok, n_failed : int
        Files analysed in this run that succeeded / failed.
    n_unexpected : int
        Failures of this run with an exception that is not a FescanError (bugs).
    table_rows : dict of str to int
        Rows of each merged table (all runs into ``out_dir``).
    structures_ok, structures_failed : int
        Rows of ``structures`` with status ok / failed.
    cofactors_by_class : dict of str to int
        Cofactors per class label over all structures.
    n_wires, n_wires_with_gaps : int
        Rows of ``wires`` (one per structure analysed) with a path (at least one
        hop), and those whose path has a gap (a hop over the gap limit).
    failures_by_reason : dict of str to int
        Failed files per reason (error, timeout, memory, crash).
    failed_files : list of dict
        The first :data:`FAILED_FILES_LISTED` rows of ``failures`` (``file``,
        ``reason``, ``message``), for the terminal summary.
    warnings : list of str
        What the folder walk left out (broken links, FIFOs, unreadable folders, loops).
    engine : str
    workers : int
    seconds : float
        Wall time of this run.
    """

    out_dir: str
    tables: dict[str, str] = field(default_factory=dict)
    n_files: int = 0
    n_skipped: int = 0
    n_ok: int = 0
    n_failed: int = 0
    n_no_candidate: int = 0
    n_unexpected: int = 0
    table_rows: dict[str, int] = field(default_factory=dict)
    structures_ok: int = 0
    structures_failed: int = 0
    cofactors_by_class: dict[str, int] = field(default_factory=dict)
    n_wires: int = 0
    n_wires_with_gaps: int = 0
    failures_by_reason: dict[str, int] = field(default_factory=dict)
    failed_files: list[dict[str, str]] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    engine: str = "processes"
    workers: int = 1
    seconds: float = 0.0

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict of every field."""
        return asdict(self)

    def to_text(self) -> str:
        """A short plain-text summary for people."""
        def listing(d: dict[str, int]) -> str:
            return ", ".join(f"{k} {v}" for k, v in sorted(d.items(), key=lambda kv: (-kv[1], kv[0]))) or "none"

        rows = ", ".join(f"{k} {v}" for k, v in self.table_rows.items())
        n_wire_rows = self.table_rows.get("wires", self.n_wires)
        return "\n".join([
            f"files: {self.n_files} found; {self.n_ok + self.n_failed + self.n_no_candidate} analysed now "
            f"({self.n_ok} ok, {self.n_failed} failed"
            + (f", {self.n_no_candidate} {NO_CANDIDATE}" if self.n_no_candidate else "")
            + f"), {self.n_skipped} already done; {self.seconds:.1f} s "
            f"({self.engine}, {self.workers} worker(s))",
            f"structures in {self.out_dir}: {self.structures_ok} ok, {self.structures_failed} failed",
            f"table rows: {rows}",
            f"cofactors by class: {listing(self.cofactors_by_class)}",
            f"wires traced: {self.n_wires} of {n_wire_rows} structures "
            f"({n_wire_rows - self.n_wires} without a path); paths with a gap (a hop over the gap limit): "
            f"{self.n_wires_with_gaps}",
            f"failures by reason: {listing(self.failures_by_reason)}"
            + (f" ({self.n_unexpected} unexpected errors: bugs, see the log)" if self.n_unexpected else ""),
            *self._failed_lines(),
            *(f"warning: {w}" for w in self.warnings),
            CAUTION,
        ])


    def _failed_lines(self) -> list[str]:
        """One line per failed file (the first :data:`FAILED_FILES_LISTED`), then how many more and where."""
        if not self.failed_files:
            return []
        out = ["failed files:"]
        for row in self.failed_files[:FAILED_FILES_LISTED]:
            name, message = str(row.get("file", "")), " ".join(str(row.get("message") or "").split())
            if message.startswith(name + ": "):
                message = message[len(name) + 2:]
            if len(message) > _MESSAGE_CHARS:
                message = message[:_MESSAGE_CHARS - 1].rstrip() + "…"
            out.append(f"  {name} ({row.get('reason', '')}): {message}")
        total = self.table_rows.get("failures", sum(self.failures_by_reason.values()))
        more = total - min(len(self.failed_files), FAILED_FILES_LISTED)
        if more > 0:
            where = self.tables.get("failures") or str(Path(self.out_dir) / "failures")
            if (Path(self.out_dir) / "index.html").is_file():
                where += f" or {Path(self.out_dir) / 'index.html'}"
            out.append(f"  … and {more} more, see {where}")
        return out


class _Totals:
    """Counts over the merged tables, fed chunk by chunk during the merge."""

    def __init__(self, summary: SurveySummary) -> None:
        self.s = summary
        self.rows: Counter[str] = Counter()
        self.classes: Counter[str] = Counter()
        self.reasons: Counter[str] = Counter()
        self.status: Counter[str] = Counter()
        self.wires = self.gapped = 0
        self.failed: list[dict[str, str]] = []

    def __call__(self, name: str, table: Any) -> None:
        self.rows[name] += table.num_rows
        if name == "structures":
            self.status.update(table.column("status").to_pylist())
        elif name == "cofactors":
            self.classes.update(table.column("class").to_pylist())
        elif name == "failures":
            self.reasons.update(table.column("reason").to_pylist())
            room = FAILED_FILES_LISTED - len(self.failed)
            if room > 0:
                head = table.slice(0, room)
                self.failed += [{"file": f, "reason": r, "message": m} for f, r, m in zip(
                    head.column("file").to_pylist(), head.column("reason").to_pylist(),
                    head.column("message").to_pylist())]
        elif name == "wires":
            self.wires += sum(1 for n in table.column("n_hops").to_pylist() if n)  # rows with a path
            self.gapped += sum(1 for n in table.column("n_gaps").to_pylist() if n)

    def finish(self) -> None:
        s = self.s
        s.table_rows = {name: self.rows.get(name, 0) for name in TABLE_NAMES}
        s.structures_ok, s.structures_failed = self.status.get("ok", 0), self.status.get("failed", 0)
        s.cofactors_by_class = dict(self.classes)
        s.failures_by_reason = dict(self.reasons)
        s.failed_files = list(self.failed)
        s.n_wires, s.n_wires_with_gaps = self.wires, self.gapped


def _outcome(result: TaskResult, path: str) -> dict[str, Any]:
    """The per-file outcome of a task result (failures the parent saw become rows)."""
    if result.kind == "done":
        return result.value
    error_class = {"timeout": "Timeout", "memory": "MemoryError"}.get(result.kind, "WorkerCrash")
    return _failure(path, error_class, f"{path}: {result.value}", result.kind, result.seconds)


def survey(inputs: Iterable[str | os.PathLike[str]] | str | os.PathLike[str],
           out_dir: str | os.PathLike[str], workers: int | None = None, *,
           time_limit: float | None = 300.0, memory_limit: float | None = 4.0,
           table_format: str = "parquet", quiet: bool = False, retry_failed: bool = False,
           engine: str = "processes", scheduler: str | None = None, report: bool = False,
           batch_size: int = 32, report_writer: Callable[[Any, Path], Any] | None = None,
           page_writer: Callable[[Path], Any] | None = None, prefilter: bool = True,
           **options: Any) -> SurveySummary:
    """Analyse many structure files into one set of tables (see the module docstring).

    Parameters
    ----------
    inputs : path-like or iterable of path-like
        Files, folders (recursive) and glob patterns (see :func:`find_structure_files`).
    out_dir : path-like
        Output folder: merged tables, and the state that makes a rerun resume.
    workers : int, optional
        Worker processes (default: every core this process may use).
    time_limit : float or None, optional
        Seconds one file may take before its worker is killed (default 300; None: no limit).
    memory_limit : float or None, optional
        Address-space cap of each worker in GiB (default 4; None: no cap).
    table_format : {"parquet", "csv"}, optional
        Format of the merged tables (Parquet by default).
    quiet : bool, optional
        No progress bar.
    retry_failed : bool, optional
        Analyse again the files that failed in an earlier run into ``out_dir``.
    engine : {"processes", "dask"}, optional
        Local process pool (default) or Dask distributed.
    scheduler : str or None, optional
        Dask scheduler address; without one a LocalCluster on 127.0.0.1 is started.
    report : bool, optional
        Also write a report per structure (with ``report_writer``) and one for the
        survey (with ``page_writer``); :func:`fescan.survey` passes the writers of
        :mod:`fescan.report`.
    report_writer, page_writer : callable, optional
        ``report_writer(result, folder)`` and ``page_writer(survey_folder)``.
    batch_size : int, optional
        Finished files written together as one part (at least every 5 s); a file set
        aside by the prefilter counts as 1/16 of a file.
    prefilter : bool, optional
        Set aside, unparsed, files whose bytes name no redox metal and no cofactor code
        (status ``"no redox candidate"``; see :mod:`fescan.surveys.prefilter`). Default on.
    **options
        Options of :func:`fescan.scan` (fields of :class:`fescan.core.options.ScanOptions`).

    Returns
    -------
    SurveySummary

    Raises
    ------
    fescan.core.errors.StructureNotFound
        An input does not exist, or the inputs hold no structure file.
    fescan.core.errors.ConfigError
        An option is invalid, or ``out_dir`` was surveyed with other options.

    Notes
    -----
    Workers start from a ``forkserver`` without the caller's ``__main__`` (a script
    on stdin, ``python -c``, a notebook or a script without an
    ``if __name__ == "__main__":`` guard all work) and with a ``sys.path`` free of
    entries relative to the working folder. Workers that cannot start stop the survey
    at once with :class:`~fescan.surveys.backends.WorkerStartError`, recording no
    file. Only one survey writes into ``out_dir`` at a time (a second one raises
    :class:`~fescan.surveys.lock.SurveyLocked` naming the first); an input path
    that does not exist gets a failure row.

    Examples
    --------
    >>> s = survey(["structures/"], "out", workers=4, cutoff=20.0)  # doctest: +SKIP
    >>> s.failures_by_reason  # doctest: +SKIP
    {'error': 2, 'timeout': 1}
    """
    t_start = time.monotonic()
    opts = ScanOptions.from_kwargs(**options).to_dict()
    if engine not in ("processes", "dask"):
        raise ConfigError(f"engine must be 'processes' or 'dask', not {engine!r}")
    if table_format not in ("parquet", "csv"):
        raise ConfigError(f"table format must be 'parquet' or 'csv', not {table_format!r}")
    if report and report_writer is None:
        raise ConfigError("report=True needs a report writer: call fescan.survey, which passes one")
    if batch_size < 1:
        raise ConfigError(f"batch_size must be at least 1, got {batch_size}")
    if isinstance(inputs, (str, os.PathLike)):
        inputs = [inputs]
    out = Path(out_dir)
    inputs = list(inputs)
    missing: list[str] = []
    walk_notes: list[str] = []
    files = find_structure_files(inputs, exclude=out, missing=missing, warnings=walk_notes)
    if not files and missing:  # nothing at all to survey: say so rather than write a table of absences
        raise StructureNotFound(f"{', '.join(missing)}: no such file or folder (or the pattern matches no file)")
    if not files:
        raise StructureNotFound(f"no structure files found in {', '.join(map(os.fspath, inputs))}")
    with SurveyStore(out, opts) as store:
        summary = _survey_in(store, out, files, missing, walk_notes, opts, report=report,
                             retry_failed=retry_failed, workers=workers, engine=engine, scheduler=scheduler,
                             report_writer=report_writer, time_limit=time_limit, memory_limit=memory_limit,
                             batch_size=batch_size, quiet=quiet, table_format=table_format,
                             prefilter=prefilter)
    if report and page_writer is not None:
        _survey_report(out, page_writer)
    summary.seconds = time.monotonic() - t_start
    logger.info("survey done:\n%s", summary.to_text())
    return summary


def _key(path: str) -> FileKey:
    """The resume key of ``path``; a path that cannot be looked at gets size and mtime -1."""
    try:
        return file_key(path)
    except (OSError, ValueError):
        return FileKey(os.path.abspath(path), -1, -1)


def _survey_in(store: SurveyStore, out: Path, files: list[str], missing: list[str], walk_notes: list[str],
               opts: dict[str, Any], *, report: bool, retry_failed: bool, workers: int | None, engine: str,
               scheduler: str | None, report_writer: Callable[[Any, Path], Any] | None,
               time_limit: float | None, memory_limit: float | None, batch_size: int, quiet: bool,
               table_format: str, prefilter: bool = True) -> SurveySummary:
    """The survey proper, with the output folder locked."""
    done = store.latest()
    lost: list[tuple[str, FileKey]] = []
    for m in missing:  # an input that is not there is a failure row, not the end of the survey
        key = FileKey(os.path.abspath(m), -1, -1)
        rec = done.get(key.resolved)
        if not (rec and rec["size"] == -1 and not retry_failed):
            lost.append((m, key))
    todo: list[tuple[str, Any]] = []
    for f in files:
        key = _key(f)
        rec = done.get(key.resolved)
        if rec and (rec["size"], rec["mtime_ns"]) == (key.size, key.mtime_ns) and (
                rec["status"] in ("ok", NO_CANDIDATE) or not retry_failed):
            # a finished file is analysed again only to write a structure report it lacks
            if not (report and rec["status"] == "ok"
                    and not (out / "structures" / report_stem(f) / "report.html").is_file()):
                continue
        todo.append((f, key))
    n_workers = max(1, min(workers or default_workers(), len(todo) or 1))
    n_files = len(files) + len(missing)
    summary = SurveySummary(out_dir=str(out), n_files=n_files, n_skipped=n_files - len(todo) - len(lost),
                            engine=engine, workers=n_workers, warnings=list(walk_notes))
    report_dir = str(out.absolute() / "structures") if report else None
    if lost:
        outcomes = [_failure(m, "StructureNotFound", f"{m}: no such file or folder"
                             + (" (or the pattern matches no file)" if _GLOB_CHARS.search(m) else ""),
                             "error", 0.0) for m, _ in lost]
        store.commit(outcomes, [k for _, k in lost])
        summary.n_failed += len(lost)
    if todo:
        _run(store, todo, summary, opts, report_dir, report_writer, time_limit=time_limit, memory_limit=memory_limit,
             engine=engine, scheduler=scheduler, batch_size=batch_size, quiet=quiet, prefilter=prefilter)
    totals = _Totals(summary)
    summary.tables = {k: str(v) for k, v in store.merge(table_format, on_chunk=totals).items()}
    totals.finish()
    return summary


def _survey_report(out: Path, page_writer: Callable[[Path], Any]) -> None:
    try:
        page_writer(out)
    except Exception as exc:  # the tables stand; say why the report is missing
        logger.warning("%s: survey report failed: %s: %s", out, type(exc).__name__, exc)


def _run(store: SurveyStore, todo: list[tuple[str, Any]], summary: SurveySummary, opts: dict[str, Any],
         report_dir: str | None, report_writer: Callable[[Any, Path], Any] | None, *, time_limit: float | None, memory_limit: float | None, engine: str,
         scheduler: str | None, batch_size: int, quiet: bool, prefilter: bool = False) -> None:
    """Run the engine over ``todo``, committing finished files batch by batch."""
    from tqdm import tqdm

    if engine == "dask":
        runner: Any = DaskEngine(summary.workers, scheduler, time_limit, memory_limit)
    else:
        runner = ProcessPool(summary.workers, time_limit, memory_limit)
    # workers read absolute paths (a Dask worker has its own working folder); rows keep the paths as given
    tasks = [(os.path.abspath(path), opts, report_dir, report_writer, path, prefilter) for path, _ in todo]
    buf: list[dict[str, Any]] = []
    keys: list[Any] = []
    weight = 0.0  # analysed files count 1, files set aside by the prefilter _SET_ASIDE_WEIGHT
    last = time.monotonic()
    bar = tqdm(total=len(todo), unit="file", file=sys.stderr, disable=quiet, dynamic_ncols=True,
               desc="survey")

    def flush() -> None:
        nonlocal buf, keys, last, weight
        batch, batch_keys = buf, keys
        buf, keys, last, weight = [], [], time.monotonic(), 0.0  # emptied first: a failed commit is never replayed
        store.commit(batch, batch_keys)

    try:
        for result in runner.run(analyse_file, tasks):
            path, key = todo[result.index]
            o = _outcome(result, path)
            _log_outcome(o)
            if o["status"] == "ok":
                summary.n_ok += 1
            elif o["status"] == NO_CANDIDATE:
                summary.n_no_candidate += 1
            else:
                summary.n_failed += 1
                if o["failure"]["reason"] == "error" and "traceback" in o:
                    summary.n_unexpected += 1
            buf.append(o)
            keys.append(key)
            weight += _SET_ASIDE_WEIGHT if o["status"] == NO_CANDIDATE else 1.0
            if weight >= batch_size or time.monotonic() - last > _FLUSH_SECONDS:
                flush()
            bar.update(1)
            bar.set_postfix({"ok": summary.n_ok, "failed": summary.n_failed}, refresh=False)
    finally:
        if buf:
            flush()
        bar.close()


def _log_outcome(o: dict[str, Any]) -> None:
    if o.get("traceback"):
        logger.error("unexpected error (a bug in fescan, please report it) on %s:\n%s", o["file"], o["traceback"])
    elif o["status"] == "failed":
        logger.info("failed (%s): %s", o["failure"]["reason"], o["failure"]["message"])
    if o.get("report_error"):
        logger.warning("%s: report failed: %s", o["file"], o["report_error"])


def _schema_doc() -> str:
    lines = ["", "Columns", "-------"]
    for name in TABLE_NAMES:
        lines.append(f"``{name}``")
        for c in SCHEMAS[name]:
            unit = f" [{c.unit}]" if c.unit else ""
            lines.append(f"    ``{c.name}`` ({c.dtype}{unit}): {c.doc}")
    return "\n".join(lines) + "\n"


if __doc__:  # python -OO strips docstrings
    __doc__ += _schema_doc()
