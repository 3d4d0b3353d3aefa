"""Write a file whole or not at all: a temporary file in the same folder, flushed, then renamed over the target.

A reader (a browser, a spreadsheet, a script) sees either the previous file or the new
one, never a half-written or empty file, even when the disk fills up or the run is killed.
"""

from __future__ import annotations

import errno
import os
import tempfile
from pathlib import Path

from nmrcheck.errors import OutputError

__all__ = ["write_text_atomically", "describe_os_error"]

_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "the disk quota is exhausted",
    errno.EROFS: "the file system is read-only",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOENT: "the folder does not exist",
    errno.ENOTDIR: "a part of the path is not a folder",
    errno.EISDIR: "the path is a folder",
}


def describe_os_error(exc: OSError) -> str:
    """A few words for people ('the disk is full') from an OSError."""
    return _REASONS.get(exc.errno or -1, exc.strerror or type(exc).__name__).strip()


def write_text_atomically(path: str | os.PathLike, text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` through a temporary file in the same folder and :func:`os.replace`.

    Raises
    ------
    OutputError
        One line naming the file and the reason (full disk, read-only folder, ...); the
        previous content of ``path``, if any, is left as it was and no temporary file remains.
    """
    target = Path(path)
    tmp_name = None
    try:
        fd, tmp_name = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
        with os.fdopen(fd, "w", encoding=encoding, newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp_name, target)
        tmp_name = None
    except OSError as exc:
        raise OutputError(f"{target}: cannot be written ({describe_os_error(exc)}); any earlier version is unchanged") from None
    finally:
        if tmp_name is not None:
            try:
                os.unlink(tmp_name)
            except OSError:
                pass
    return target
