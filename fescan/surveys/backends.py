"""Engines that run one per-file function over many files: a local process pool and Dask.

Both engines take the same top-level function and argument tuples and yield a
:class:`TaskResult` per task, in the order tasks finish. ``kind`` says how the
task ended:

``"done"``
    the function returned (its value is in ``value``; a per-file error the
    function caught itself is part of that value);
``"timeout"``
    it ran longer than the time limit and its worker was killed;
``"memory"``
    the worker ran out of memory (``MemoryError`` under the memory cap);
``"crash"``
    the worker died (segfault, ``os._exit``, killed by a signal...).

:class:`ProcessPool` is a pool the parent controls, not a
``ProcessPoolExecutor``: each worker is a ``multiprocessing`` process with its
own pipe and holds one task at a time; the parent knows which task each worker
holds, so a worker that dies or runs over time costs only its own task — the
worker is replaced and every other task goes on. Workers start from a
``forkserver`` (``spawn`` where there is none) that has imported fescan once,
so a replacement starts in milliseconds. The memory cap is
``resource.setrlimit(RLIMIT_AS)`` in each worker: it bounds the worker's
address space (virtual memory, about 0.5 GiB of it taken by Python, numpy,
gemmi... before the first file), so an allocation past it fails with
``MemoryError`` instead of taking the machine down.

:class:`DaskEngine` runs the same function on Dask distributed (``pip install
fescan[dask]``): at a scheduler address, or on a ``LocalCluster`` of worker
processes on loopback. On its Dask worker each task runs in a child process
(:func:`run_isolated`, one task of a :class:`ProcessPool`), so the time limit
counts run time only and stops the task, the memory cap is the child's, and a
crash is recorded exactly as the process engine records it.
"""

from __future__ import annotations

import contextlib
import importlib.util
import logging
import multiprocessing as mp
import os
import signal
import sys
import threading
import time
import types
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from multiprocessing.connection import Connection, wait
from typing import Any

from fescan.core.errors import ConfigError, FescanError

__all__ = ["TaskResult", "ProcessPool", "DaskEngine", "WorkerStartError", "default_workers", "run_isolated"]

logger = logging.getLogger(__name__)

_GIB = 1 << 30


@dataclass(frozen=True)
class TaskResult:
    """How one task ended: ``index`` of the task, ``kind``, ``value`` and wall ``seconds``."""

    index: int
    kind: str
    value: Any
    seconds: float


def default_workers() -> int:
    """Number of CPU cores this process may use (``os.cpu_count()`` when unknown)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _signal_text(code: int | None) -> str:
    if code is None:
        return "worker vanished"
    if code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = f"signal {-code}"
        hint = " (out of memory? the system may have killed it)" if -code == signal.SIGKILL else ""
        return f"worker killed by {name}{hint}"
    return f"worker exited with status {code}"


def _set_memory_limit(limit_bytes: int | None) -> None:
    if not limit_bytes:
        return
    import resource

    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    if hard != resource.RLIM_INFINITY:
        limit_bytes = min(limit_bytes, hard)
    resource.setrlimit(resource.RLIMIT_AS, (limit_bytes, hard))


def _worker_main(conn: Connection, func: Callable[..., Any], memory_limit: int | None,
                 environ: dict[str, str]) -> None:
    """Loop of one worker: say it is ready, receive ``(index, args)``, run ``func(*args)``, send the outcome."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent handles Ctrl-C
    # A forkserver child inherits the environment of the forkserver, which may be older
    # than the parent's: take the parent's, as a spawned child would.
    for k in set(os.environ) - set(environ):
        del os.environ[k]
    os.environ.update(environ)
    if os.environ.get("FESCAN_TEST_WORKER_START_FAIL"):  # test-only: a worker that cannot start
        os._exit(3)
    _set_memory_limit(memory_limit)
    conn.send(("ready", os.getpid(), None))
    while True:
        try:
            msg = conn.recv()
        except (EOFError, OSError):  # the parent is gone
            return
        if msg is None:
            return
        index, args = msg
        fatal = False
        try:
            reply = (index, "done", func(*args))
        except MemoryError:
            reply, fatal = (index, "memory", f"out of memory (worker memory cap {_cap_text(memory_limit)})"), True
        except BaseException as exc:  # the function should catch its own errors; be safe anyway
            reply = (index, "crash", f"{type(exc).__name__} escaped the worker function: {exc}")
        try:
            conn.send(reply)
        except MemoryError:
            with contextlib.suppress(Exception):
                conn.send((index, "memory", "out of memory while sending the result"))
            return
        except (BrokenPipeError, EOFError, OSError):
            return
        except Exception as exc:  # e.g. an unpicklable value
            conn.send((index, "crash", f"result could not be sent: {type(exc).__name__}: {exc}"))
        if fatal:  # a MemoryError can leave a process in a poor state: start afresh
            return


def _cap_text(limit: int | None) -> str:
    return f"{limit / _GIB:g} GiB" if limit else "none"


class WorkerStartError(FescanError):
    """Worker processes cannot be started: the survey cannot run at all."""


_START_TIMEOUT = 120.0  # seconds a new worker may take to import fescan and say it is ready


def _clean_sys_path() -> list[str]:
    """``sys.path`` for workers: fescan's own folder first, no entry relative to the working folder."""
    import fescan

    home = os.path.dirname(os.path.dirname(os.path.abspath(fescan.__file__)))
    out = [home]
    for entry in sys.path:
        if not entry or not os.path.isabs(entry):
            continue  # '' and relative entries follow the working folder: a folder named fescan there
        if entry not in out:  # must not shadow the package the parent runs
            out.append(entry)
    return out


@contextlib.contextmanager
def _neutral_launch() -> Iterator[None]:
    """Start processes without the caller's ``__main__`` and with a clean ``sys.path``.

    multiprocessing re-imports the main script in every child (and in the forkserver) from
    ``__main__.__file__``: a script without ``if __name__ == "__main__"`` would run again
    there. The workers need nothing from ``__main__`` (their function lives in fescan), so
    a bare module stands in for it while processes start.
    """
    saved_main, saved_path = sys.modules.get("__main__"), sys.path[:]
    sys.modules["__main__"] = types.ModuleType("__main__")
    sys.path[:] = _clean_sys_path()
    try:
        yield
    finally:
        sys.path[:] = saved_path
        if saved_main is not None:
            sys.modules["__main__"] = saved_main


class _Worker:
    def __init__(self, ctx: Any, func: Callable[..., Any], memory_limit: int | None) -> None:
        self.conn, child = ctx.Pipe(duplex=True)
        self.proc = ctx.Process(target=_worker_main, args=(child, func, memory_limit, dict(os.environ)),
                                daemon=True)
        try:
            with _neutral_launch():
                self.proc.start()
        except (OSError, RuntimeError, ValueError) as exc:
            self.conn.close()
            child.close()
            raise WorkerStartError(f"cannot start worker processes: {type(exc).__name__}: {exc}") from exc
        child.close()
        self.task: int | None = None
        self.started = 0.0
        self.ready = False

    def wait_ready(self) -> None:
        """Wait for the worker's first message; raise :class:`WorkerStartError` if it never comes."""
        if self.ready:
            return
        deadline = time.monotonic() + _START_TIMEOUT
        while time.monotonic() < deadline:
            if self.conn.poll(0.05):
                try:
                    msg = self.conn.recv()
                except (EOFError, OSError):
                    break
                if msg[0] == "ready":
                    self.ready = True
                    return
            if not self.proc.is_alive() and not self.conn.poll(0):
                break
        self.proc.join(timeout=1)
        code = self.proc.exitcode
        self.stop(kill=True)
        raise WorkerStartError(
            "worker processes cannot start (" + (_signal_text(code) if code is not None else
                                                 f"no sign of life in {_START_TIMEOUT:g} s")
            + "); no file was analysed or recorded as failed. Run with --workers 1 -v to see more, "
              "or check that fescan imports in a fresh Python")

    def stop(self, *, kill: bool = False) -> None:
        if kill and self.proc.is_alive():
            self.proc.kill()
        else:
            with contextlib.suppress(OSError, ValueError):
                self.conn.send(None)
        self.proc.join(timeout=None if kill else 5)
        if self.proc.is_alive():
            self.proc.kill()
            self.proc.join()
        self.conn.close()


class ProcessPool:
    """A pool of worker processes the parent controls, one task per worker at a time.

    Parameters
    ----------
    workers : int
        Number of worker processes.
    time_limit : float or None
        Seconds one task may run before its worker is killed (``None``: no limit).
    memory_limit : float or None
        Address-space cap of each worker in GiB (``None``: no cap).
    """

    def __init__(self, workers: int, time_limit: float | None = 300.0, memory_limit: float | None = 4.0) -> None:
        if workers < 1:
            raise ConfigError(f"workers must be at least 1, got {workers}")
        self.workers = workers
        self.time_limit = time_limit or None
        self.memory_limit = int(memory_limit * _GIB) if memory_limit else None
        self._ever_ready = False
        if "forkserver" in mp.get_all_start_methods():
            self._ctx = mp.get_context("forkserver")
            self._ctx.set_forkserver_preload(["fescan.surveys.worker"])
        else:  # pragma: no cover - Windows
            self._ctx = mp.get_context("spawn")

    def run(self, func: Callable[..., Any], tasks: Sequence[tuple]) -> Iterator[TaskResult]:
        """Run ``func(*args)`` for every argument tuple; yield results as tasks end.

        ``func`` must be a top-level function (it is sent to the workers by
        name). Every task gets exactly one result, whatever happens to workers.
        """
        pending = list(range(len(tasks) - 1, -1, -1))  # a stack, popped in task order
        pool = [_Worker(self._ctx, func, self.memory_limit) for _ in range(min(self.workers, len(tasks)))]
        try:
            while pending or any(w.task is not None for w in pool):
                for i, w in enumerate(pool):
                    if w.task is None and pending:
                        pool[i] = w = self._give(w, pending.pop(), tasks, func)
                busy = [w for w in pool if w.task is not None]
                ready = set(wait([w.conn for w in busy] + [w.proc.sentinel for w in busy],
                                 timeout=self._wait_time(busy)))
                for i, w in enumerate(pool):
                    if w.task is None:
                        continue
                    result = self._check(w, ready)
                    if result is None:
                        continue
                    if result.kind != "done" or not w.proc.is_alive():
                        w.stop(kill=True)  # replaced only if there is more to do
                        if pending:
                            pool[i] = _Worker(self._ctx, func, self.memory_limit)
                    w.task = None
                    if pending and pool[i].task is None:
                        # the next task goes out before the caller handles this result, so a
                        # worker never waits while the parent writes a batch of results
                        pool[i] = self._give(pool[i], pending.pop(), tasks, func)
                    yield result
        finally:
            for w in pool:
                w.stop(kill=w.task is not None)

    def _give(self, w: _Worker, index: int, tasks: Sequence[tuple], func: Callable[..., Any]) -> _Worker:
        """Send task ``index`` to ``w``, or to a new worker when ``w`` died while idle."""
        try:
            w = self._ready(w, func)
            w.conn.send((index, tasks[index]))
        except OSError:  # BrokenPipeError: killed while idle (e.g. by the system)
            w.stop(kill=True)
            w = self._ready(_Worker(self._ctx, func, self.memory_limit), func)
            w.conn.send((index, tasks[index]))
        w.task, w.started = index, time.monotonic()  # run time only: counted once the worker is ready
        return w

    def _ready(self, w: _Worker, func: Callable[..., Any]) -> _Worker:
        """``w`` once it is ready, or a replacement.

        Before any worker has started, a failure to start stops the survey
        (:class:`WorkerStartError`): nothing would ever run. After that, a worker
        killed while starting (by the system, say) is replaced, twice at most.
        """
        for attempt in range(3):
            try:
                w.wait_ready()
                self._ever_ready = True
                return w
            except WorkerStartError:
                if not self._ever_ready or attempt == 2:
                    raise
                w = _Worker(self._ctx, func, self.memory_limit)
        raise AssertionError("unreachable")  # pragma: no cover

    def _wait_time(self, busy: list[_Worker]) -> float:
        if not self.time_limit:
            return 1.0
        now = time.monotonic()
        left = min(w.started + self.time_limit - now for w in busy)
        return min(1.0, max(0.0, left) + 0.01)

    def _check(self, w: _Worker, ready: set) -> TaskResult | None:
        """The result of a busy worker's task, if it has ended (done, died or over time)."""
        index = w.task
        assert index is not None
        elapsed = time.monotonic() - w.started
        if w.conn in ready or w.conn.poll():
            try:
                got, kind, value = w.conn.recv()
            except (EOFError, OSError):
                pass  # the worker died mid-message: fall through to the exit code
            else:
                if got == index:
                    return TaskResult(index, kind, value, elapsed)
        if w.proc.sentinel in ready or not w.proc.is_alive():
            w.proc.join(timeout=5)
            return TaskResult(index, "crash", _signal_text(w.proc.exitcode), elapsed)
        if self.time_limit and elapsed > self.time_limit:
            return TaskResult(index, "timeout", f"over the time limit of {self.time_limit:g} s", elapsed)
        return None


_ISOLATION_LOCK = threading.Lock()


def run_isolated(func: Callable[..., Any], args: tuple, time_limit: float | None,
                 memory_limit: int | None) -> tuple[str, Any, float]:
    """Run ``func(*args)`` in a child process of this one, as :class:`ProcessPool` does one task.

    Used on Dask workers: the time limit then counts run time only (not time queued
    on the scheduler) and a task over it is stopped; a crash or a memory cap hit
    costs the child, not the Dask worker, and is recorded as the process engine
    records it. Returns ``(kind, value, seconds)``.
    """
    me = mp.current_process()
    with _ISOLATION_LOCK:  # Dask worker threads share the process: one launch at a time
        daemon = me._config.get("daemon")
        me._config["daemon"] = False  # Dask worker processes are daemonic; this child is ours to stop
        try:
            pool = ProcessPool(1, time_limit, memory_limit / _GIB if memory_limit else None)
            runner = pool.run(func, [args])
            first = next(runner)
        finally:
            me._config["daemon"] = daemon
    for _ in runner:  # let the pool stop its worker
        pass
    return first.kind, first.value, first.seconds


class DaskEngine:
    """Run the per-file function on Dask distributed, each task in a child process of its Dask worker.

    Parameters
    ----------
    workers : int
        Worker processes of the ``LocalCluster`` (ignored with a scheduler address).
    scheduler : str or None
        Address of a running scheduler (``tcp://host:8786``); ``None`` starts a
        ``LocalCluster`` of single-threaded worker processes on 127.0.0.1.
    time_limit : float or None
        Seconds one task may run (on its worker, queueing not counted) before it is stopped.
    memory_limit : float or None
        Address-space cap in GiB of the child process that runs each task.

    Notes
    -----
    Every task runs through :func:`run_isolated` on its Dask worker, so a timeout,
    a memory cap hit or a crash ends as it does with :class:`ProcessPool`, with the
    same message, and the Dask worker lives on.
    """

    def __init__(self, workers: int, scheduler: str | None = None, time_limit: float | None = 300.0,
                 memory_limit: float | None = 4.0) -> None:
        if importlib.util.find_spec("distributed") is None:
            raise ConfigError("engine 'dask' needs Dask distributed: pip install 'fescan[dask]'")
        self.workers = max(1, workers)
        self.scheduler = scheduler
        self.time_limit = time_limit or None
        self.memory_limit = int(memory_limit * _GIB) if memory_limit else None

    def run(self, func: Callable[..., Any], tasks: Sequence[tuple]) -> Iterator[TaskResult]:
        """Run ``func(*args)`` for every argument tuple on Dask; yield results as tasks end."""
        from distributed import Client, LocalCluster, as_completed

        chatty = logging.getLogger("distributed")
        level = chatty.level
        chatty.setLevel(logging.CRITICAL)  # its messages are not the user's business: failures are rows
        cluster = client = None
        try:
            if self.scheduler:
                try:
                    client = Client(self.scheduler, timeout="30s")
                except (OSError, TimeoutError) as exc:
                    raise ConfigError(f"cannot reach the Dask scheduler at {self.scheduler}: {exc}") from exc
            else:
                cluster = LocalCluster(n_workers=self.workers, threads_per_worker=1, processes=True,
                                       host="127.0.0.1", dashboard_address="127.0.0.1:0",
                                       memory_limit=0, silence_logs=logging.ERROR)
                client = Client(cluster)
            yield from self._drive(client, as_completed, func, tasks)
        finally:
            if client is not None:
                client.close()
            if cluster is not None:
                cluster.close()
            chatty.setLevel(level)

    def _drive(self, client: Any, as_completed: Any, func: Callable[..., Any],
               tasks: Sequence[tuple]) -> Iterator[TaskResult]:
        threads = sum(client.nthreads().values()) or self.workers
        window = 2 * max(1, threads)  # futures in flight: bounds memory on the workers and here
        todo = iter(range(len(tasks)))
        started: dict[Any, tuple[int, float]] = {}

        def submit() -> Any:
            i = next(todo, None)
            if i is None:
                return None
            fut = client.submit(run_isolated, func, tasks[i], self.time_limit, self.memory_limit, pure=False)
            started[fut] = (i, time.monotonic())
            return fut

        ac = as_completed([f for f in (submit() for _ in range(window)) if f is not None])
        for fut in ac:
            i, t0 = started.pop(fut)
            yield self._result(fut, i, time.monotonic() - t0)
            new = submit()
            if new is not None:
                ac.add(new)

    def _result(self, fut: Any, i: int, elapsed: float) -> TaskResult:
        try:
            kind, value, seconds = fut.result()
        except MemoryError:
            return TaskResult(i, "memory", "out of memory on a Dask worker", elapsed)
        except Exception as exc:
            name = type(exc).__name__
            if name == "KilledWorker":
                return TaskResult(i, "crash", "Dask workers running this file died (KilledWorker)", elapsed)
            return TaskResult(i, "crash", f"{name} on a Dask worker: {exc}", elapsed)
        return TaskResult(i, kind, value, seconds)
