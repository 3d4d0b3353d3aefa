"""JCAMP-DX files read block by block, with the data tables decoded and checked line by line.

Forms of the data lines (AFFN, PAC, SQZ, DIF, DUP) as defined by McDonald & Wilks,
Appl. Spectrosc. 1988, 42, 151; NMR labels (``.OBSERVE FREQUENCY``, ``.SHIFT REFERENCE``, NTUPLES
pages of an FID) and compound ``LINK`` files as in Davies & Lampen, Appl. Spectrosc. 1993, 47,
1093. Every line is read once; the abscissa that starts each line and the DIF check value that
repeats the previous line's last ordinate are compared with the point count, so a missing or
repeated line is an error instead of a silent shift of the spectrum.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from nmrcheck.errors import InputFileError
from nmrcheck.io.parameters import regular_file

__all__ = ["JcampBlock", "JcampTable", "read_blocks", "decode_table", "label_key", "MAX_JCAMP_BYTES"]

#: Largest JCAMP-DX file read (a 1H FID of 64 k points is 0.3-3 MB).
MAX_JCAMP_BYTES = 256 * 1024 * 1024
#: Longest line accepted: the standard keeps lines to 80 characters; long audit-trail or title
#: lines are tolerated far beyond that, a megabyte-long "line" is not text of this format.
MAX_LINE_CHARS = 100_000

_TABLE_LABELS = {"XYDATA", "DATATABLE", "XYPOINTS", "PEAKTABLE"}


def label_key(label: str) -> str:
    """A label as the standard compares them: upper case, without spaces, dashes, slashes and underscores."""
    return re.sub(r"[\s\-_/]", "", label).upper()


@dataclass
class JcampTable:
    """One data table: its header (``(X++(Y..Y))``), the page it belongs to, and its lines with line numbers."""

    label: str
    header: str
    page: str | None
    lines: list[tuple[int, str]] = field(default_factory=list)


@dataclass
class JcampBlock:
    """One ``##TITLE= ... ##END=`` block: labels (normalised, values as text), data tables, nested blocks."""

    first_line: int
    labels: dict[str, list[str]] = field(default_factory=dict)
    tables: list[JcampTable] = field(default_factory=list)
    children: list["JcampBlock"] = field(default_factory=list)
    closed: bool = False

    def get(self, key: str) -> str | None:
        values = self.labels.get(label_key(key))
        return values[0].strip() if values else None

    @property
    def title(self) -> str:
        return self.get("TITLE") or ""

    @property
    def data_type(self) -> str:
        return " ".join((self.get("DATA TYPE") or "").upper().split())


def read_blocks(path: str | os.PathLike) -> list[JcampBlock]:
    """The top-level blocks of a JCAMP-DX file (a compound ``LINK`` file has its blocks as children)."""
    p = regular_file(Path(path), "JCAMP-DX file")
    size = p.stat().st_size
    if size == 0:
        raise InputFileError(p, "JCAMP-DX file is empty")
    if size > MAX_JCAMP_BYTES:
        raise InputFileError(p, f"{size} bytes is larger than any 1H JCAMP-DX file nmrcheck reads ({MAX_JCAMP_BYTES} bytes)")
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputFileError(p, f"cannot be read ({exc.strerror})") from None
    text = raw.decode("utf-8", errors="replace")
    if text.startswith("\ufeff"):
        text = text[1:]
    return parse_blocks(text, str(p))


def parse_blocks(text: str, source: str = "JCAMP-DX text") -> list[JcampBlock]:
    """Blocks of JCAMP-DX ``text`` (see :func:`read_blocks`)."""
    top: list[JcampBlock] = []
    stack: list[JcampBlock] = []
    key: str | None = None
    table: JcampTable | None = None
    page: str | None = None
    for lineno, line in enumerate(text.splitlines(), start=1):
        if len(line) > MAX_LINE_CHARS:
            raise InputFileError(source, f"line {lineno} is {len(line)} characters long; JCAMP-DX lines hold 80 (not a JCAMP-DX file, or corrupt)")
        body = line.split("$$", 1)[0]
        stripped = body.strip()
        if not stripped:
            continue
        if stripped.startswith("##"):
            label, _, value = stripped[2:].partition("=")
            k = label_key(label)
            table = None
            key = None
            if k == "TITLE":
                block = JcampBlock(first_line=lineno)
                (stack[-1].children if stack else top).append(block)
                stack.append(block)
            if not stack:
                continue
            block = stack[-1]
            if k == "END":
                block.closed = True
                stack.pop()
                page = None
                continue
            if k == "PAGE":
                page = value.strip()
            if k in _TABLE_LABELS:
                table = JcampTable(label=k, header=value.strip(), page=page)
                block.tables.append(table)
            block.labels.setdefault(k, []).append(value.strip())
            key = k
            continue
        if table is not None:
            table.lines.append((lineno, stripped))
        elif key is not None and stack:
            values = stack[-1].labels[key]
            values[-1] = values[-1] + "\n" + stripped
    return top


# ----------------------------------------------------------------------------- data lines

_SQZ = {c: (i if i else 0) for i, c in enumerate("@ABCDEFGHI")}
_SQZ.update({c: -(i + 1) for i, c in enumerate("abcdefghi")})
_DIF = {c: i for i, c in enumerate("%JKLMNOPQR")}
_DIF.update({c: -(i + 1) for i, c in enumerate("jklmnopqr")})
_DUP = {c: i + 1 for i, c in enumerate("STUVWXYZs")}
_PSEUDO = set(_SQZ) | set(_DIF) | set(_DUP)
_FIRST = re.compile(r"\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]\d+)?)")
_AFFN = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]?\d+)?")
# Inside a compressed line E and e are pseudo-digits, never exponents.
_PAC = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)")
_COMPRESSED = re.compile(r"[@A-DF-IJ-Za-df-ij-rs%]|[Ee](?![+-])")


@dataclass(frozen=True)
class _Line:
    lineno: int
    x: float
    ys: list[float]
    ends_dif: bool


def _decode_line(lineno: int, text: str, source: str) -> _Line:
    m = _FIRST.match(text)
    if not m:
        raise InputFileError(source, f"line {lineno}: data line does not start with an abscissa value")
    x = float(m.group(1))
    rest = text[m.end():]
    ys: list[float] = []
    ends_dif = False
    if not _COMPRESSED.search(rest):
        for tok in _AFFN.findall(rest):
            ys.append(float(tok))
        leftover = _AFFN.sub("", rest).replace(",", "").replace(";", "")
        if leftover.strip():
            raise InputFileError(source, f"line {lineno}: characters that are not numbers ({leftover.strip()[:20]!r})")
        return _Line(lineno, x, ys, False)
    last_kind = None
    last_value = 0.0
    pos, n = 0, len(rest)
    while pos < n:
        c = rest[pos]
        if c in " \t,;":
            pos += 1
            continue
        start = pos
        pos += 1
        while pos < n and (rest[pos].isdigit() or rest[pos] == "."):
            pos += 1
        tail = rest[start + 1:pos]
        if c in _SQZ or c in _DIF:
            digit = _SQZ[c] if c in _SQZ else _DIF[c]
            sign = -1.0 if digit < 0 else 1.0
            try:
                v = sign * float(f"{abs(digit)}{tail}")
            except ValueError:
                raise InputFileError(source, f"line {lineno}: malformed value {rest[start:pos]!r}") from None
            if c in _SQZ:
                ys.append(v)
                last_kind, last_value = "abs", v
            else:
                if not ys:
                    raise InputFileError(source, f"line {lineno}: a difference with no value before it on the line")
                ys.append(ys[-1] + v)
                last_kind, last_value = "dif", v
        elif c in _DUP:
            if last_kind is None:
                raise InputFileError(source, f"line {lineno}: a repeat count with nothing to repeat")
            try:
                count = int(f"{_DUP[c]}{tail}")
            except ValueError:
                raise InputFileError(source, f"line {lineno}: malformed repeat count {rest[start:pos]!r}") from None
            if count > 10_000_000:
                raise InputFileError(source, f"line {lineno}: repeat count {count} is absurd")
            if last_kind == "abs":
                ys.extend([last_value] * (count - 1))
            else:
                base = ys[-1]
                ys.extend(base + last_value * np.arange(1, count))
        elif c.isdigit() or c in "+-.":
            # PAC or AFFN value inside a compressed line.
            m2 = _PAC.match(rest, start)
            if not m2:
                raise InputFileError(source, f"line {lineno}: malformed value near {rest[start:start + 10]!r}")
            pos = m2.end()
            v = float(m2.group(0))
            ys.append(v)
            last_kind, last_value = "abs", v
        else:
            raise InputFileError(source, f"line {lineno}: character {c!r} is not part of any JCAMP-DX number form")
        ends_dif = last_kind == "dif"
    return _Line(lineno, x, ys, ends_dif)


def decode_table(
    table: JcampTable,
    *,
    source: str,
    first_x: float | None,
    delta_x: float | None,
    x_factor: float,
    expected_points: int | None,
    what: str,
) -> np.ndarray:
    """Ordinates of an ``(X++(Y..Y))`` table, each line's abscissa checked against the point count.

    Parameters
    ----------
    first_x, delta_x
        Abscissa of the first point and the step between points, in the file's units;
        when either is None, the abscissae are only checked to advance steadily.
    x_factor
        Multiplier of the abscissae as written on the lines (XFACTOR or the NTUPLES FACTOR of X).
    expected_points
        NPOINTS or VAR_DIM of the table; a different count is an error.
    what
        Name of the table in messages ("page 2 (imaginary)").
    """
    header = table.header.replace(" ", "").upper()
    if "XY..XY" in header or "XYDATA" not in header and "++" not in header:
        raise InputFileError(source, f"{what}: table form {table.header!r} is not an (X++(Y..Y)) table")
    if not table.lines:
        raise InputFileError(source, f"{what}: data table has no lines")
    values: list[float] = []
    prev: _Line | None = None
    for lineno, text in table.lines:
        line = _decode_line(lineno, text, source)
        ys = line.ys
        if prev is not None and prev.ends_dif:
            # DIF form: the first ordinate repeats the previous line's last one (the Y check).
            if not ys:
                raise InputFileError(source, f"{what}: line {lineno} lacks the check value repeating line {prev.lineno}'s last ordinate")
            if abs(ys[0] - values[-1]) > 1e-6 * max(1.0, abs(values[-1])):
                raise InputFileError(source, f"{what}: line {lineno}: check value {ys[0]:g} differs from the previous line's last ordinate {values[-1]:g} (a line missing or corrupt)")
            ys = ys[1:]
            index = len(values) - 1
        else:
            index = len(values)
        if first_x is not None and delta_x:
            observed = (line.x * x_factor - first_x) / delta_x
            # Abscissae are rounded on the lines; a whole point off is a gap or a repeat.
            if not math.isfinite(observed) or abs(observed - index) > 0.75:
                raise InputFileError(source, f"{what}: line {lineno} starts at point {observed:.1f} where point {index} was expected (a line missing or repeated)")
        elif prev is not None and line.x == prev.x:
            raise InputFileError(source, f"{what}: line {lineno} repeats the abscissa of line {prev.lineno}")
        values.extend(ys)
        prev = line
        if expected_points is not None and len(values) > expected_points + 1:
            raise InputFileError(source, f"{what}: more points than the {expected_points} announced (from line {lineno} on)")
    if expected_points is not None and len(values) != expected_points:
        raise InputFileError(source, f"{what}: {len(values)} points where {expected_points} are announced (lines missing or extra)")
    out = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(out)):
        raise InputFileError(source, f"{what}: values that are not finite numbers (an exponent out of range?)")
    return out
