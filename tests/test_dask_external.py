"""Dask for real: an external ``dask scheduler`` and ``dask worker`` started here, on 127.0.0.1.

The survey is given relative paths from a client folder; the Dask workers run in
another folder, so only paths resolved on the client can work. A crash-marked
and a hang-marked copy of a real entry (shared/structures, SOURCES.md) must be
recorded as the process engine records them: the tables of both engines are
compared row for row (run times left out).
"""

from __future__ import annotations

import contextlib
import os
import shutil
import socket
import subprocess
import time
from pathlib import Path

import pytest

from fescan.api import survey
from fescan.surveys.store import read_table
from tests.datafiles import entry_path, requires_shared
from tests.survey_helpers import CRASH, HANG, assert_same_tables

pytestmark = requires_shared

REPO = Path(__file__).resolve().parents[1]
DASK = shutil.which("dask")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def external_scheduler(tmp_path_factory):
    pytest.importorskip("distributed", reason="dask[distributed] is a test dependency; not installed here")
    if DASK is None:
        pytest.skip("the dask command line (dask scheduler / dask worker) is not installed")
    from distributed import Client

    where = tmp_path_factory.mktemp("dask_workers_here")  # the workers' working folder: not the client's
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")]),
           "FESCAN_TEST_CRASH_MARKER": CRASH, "FESCAN_TEST_HANG_MARKER": HANG}
    log = open(where / "dask.log", "wb")  # noqa: SIM115 - closed below
    procs = [subprocess.Popen([DASK, "scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"],
                              cwd=where, env=env, stdout=log, stderr=subprocess.STDOUT)]
    try:
        deadline = time.monotonic() + 60
        while True:
            with contextlib.suppress(OSError), socket.create_connection(("127.0.0.1", port), timeout=1):
                break
            if time.monotonic() > deadline or procs[0].poll() is not None:
                pytest.fail("the dask scheduler did not start: " + (where / "dask.log").read_text(errors="replace"))
            time.sleep(0.2)
        procs.append(subprocess.Popen([DASK, "worker", address, "--nworkers", "2", "--nthreads", "1",
                                       "--host", "127.0.0.1", "--no-dashboard", "--memory-limit", "0"],
                                      cwd=where, env=env, stdout=log, stderr=subprocess.STDOUT))
        with Client(address, timeout="30s") as client:
            client.wait_for_workers(2, timeout=120)
        yield address
    finally:
        for p in reversed(procs):
            p.terminate()
        for p in reversed(procs):
            try:
                p.wait(timeout=5)
            except subprocess.TimeoutExpired:
                p.kill()
                p.wait()
        log.close()


def _inputs(folder: Path) -> None:
    (folder / "in" / "sub").mkdir(parents=True)
    shutil.copyfile(entry_path("1FDN"), folder / "in" / "1FDN.pdb")
    shutil.copyfile(entry_path("5WQQ"), folder / "in" / "sub" / "5WQQ.cif")
    shutil.copyfile(entry_path("2DSX"), folder / "in" / f"{CRASH}.pdb")  # a good file; the hook kills its worker
    shutil.copyfile(entry_path("2DSX"), folder / "in" / f"{HANG}.pdb")  # a good file; the hook hangs it
    (folder / "in" / "empty.pdb").write_bytes(b"")


def _tables(summary) -> dict:
    return {name: read_table(path, name) for name, path in summary.tables.items()}


def test_external_scheduler_relative_paths_same_tables(external_scheduler, tmp_path, monkeypatch):
    client_dir = tmp_path / "client"
    client_dir.mkdir()
    _inputs(client_dir)
    monkeypatch.chdir(client_dir)
    monkeypatch.setenv("FESCAN_TEST_CRASH_MARKER", CRASH)
    monkeypatch.setenv("FESCAN_TEST_HANG_MARKER", HANG)
    dask_run = survey(["in"], "out_dask", quiet=True, engine="dask", scheduler=external_scheduler, time_limit=3)
    # the tables are written under the client's -o, with the paths as given
    assert Path(dask_run.tables["structures"]).resolve().parent == client_dir / "out_dask"
    st = read_table(dask_run.tables["structures"], "structures")
    assert sorted(st["file"]) == sorted(["in/1FDN.pdb", "in/sub/5WQQ.cif", f"in/{CRASH}.pdb", f"in/{HANG}.pdb",
                                         "in/empty.pdb"])
    # the hung task is stopped and recorded (run time counted, not time queued), the crash likewise,
    # and neither blocked the rest
    assert (dask_run.n_ok, dask_run.failures_by_reason) == (2, {"crash": 1, "timeout": 1, "error": 1})
    process_run = survey(["in"], "out_processes", workers=2, quiet=True, time_limit=3)
    assert_same_tables(_tables(dask_run), _tables(process_run))
    failures = read_table(dask_run.tables["failures"], "failures")
    crash = failures[failures["reason"] == "crash"].iloc[0]
    assert crash["error_class"] == "WorkerCrash" and crash["message"].startswith(f"in/{CRASH}.pdb: ")
