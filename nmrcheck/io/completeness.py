"""Tell a finished recording from one still being written, so an overnight watch never reads a FID half-way.

A Bruker FID has all its data when the ``fid`` file holds the TD values ``acqus`` announces
(4 or 8 bytes each, by DTYPA; a last partial 1024-byte block may be padded); a
Varian/Agilent ``fid`` when it holds the blocks its own 32-byte file header announces; a
JCAMP-DX file when its last block is closed by an ``##END=`` line (an ``##END=`` inside a
``$$`` comment, e.g. an audit trail, does not count). Having all its data is not enough
for a file that is created at full size and filled block by block: the watch also wants
the file unchanged (:func:`recording_fingerprint`) for a quiet period, unless the format's
own end marker (the JCAMP-DX closing ``##END=``) is there.
"""

from __future__ import annotations

import hashlib
import logging
import os
import re
import struct
import time
from pathlib import Path

from nmrcheck.errors import ParameterError

__all__ = [
    "is_complete",
    "expected_size_reached",
    "has_end_marker",
    "data_file",
    "file_signature",
    "recording_fingerprint",
]

log = logging.getLogger("nmrcheck")

_TD = re.compile(rb"^##\$TD=\s*(\d{1,12})\s*$", re.MULTILINE)
_DTYPA = re.compile(rb"^##\$DTYPA=\s*(\d+)", re.MULTILINE)
_JCAMP_TITLE = re.compile(rb"^[ \t]*##TITLE[ \t]*=", re.MULTILINE)
_JCAMP_END = re.compile(rb"^[ \t]*##END[ \t]*=", re.MULTILINE)
_COMMENT_LINE = re.compile(rb"^[ \t]*\$\$[^\r\n]*", re.MULTILINE)
_BLOCK = 1024
"""Bytes of a Bruker acquisition block: a FID's last block may be zero-padded to it (Bruker raw-data layout; common practice)."""
_JCAMP_MAX_SCAN = 512 * 1024 * 1024
"""Larger JCAMP-DX files are judged on their last 64 KiB only (bounded effort)."""
_HASHED = 64 * 1024


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


def _part_digest(h, path: Path) -> bool:
    """Feed size, time and the first and last 64 KiB of ``path`` to ``h``; False when it is not a readable file."""
    try:
        st = path.stat()
        if not path.is_file():
            return False
        with open(path, "rb") as fh:
            head = fh.read(_HASHED)
            tail = b""
            if st.st_size > _HASHED:
                fh.seek(max(_HASHED, st.st_size - _HASHED))
                tail = fh.read(_HASHED)
    except OSError:
        return False
    h.update(f"{path.name}:{st.st_size}:{st.st_mtime_ns}:".encode())
    h.update(head)
    h.update(tail)
    return True


def recording_fingerprint(path: str | os.PathLike) -> str | None:
    """A short digest of what a recording holds now, or None when there is no recording at ``path``.

    Size, modification time and a hash of the first and last 64 KiB of the data file and of
    the parameter file (``acqus`` or ``procpar``): any rewrite, growth or fill of the
    recording changes it, and reading it costs at most 256 KiB whatever the file's size.
    """
    p = Path(path)
    if p.name == "fid" and p.parent.is_dir():
        p = p.parent
    h = hashlib.sha256()
    if p.is_dir():
        if not _part_digest(h, p / "fid"):
            return None
        for name in ("acqus", "procpar"):
            _part_digest(h, p / name)
    elif not _part_digest(h, p):
        return None
    return h.hexdigest()[:24]


def _bruker_expected_bytes(directory: Path) -> int | None:
    try:
        with open(directory / "acqus", "rb") as fh:
            head = fh.read(4 * 1024 * 1024)
    except OSError:
        return None
    m = _TD.search(head)
    if m is None:
        return None
    td = int(m.group(1))
    d = _DTYPA.search(head)
    itemsize = 8 if d is not None and int(d.group(1)) == 2 else 4
    return td * itemsize


def _varian_expected_bytes(fid: Path) -> int | None:
    """Size the Varian/Agilent file header announces: 32 bytes plus nblocks x bbytes (big-endian; Varian 'fid' layout, from memory)."""
    try:
        with open(fid, "rb") as fh:
            head = fh.read(32)
    except OSError:
        return None
    if len(head) < 32:
        return None
    nblocks, ntraces, npoints, ebytes, tbytes, bbytes, _vers, _status, nbheaders = struct.unpack(">6ihhi", head)
    if min(nblocks, ntraces, npoints, ebytes, tbytes, bbytes, nbheaders) < 0 or ebytes not in (2, 4):
        return None
    if tbytes != npoints * ebytes or bbytes != ntraces * tbytes + nbheaders * 28:
        return None
    return 32 + nblocks * bbytes


def has_end_marker(path: str | os.PathLike) -> bool:
    """True when ``path`` is a JCAMP-DX file whose blocks are all closed and whose last line is ``##END=``.

    Lines starting with ``$$`` are comments: an audit trail quoted there (``$$ ##END=``) does
    not close anything. A compound file has one ``##TITLE=`` and one ``##END=`` per block, so
    the file is closed when there are as many ends as titles and the last line is an end.
    """
    p = Path(path)
    if not p.is_file():
        return False
    try:
        size = p.stat().st_size
        with open(p, "rb") as fh:
            if size <= _JCAMP_MAX_SCAN:
                text = fh.read()
                whole = True
            else:
                fh.seek(size - 65536)
                text = fh.read()
                whole = False
    except OSError:
        return False
    text = _COMMENT_LINE.sub(b"", text)
    lines = [ln for ln in text.splitlines() if ln.strip()]
    if not lines or _JCAMP_END.match(lines[-1]) is None:
        return False
    if not whole:
        return True
    return len(_JCAMP_END.findall(text)) >= max(1, len(_JCAMP_TITLE.findall(text)))


def expected_size_reached(path: str | os.PathLike) -> bool:
    """True when the recording at ``path`` has all the data its header announces (one look, no waiting)."""
    p = Path(path)
    if p.name == "fid" and p.parent.is_dir():
        p = p.parent
    if p.is_dir():
        fid = p / "fid"
        if not fid.is_file():
            return False
        size = fid.stat().st_size
        if (p / "acqus").is_file():
            expected = _bruker_expected_bytes(p)
            if expected is None or expected == 0:
                return False
            padded = -(-expected // _BLOCK) * _BLOCK
            return size in (expected, padded)
        if (p / "procpar").is_file():
            expected = _varian_expected_bytes(fid)
            return size == expected if expected is not None else size > 0
        return False
    if p.is_file():
        return has_end_marker(p)
    return False


def is_complete(path: str | os.PathLike, *, settle_s: float = 0.2) -> bool:
    """True when the recording at ``path`` is fully written and no longer changing.

    Parameters
    ----------
    path
        A Bruker or Varian experiment directory (or its ``fid``), or a JCAMP-DX file.
    settle_s
        Seconds between the two looks at the recording; 0 skips the second look
        (callers that poll repeatedly compare :func:`recording_fingerprint` across polls instead).
        A JCAMP-DX file closed by its own ``##END=`` needs no second look.
    """
    if not settle_s >= 0:
        raise ParameterError(f"settle_s: must be >= 0 s, got {settle_s}")
    first = recording_fingerprint(path)
    if first is None or not expected_size_reached(path):
        return False
    if settle_s == 0 or has_end_marker(path):
        return True
    time.sleep(settle_s)
    return recording_fingerprint(path) == first and expected_size_reached(path)
