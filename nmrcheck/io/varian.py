"""Varian/Agilent ``procpar`` and ``fid`` read with bounded effort, every size checked against the file.

``procpar`` holds, per parameter, a line of attributes (name, subtype, basic type 1 = real or
2 = string, ...), a line with the number of values and the values (strings one per line) and a
line of enumerated choices. The binary ``fid`` starts with a 32-byte file header (blocks,
traces, values per trace, bytes per value, bytes per trace and per block, status) and holds,
per block, 28-byte block headers then the traces, big-endian (layout as nmrglue's
``nmrglue/fileio/varian.py`` reads it).
"""

from __future__ import annotations

import struct
from pathlib import Path
from typing import Any

import numpy as np

from nmrcheck.errors import InputFileError
from nmrcheck.io.parameters import MAX_ARRAY_ITEMS, MAX_PARAMETER_FILE_BYTES, regular_file
from nmrcheck.io.plausible import MAX_FID_VALUES

__all__ = ["read_procpar", "read_varian_fid_points"]

_FILE_HEADER = struct.Struct(">6i2hi")
_BLOCK_HEADER_BYTES = 28
_S_FLOAT = 0x8


def _quoted(line: str, source: str, lineno: int) -> str:
    first, last = line.find('"'), line.rfind('"')
    if first < 0 or last <= first:
        raise InputFileError(source, f"line {lineno}: a string value without its quotes (file truncated or corrupt)")
    return line[first + 1 : last]


def read_procpar(path: Path) -> dict[str, dict[str, Any]]:
    """Parameters of a ``procpar`` file: ``{"sfrq": {"values": ["499.8"], "basictype": "1"}, ...}``."""
    p = regular_file(path, "procpar")
    size = p.stat().st_size
    if size > MAX_PARAMETER_FILE_BYTES:
        raise InputFileError(p, f"{size} bytes is far too large for a procpar file")
    text = p.read_bytes().decode("utf-8", errors="replace")
    source = str(p)
    lines = text.splitlines()
    out: dict[str, dict[str, Any]] = {}
    i, n = 0, len(lines)
    while i < n:
        header = lines[i].split()
        i += 1
        if not header:
            continue
        if len(header) < 11:
            raise InputFileError(source, f"line {i}: a parameter line needs 11 attributes, found {len(header)}")
        name, basictype = header[0], header[2]
        if i >= n:
            raise InputFileError(source, f"parameter {name}: file ends before its values")
        value_line = lines[i]
        i += 1
        head = value_line.split(None, 1)
        try:
            count = int(head[0])
        except (IndexError, ValueError):
            raise InputFileError(source, f"parameter {name}: line {i} does not start with the number of values") from None
        if count < 0 or count > MAX_ARRAY_ITEMS:
            raise InputFileError(source, f"parameter {name}: {count} values announced")
        if basictype == "2":
            values = [_quoted(value_line, source, i)] if count else []
            for _ in range(count - 1):
                if i >= n:
                    raise InputFileError(source, f"parameter {name}: file ends after {len(values)} of its {count} strings")
                values.append(_quoted(lines[i], source, i + 1))
                i += 1
        else:
            values = value_line.split()[1:]
        if i >= n:
            raise InputFileError(source, f"parameter {name}: file ends before its enumeration line")
        i += 1
        out[name] = {"values": values, "basictype": basictype}
    if not out:
        raise InputFileError(source, "procpar holds no parameters")
    return out


def read_varian_fid_points(path: Path) -> np.ndarray:
    """The complex points of a 1D Varian/Agilent ``fid``, its header checked against the file size."""
    p = regular_file(path, "fid")
    size = p.stat().st_size
    source = str(p)
    if size < _FILE_HEADER.size:
        raise InputFileError(source, f"the fid is {size} bytes, shorter than its 32-byte header")
    with open(p, "rb") as fh:
        nblocks, ntraces, npoints, ebytes, tbytes, bbytes, _version, status, nbheaders = _FILE_HEADER.unpack(fh.read(_FILE_HEADER.size))
    if ebytes not in (2, 4) or npoints < 32 or npoints > MAX_FID_VALUES or npoints % 2 or nblocks < 1 or ntraces < 1 or nbheaders < 0 or nbheaders > 16:
        raise InputFileError(source, f"fid header is not plausible (blocks {nblocks}, traces {ntraces}, values {npoints}, bytes per value {ebytes})")
    if tbytes != npoints * ebytes or bbytes != ntraces * tbytes + nbheaders * _BLOCK_HEADER_BYTES:
        raise InputFileError(source, f"fid header sizes disagree (trace {tbytes} bytes for {npoints} values of {ebytes} bytes; block {bbytes} bytes)")
    if nblocks * ntraces != 1:
        raise InputFileError(source, f"holds {nblocks * ntraces} FIDs; nmrcheck reads 1D FIDs")
    expected = _FILE_HEADER.size + nblocks * bbytes
    if size != expected:
        what = "truncated" if size < expected else "junk appended, or the header is wrong"
        raise InputFileError(source, f"holds {size} bytes where its header announces {expected}: {what}")
    dtype = np.dtype(">i2" if ebytes == 2 else (">f4" if status & _S_FLOAT else ">i4"))
    offset = _FILE_HEADER.size + nbheaders * _BLOCK_HEADER_BYTES
    raw = np.fromfile(p, dtype=dtype, count=npoints, offset=offset).astype(np.float64)
    return raw[0::2] + 1j * raw[1::2]
