"""Automatic integration regions: signal above noise, multiplets merged, solvent/water/standard/satellites flagged."""

from __future__ import annotations

from typing import Sequence

import numpy as np
from scipy.ndimage import maximum_filter1d, uniform_filter1d

from nmrcheck.processing.results import Region
from nmrcheck.processing.solvents import SolventSignal, normalise_solvent, solvent_signals
from nmrcheck.processing.spectrum import Spectrum

__all__ = ["find_regions", "integrate"]

#: One-bond 13C-1H couplings span about 115-250 Hz; satellites sit at half that from the parent
#: line and each holds 0.55 % of it (natural 13C abundance 1.1 %) (common practice).
SATELLITE_OFFSET_HZ = (55.0, 125.0)
SATELLITE_FRACTION = (0.002, 0.012)


def integrate(spectrum: Spectrum, start_ppm: float, end_ppm: float) -> float:
    """Integral of the real spectrum between two shifts (sum of points times the ppm step)."""
    sl = spectrum.slice_of(start_ppm, end_ppm)
    return float(np.sum(spectrum.data.real[sl]) * spectrum.step_ppm)


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return [(int(a), int(b) - 1) for a, b in zip(edges[::2], edges[1::2])]


def find_regions(
    spectrum: Spectrum,
    *,
    noise: float,
    threshold_snr: float = 6.0,
    margin_hz: float = 8.0,
    merge_hz: float = 6.0,
    solvent: str | None = None,
    reference_name: str | None = None,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    flag_tolerance_ppm: float = 0.03,
    reference_line: str | None = None,
    wing_correction: bool = True,
    split_valley_fraction: float = 0.1,
    split_separation_hz: float = 12.0,
) -> tuple[Region, ...]:
    """Integration regions of a phased, baseline-corrected, referenced spectrum.

    Points whose lightly smoothed real part exceeds ``threshold_snr`` times the
    noise are signal; each run is widened by ``margin_hz`` on both sides (to take
    in the Lorentzian wings) and runs closer than ``merge_hz`` are merged, so a
    multiplet becomes one region; each region's integral includes the Lorentzian
    wings beyond its ends (``wing_correction``). A region holding the singlet ``reference_line``
    (the solvent or standard line that set the axis) and analyte signal is split
    in two. Regions that contain the solvent residual, the
    water line, the reference standard, a listed impurity (narrow regions only),
    13C satellites of a much stronger line, or fall in ``exclude_ppm``, are
    flagged and not counted.
    """
    y = spectrum.data.real
    n = y.size
    hz = spectrum.hz_per_point
    smooth = uniform_filter1d(y, size=max(1, int(round(0.5 / hz)) | 1))
    mask = smooth > threshold_snr * noise
    merge = max(1, int(round(merge_hz / hz)))
    # Close gaps narrower than merge_hz, then widen by the margin.
    mask = _close(mask, merge)
    margin = max(1, int(round(margin_hz / hz)))
    mask = maximum_filter1d(mask.astype(np.uint8), size=2 * margin + 1).astype(bool)
    runs = [(a, b) for a, b in _runs(mask) if b - a >= 2]
    if split_valley_fraction > 0:
        runs = [piece for a, b in runs for piece in _split_at_valleys(smooth, a, b, hz, split_valley_fraction, split_separation_hz)]
    ppm0, step = spectrum.first_ppm, spectrum.step_ppm
    name = normalise_solvent(solvent or spectrum.solvent)
    signals: tuple[SolventSignal, ...] = solvent_signals(name) if name else ()
    raw = []
    for a, b in runs:
        seg = y[a : b + 1]
        integral = float(np.sum(seg) * step) + (_wing_area(y, a, b, step) if wing_correction else 0.0)
        k = a + int(np.argmax(seg))
        raw.append([ppm0 - a * step, ppm0 - b * step, integral, ppm0 - k * step, float(y[k])])
    regions: list[Region] = []
    # Only the line that set the axis is known to be a singlet at its table position;
    # elsewhere a line there may be the analyte's.
    singlets = [sig for sig in signals if sig.kind in ("residual", "reference") and sig.multiplicity == "s"
                and sig.name == reference_line]
    for start, end, integral, peak, height in raw:
        flag, label = _flag(start, end, peak, signals, reference_name, exclude_ppm, flag_tolerance_ppm, hz / step)
        if flag in (None, "solvent", "reference"):
            split = _split_singlet(spectrum, start, end, integral, singlets, reference_name)
            if split is not None:
                regions.extend(split)
                continue
        if flag is None:
            flag, label = _satellite(start, end, peak, integral, raw, spectrum.spectrometer_mhz)
        regions.append(Region(start, end, integral, None, flag, label, peak))
    return tuple(regions)


def _split_singlet(spectrum, start, end, integral, singlets, reference_name, *, tol_ppm=0.01):
    """A region holding both a solvent/standard singlet and analyte signal, split in two.

    The singlet's area is that of a Lorentzian with its height above the local floor
    (the lower of the minima just outside its core) and its measured half width; the
    rest of the region is analyte. Returns None when the region is the singlet alone
    (under 10 % left) or holds none.
    """
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    for sig in singlets:
        if sig.kind == "reference" and sig.name != reference_name:
            continue
        if not (end < sig.ppm < start):
            continue
        i = spectrum.index_of(sig.ppm)
        w = max(2, int(round(tol_ppm / spectrum.step_ppm)))
        lo, hi = max(1, i - w), min(y.size - 2, i + w)
        k = lo + int(np.argmax(y[lo : hi + 1]))
        if not (y[k] >= y[k - 1] and y[k] >= y[k + 1]):
            continue
        core = max(3, int(round(4.0 / hz)))
        left = y[max(0, k - 2 * core) : max(1, k - core)]
        right = y[k + core : k + 2 * core]
        if left.size == 0 or right.size == 0:
            continue
        floor = max(0.0, min(float(left.min()), float(right.min())))
        top = float(y[k]) - floor
        if top <= 0:
            continue
        half = floor + top / 2.0
        a = k
        while a > 0 and y[a] > half and k - a < core:
            a -= 1
        b = k
        while b < y.size - 1 and y[b] > half and b - k < core:
            b += 1
        hwhm_ppm = max(1, b - a) * spectrum.step_ppm / 2.0
        area = min(integral, np.pi * top * hwhm_ppm)
        rest = integral - area
        if rest < 0.1 * integral:
            return None
        line = Region(start, end, area, None, "solvent" if sig.kind == "residual" else "reference",
                      f"{sig.name} (line only)", spectrum.first_ppm - k * spectrum.step_ppm)
        remainder_peak = spectrum.first_ppm - (spectrum.index_of(start) + int(np.argmax(np.where(
            np.abs(np.arange(spectrum.index_of(start), spectrum.index_of(end) + 1) - k) > core,
            y[spectrum.index_of(start) : spectrum.index_of(end) + 1], -np.inf)))) * spectrum.step_ppm
        analyte = Region(start, end, rest, None, None, f"less the {sig.name} line", remainder_peak)
        return [analyte, line]
    return None


def _split_at_valleys(y: np.ndarray, a: int, b: int, hz: float, fraction: float, separation_hz: float) -> list[tuple[int, int]]:
    """Cut run ``a..b`` at deep valleys between signal groups standing on a common broad base.

    A valley splits the run when it lies below ``fraction`` of the lower of the
    tallest points on either side and at least ``separation_hz`` from both, so the
    lines of one multiplet (a few coupling constants apart) stay together.
    """
    seg = y[a : b + 1]
    sep = int(round(separation_hz / hz))
    if seg.size < 4 * sep or sep < 1:
        return [(a, b)]
    cuts: list[int] = []
    start = 0
    while True:
        rest = seg[start:]
        if rest.size < 4 * sep:
            break
        # The deepest point relative to the maxima on its two sides, scanning left to right.
        left_max = np.maximum.accumulate(rest)
        right_max = np.maximum.accumulate(rest[::-1])[::-1]
        lower = np.minimum(left_max, right_max)
        ratio = np.full(rest.size, np.inf)
        np.divide(rest, lower, out=ratio, where=lower > 0)
        idx = np.arange(rest.size)
        ok = (ratio < fraction) & (idx >= sep) & (idx <= rest.size - 1 - sep)
        if not ok.any():
            break
        # Distance to the nearest tall point on each side must exceed the separation.
        found = None
        for i in np.flatnonzero(ok):
            lpk = int(np.argmax(rest[: i + 1]))
            rpk = i + int(np.argmax(rest[i:]))
            if i - lpk >= sep and rpk - i >= sep:
                found = i
                break
        if found is None:
            break
        lo = found
        # Cut at the local minimum of the valley.
        w = sep // 2
        lo = found - w + int(np.argmin(rest[max(0, found - w) : found + w + 1])) if found >= w else found
        cuts.append(start + lo)
        start = start + lo + 1
    if not cuts:
        return [(a, b)]
    edges = [a] + [a + c for c in cuts] + [b]
    return [(edges[i] if i == 0 else edges[i] + 1, edges[i + 1]) for i in range(len(edges) - 1)]


def _wing_area(y: np.ndarray, a: int, b: int, step: float) -> float:
    """Lorentzian wing area beyond the two ends of region ``a..b`` (spectrum units).

    Beyond a distance d from its centre (d much larger than its half width), a
    Lorentzian line holds area y(d) * d, where y(d) is its height there. Each end
    contributes its (mean) height times the distance to the nearest line of the
    region; without this, regions whose lines sit closer to their ends (wide
    multiplets) lose more area than singlets, a few percent at usual margins.
    """
    seg = y[a : b + 1]
    n = seg.size
    if n < 8:
        return 0.0
    top = float(seg.max())
    if top <= 0:
        return 0.0
    inner = seg[1:-1]
    peaks = np.flatnonzero((inner >= seg[:-2]) & (inner > seg[2:]) & (inner > 0.1 * top)) + 1
    if peaks.size == 0:
        return 0.0
    m = max(1, min(3, n // 16))
    left = max(0.0, float(seg[:m].mean())) * (peaks[0] - (m - 1) / 2.0) * step
    right = max(0.0, float(seg[-m:].mean())) * ((n - 1 - peaks[-1]) - (m - 1) / 2.0) * step
    return left + right


def _close(mask: np.ndarray, width: int) -> np.ndarray:
    """Morphological closing: fill gaps shorter than ``width`` points."""
    grown = maximum_filter1d(mask.astype(np.uint8), size=width)
    return ~maximum_filter1d((~grown.astype(bool)).astype(np.uint8), size=width).astype(bool)


def _flag(start, end, peak, signals, reference_name, exclude_ppm, tol, mhz):
    width_ppm = start - end
    for lo, hi in exclude_ppm:
        if min(lo, hi) <= peak <= max(lo, hi):
            return "water", "excluded range (solvent suppression)"
    for sig in signals:
        inside = end - tol <= sig.ppm <= start + tol
        if not inside:
            continue
        if sig.kind == "residual" and abs(peak - sig.ppm) <= tol:
            return "solvent", sig.name
        if sig.kind == "water" and abs(peak - sig.ppm) <= 0.15:
            return "water", sig.name
        if sig.kind == "reference" and reference_name and sig.name == reference_name and abs(peak - sig.ppm) <= tol:
            return "reference", sig.name
        if sig.kind == "impurity" and width_ppm * mhz <= 25.0 and abs(peak - sig.ppm) <= 0.01:
            return "impurity", sig.name
    if reference_name == "DSS":
        # DSS's trimethylene signals (2.91, 1.75, 0.63 ppm; 2 H each) (common practice).
        for ppm in (2.91, 1.75, 0.63):
            if abs(peak - ppm) <= 0.02 and width_ppm * mhz <= 40.0:
                return "reference", "DSS CH2"
    return None, None


def _satellite(start, end, peak, integral, raw, mhz):
    for other in raw:
        o_start, o_end, o_int, o_peak, _ = other
        if o_int <= 0 or o_peak == peak:
            continue
        offset_hz = abs(peak - o_peak) * mhz
        ratio = integral / o_int
        if SATELLITE_OFFSET_HZ[0] <= offset_hz <= SATELLITE_OFFSET_HZ[1] and SATELLITE_FRACTION[0] <= ratio <= SATELLITE_FRACTION[1]:
            return "satellite", f"13C satellite of {o_peak:.2f} ppm"
    return None, None
