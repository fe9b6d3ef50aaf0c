"""Peak memory of a process and its workers, read from /proc (Linux): the benchmarks' one sampler.

Used inside the fresh interpreter that runs a survey for ``bench_survey.py`` and
``bench_archive.py`` (their child scripts put this folder on ``PYTHONPATH``)::

    with PeakMemory(interval=0.05) as mem:
        survey(...)
    mem.as_dict()   # {"parent_kib": ..., "worker_kib": ..., "total_kib": ...}

Three numbers, all in KiB (the kB of /proc is 1024 bytes):

* ``parent_kib``: the peak resident set of this process (its ``VmHWM``, read after the
  run; ``ru_maxrss`` only where /proc is missing, since ``ru_maxrss`` survives ``exec`` and
  would count the benchmark process that started this one);
* ``worker_kib``: the largest ``VmHWM`` of any descendant seen while sampling;
* ``total_kib``: the largest sum of ``VmRSS`` of this process and all its descendants over
  the samples taken every ``interval`` seconds (a sampled value: a peak shorter than the
  interval can be missed).

Without /proc the sampler does not run and the worker and total peaks stay 0.
"""

from __future__ import annotations

import os
import resource
import threading

__all__ = ["PeakMemory", "descendants", "status_kib"]


def status_kib(pid: int, key: str) -> int:
    """The value of ``key`` (``"VmRSS"``, ``"VmHWM"``) in ``/proc/<pid>/status`` in KiB; 0 if unreadable."""
    try:
        with open(f"/proc/{pid}/status") as fh:
            for line in fh:
                if line.startswith(key):
                    return int(line.split()[1])  # kB
    except OSError:
        pass
    return 0


def descendants(root: int) -> list[int]:
    """Process ids of every descendant of ``root`` (children, grandchildren, ...), from /proc."""
    kids: dict[int, list[int]] = {}
    for d in os.listdir("/proc"):
        if d.isdigit():
            try:
                with open(f"/proc/{d}/stat") as fh:
                    # the parent pid is the second field after the command name in parentheses
                    kids.setdefault(int(fh.read().rsplit(")", 1)[1].split()[1]), []).append(int(d))
            except (OSError, IndexError, ValueError):
                pass
    out, todo = [], [root]
    while todo:
        for k in kids.get(todo.pop(), []):
            out.append(k)
            todo.append(k)
    return out


class PeakMemory:
    """Context manager sampling the memory of this process and its descendants in a thread.

    Parameters
    ----------
    interval : float
        Seconds between samples of the descendants' memory.
    """

    def __init__(self, interval: float = 0.05) -> None:
        self.interval = interval
        self.worker_kib = 0
        self.total_kib = 0
        self.parent_kib = 0
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def _sample(self) -> None:
        me = os.getpid()
        while not self._stop.is_set():
            procs = descendants(me)
            total = status_kib(me, "VmRSS") + sum(status_kib(p, "VmRSS") for p in procs)
            self.total_kib = max(self.total_kib, total)
            for p in procs:
                self.worker_kib = max(self.worker_kib, status_kib(p, "VmHWM"))
            self._stop.wait(self.interval)

    def __enter__(self) -> PeakMemory:
        if os.path.isdir("/proc/self"):
            self._thread = threading.Thread(target=self._sample, daemon=True)
            self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join()
        self.parent_kib = (status_kib(os.getpid(), "VmHWM")
                           or resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)

    def as_dict(self) -> dict[str, int]:
        """``parent_kib``, ``worker_kib`` and ``total_kib`` (KiB), as the benchmarks print them."""
        return {"parent_kib": self.parent_kib, "worker_kib": self.worker_kib, "total_kib": self.total_kib}
