"""Gather the evidence a candidate is checked against from a processed spectrum and an MS feature."""

from __future__ import annotations

import numpy as np

from nmrcheck.processing.results import Processed
from nmrcheck.processing.solvents import normalise_solvent
from nmrcheck.validate.records import Evidence, MsFeature, ObservedRegion

__all__ = ["evidence_from"]


#: A line counts when it reaches this fraction of the region's tallest line (smaller ones are satellites,
#: impurities or noise ripples) and stands 5 noise SD above the baseline.
LINE_FRACTION = 0.1
LINE_SNR = 5.0


def line_shape(processed: Processed, start_ppm: float, end_ppm: float) -> tuple[int | None, float | None, float | None]:
    """(lines, spread between outer lines in Hz, half-height width of the tallest line in Hz) of one region."""
    spec = processed.spectrum
    sl = spec.slice_of(start_ppm, end_ppm)
    y = np.asarray(spec.real[sl], float)
    if y.size < 3:
        return None, None, None
    top = float(y.max())
    if top <= 0:
        return None, None, None
    floor = max(LINE_FRACTION * top, LINE_SNR * float(processed.noise))
    inner = y[1:-1]
    peaks = np.flatnonzero((inner > y[:-2]) & (inner >= y[2:]) & (inner >= floor)) + 1
    if peaks.size == 0:
        peaks = np.array([int(np.argmax(y))])
    hz = spec.hz_per_point
    spread = float((peaks.max() - peaks.min()) * hz)
    k = int(np.argmax(y))
    half = top / 2
    left = k
    while left > 0 and y[left] > half:
        left -= 1
    right = k
    while right < y.size - 1 and y[right] > half:
        right += 1
    return int(peaks.size), spread, float((right - left) * hz)


def evidence_from(processed: Processed, ms_feature: MsFeature | None = None, *, ms_features=()) -> Evidence:
    """Evidence from a :class:`~nmrcheck.processing.Processed` result, an optional MS feature and the well's other MS features."""
    regions = []
    flagged = []
    flagged_integrals: list[float] = []
    for r in processed.regions:
        if r.counted:
            if r.integral > 0:
                peak = r.peak_ppm if r.peak_ppm is not None else 0.5 * (r.start_ppm + r.end_ppm)
                lines, spread, width = line_shape(processed, r.start_ppm, r.end_ppm)
                regions.append(ObservedRegion(r.start_ppm, r.end_ppm, float(r.integral), float(peak), lines, spread, width))
        else:
            flagged.append((r.start_ppm, r.end_ppm, r.label or r.flag or "flagged"))
            flagged_integrals.append(float(r.integral))
    c = processed.count
    return Evidence(
        source=str(processed.spectrum.source),
        solvent=normalise_solvent(processed.spectrum.solvent),
        regions=tuple(regions),
        flagged=tuple(flagged),
        total_h=None if c is None else c.total_h,
        total_h_low=None if c is None else c.total_h_low,
        total_h_high=None if c is None else c.total_h_high,
        snr=float(processed.snr),
        ms=ms_feature,
        warnings=tuple(processed.warnings),
        spectrometer_mhz=float(processed.spectrum.spectrometer_mhz),
        flagged_integrals=tuple(flagged_integrals),
        ms_features=tuple(ms_features),
    )
