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
processes on loopback. There the memory cap is Dask's per-worker
``memory_limit`` (the nanny restarts a worker past it) and a task over the
time limit is reported as a timeout but cannot be stopped on its worker.
"""

from __future__ import annotations

import contextlib
import importlib.util
import logging
import multiprocessing as mp
import os
import signal
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from multiprocessing.connection import Connection, wait
from typing import Any

from fescan.core.errors import ConfigError

__all__ = ["TaskResult", "ProcessPool", "DaskEngine", "default_workers"]

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
    """Loop of one worker: receive ``(index, args)``, run ``func(*args)``, send the outcome."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent handles Ctrl-C
    # A forkserver child inherits the environment of the forkserver, which may be older
    # than the parent's: take the parent's, as a spawned child would.
    for k in set(os.environ) - set(environ):
        del os.environ[k]
    os.environ.update(environ)
    _set_memory_limit(memory_limit)
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


class _Worker:
    def __init__(self, ctx: Any, func: Callable[..., Any], memory_limit: int | None) -> None:
        self.conn, child = ctx.Pipe(duplex=True)
        self.proc = ctx.Process(target=_worker_main, args=(child, func, memory_limit, dict(os.environ)),
                                daemon=True)
        self.proc.start()
        child.close()
        self.task: int | None = None
        self.started = 0.0

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
        if "forkserver" in mp.get_all_start_methods():
            self._ctx = mp.get_context("forkserver")
            self._ctx.set_forkserver_preload(["fescan.survey"])
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
            w.conn.send((index, tasks[index]))
        except OSError:  # BrokenPipeError: killed while idle (e.g. by the system)
            w.stop(kill=True)
            w = _Worker(self._ctx, func, self.memory_limit)
            w.conn.send((index, tasks[index]))
        w.task, w.started = index, time.monotonic()
        return w

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


class DaskEngine:
    """Run the per-file function on Dask distributed.

    Parameters
    ----------
    workers : int
        Worker processes of the ``LocalCluster`` (ignored with a scheduler address).
    scheduler : str or None
        Address of a running scheduler (``tcp://host:8786``); ``None`` starts a
        ``LocalCluster`` of single-threaded worker processes on 127.0.0.1.
    time_limit : float or None
        Seconds after which a task is reported as a timeout (it keeps running
        on its worker; Dask cannot stop it).
    memory_limit : float or None
        Memory limit of each ``LocalCluster`` worker in GiB (Dask's nanny
        restarts a worker past it).
    """

    def __init__(self, workers: int, scheduler: str | None = None, time_limit: float | None = 300.0,
                 memory_limit: float | None = 4.0) -> None:
        if importlib.util.find_spec("distributed") is None:
            raise ConfigError("engine 'dask' needs Dask distributed: pip install 'fescan[dask]'")
        self.workers = max(1, workers)
        self.scheduler = scheduler
        self.time_limit = time_limit or None
        self.memory_limit = f"{memory_limit}GiB" if memory_limit else None

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
                                       memory_limit=self.memory_limit or 0, silence_logs=logging.ERROR)
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
        window = 4 * self.workers  # futures in flight: bounds memory on the workers and here
        todo = iter(range(len(tasks)))
        started: dict[Any, tuple[int, float]] = {}
        self._late: set[Any] = set()

        def submit() -> Any:
            i = next(todo, None)
            if i is None:
                return None
            fut = client.submit(func, *tasks[i], pure=False)
            started[fut] = (i, time.monotonic())
            return fut

        ac = as_completed([f for f in (submit() for _ in range(window)) if f is not None])
        while started:
            for fut in self._next_batch(ac, started):
                if fut not in started:  # a cancelled (timed-out) future, already reported
                    continue
                i, t0 = started.pop(fut)
                yield self._result(fut, i, time.monotonic() - t0)
                new = submit()
                if new is not None:
                    ac.add(new)

    def _next_batch(self, ac: Any, started: dict[Any, tuple[int, float]]) -> list[Any]:
        """Finished futures, or futures over the time limit (cancelled), whichever comes first."""
        if not self.time_limit:
            return [next(ac)]
        while True:
            with contextlib.suppress(StopIteration):
                got = ac.next_batch(block=False)
                if got:
                    return got
            now = time.monotonic()
            late = [f for f, (_, t0) in started.items() if now - t0 > self.time_limit]
            if late:
                for f in late:
                    f.cancel()
                self._late.update(late)
                return late
            time.sleep(0.02)

    def _result(self, fut: Any, i: int, elapsed: float) -> TaskResult:
        if fut in self._late:
            return TaskResult(i, "timeout", f"over the time limit of {self.time_limit:g} s "
                                            "(still running on its Dask worker)", elapsed)
        try:
            return TaskResult(i, "done", fut.result(), elapsed)
        except MemoryError:
            return TaskResult(i, "memory", "out of memory on a Dask worker", elapsed)
        except Exception as exc:
            name = type(exc).__name__
            if name == "KilledWorker":
                return TaskResult(i, "crash", "Dask workers running this file died (KilledWorker)", elapsed)
            return TaskResult(i, "crash", f"{name} on a Dask worker: {exc}", elapsed)
