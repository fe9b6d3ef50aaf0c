"""Resuming a survey: skip what is done, retry failures on request, survive SIGKILL.

Real entries come from shared/structures (SOURCES.md); copies of them are made
in temporary folders so that a survey has enough distinct files to be killed
part-way. The reference is always an uninterrupted survey of the same files.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest

from fescan.api import survey
from fescan.core.errors import ConfigError
from fescan.surveys.store import STATE_DIR, TABLE_NAMES, SurveyStore, file_key, read_table
from tests.datafiles import entry_path, requires_shared
from tests.survey_helpers import HANG, QUICK, assert_same_tables

pytestmark = requires_shared

REPO = Path(__file__).resolve().parents[1]


def _tables(summary) -> dict[str, pd.DataFrame]:
    return {name: read_table(path, name) for name, path in summary.tables.items()}


def _copies(folder: Path, n_each: int = 2, ids: tuple[str, ...] = QUICK[:6]) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    out = []
    for k in range(n_each):
        for pid in ids:
            src = entry_path(pid)
            dst = folder / f"c{k}_{src.name}"
            shutil.copyfile(src, dst)
            out.append(dst)
    return out


def _index_lines(out: Path) -> list[dict]:
    p = out / STATE_DIR / "done.jsonl"
    if not p.exists():
        return []
    return [json.loads(x) for x in p.read_text(encoding="utf-8").splitlines(keepends=True) if x.endswith("\n")]


def test_rerun_skips_done_files(tmp_path):
    files = _copies(tmp_path / "in", n_each=1, ids=QUICK[:3])
    first = survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True)
    again = survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True)
    assert (first.n_ok, again.n_ok, again.n_skipped) == (3, 0, 3)
    assert_same_tables(_tables(first), _tables(again))
    # a changed file (new mtime) is analysed again and its old rows are replaced, not doubled
    st = files[0].stat()
    os.utime(files[0], ns=(st.st_atime_ns, st.st_mtime_ns + 10**9))
    third = survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True)
    assert (third.n_ok, third.n_skipped) == (1, 2)
    assert_same_tables(_tables(first), _tables(third))


def test_retry_failed(tmp_path, monkeypatch):
    files = _copies(tmp_path / "in", n_each=1, ids=QUICK[:2])
    bad = tmp_path / "in" / "crash_marked.pdb"
    shutil.copyfile(entry_path("1FDN"), bad)
    monkeypatch.setenv("FESCAN_TEST_CRASH_MARKER", "crash_marked")
    first = survey([tmp_path / "in"], tmp_path / "out", workers=2, quiet=True)
    assert (first.n_ok, first.n_failed, first.failures_by_reason) == (2, 1, {"crash": 1})
    monkeypatch.delenv("FESCAN_TEST_CRASH_MARKER")
    skipped = survey([tmp_path / "in"], tmp_path / "out", workers=2, quiet=True)
    assert (skipped.n_ok, skipped.n_failed, skipped.structures_failed) == (0, 0, 1)
    retried = survey([tmp_path / "in"], tmp_path / "out", workers=2, quiet=True, retry_failed=True)
    assert (retried.n_ok, retried.structures_ok, retried.structures_failed) == (1, 3, 0)
    assert retried.table_rows["failures"] == 0
    ref = survey([*files, bad], tmp_path / "ref", workers=1, quiet=True)
    assert_same_tables(_tables(ref), _tables(retried))


def test_other_options_are_refused(tmp_path):
    _copies(tmp_path / "in", n_each=1, ids=QUICK[:1])
    survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True, cutoff=20.0)
    with pytest.raises(ConfigError, match="other options.*cutoff"):
        survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True)


def test_store_drops_leftovers_of_a_kill(tmp_path):
    # what SIGKILL can leave: a part of an uncommitted batch, temporary files, a half line
    _copies(tmp_path / "in", n_each=1, ids=QUICK[:2])
    ref = survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True, batch_size=1)
    state = tmp_path / "out" / STATE_DIR
    part = next((state / "parts" / "cofactors").iterdir())
    shutil.copyfile(part, part.with_name("99999999999999999999-1-000000.parquet"))  # orphan part
    (state / "parts" / "wires" / "x.parquet.tmp").write_bytes(b"PAR1")
    (tmp_path / "out" / "cofactors.parquet.tmp").write_bytes(b"junk")
    with open(state / "done.jsonl", "a", encoding="utf-8") as fh:
        fh.write('{"batch": "99999999999999999999-1-000000", "files": [{"fi')  # no newline: cut short
    store = SurveyStore(tmp_path / "out", json.loads((state / "settings.json").read_text())["scan_options"])
    store.close()  # release the folder lock before the survey below
    assert len(store.batches) == 2
    assert not (state / "parts" / "cofactors" / "99999999999999999999-1-000000.parquet").exists()
    assert not list(state.rglob("*.tmp")) and not list((tmp_path / "out").glob("*.tmp"))
    assert (state / "done.jsonl").read_bytes().endswith(b"\n")
    again = survey([tmp_path / "in"], tmp_path / "out", workers=1, quiet=True)
    assert again.n_skipped == 2
    assert_same_tables(_tables(ref), _tables(again))


def test_file_key_follows_content_identity(tmp_path):
    p = tmp_path / "a.pdb"
    p.write_text("ATOM\n")
    k = file_key(p)
    assert (k.resolved, k.size) == (str(p.resolve()), 5)
    link = tmp_path / "b.pdb"
    link.symlink_to(p)
    assert file_key(link) == k


def _start_survey(inputs: list[Path], out: Path, env: dict[str, str]) -> subprocess.Popen:
    code = ("import sys; from fescan.api import survey; "
            "survey(sys.argv[2:], sys.argv[1], workers=2, batch_size=1, quiet=True, time_limit=600)")
    return subprocess.Popen([sys.executable, "-c", code, str(out), *map(str, inputs)], cwd=REPO,
                            env={**os.environ, **env, "PYTHONPATH": str(REPO)}, start_new_session=True,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)


def test_sigkill_then_resume_equals_uninterrupted_run(tmp_path):
    inputs = tmp_path / "in"
    files = _copies(inputs, n_each=3)
    # sorted first, so a worker takes it at once and holds it until the kill: the kill
    # always finds a file in flight, whatever the speed of the machine
    shutil.copyfile(entry_path("2DSX"), inputs / f"a_{HANG}.pdb")
    out = tmp_path / "out"
    proc = _start_survey([inputs], out, {"FESCAN_TEST_HANG_MARKER": HANG})
    try:
        deadline = time.monotonic() + 120
        while len(_index_lines(out)) < len(files) // 2:
            assert proc.poll() is None, proc.stderr.read().decode()
            assert time.monotonic() < deadline, "the survey made no progress"
            time.sleep(0.005)
        os.killpg(proc.pid, signal.SIGKILL)  # the parent, its forkserver and its workers
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
        proc.wait()
        proc.stderr.close()
    committed = {f["file"] for line in _index_lines(out) for f in line["files"]}
    assert str(inputs / f"a_{HANG}.pdb") not in committed  # it was in flight: lost, to be redone
    for name in TABLE_NAMES:  # merged tables never exist half-written
        p = out / f"{name}.parquet"
        assert not p.exists() or pq.read_table(p).num_rows >= 0

    resumed = survey([inputs], out, workers=2, quiet=True)
    assert resumed.n_skipped == len(committed) and resumed.n_ok == len(files) + 1 - len(committed)
    ref = survey([inputs], tmp_path / "ref", workers=2, quiet=True)
    got, want = _tables(resumed), _tables(ref)
    assert got["structures"]["file"].is_unique and len(got["structures"]) == len(files) + 1
    assert_same_tables(got, want)
