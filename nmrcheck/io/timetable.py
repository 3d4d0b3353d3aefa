"""Fraction-collection timetables: which well received the eluate between which retention times.

A timetable is a CSV file (UTF-8, ``#`` lines are comments) with the columns ``well``,
``start_min`` and ``end_min`` (collector clock, minutes from injection) and optionally
``notes``, one row per well, e.g.::

    well,start_min,end_min
    A1,1.00,1.20
    A2,1.20,1.40

The delay between the MS detector and the collector's needle is not part of the file: it
belongs to the instrument set-up and is given with the run (``collector_delay_min``).
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path

from nmrcheck.errors import InputFileError, ParameterError
from nmrcheck.io.csvrows import data_rows

__all__ = ["FractionWindow", "Timetable", "read_timetable", "write_timetable", "TIMETABLE_COLUMNS"]

TIMETABLE_COLUMNS = ("well", "start_min", "end_min", "notes")
_REQUIRED = ("well", "start_min", "end_min")
_WELL = re.compile(r"^([A-Pa-p])0*(\d{1,2})$")


@dataclass(frozen=True)
class FractionWindow:
    """One well's collection window on the collector's clock, minutes."""

    well: str
    start_min: float
    end_min: float
    line: int = 0
    """Line of the timetable file (the header is line 1 when it is the first line); 0 when built in code."""
    notes: str = ""

    def detector_window(self, collector_delay_min: float) -> tuple[float, float]:
        """The times at which what this well received passed the MS detector.

        Eluate seen by the detector at time t reaches the collector at t + delay, so the
        well's contents passed the detector ``delay`` minutes before its collection window.
        """
        return (self.start_min - collector_delay_min, self.end_min - collector_delay_min)


@dataclass(frozen=True)
class Timetable:
    """A validated fraction-collection timetable."""

    source: str
    windows: tuple[FractionWindow, ...]

    def window(self, well: str) -> FractionWindow:
        for w in self.windows:
            if w.well == well:
                return w
        raise KeyError(well)

    @property
    def wells(self) -> tuple[str, ...]:
        return tuple(w.well for w in self.windows)


def _canonical_well(text: str) -> str | None:
    m = _WELL.match(text.strip())
    if m is None or not 1 <= int(m.group(2)) <= 24:
        return None
    return f"{m.group(1).upper()}{int(m.group(2))}"


def read_timetable(path: str | os.PathLike) -> Timetable:
    """Read and validate a timetable.

    Raises
    ------
    InputFileError
        One line naming the file, the line and the field of the first problem (a missing
        column, a malformed well name, a time that is not a number, an end not after its
        start, a well given twice, or two windows that overlap).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputFileError(p, "no such timetable file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(p, f"cannot be read as UTF-8 text ({exc})") from None
    reader = csv.reader(io.StringIO(text))
    header: list[str] | None = None
    windows: list[FractionWindow] = []
    seen: dict[str, int] = {}

    def fail(line: int, field: str | None, message: str):
        where = f"line {line}, field '{field}'" if field else f"line {line}"
        return InputFileError(p, f"{where}: {message}")

    for line, fields in data_rows(reader):
        if header is None:
            header = [f.strip().lower() for f in fields]
            for col in _REQUIRED:
                if col not in header:
                    raise fail(line, None, f"the header lacks the column '{col}' (columns: {', '.join(TIMETABLE_COLUMNS)})")
            for col in header:
                if col not in TIMETABLE_COLUMNS:
                    raise fail(line, col, f"unknown column (known: {', '.join(TIMETABLE_COLUMNS)})")
            continue
        row = {h: (fields[i].strip() if i < len(fields) else "") for i, h in enumerate(header)}
        if len(fields) > len(header) and any(f.strip() for f in fields[len(header):]):
            raise fail(line, None, f"{len(fields)} fields where the header has {len(header)}")
        well = _canonical_well(row["well"])
        if well is None:
            raise fail(line, "well", f"{row['well']!r} is not a well name such as A1 or H12")
        times = {}
        for col in ("start_min", "end_min"):
            try:
                value = float(row[col])
            except ValueError:
                raise fail(line, col, f"{row[col]!r} is not a number of minutes") from None
            if not math.isfinite(value) or value < 0 or value > 1000:
                raise fail(line, col, f"{row[col]} min is outside 0..1000 min")
            times[col] = value
        if times["end_min"] <= times["start_min"]:
            raise fail(line, "end_min", f"{times['end_min']:g} min is not after start_min {times['start_min']:g} min")
        if well in seen:
            raise fail(line, "well", f"{well} already given on line {seen[well]}")
        seen[well] = line
        windows.append(FractionWindow(well, times["start_min"], times["end_min"], line, row.get("notes", "")))
    if header is None:
        raise InputFileError(p, "the timetable is empty (no header line)")
    if not windows:
        raise InputFileError(p, "the timetable names no well")
    ordered = sorted(windows, key=lambda w: w.start_min)
    for a, b in zip(ordered, ordered[1:]):
        # A collector drops into one well at a time; a shared stretch means a typing error.
        if b.start_min < a.end_min - 1e-9:
            raise fail(b.line, "start_min", f"{b.well} starts at {b.start_min:g} min, inside {a.well}'s window ({a.start_min:g}-{a.end_min:g} min, line {a.line})")
    return Timetable(str(p), tuple(windows))


def write_timetable(path: str | os.PathLike, windows: list[FractionWindow] | tuple[FractionWindow, ...], *, comment: str = "") -> Path:
    """Write ``windows`` as a timetable CSV (times to 0.1 ms, more than any collector resolves)."""
    if not windows:
        raise ParameterError("windows: a timetable needs at least one well")
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    with open(p, "w", newline="", encoding="utf-8") as fh:
        if comment:
            fh.write(f"# {comment}\n")
        w = csv.writer(fh)
        w.writerow(TIMETABLE_COLUMNS)
        for win in windows:
            w.writerow([win.well, f"{win.start_min:.6f}", f"{win.end_min:.6f}", win.notes])
    return p
