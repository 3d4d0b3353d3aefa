"""Tell a finished recording from one still being written, so an overnight watch never reads a FID half-way.

A Bruker FID is complete when the ``fid`` file holds the TD points ``acqus`` announces
(4 or 8 bytes each, by DTYPA) and its size stays the same between two looks a short
interval apart; a JCAMP-DX file when its closing ``##END=`` is there and its size is
steady; a Varian/Agilent directory when ``procpar`` is there and the ``fid`` size is steady.
"""

from __future__ import annotations

import logging
import os
import re
import time
from pathlib import Path

from nmrcheck.errors import ParameterError

__all__ = ["is_complete", "expected_size_reached", "data_file", "file_signature"]

log = logging.getLogger("nmrcheck")

_TD = re.compile(rb"^##\$TD=\s*(\d+)", re.MULTILINE)
_DTYPA = re.compile(rb"^##\$DTYPA=\s*(\d+)", re.MULTILINE)


def data_file(path: str | os.PathLike) -> Path:
    """The file whose growth shows the recording is still being written (``fid`` or the JCAMP-DX file)."""
    p = Path(path)
    if p.is_dir():
        return p / "fid"
    return p


def file_signature(path: str | os.PathLike) -> tuple[int, int] | None:
    """(size, modification time in ns) of the data file, or None when it is not there yet."""
    try:
        st = data_file(path).stat()
    except OSError:
        return None
    return (st.st_size, st.st_mtime_ns)


def _bruker_expected_bytes(directory: Path) -> int | None:
    try:
        head = (directory / "acqus").read_bytes()
    except OSError:
        return None
    m = _TD.search(head)
    if m is None:
        return None
    td = int(m.group(1))
    d = _DTYPA.search(head)
    itemsize = 8 if d is not None and int(d.group(1)) == 2 else 4
    return td * itemsize


def _jcamp_closed(path: Path) -> bool:
    try:
        size = path.stat().st_size
        with open(path, "rb") as fh:
            fh.seek(max(0, size - 4096))
            tail = fh.read()
    except OSError:
        return False
    # A JCAMP-DX file ends with ##END=; a compound file has one per block, the last at the end.
    return re.search(rb"##END\s*=[^\r\n#]*\s*$", tail) is not None


def expected_size_reached(path: str | os.PathLike) -> bool:
    """True when the recording at ``path`` has all the data its header announces (one look, no waiting)."""
    p = Path(path)
    if p.name == "fid" and p.parent.is_dir():
        p = p.parent
    if p.is_dir():
        fid = p / "fid"
        if not fid.is_file():
            return False
        if (p / "acqus").is_file():
            expected = _bruker_expected_bytes(p)
            if expected is None:
                return False
            return fid.stat().st_size == expected
        return (p / "procpar").is_file() and fid.stat().st_size > 0
    if p.is_file():
        return _jcamp_closed(p)
    return False


def is_complete(path: str | os.PathLike, *, settle_s: float = 0.2) -> bool:
    """True when the recording at ``path`` is fully written and no longer growing.

    Parameters
    ----------
    path
        A Bruker or Varian experiment directory (or its ``fid``), or a JCAMP-DX file.
    settle_s
        Seconds between the two looks at the file size; 0 skips the second look
        (callers that poll repeatedly compare :func:`file_signature` across polls instead).
    """
    if settle_s < 0:
        raise ParameterError(f"settle_s: must be >= 0 s, got {settle_s}")
    first = file_signature(path)
    if first is None or not expected_size_reached(path):
        return False
    if settle_s == 0:
        return True
    time.sleep(settle_s)
    second = file_signature(path)
    return second == first and expected_size_reached(path)
