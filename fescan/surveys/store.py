"""Durable state of a survey: part files, the done-index, resuming and the final merge.

Layout inside the output folder::

    OUT/
      structures.parquet ... failures.parquet   merged tables (or .csv), rewritten atomically
      _survey_state/
        settings.json            scan options of the survey (a rerun must use the same)
        done.jsonl               one line per committed batch of files
        parts/<table>/<batch>.parquet

Crash safety rests on one order of events. A batch of finished files is first
written as one Parquet part per table, each to a temporary name, flushed,
``fsync``-ed and renamed into place (``os.replace``); the folders are
``fsync``-ed; only then is the batch's line appended to ``done.jsonl`` (and
``fsync``-ed). A survey killed at any moment therefore leaves parts whose batch
has no line (orphans, deleted on the next run), at most one half-written last
line (ignored and cut off) and temporary files (deleted) — never a committed
file whose rows are missing, nor rows counted twice.

One survey at a time: ``_survey_state/lock`` is held (``flock``, released by the
kernel when its process ends, so a lock left by a killed run is taken over) from
before the folder is read or tidied, so a second survey can never delete the
parts of a running one. The merged tables are replaced as one set: all are
written to temporary names first, then ``_survey_state/merge.json`` lists the
renames, then they are made; a run killed among the renames has them finished
by the next one. A write that fails (disk full...) raises one
:class:`SurveyWriteError`; the batch is not retried under another id.

A file is known by its resolved path, size and modification time (ns). When a
file is analysed again (``retry_failed``, or it changed), the rows of its latest
batch win at the merge; older rows stay in their parts but are filtered out.
Parts are always Parquet; the merged tables are Parquet or CSV.
"""

from __future__ import annotations

import contextlib
import errno
import functools
import json
import logging
import os
import time
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from fescan.analysis.tables import SCHEMAS, empty_table, to_frame
from fescan.core.errors import ConfigError, FescanError
from fescan.surveys.lock import FolderLock

__all__ = [
    "STATE_DIR",
    "TABLE_NAMES",
    "FileKey",
    "file_key",
    "arrow_schema",
    "SurveyStore",
    "SurveyWriteError",
    "read_table",
    "neutralise_csv",
]

logger = logging.getLogger(__name__)

#: Name of the folder, inside the output folder, that holds the survey state.
STATE_DIR = "_survey_state"

#: Tables a survey writes, in the order they are merged.
#: (One list: the declared schemas; ``timings`` is the only table whose values differ between runs.)
TABLE_NAMES: tuple[str, ...] = tuple(SCHEMAS)

_MERGE_MANIFEST = "merge.json"  # tables being renamed into place (see SurveyStore.merge)
_MERGE_ROWS = 65536  # rows buffered before a row group of a merged Parquet table is written


@dataclass(frozen=True)
class FileKey:
    """Identity of an input file for resuming: resolved path, size (bytes), mtime (ns)."""

    resolved: str
    size: int
    mtime_ns: int


def file_key(path: str | os.PathLike[str]) -> FileKey:
    """Return the :class:`FileKey` of a file (``stat`` follows symbolic links)."""
    p = Path(path).resolve()
    st = p.stat()
    return FileKey(str(p), st.st_size, st.st_mtime_ns)


@functools.cache
def arrow_schema(name: str) -> pa.Schema:
    """Arrow schema of table ``name``, with the pandas dtypes kept as metadata.

    ``pandas.read_parquet`` of a table written with it gives back the dtypes
    declared in :data:`fescan.analysis.tables.SCHEMAS` (``string``, ``Int64``, ``boolean``,
    ``float64``).
    """
    return pa.Schema.from_pandas(empty_table(name), preserve_index=False)


class SurveyWriteError(FescanError):
    """The survey folder cannot be written (disk full, read-only, quota...)."""


@contextlib.contextmanager
def _writing(folder: Path, what: str) -> Iterator[None]:
    """Turn an OSError while writing into one clear :class:`SurveyWriteError`."""
    try:
        yield
    except OSError as exc:
        reason = exc.strerror or str(exc)
        hint = " (disk full?)" if exc.errno in (errno.ENOSPC, errno.EDQUOT) else ""
        raise SurveyWriteError(
            f"{folder}: cannot write {what}: {reason}{hint}; the files committed before are kept: "
            "fix this and run the same command again to resume") from exc


def _fsync_dir(path: Path) -> None:
    with contextlib.suppress(OSError):  # some file systems cannot fsync a folder
        fd = os.open(path, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _replace_durably(tmp: Path, final: Path) -> None:
    """fsync ``tmp``, rename it to ``final`` and fsync the folder."""
    with open(tmp, "rb+") as fh:
        os.fsync(fh.fileno())
    os.replace(tmp, final)
    _fsync_dir(final.parent)


class SurveyStore:
    """The output folder of a survey: resume index, part files and merged tables.

    Parameters
    ----------
    out_dir : path-like
        Output folder (created when missing).
    scan_options : dict
        Options of :func:`fescan.scan` used for every file. A survey folder
        holds results of one set of options: reopening it with other options
        raises :class:`~fescan.core.errors.ConfigError`.
    """

    def __init__(self, out_dir: str | os.PathLike[str], scan_options: dict) -> None:
        self.out_dir = Path(out_dir)
        self.state = self.out_dir / STATE_DIR
        self.parts = self.state / "parts"
        self.index_path = self.state / "done.jsonl"
        try:
            for name in TABLE_NAMES:
                (self.parts / name).mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise FescanError(f"{self.out_dir}: cannot create the survey folder ({exc.strerror or exc})") from exc
        # the lock comes before anything that reads or tidies the folder: never delete another run's parts
        self._lock = FolderLock(self.state / "lock", self.out_dir)
        self._lock.acquire()
        try:
            with _writing(self.out_dir, "the survey settings"):
                self._check_settings(scan_options)
            self._run = f"{time.time_ns():020d}-{os.getpid()}"
            self._seq = 0
            self.batches: dict[str, list[dict]] = {}
            with _writing(self.out_dir, "the survey index"):
                self._load_index()
                self._finish_merge()
                self._remove_orphans()
        except BaseException:
            self.close()
            raise

    def close(self) -> None:
        """Release the folder lock (the store can no longer be written)."""
        lock = getattr(self, "_lock", None)
        if lock is not None:
            lock.release()

    def __enter__(self) -> SurveyStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __del__(self) -> None:  # a store dropped without close() must not keep the folder locked
        with contextlib.suppress(Exception):
            self.close()

    # --- opening -------------------------------------------------------------------

    def _check_settings(self, scan_options: dict) -> None:
        path = self.state / "settings.json"
        wanted = json.loads(json.dumps(scan_options))  # normalise (tuples → lists)
        if path.exists():
            try:
                old = json.loads(path.read_text(encoding="utf-8"))["scan_options"]
            except (OSError, ValueError, KeyError, TypeError) as exc:
                raise FescanError(f"{path}: unreadable survey settings ({exc}); use a new output folder") from exc
            if old != wanted:
                diff = ", ".join(f"{k}: {old.get(k)!r} before, {wanted.get(k)!r} now"
                                 for k in sorted(set(old) | set(wanted)) if old.get(k) != wanted.get(k))
                raise ConfigError(f"{self.out_dir}: was surveyed with other options ({diff}); "
                                  "use the same options to resume, or a new output folder")
            return
        tmp = path.with_name(path.name + ".tmp")
        tmp.write_text(json.dumps({"scan_options": wanted}, indent=1) + "\n", encoding="utf-8")
        _replace_durably(tmp, path)

    def _load_index(self) -> None:
        """Read committed batches; cut a half-written last line (killed while appending)."""
        if not self.index_path.exists():
            return
        raw = self.index_path.read_bytes()
        good = 0
        for line in raw.splitlines(keepends=True):
            if not line.endswith(b"\n"):
                break
            try:
                rec = json.loads(line)
                self.batches[rec["batch"]] = rec["files"]
            except (ValueError, KeyError, TypeError):
                break
            good += len(line)
        if good < len(raw):
            logger.warning("%s: ignoring %d bytes of an interrupted write", self.index_path, len(raw) - good)
            with open(self.index_path, "rb+") as fh:
                fh.truncate(good)
                os.fsync(fh.fileno())

    def _finish_merge(self) -> None:
        """Complete a merge killed while it renamed its tables into place (all or none are new)."""
        manifest = self.state / _MERGE_MANIFEST
        if not manifest.exists():
            return
        try:
            pairs = json.loads(manifest.read_text(encoding="utf-8"))["tables"]
        except (OSError, ValueError, KeyError, TypeError):
            pairs = []  # the manifest itself was cut short: the old tables were never touched
        for tmp, final in pairs:
            if (self.out_dir / tmp).exists():
                os.replace(self.out_dir / tmp, self.out_dir / final)
        _fsync_dir(self.out_dir)
        manifest.unlink(missing_ok=True)

    def _remove_orphans(self) -> None:
        """Delete temporary files and parts of batches never committed."""
        for table_dir in self.parts.iterdir():
            if not table_dir.is_dir():
                continue
            for f in table_dir.iterdir():
                if f.name.endswith(".tmp") or f.stem not in self.batches:
                    logger.info("removing %s (left by an interrupted survey)", f)
                    f.unlink(missing_ok=True)
        for f in self.out_dir.glob("*.tmp"):
            f.unlink(missing_ok=True)

    def latest(self) -> dict[str, dict]:
        """Latest committed record per resolved path (``file, resolved, size, mtime_ns, status, batch``)."""
        out: dict[str, dict] = {}
        for batch in sorted(self.batches):
            for rec in self.batches[batch]:
                out[rec["resolved"]] = {**rec, "batch": batch}
        return out

    # --- writing batches -----------------------------------------------------------

    def commit(self, outcomes: list[dict], keys: list[FileKey]) -> str:
        """Write one batch of per-file outcomes durably, then record it in the index.

        Parameters
        ----------
        outcomes : list of dict
            Outcomes of :func:`fescan.surveys.worker.analyse_file` (or failures made by
            the parent), each with ``file``, ``status``, ``structure``, and
            ``rows`` (table name → rows) and/or ``failure``.
        keys : list of FileKey
            Key of each outcome's file, in the same order.

        Returns
        -------
        str
            The batch id.
        """
        batch = f"{self._run}-{self._seq:06d}"
        self._seq += 1
        try:
            with _writing(self.out_dir, f"batch {batch}"):
                self._commit(batch, outcomes, keys)
        except BaseException:
            for name in TABLE_NAMES:  # leave no part of an uncommitted batch (the next run would drop it anyway)
                for f in (self.parts / name / f"{batch}.parquet", self.parts / name / f"{batch}.parquet.tmp"):
                    with contextlib.suppress(OSError):
                        f.unlink(missing_ok=True)
            raise
        return batch

    def _commit(self, batch: str, outcomes: list[dict], keys: list[FileKey]) -> None:
        rows: dict[str, list[dict]] = {name: [] for name in TABLE_NAMES}
        for o in outcomes:
            rows["structures"].append(o["structure"])
            rows["timings"].append({"file": o["file"], "seconds": o["seconds"]})
            if o.get("failure"):
                rows["failures"].append(o["failure"])
            for name, part in (o.get("rows") or {}).items():
                rows[name].extend(part)
        for name, table_rows in rows.items():
            if not table_rows:
                continue
            df = to_frame(name, table_rows)
            table = pa.Table.from_pandas(df, schema=arrow_schema(name), preserve_index=False)
            final = self.parts / name / f"{batch}.parquet"
            tmp = final.with_name(final.name + ".tmp")
            pq.write_table(table, tmp)
            _replace_durably(tmp, final)
        files = [{"file": o["file"], "resolved": k.resolved, "size": k.size, "mtime_ns": k.mtime_ns,
                  "status": o["status"]} for o, k in zip(outcomes, keys)]
        line = json.dumps({"batch": batch, "files": files}, ensure_ascii=False) + "\n"
        with open(self.index_path, "a", encoding="utf-8") as fh:
            fh.write(line)
            fh.flush()
            os.fsync(fh.fileno())
        self.batches[batch] = files

    # --- merging -------------------------------------------------------------------

    def merge(self, table_format: str = "parquet",
              on_chunk: Callable[[str, pa.Table], None] | None = None) -> dict[str, Path]:
        """Merge the committed parts into one table per kind, streaming part by part.

        Parameters
        ----------
        table_format : {"parquet", "csv"}
            Format of the merged tables.
        on_chunk : callable, optional
            Called with ``(table name, arrow table)`` for every filtered part, e.g.
            to count rows by class without reading the merged tables again.

        Returns
        -------
        dict of str to Path
            Table name → merged file. Each is written to a temporary name and
            renamed into place: a kill leaves the previous table or the new one.
        """
        if table_format not in ("parquet", "csv"):
            raise ConfigError(f"table format must be 'parquet' or 'csv', not {table_format!r}")
        keep = self._rows_to_keep()
        written: dict[str, Path] = {}
        pairs: list[tuple[Path, Path]] = []
        try:
            with _writing(self.out_dir, "the merged tables"):
                for name in TABLE_NAMES:  # every table to a temporary name first...
                    final = self.out_dir / f"{name}.{table_format}"
                    tmp = final.with_name(final.name + ".tmp")
                    pairs.append((tmp, final))
                    chunks = self._filtered_parts(name, keep)
                    if table_format == "parquet":
                        _write_parquet(tmp, name, chunks, on_chunk)
                    else:
                        _write_csv(tmp, name, chunks, on_chunk)
                    with open(tmp, "rb+") as fh:
                        os.fsync(fh.fileno())
                    written[name] = final
                # ...then a manifest, so that a kill during the renames is completed by the next run
                manifest = self.state / _MERGE_MANIFEST
                tmp_manifest = manifest.with_name(manifest.name + ".tmp")
                tmp_manifest.write_text(json.dumps({"tables": [[t.name, f.name] for t, f in pairs]}) + "\n",
                                        encoding="utf-8")
                _replace_durably(tmp_manifest, manifest)
        except BaseException:
            for tmp, _ in pairs:
                with contextlib.suppress(OSError):
                    tmp.unlink(missing_ok=True)
            raise
        self._finish_merge()
        return written

    def _rows_to_keep(self) -> dict[str, set[str]]:
        """Batch id → ``file`` values whose rows in that batch are the latest."""
        keep: dict[str, set[str]] = {}
        for rec in self.latest().values():
            keep.setdefault(rec["batch"], set()).add(rec["file"])
        return keep

    def _filtered_parts(self, name: str, keep: dict[str, set[str]]) -> Iterable[pa.Table]:
        schema = arrow_schema(name)
        for batch in sorted(keep):
            part = self.parts / name / f"{batch}.parquet"
            if not part.exists():  # this batch had no rows for this table
                continue
            table = pq.read_table(part, schema=schema)
            if len(keep[batch]) != len(self.batches[batch]):
                mask = pc.is_in(table["file"], value_set=pa.array(sorted(keep[batch]), pa.large_string()))
                table = table.filter(mask)
            if table.num_rows:
                yield table


def _sorted(name: str, chunks: Iterable[pa.Table],
            on_chunk: Callable[[str, pa.Table], None] | None) -> pa.Table:
    """All rows of one table in a defined order: by its declared columns, left to right.

    Workers finish in any order; sorting makes the merged tables (and so the
    committed demo outputs) independent of it. The rows of one table are held in
    memory for the sort (Arrow columns: a few hundred bytes a row, so a survey of
    the whole archive stays within a few GiB at most).
    """
    tables = []
    for t in chunks:
        if on_chunk:
            on_chunk(name, t)
        tables.append(t)
    table = pa.concat_tables(tables) if tables else arrow_schema(name).empty_table()
    keys = [(c.name, "ascending") for c in SCHEMAS[name]]
    return table.sort_by(keys) if table.num_rows > 1 else table


def _write_parquet(tmp: Path, name: str, chunks: Iterable[pa.Table],
                   on_chunk: Callable[[str, pa.Table], None] | None) -> None:
    table = _sorted(name, chunks, on_chunk)
    with pq.ParquetWriter(tmp, arrow_schema(name)) as writer:
        for start in range(0, max(table.num_rows, 1), _MERGE_ROWS):
            writer.write_table(table.slice(start, _MERGE_ROWS))


# A text cell starting with one of these is run as a formula by spreadsheet programs
# (CSV injection; OWASP, common practice, no primary source); a quote in front keeps it text.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = r"^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$"


def neutralise_csv(df: pd.DataFrame) -> pd.DataFrame:
    """Text cells that a spreadsheet would run as a formula, prefixed with ``'``; numbers untouched.

    Only text columns are looked at; a text cell that is a plain number (``-1.5``) stays as it is.
    :func:`read_table` takes the quote off again.
    """
    out = None
    for col in df.columns:
        s = df[col]
        if not (pd.api.types.is_string_dtype(s.dtype) or s.dtype == object):
            continue
        text = s.astype("string")
        risky = text.str.startswith(_FORMULA_START).fillna(False) & ~text.str.match(_PLAIN_NUMBER).fillna(False)
        if risky.any():
            out = df.copy() if out is None else out
            out[col] = text.mask(risky, "'" + text)
    return df if out is None else out


def _unneutralise(df: pd.DataFrame) -> pd.DataFrame:
    for col in df.columns:
        if pd.api.types.is_string_dtype(df[col].dtype):
            text = df[col]
            quoted = text.str.startswith(tuple("'" + c for c in _FORMULA_START)).fillna(False)
            if quoted.any():
                df[col] = text.mask(quoted, text.str.slice(1))
    return df


def _write_csv(tmp: Path, name: str, chunks: Iterable[pa.Table],
               on_chunk: Callable[[str, pa.Table], None] | None) -> None:
    table = _sorted(name, chunks, on_chunk)
    with open(tmp, "w", encoding="utf-8", newline="") as fh:
        if table.num_rows:
            neutralise_csv(table.to_pandas()).to_csv(fh, index=False)
        else:  # no rows at all: still write the header line
            empty_table(name).to_csv(fh, index=False)


def read_table(path: str | os.PathLike[str], name: str) -> pd.DataFrame:
    """Read a merged survey table (Parquet or CSV) with its declared dtypes.

    Parameters
    ----------
    path : path-like
        ``OUT/<name>.parquet`` or ``OUT/<name>.csv``.
    name : str
        Table name (a key of :data:`fescan.analysis.tables.SCHEMAS`).

    Returns
    -------
    pandas.DataFrame
        Columns and dtypes as declared in :data:`fescan.analysis.tables.SCHEMAS`.
    """
    p = Path(path)
    cols = SCHEMAS[name]
    dtypes = {c.name: c.dtype for c in cols}
    if p.suffix == ".csv":
        df = _unneutralise(pd.read_csv(p, dtype=dtypes, keep_default_na=False, na_values=[""]))
    else:
        df = pd.read_parquet(p)
    return df.astype(dtypes)
