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
) -> tuple[Region, ...]:
    """Integration regions of a phased, baseline-corrected, referenced spectrum.

    Points whose lightly smoothed real part exceeds ``threshold_snr`` times the
    noise are signal; each run is widened by ``margin_hz`` on both sides (to take
    in the Lorentzian wings) and runs closer than ``merge_hz`` are merged, so a
    multiplet becomes one region. Regions that contain the solvent residual, the
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
    ppm0, step = spectrum.first_ppm, spectrum.step_ppm
    name = normalise_solvent(solvent or spectrum.solvent)
    signals: tuple[SolventSignal, ...] = solvent_signals(name) if name else ()
    raw = []
    for a, b in runs:
        seg = y[a : b + 1]
        integral = float(np.sum(seg) * step)
        k = a + int(np.argmax(seg))
        raw.append([ppm0 - a * step, ppm0 - b * step, integral, ppm0 - k * step, float(y[k])])
    regions: list[Region] = []
    for start, end, integral, peak, height in raw:
        flag, label = _flag(start, end, peak, signals, reference_name, exclude_ppm, flag_tolerance_ppm, hz / step)
        if flag is None:
            flag, label = _satellite(start, end, peak, integral, raw, spectrum.spectrometer_mhz)
        regions.append(Region(start, end, integral, None, flag, label, peak))
    return tuple(regions)


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
