"""One survey at a time per output folder: an advisory lock file naming its holder.

:class:`FolderLock` takes ``OUT/_survey_state/lock`` with ``fcntl.flock``: the
kernel releases it when its process ends, however it ends, so a lock left by a
killed survey is stale by construction and the next survey takes it over. The
file holds the holder's pid, host and start time, so a second survey refused at
the door can name the one that is running. Where ``flock`` is missing (Windows)
the lock falls back to the pid in the file, taken over when that process is gone.
"""

from __future__ import annotations

import contextlib
import datetime
import json
import os
import socket
from pathlib import Path
from typing import Any

from fescan.core.errors import FescanError

__all__ = ["FolderLock", "SurveyLocked"]

try:
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]


class SurveyLocked(FescanError):
    """Another survey is writing into the same output folder."""


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True
    return True


class FolderLock:
    """Exclusive lock of a survey output folder (a context manager).

    Parameters
    ----------
    path : path-like
        The lock file (``OUT/_survey_state/lock``).
    folder : path-like
        The output folder, named in the refusal message.
    """

    def __init__(self, path: str | os.PathLike[str], folder: str | os.PathLike[str]) -> None:
        self.path = Path(path)
        self.folder = Path(folder)
        self._fd: int | None = None

    def acquire(self) -> None:
        """Take the lock or raise :class:`SurveyLocked` naming the running survey."""
        try:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as exc:
            raise FescanError(f"{self.folder}: cannot create the survey lock ({exc.strerror or exc})") from exc
        try:
            if fcntl is not None:
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                except BlockingIOError:
                    raise SurveyLocked(self._refusal(self._holder(fd))) from None
            else:  # pragma: no cover - no flock: trust the pid in the file
                holder = self._holder(fd)
                if holder and holder.get("host") == socket.gethostname() and _pid_alive(int(holder.get("pid", 0))) \
                        and int(holder.get("pid", 0)) != os.getpid():
                    raise SurveyLocked(self._refusal(holder))
            me = {"pid": os.getpid(), "host": socket.gethostname(),
                  "started": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")}
            os.ftruncate(fd, 0)
            os.pwrite(fd, (json.dumps(me) + "\n").encode(), 0)
        except BaseException:
            os.close(fd)
            raise
        self._fd = fd

    def release(self) -> None:
        """Let the lock go (the file stays; its content is the last holder)."""
        if self._fd is None:
            return
        fd, self._fd = self._fd, None
        with contextlib.suppress(OSError):
            if fcntl is not None:
                fcntl.flock(fd, fcntl.LOCK_UN)
        os.close(fd)

    def _holder(self, fd: int) -> dict[str, Any]:
        with contextlib.suppress(OSError, ValueError):
            data = os.pread(fd, 4096, 0)
            got = json.loads(data.decode("utf-8", "replace") or "{}")
            if isinstance(got, dict):
                return got
        return {}

    def _refusal(self, holder: dict[str, Any]) -> str:
        who = (f"pid {holder.get('pid', '?')} on {holder.get('host', '?')}, started {holder.get('started', '?')}"
               if holder else "holder unknown")
        return (f"{self.folder}: another survey is writing into this folder ({who}); wait for it to end, "
                "or use another output folder")

    def __enter__(self) -> FolderLock:
        self.acquire()
        return self

    def __exit__(self, *exc: object) -> None:
        self.release()
