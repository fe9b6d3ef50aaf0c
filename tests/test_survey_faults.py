"""Survey faults: kills at several moments, a killed worker, two surveys into one folder,
a full disk, odd things met in a folder walk, and launchers (stdin, ``-c``, unguarded script).

Real entries come from shared/structures (SOURCES.md), copied into temporary folders.
The reference is always an uninterrupted survey of the same files; tables are compared
row for row after sorting (run times left out).
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from fescan.api import survey
from fescan.cli.main import main
from fescan.surveys import store as store_module
from fescan.surveys.lock import SurveyLocked
from fescan.surveys.store import STATE_DIR, TABLE_NAMES, SurveyStore, SurveyWriteError, read_table
from tests.datafiles import entry_path, requires_shared
from tests.survey_helpers import HANG, assert_same_tables

pytestmark = requires_shared

REPO = Path(__file__).resolve().parents[1]
SMALL = ("1FDN", "2DSX", "6LK1")  # small, quick entries


def _inputs(folder: Path, ids: tuple[str, ...] = SMALL) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    out = []
    for pid in ids:
        src = entry_path(pid)
        shutil.copyfile(src, folder / src.name)
        out.append(folder / src.name)
    return out


def _tables(summary) -> dict:
    return {name: read_table(path, name) for name, path in summary.tables.items()}


def _index_files(out: Path) -> list[str]:
    p = out / STATE_DIR / "done.jsonl"
    if not p.exists():
        return []
    return [f["file"] for line in p.read_text(encoding="utf-8").splitlines(keepends=True) if line.endswith("\n")
            for f in json.loads(line)["files"]]


def _env(**extra: str) -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")]), **extra}


def _start(inputs: list[Path], out: Path, **env: str) -> subprocess.Popen:
    code = ("import sys; from fescan.api import survey; "
            "survey(sys.argv[2:], sys.argv[1], workers=1, batch_size=1, quiet=True, time_limit=600)")
    return subprocess.Popen([sys.executable, "-c", code, str(out), *map(str, inputs)], cwd=REPO, env=_env(**env),
                            start_new_session=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)


def _wait_for(cond, proc: subprocess.Popen, what: str, seconds: float = 120) -> None:
    deadline = time.monotonic() + seconds
    while not cond():
        assert proc.poll() is None, f"the survey ended early: {proc.stderr.read().decode()}"
        assert time.monotonic() < deadline, f"timed out waiting for {what}"
        time.sleep(0.01)


def _kill(proc: subprocess.Popen) -> None:
    if proc.poll() is None:
        os.killpg(proc.pid, signal.SIGKILL)  # the parent, its forkserver and its workers
    proc.wait()
    proc.stderr.close()


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """An uninterrupted survey of SMALL plus a hang-marked copy that times out."""
    root = tmp_path_factory.mktemp("reference")
    files = _inputs(root / "in")
    return root / "in", files


def _lock_holder(out: Path) -> dict:
    try:
        return json.loads((out / STATE_DIR / "lock").read_text() or "{}")
    except (OSError, ValueError):
        return {}


def test_kills_at_several_moments_then_resume_equals_a_clean_run(tmp_path):
    inputs = tmp_path / "in"
    files = _inputs(inputs)
    out = tmp_path / "out"
    # moment 1: lock taken, nothing committed; moment 2: one file committed
    for committed in (0, 1):
        proc = _start([inputs], out)
        try:
            _wait_for(lambda: _lock_holder(out).get("pid") == proc.pid and len(_index_files(out)) >= committed,
                      proc, f"{committed} committed file(s)")
        finally:
            _kill(proc)
    # moment 3: killed while renaming the merged tables into place (after 3 of the 8 renames)
    real_replace = os.replace
    calls = {"n": 0}

    def dying_replace(src, dst):
        if str(src).endswith(".tmp") and Path(dst).parent == out and Path(dst).suffix == ".parquet":
            calls["n"] += 1
            if calls["n"] > 3:
                raise SystemExit("killed")  # stands for SIGKILL: nothing after it runs
        return real_replace(src, dst)

    store_module.os.replace = dying_replace  # type: ignore[attr-defined]
    try:
        with pytest.raises(SystemExit):
            survey([inputs], out, workers=1, quiet=True)
    finally:
        store_module.os.replace = real_replace  # type: ignore[attr-defined]
    assert (out / STATE_DIR / "merge.json").exists()  # the manifest says which renames are owed
    # a new store completes the merge: every table is of the same (newest) set
    SurveyStore(out, json.loads((out / STATE_DIR / "settings.json").read_text())["scan_options"]).close()
    assert not (out / STATE_DIR / "merge.json").exists()
    assert not list(out.glob("*.tmp"))
    resumed = survey([inputs], out, workers=1, quiet=True)
    assert resumed.n_skipped == len(files)
    ref = survey([inputs], tmp_path / "ref", workers=1, quiet=True)
    got = _tables(resumed)
    assert got["structures"]["file"].is_unique and len(got["structures"]) == len(files)
    assert_same_tables(got, _tables(ref))


def test_two_surveys_into_one_folder_and_a_killed_worker(tmp_path):
    inputs = tmp_path / "in"
    files = _inputs(inputs, SMALL[:2])
    hang = inputs / f"z_{HANG}.pdb"  # sorted last: the only worker takes it after the good files
    shutil.copyfile(entry_path("2DSX"), hang)
    out = tmp_path / "out"
    first = _start([inputs], out, FESCAN_TEST_HANG_MARKER=HANG)
    try:
        _wait_for(lambda: _lock_holder(out).get("pid") == first.pid, first, "the first survey's lock")
        parts_before = sorted(p.name for p in (out / STATE_DIR / "parts").rglob("*"))
        with pytest.raises(SurveyLocked, match=rf"another survey is writing into this folder \(pid {first.pid} on "):
            survey([inputs], out, workers=1, quiet=True)
        # the refused survey deleted nothing of the running one
        assert sorted(p.name for p in (out / STATE_DIR / "parts").rglob("*")) == parts_before
        assert main(["survey", str(inputs), "-o", str(out), "--quiet"]) == 1
        # kill the worker holding the hung file: that file is recorded as a crash. Once the good
        # files are in, the only worker holds the hung file (or is idle and, killed, is replaced):
        # kill until the hung file is recorded.
        _wait_for(lambda: len(_index_files(out)) == len(files), first, "the good files committed")

        deadline = time.monotonic() + 120
        while str(hang) not in _index_files(out):
            assert time.monotonic() < deadline, "the hung file was never recorded"
            if first.poll() is None:
                with contextlib.suppress(ProcessLookupError, AssertionError):
                    os.kill(_worker_pid(first.pid, wait=2), signal.SIGKILL)
            time.sleep(0.5)
    finally:
        _kill(first)
    # the dead survey's lock is stale: the next one takes it over and sees the recorded crash
    again = survey([inputs], out, workers=1, quiet=True)
    assert again.n_skipped == len(files) + 1
    failures = read_table(again.tables["failures"], "failures")
    assert list(failures["reason"]) == ["crash"] and "worker killed by SIGKILL" in failures["message"].iloc[0]


def _worker_pid(parent: int, wait: float = 60) -> int:
    """The pid of a process two levels under ``parent`` (parent -> forkserver -> worker)."""
    def children(pid: int) -> list[int]:
        out = []
        for d in Path("/proc").iterdir():
            if d.name.isdigit():
                try:
                    fields = (d / "stat").read_text().rsplit(")", 1)[1].split()
                except OSError:
                    continue
                if int(fields[1]) == pid:
                    out.append(int(d.name))
        return out

    deadline = time.monotonic() + wait
    while time.monotonic() < deadline:
        for child in children(parent):
            grand = children(child)
            if grand:
                return grand[0]
        time.sleep(0.05)
    raise AssertionError("no worker process found")


def test_disk_full_is_one_line_and_nothing_is_replayed(tmp_path, monkeypatch, capsys):
    inputs = tmp_path / "in"
    files = _inputs(inputs, SMALL[:2])
    out = tmp_path / "out"
    real = store_module.pq.write_table
    calls = {"n": 0}

    def full(*args, **kwargs):
        calls["n"] += 1
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(store_module.pq, "write_table", full)
    rc = main(["survey", str(inputs), "-o", str(out), "--workers", "1", "--quiet"])
    err = capsys.readouterr().err
    assert rc == 1 and err.count("\n") == 1 and "No space left on device (disk full?)" in err, err
    assert calls["n"] == 1  # the failed batch was not written again under a new id
    assert _index_files(out) == [] and not [p for p in (out / STATE_DIR / "parts").rglob("*") if p.is_file()]
    monkeypatch.setattr(store_module.pq, "write_table", real)
    got = survey([inputs], out, workers=1, quiet=True)
    assert got.n_ok == len(files)
    assert_same_tables(_tables(got), _tables(survey([inputs], tmp_path / "ref", workers=1, quiet=True)))
    with pytest.raises(SurveyWriteError):  # the merge too
        monkeypatch.setattr(store_module.pq, "ParquetWriter", lambda *a, **k: (_ for _ in ()).throw(
            OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))))
        survey([inputs], out, workers=1, quiet=True)
    assert not list(out.glob("*.tmp"))


def test_walk_links_loops_fifos_and_missing_paths_get_rows_or_warnings(tmp_path):
    inputs = tmp_path / "in"
    _inputs(inputs / "real", SMALL[:1])
    (inputs / "linked").symlink_to(inputs / "real")  # a symlinked folder: followed once
    (inputs / "real" / "loop").symlink_to(inputs)  # a loop back up
    os.mkfifo(inputs / "pipe.pdb")  # a FIFO with a structure name: a failure row
    os.mkfifo(inputs / "pipe.txt")  # a FIFO without one: a warning
    (inputs / "broken.pdb").symlink_to(tmp_path / "nowhere")  # a broken link: a warning
    got = survey([inputs, tmp_path / "missing.pdb"], tmp_path / "out", workers=1, quiet=True)
    st = read_table(got.tables["structures"], "structures")
    failed = dict(zip(st["file"], st["status"]))
    ok = [f for f, status in failed.items() if status == "ok"]  # reached once, through the link or not
    assert len(st) == 3 and len(ok) == 1 and Path(ok[0]).resolve() == (inputs / "real" / "1FDN.pdb").resolve()
    assert failed[str(inputs / "pipe.pdb")] == "failed" and failed[str(tmp_path / "missing.pdb")] == "failed"
    failures = read_table(got.tables["failures"], "failures")
    msgs = dict(zip(failures["file"], failures["message"]))
    assert "a FIFO" in msgs[str(inputs / "pipe.pdb")] and "no such file" in msgs[str(tmp_path / "missing.pdb")]
    warned = "\n".join(got.warnings)
    assert "pipe.txt: skipped (a FIFO)" in warned and "broken.pdb: skipped (broken symbolic link)" in warned
    assert "not searched twice" in warned


LAUNCH = """
import fescan
s = fescan.survey(["in"], "out_{tag}", workers=2, quiet=True)
print("RESULT", s.n_ok, s.n_failed)
"""


def test_any_launcher_from_a_folder_holding_a_fescan_folder(tmp_path):
    _inputs(tmp_path / "in", SMALL[:2])
    (tmp_path / "fescan").mkdir()  # a data folder named like the package, in the working folder
    (tmp_path / "fescan" / "notes.txt").write_text("not the package\n")
    runs = {}
    for how in ("stdin", "dash-c", "unguarded-script", "exec-cell"):  # started together: they take a while
        code = LAUNCH.format(tag=how.replace("-", "_"))
        stdin = None
        if how == "stdin":
            args, stdin = [sys.executable, "-"], code
        elif how == "dash-c":
            args = [sys.executable, "-c", code]
        elif how == "unguarded-script":  # no `if __name__ == "__main__":` guard
            (tmp_path / "run.py").write_text(code)
            args = [sys.executable, "run.py"]
        else:  # what a notebook does: exec a cell's code in __main__
            (tmp_path / "cell.py").write_text(code)
            args = [sys.executable, "-c", "exec(compile(open('cell.py').read(), '<cell>', 'exec'))"]
        (tmp_path / f"{how}.in").write_text(stdin or "")
        with open(tmp_path / f"{how}.in") as fin, open(tmp_path / f"{how}.out", "w") as fout, \
                open(tmp_path / f"{how}.err", "w") as ferr:
            runs[how] = subprocess.Popen(args, stdin=fin, cwd=tmp_path, env=_env(), stdout=fout, stderr=ferr)
    for how, proc in runs.items():
        proc.wait(timeout=300)
        out, err = (tmp_path / f"{how}.out").read_text(), (tmp_path / f"{how}.err").read_text()
        assert proc.returncode == 0 and "RESULT 2 0" in out, f"{how}: {err[-2000:]}"


def test_workers_that_cannot_start_stop_the_survey_and_record_nothing(tmp_path):
    _inputs(tmp_path / "in", SMALL[:2])
    proc = subprocess.run([sys.executable, "-m", "fescan.cli", "survey", "in", "-o", "out", "--quiet"],
                          cwd=tmp_path, env=_env(FESCAN_TEST_WORKER_START_FAIL="1"), capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 1 and "worker processes cannot start" in proc.stderr, proc.stderr
    assert "Traceback" not in proc.stderr and proc.stderr.count("\n") == 1
    assert _index_files(tmp_path / "out") == []  # no file recorded as failed


def test_every_file_failed_exits_non_zero(tmp_path, capsys):
    (tmp_path / "in").mkdir()
    (tmp_path / "in" / "a.pdb").write_bytes(b"")
    (tmp_path / "in" / "b.pdb").write_bytes(b"hello\n")
    assert main(["survey", str(tmp_path / "in"), "-o", str(tmp_path / "out"), "--workers", "1", "--quiet"]) == 1
    assert "every one of the 2 file(s)" in capsys.readouterr().err
    assert all(name in {p.stem for p in (tmp_path / "out").glob("*.parquet")} for name in TABLE_NAMES)
