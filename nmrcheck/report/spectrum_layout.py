"""Layout decisions shared by the SVG spectrum of the plate report and the matplotlib plots.

What range of the axis to show, how tall to draw it, where to put the proton labels so none
overlaps another, tick positions, and the running integral of each counted region. Pure
functions on numbers; no drawing library here.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from nmrcheck.errors import NmrcheckError

__all__ = [
    "AxisError",
    "LabelSlot",
    "analyte_top",
    "check_axis",
    "counted_regions",
    "h_label",
    "nice_ticks",
    "place_labels",
    "running_integral",
    "view_range",
]

#: Widest ppm span a 1H axis can sensibly have; a wider one means the axis itself is wrong.
MAX_SPAN_PPM = 400.0
#: Most ticks ever drawn on one axis (the loop that makes them is bounded by this).
MAX_TICKS = 60
#: Most label rows stacked under one spectrum before labels are dropped (kept in tooltips and tables).
MAX_LABEL_ROWS = 4
#: The part of a 1H spectrum where organic compounds, the usual references and solvents show:
#: TMS/DSS at 0 ppm up to aldehydes near 10 ppm (common practice for a full-range 1H plot).
USEFUL_RANGE_PPM = (10.5, -0.5)


class AxisError(NmrcheckError):
    """The spectrum's ppm axis is not finite or not a sensible 1H range: nothing is drawn."""


def check_axis(first_ppm: float, last_ppm: float) -> None:
    """Refuse non-finite, empty or absurdly wide axes (one line naming the values)."""
    if not (math.isfinite(first_ppm) and math.isfinite(last_ppm)):
        raise AxisError(f"ppm axis from {first_ppm} to {last_ppm} is not finite")
    span = abs(first_ppm - last_ppm)
    if span <= 0 or span > MAX_SPAN_PPM:
        raise AxisError(f"ppm axis from {first_ppm:g} to {last_ppm:g} spans {span:g} ppm (a 1H axis spans 0-{MAX_SPAN_PPM:g})")


def counted_regions(regions: Sequence[Mapping[str, Any]]) -> list[Mapping[str, Any]]:
    """Regions counted as analyte: no flag, an H value, and not a noise-sized 0.0 H."""
    return [r for r in regions if not r.get("flag") and r.get("h") is not None and round(float(r["h"]), 1) > 0]


def h_label(h: float) -> str:
    """'2.0 H' for a region holding 1.98 protons (one decimal: the count is a measurement)."""
    return f"{h:.1f} H"


def view_range(first_ppm: float, last_ppm: float, regions: Sequence[Mapping[str, Any]], *, reference_ppm: float | None = None) -> tuple[float, float]:
    """(high, low) ppm to draw: the useful 1H range widened to every region and the reference, within the data.

    Every signal the report speaks of (counted, solvent, water, reference) stays in view, so
    a reader can always see what was left out and why.
    """
    check_axis(first_ppm, last_ppm)
    data_hi, data_lo = max(first_ppm, last_ppm), min(first_ppm, last_ppm)
    hi, lo = USEFUL_RANGE_PPM
    for r in regions:
        hi = max(hi, float(r["start_ppm"]) + 0.3)
        lo = min(lo, float(r["end_ppm"]) - 0.3)
    if reference_ppm is not None and math.isfinite(reference_ppm):
        hi, lo = max(hi, reference_ppm + 0.3), min(lo, reference_ppm - 0.3)
    hi, lo = min(hi, data_hi), max(lo, data_lo)
    if hi - lo <= 0:
        return data_hi, data_lo
    return hi, lo


def analyte_top(ppm: np.ndarray, y: np.ndarray, regions: Sequence[Mapping[str, Any]]) -> float:
    """Height that sets the vertical scale: the tallest counted analyte signal (not solvent or water).

    Without counted regions: a high percentile of the trace, so one towering line does not
    flatten everything; never below eight noise standard deviations.
    """
    tall = []
    for r in counted_regions(regions):
        m = (ppm <= float(r["start_ppm"])) & (ppm >= float(r["end_ppm"]))
        if m.any():
            tall.append(float(np.max(y[m])))
    finite = y[np.isfinite(y)]
    if finite.size == 0:
        return 1.0
    noise = float(np.median(np.abs(finite - np.median(finite)))) * 1.4826
    top = max(tall) if tall else float(np.percentile(finite, 99.0))
    return max(top, 8.0 * noise, 1e-12)


def nice_ticks(hi: float, lo: float, *, target: int = 12) -> list[float]:
    """Tick values from ``hi`` down to ``lo`` at a 1-2-5 step giving about ``target`` ticks (never more than MAX_TICKS)."""
    check_axis(hi, lo)
    span = hi - lo
    raw = span / max(1, target)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1.0, 2.0, 5.0, 10.0) if m * mag >= raw)
    first = math.floor(hi / step) * step
    ticks = []
    for k in range(MAX_TICKS + 1):
        t = first - k * step
        if t < lo - 1e-9:
            break
        if t <= hi + 1e-9:
            ticks.append(round(t, 10) + 0.0)
    return ticks


@dataclass(frozen=True)
class LabelSlot:
    """Where one label goes: its anchor (the region's centre) and its text position, in drawing units."""

    index: int
    anchor_x: float
    x: float
    row: int
    width: float


def place_labels(anchors: Sequence[float], widths: Sequence[float], *, left: float, right: float, gap: float = 4.0, max_rows: int = MAX_LABEL_ROWS) -> list[LabelSlot]:
    """Put labels centred near their anchors on stacked rows so that no two on a row overlap.

    Each label first tries its own anchor on the lowest row with room; on the last row it may
    slide sideways (a leader line joins it to its anchor). A label with no room anywhere is
    left out (its value stays in the table and the tooltip). Returned slots are in input order
    of the labels that were placed.
    """
    order = sorted(range(len(anchors)), key=lambda i: anchors[i])
    rows: list[list[tuple[float, float]]] = [[] for _ in range(max_rows)]
    slots = []

    def free(row, a, b):
        return all(b + gap <= s or a >= e + gap for s, e in rows[row])

    for i in order:
        w = float(widths[i])
        x = min(max(float(anchors[i]), left + w / 2), right - w / 2)
        placed = False
        for row in range(max_rows):
            if free(row, x - w / 2, x + w / 2):
                rows[row].append((x - w / 2, x + w / 2))
                slots.append(LabelSlot(i, float(anchors[i]), x, row, w))
                placed = True
                break
        if placed:
            continue
        # Slide right on the last row, just past the label already there.
        row = max_rows - 1
        end = max((e for s, e in rows[row]), default=left)
        x2 = end + gap + w / 2
        if x2 + w / 2 <= right and free(row, x2 - w / 2, x2 + w / 2):
            rows[row].append((x2 - w / 2, x2 + w / 2))
            slots.append(LabelSlot(i, float(anchors[i]), x2, row, w))
    return sorted(slots, key=lambda s: s.index)


def running_integral(ppm: np.ndarray, y: np.ndarray, start_ppm: float, end_ppm: float) -> tuple[np.ndarray, np.ndarray]:
    """(ppm, cumulative sum) across one region, from its high-ppm edge, baseline at the region's edges.

    The display trace's own integral, for the curve drawn over each counted region; the
    numbers in the tables come from the processing's integrals.
    """
    m = (ppm <= start_ppm) & (ppm >= end_ppm)
    x, v = ppm[m], np.asarray(y[m], dtype=float)
    if x.size < 2:
        return x, np.zeros_like(x)
    # Straight baseline between the region's ends, as the integration takes it.
    base = np.linspace(v[0], v[-1], v.size)
    return x, np.cumsum(v - base)
