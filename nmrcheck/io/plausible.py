"""Plausibility of acquisition parameters and data points, checked once where files are read.

A header value outside what any 1H spectrometer records is refused with the file and the field
named, instead of producing an axis of 10^7 ppm or an allocation of gigabytes further on.
The bounds are deliberately wide (facts of the trade, common practice): they catch corruption,
not unusual but real experiments.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from nmrcheck.errors import InputFileError

__all__ = [
    "MHZ_RANGE",
    "SWEEP_PPM_RANGE",
    "MAX_FID_VALUES",
    "MAX_SPECTRUM_POINTS",
    "MAX_GROUP_DELAY_POINTS",
    "number",
    "optional_number",
    "check_points",
]

#: Observe frequency of a 1H spectrometer, MHz: benchtop instruments from about 40 MHz to 1.2 GHz
#: high-field magnets (common practice), with margin.
MHZ_RANGE = (10.0, 1500.0)
#: Sweep width, ppm of the observe frequency: 1H windows are 10-30 ppm (common practice); 0.5-500 ppm
#: leaves room for selective and paramagnetic work and refuses only nonsense.
SWEEP_PPM_RANGE = (0.5, 500.0)
#: Largest carrier offset from the base frequency (|O1/BF1|), ppm.
MAX_CARRIER_OFFSET_PPM = 1000.0
#: Most values (real + imaginary) an FID may hold: 4 M (1H FIDs hold 16-256 k; common practice).
MAX_FID_VALUES = 4 * 1024 * 1024
#: Most points of a processed spectrum read from a file.
MAX_SPECTRUM_POINTS = 4 * 1024 * 1024
#: Largest digital-filter delay, points (Bruker GRPDLY is 60-80 points in practice).
MAX_GROUP_DELAY_POINTS = 1000.0
#: Largest magnitude of a data point: digitisers deliver at most 2^31 per scan and instrument
#: scaling a few powers of two more; 1e30 is far beyond any recording and far below the values
#: whose squares overflow in processing.
MAX_POINT_MAGNITUDE = 1e30
#: Data with this many distinct values or fewer (over 64 points or more) are a repeated pattern.
MAX_PATTERN_VALUES = 8


def _as_float(value: Any) -> float | None:
    if isinstance(value, list):
        value = value[0] if value else None
    if value is None or isinstance(value, bool):
        return None
    if isinstance(value, (int, float, np.integer, np.floating)):
        return float(value)
    s = str(value).strip().strip("<>").strip()
    try:
        return float(s)
    except (ValueError, OverflowError):
        return None


def number(source: str, name: str, value: Any, *, lo: float, hi: float, unit: str = "", what: str = "") -> float:
    """``value`` as a finite float within ``lo..hi``; otherwise a one-line error naming ``source`` and ``name``."""
    label = f"{name} ({what})" if what else name
    if value is None or (isinstance(value, list) and not value):
        raise InputFileError(source, f"{label} is missing")
    v = _as_float(value)
    shown = value[0] if isinstance(value, list) else value
    if v is None:
        raise InputFileError(source, f"{label}={shown!r} is not a number")
    if not math.isfinite(v):
        raise InputFileError(source, f"{label}={shown} is not a finite number")
    if not lo <= v <= hi:
        u = f" {unit}" if unit else ""
        raise InputFileError(source, f"{label}={v:g}{u} is outside the plausible range {lo:g}..{hi:g}{u}")
    return v


def optional_number(value: Any, *, lo: float, hi: float) -> float | None:
    """``value`` as a float when it is a finite number within ``lo..hi``, else None (for descriptive fields)."""
    v = _as_float(value)
    if v is None or not math.isfinite(v) or not lo <= v <= hi:
        return None
    return v


def check_points(source: str, data: np.ndarray, what: str = "the data") -> None:
    """Refuse data that cannot be a recording: empty, not finite, all zeros, or one value repeated."""
    if data.size == 0:
        raise InputFileError(source, f"{what} holds no points")
    finite = np.isfinite(data)
    if not finite.all():
        bad = int(data.size - np.count_nonzero(finite))
        raise InputFileError(source, f"{what} holds {bad} value(s) that are not finite numbers (NaN or infinity)")
    if not np.any(data):
        raise InputFileError(source, f"{what} holds only zeros")
    largest = float(np.max(np.abs(data)))
    if largest > MAX_POINT_MAGNITUDE:
        raise InputFileError(source, f"{what} holds a value of magnitude {largest:.3g}, beyond any recording (corrupt data)")
    flat = data.ravel()
    if np.all(flat == flat[0]):
        raise InputFileError(source, f"{what} holds one value repeated at every point ({flat[0]:g}); no signal was recorded")
    if flat.size >= 64:
        # A short byte pattern repeated over the file (a filler, a copy gone wrong) gives a handful
        # of values; a recording, even of pure noise, gives thousands.
        distinct = np.unique(flat[: 1 << 16]).size
        if distinct <= MAX_PATTERN_VALUES:
            raise InputFileError(source, f"{what} holds only {distinct} distinct values repeated over {flat.size} points; no signal was recorded")
