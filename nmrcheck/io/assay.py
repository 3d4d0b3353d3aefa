"""Bioassay readouts per well: a small CSV the chemist brings, read and checked line by line.

Columns (header names, any order; ``#`` lines are comments):

``well``
    A1 ... P24.
``value``
    The readout, a number.
``unit``
    Optional: its unit (``%``, ``uM``, ``µM``, ...).
``threshold``
    Optional: the hit threshold in the same unit.
``hit_when``
    Optional: ``above`` (default; e.g. % inhibition) or ``below`` (e.g. an IC50).
``assay``
    Optional: the assay's name.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path

from nmrcheck.errors import InputFileError

__all__ = ["ASSAY_COLUMNS", "AssayReadout", "read_assay", "write_assay"]

ASSAY_COLUMNS = ("well", "value", "unit", "threshold", "hit_when", "assay")
_WELL = re.compile(r"^([A-Pa-p])0*(\d{1,2})$")
_HIT_WHEN = ("above", "below")


@dataclass(frozen=True)
class AssayReadout:
    """One well's readout."""

    well: str
    value: float
    unit: str = ""
    threshold: float | None = None
    hit_when: str = "above"
    """'above': a value at or above the threshold is a hit; 'below': at or below."""
    assay: str = ""

    @property
    def active(self) -> bool | None:
        """True for a hit, False for a miss, None when no threshold was given."""
        if self.threshold is None:
            return None
        return self.value >= self.threshold if self.hit_when == "above" else self.value <= self.threshold

    def as_dict(self) -> dict:
        return {"well": self.well, "value": self.value, "unit": self.unit, "threshold": self.threshold,
                "hit_when": self.hit_when, "assay": self.assay, "active": self.active}


def _number(path: Path, lineno: int, name: str, text: str, *, required: bool) -> float | None:
    text = text.strip()
    if not text:
        if required:
            raise InputFileError(path, f"line {lineno}, {name}: empty (a number is needed)")
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputFileError(path, f"line {lineno}, {name}: {text!r} is not a number") from None
    if not math.isfinite(value):
        raise InputFileError(path, f"line {lineno}, {name}: {text!r} is not a finite number")
    return value


def read_assay(path: str | os.PathLike) -> dict[str, AssayReadout]:
    """Readouts by well name (``A1``, canonical form) from an assay CSV.

    Raises
    ------
    InputFileError
        One line naming the file, the line and the field: missing file or columns, a bad well
        name, a value that is not a finite number, an unknown ``hit_when``, a well given twice.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputFileError(p, "no such file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(p, f"cannot be read as UTF-8 text ({exc})") from None
    numbered = [(n, ln) for n, ln in enumerate(text.splitlines(), start=1) if ln.strip() and not ln.lstrip().startswith("#")]
    if not numbered:
        raise InputFileError(p, "no header line (expected columns well,value[,unit,threshold,hit_when,assay])")
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in numbered)))
    rows = list(reader)
    header = [h.strip().lower() for h in rows[0]]
    for need in ("well", "value"):
        if need not in header:
            raise InputFileError(p, f"line {numbered[0][0]}: no '{need}' column (header: {', '.join(header)})")
    unknown = [h for h in header if h not in ASSAY_COLUMNS]
    if unknown:
        raise InputFileError(p, f"line {numbered[0][0]}: unknown column {unknown[0]!r} (known: {', '.join(ASSAY_COLUMNS)})")
    out: dict[str, AssayReadout] = {}
    for (lineno, _), fields in zip(numbered[1:], rows[1:]):
        if len(fields) != len(header):
            raise InputFileError(p, f"line {lineno}: {len(fields)} fields where the header has {len(header)}")
        row = dict(zip(header, (f.strip() for f in fields)))
        m = _WELL.match(row["well"])
        if m is None:
            raise InputFileError(p, f"line {lineno}, well: {row['well']!r} is not a well name such as A1 or H12")
        well = f"{m.group(1).upper()}{int(m.group(2))}"
        if not 1 <= int(m.group(2)) <= 24:
            raise InputFileError(p, f"line {lineno}, well: {row['well']!r} has no such column on a 96- or 384-well plate")
        if well in out:
            raise InputFileError(p, f"line {lineno}, well: {well} is given twice")
        value = _number(p, lineno, "value", row["value"], required=True)
        threshold = _number(p, lineno, "threshold", row.get("threshold", ""), required=False)
        hit_when = (row.get("hit_when") or "above").lower()
        if hit_when not in _HIT_WHEN:
            raise InputFileError(p, f"line {lineno}, hit_when: {row.get('hit_when')!r} is not 'above' or 'below'")
        out[well] = AssayReadout(well, float(value), row.get("unit", ""), threshold, hit_when, row.get("assay", ""))
    return out


def write_assay(readouts, path: str | os.PathLike) -> Path:
    """Write readouts (an iterable of :class:`AssayReadout`) in the form :func:`read_assay` reads."""
    p = Path(path)
    with open(p, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(ASSAY_COLUMNS)
        for r in readouts:
            writer.writerow([r.well, repr(float(r.value)), r.unit, "" if r.threshold is None else repr(float(r.threshold)), r.hit_when, r.assay])
    return p
