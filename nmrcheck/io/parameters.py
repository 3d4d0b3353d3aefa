"""Bruker parameter files (``acqus``, ``procs``) read with bounded effort and tolerant decoding.

The files are JCAMP-DX "Parameter Values" blocks: ``##$NAME= value`` lines, strings in
``<...>`` (possibly over several lines) and arrays announced as ``(0..N)`` with their values
on the following lines. Every line is looked at once, so a file cut off inside a string or an
array is reported as truncated instead of being waited on; a byte that is not UTF-8 (an umlaut
typed into a comment in another code page) is replaced, not fatal.
"""

from __future__ import annotations

import os
import re
import stat
from pathlib import Path
from typing import Any

from nmrcheck.errors import InputFileError

__all__ = ["read_parameter_file", "parse_parameter_text", "MAX_PARAMETER_FILE_BYTES", "MAX_ARRAY_ITEMS"]

#: Largest parameter file read (a real ``acqus`` is 5-60 kB).
MAX_PARAMETER_FILE_BYTES = 16 * 1024 * 1024
#: Largest ``(0..N)`` array accepted (the longest Bruker arrays hold a few thousand items).
MAX_ARRAY_ITEMS = 1_000_000

_ARRAY = re.compile(r"\(\s*(\d+)\s*\.\.\s*(\d+)\s*\)(.*)$", re.DOTALL)
_ITEM = re.compile(r"<[^>]*>|[^\s<]+")
_INT = re.compile(r"[+-]?\d+$")


def regular_file(path: Path, what: str | None = None) -> Path:
    """``path`` when it is a regular file; a FIFO, device or socket is refused without opening it (opening could block)."""
    try:
        st = os.stat(path)
    except OSError as exc:
        raise InputFileError(path, f"cannot be read ({exc.strerror})") from None
    if not stat.S_ISREG(st.st_mode):
        kind = "a directory" if stat.S_ISDIR(st.st_mode) else "a FIFO" if stat.S_ISFIFO(st.st_mode) else "a device or socket"
        raise InputFileError(path, f"{what or 'data file'} is {kind}, not a regular file")
    return path


def _value(token: str) -> Any:
    t = token.strip()
    if t.startswith("<") and t.endswith(">"):
        return t[1:-1]
    if t in ("yes", "no"):
        return t == "yes"
    if _INT.match(t):
        return int(t)
    try:
        return float(t)
    except ValueError:
        return t


def parse_parameter_text(text: str, *, source: str = "parameter file") -> dict[str, Any]:
    """Parameters of a Bruker JCAMP-DX parameter text: ``{"SFO1": 600.13, "D": [0.0, ...], ...}``.

    Keys are the names after ``##$`` as written (``SW_h``); values are ints, floats, strings,
    booleans or lists of these. Core labels (``##TITLE=`` ...) go to ``"_coreheader"``, ``$$``
    comments to ``"_comments"``.

    Raises
    ------
    InputFileError
        The text ends inside a ``<...>`` string or before an array's announced items.
    """
    lines = text.splitlines()
    out: dict[str, Any] = {"_coreheader": [], "_comments": []}
    i, n = 0, len(lines)
    while i < n:
        line = lines[i].rstrip()
        lineno = i + 1
        i += 1
        if line.startswith("##END="):
            break
        if line.startswith("$$"):
            out["_comments"].append(line)
            continue
        if not line.startswith("##"):
            continue
        if not line.startswith("##$"):
            out["_coreheader"].append(line)
            continue
        key, eq, rest = line[3:].partition("=")
        key = key.strip()
        if not eq or not key:
            continue
        rest = rest.strip()
        array = _ARRAY.match(rest)
        if array:
            count = int(array.group(2)) - int(array.group(1)) + 1
            if count <= 0 or count > MAX_ARRAY_ITEMS:
                raise InputFileError(source, f"line {lineno}: ${key} announces {count} array items")
            body = array.group(3)
            items = _ITEM.findall(body)
            while len(items) < count:
                if i >= n or lines[i].startswith("##"):
                    raise InputFileError(source, f"${key}: array of {count} items ends after {len(items)} (file truncated?)")
                body = lines[i]
                i += 1
                more = _ITEM.findall(body)
                # A string item may run over the line end: join until its '>'.
                while more and more[-1].startswith("<") and not more[-1].endswith(">"):
                    if i >= n:
                        raise InputFileError(source, f"${key}: file ends inside a <...> string")
                    body += "\n" + lines[i]
                    i += 1
                    more = _ITEM.findall(body)
                items += more
            out[key] = [_value(t) for t in items[:count]]
        elif rest.startswith("<"):
            buf = rest
            while not buf.endswith(">"):
                if i >= n or lines[i].startswith("##"):
                    raise InputFileError(source, f"${key}: file ends inside a <...> string (truncated at line {i})")
                buf += "\n" + lines[i].rstrip()
                i += 1
            out[key] = buf[1:-1]
        else:
            out[key] = _value(rest) if rest else None
    return out


def read_parameter_file(path: str | os.PathLike, *, name: str | None = None) -> dict[str, Any]:
    """Read a Bruker parameter file (``acqus``, ``procs``) with :func:`parse_parameter_text`.

    Errors name the file. Reads at most :data:`MAX_PARAMETER_FILE_BYTES`.
    """
    p = regular_file(Path(path), name or Path(path).name)
    size = p.stat().st_size
    if size > MAX_PARAMETER_FILE_BYTES:
        raise InputFileError(p, f"{size} bytes is far too large for a parameter file")
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    if not raw.strip():
        raise InputFileError(p, "parameter file is empty")
    # A stray byte in another code page (often in a comment or the title) is replaced, not fatal.
    text = raw.decode("utf-8", errors="replace")
    return parse_parameter_text(text, source=str(p))
