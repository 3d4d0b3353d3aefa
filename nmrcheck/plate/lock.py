"""One plate run per output folder at a time: an advisory lock on ``OUT/run.lock``.

The lock is an ``flock`` held for the run's lifetime: the kernel releases it when the
process ends, however it ends (a killed run leaves no stale lock behind; the file stays,
holding the last holder's pid for the message). A second run on the same folder refuses
with one line naming the folder and the holder.
"""

from __future__ import annotations

import logging
import os
import socket
import time
from pathlib import Path

from nmrcheck.errors import OutputError
from nmrcheck.io.atomic import describe_os_error

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None  # type: ignore[assignment]

__all__ = ["LOCK_NAME", "OutputLock"]

log = logging.getLogger("nmrcheck")

LOCK_NAME = "run.lock"


class OutputLock:
    """Exclusive use of an output folder by this process (a context manager).

    Raises :class:`OutputError` on entry when another live process holds the folder.
    """

    def __init__(self, folder: str | os.PathLike) -> None:
        self.folder = Path(folder)
        self.path = self.folder / LOCK_NAME
        self.fd: int | None = None

    def __enter__(self) -> "OutputLock":
        self.acquire()
        return self

    def __exit__(self, *exc) -> None:
        self.release()

    def acquire(self) -> None:
        try:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as exc:
            raise OutputError(f"{self.folder}: cannot take the run lock {LOCK_NAME} ({describe_os_error(exc)})") from None
        if fcntl is not None:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                holder = _read_holder(fd)
                os.close(fd)
                raise OutputError(f"{self.folder}: another 'plate run' is using this folder ({holder}); wait for it to end or stop it") from None
            except OSError as exc:
                # A file system without locks (some network shares): run, but say so.
                log.warning("%s: cannot lock the folder (%s); make sure no other run uses it", self.folder, describe_os_error(exc))
        try:
            # Best effort: the lock itself is the flock; the text only names the holder.
            os.ftruncate(fd, 0)
            os.pwrite(fd, f"pid {os.getpid()} on {socket.gethostname()} since {time.strftime('%Y-%m-%d %H:%M:%S')}\n".encode(), 0)
        except OSError:
            pass
        self.fd = fd

    def release(self) -> None:
        if self.fd is None:
            return
        try:
            os.ftruncate(self.fd, 0)
        except OSError:
            pass
        if fcntl is not None:
            try:
                fcntl.flock(self.fd, fcntl.LOCK_UN)
            except OSError:
                pass  # never locked (see acquire); closing is all there is to do
        os.close(self.fd)
        self.fd = None


def _read_holder(fd: int) -> str:
    try:
        text = os.pread(fd, 200, 0).decode("utf-8", "replace").strip()
    except OSError:
        text = ""
    return text or "holder unknown"
