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

A file is known by its resolved path, size and modification time (ns). When a
file is analysed again (``retry_failed``, or it changed), the rows of its latest
batch win at the merge; older rows stay in their parts but are filtered out.
Parts are always Parquet; the merged tables are Parquet or CSV.
"""

from __future__ import annotations

import contextlib
import functools
import json
import logging
import os
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from fescan.analysis.tables import SCHEMAS, empty_table, to_frame
from fescan.core.errors import ConfigError, FescanError

__all__ = [
    "STATE_DIR",
    "TABLE_NAMES",
    "FileKey",
    "file_key",
    "arrow_schema",
    "SurveyStore",
    "read_table",
]

logger = logging.getLogger(__name__)

#: Name of the folder, inside the output folder, that holds the survey state.
STATE_DIR = "_survey_state"

#: Tables a survey writes, in the order they are merged.
#: (One list: the declared schemas; ``timings`` is the only table whose values differ between runs.)
TABLE_NAMES: tuple[str, ...] = tuple(SCHEMAS)

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
    declared in :data:`fescan.tables.SCHEMAS` (``string``, ``Int64``, ``boolean``,
    ``float64``).
    """
    return pa.Schema.from_pandas(empty_table(name), preserve_index=False)


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
        raises :class:`~fescan.errors.ConfigError`.
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
        self._check_settings(scan_options)
        self._run = f"{time.time_ns():020d}-{os.getpid()}"
        self._seq = 0
        self.batches: dict[str, list[dict]] = {}
        self._load_index()
        self._remove_orphans()

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
            Outcomes of :func:`fescan.survey.analyse_file` (or failures made by
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
        return batch

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
        for name in TABLE_NAMES:
            final = self.out_dir / f"{name}.{table_format}"
            tmp = final.with_name(final.name + ".tmp")
            chunks = self._filtered_parts(name, keep)
            if table_format == "parquet":
                _write_parquet(tmp, name, chunks, on_chunk)
            else:
                _write_csv(tmp, name, chunks, on_chunk)
            _replace_durably(tmp, final)
            written[name] = final
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


def _write_csv(tmp: Path, name: str, chunks: Iterable[pa.Table],
               on_chunk: Callable[[str, pa.Table], None] | None) -> None:
    table = _sorted(name, chunks, on_chunk)
    with open(tmp, "w", encoding="utf-8", newline="") as fh:
        if table.num_rows:
            table.to_pandas().to_csv(fh, index=False)
        else:  # no rows at all: still write the header line
            empty_table(name).to_csv(fh, index=False)


def read_table(path: str | os.PathLike[str], name: str) -> pd.DataFrame:
    """Read a merged survey table (Parquet or CSV) with its declared dtypes.

    Parameters
    ----------
    path : path-like
        ``OUT/<name>.parquet`` or ``OUT/<name>.csv``.
    name : str
        Table name (a key of :data:`fescan.tables.SCHEMAS`).

    Returns
    -------
    pandas.DataFrame
        Columns and dtypes as declared in :data:`fescan.tables.SCHEMAS`.
    """
    p = Path(path)
    cols = SCHEMAS[name]
    dtypes = {c.name: c.dtype for c in cols}
    if p.suffix == ".csv":
        df = pd.read_csv(p, dtype=dtypes, keep_default_na=False, na_values=[""])
    else:
        df = pd.read_parquet(p)
    return df.astype(dtypes)
