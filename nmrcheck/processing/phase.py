"""Automatic zero- and first-order phase correction from the phases of individual peaks.

Method (nmrcheck's own): every resolved peak of an absorptive spectrum has, at its
centre, a known phase of zero. The phase of each strong peak is read as the angle
of the complex spectrum summed over its core (neighbouring background removed by a
complex linear baseline across the window); these local phases, weighted by peak
height, are fitted with a line ``p0 + p1*x`` on the circle: a coarse search over
``p1`` maximises the weighted resultant of ``exp(i*(phi_k - p1*x_k))``, then an
iteratively re-weighted (Tukey biweight) least-squares fit refines ``p0`` and
``p1`` and discounts peaks whose phase is spoiled by overlap. Regions that carry
no absorptive information (presaturated water, the carrier spike) are left out.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
from scipy.ndimage import maximum_filter1d, uniform_filter1d

from nmrcheck.processing.results import PhaseCorrection
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

WEIGHT_POWER = 1.0
TUKEY_C_DEG = 20.0
CORE_POINTS = None
REFINE = True

__all__ = ["apply_phase", "auto_phase", "peak_phases", "PeakPhase"]


@dataclass(frozen=True)
class PeakPhase:
    """Phase read at one peak: ``x`` runs 0 (first point) to 1 (last point)."""

    index: int
    x: float
    phase_deg: float
    height: float


def apply_phase(spectrum: Spectrum, *, p0_deg: float, p1_deg: float, pivot_ppm: float | None = None) -> Spectrum:
    """Rotate by ``-(p0 + p1 * (pivot - ppm)/width)`` degrees, i.e. remove that phase error.

    ``p1_deg`` spans the full spectral width; ``pivot_ppm`` defaults to the first
    (high-ppm) point.
    """
    ppm = spectrum.ppm
    pivot = spectrum.first_ppm if pivot_ppm is None else pivot_ppm
    width = spectrum.step_ppm * spectrum.size
    phi = np.radians(p0_deg + p1_deg * (pivot - ppm) / width)
    data = spectrum.data * np.exp(-1j * phi)
    step = ProcessingStep("phase", {"p0_deg": p0_deg, "p1_deg": p1_deg, "pivot_ppm": pivot})
    return spectrum.evolve(step, data=data)


def _noise_sigma(values: np.ndarray) -> float:
    """Noise level of a real trace: standard deviation in its quietest stretches."""
    from nmrcheck.processing.noise import noise_level

    return noise_level(values)


def peak_phases(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    max_peaks: int = 40,
    min_snr: float = 20.0,
    core_hz: float | None = None,
) -> list[PeakPhase]:
    """Phase and height of the strongest resolved peaks of the magnitude spectrum.

    The peak core is +-``core_hz`` about the maximum (default: the half-height
    half-width measured on the magnitude, at least two points).
    """
    data = spectrum.data
    mag = np.abs(data)
    n = mag.size
    sigma = _noise_sigma(mag)
    ppm = spectrum.ppm
    allowed = np.ones(n, bool)
    for lo, hi in exclude_ppm:
        allowed &= ~((ppm >= min(lo, hi)) & (ppm <= max(lo, hi)))
    # Local maxima over +-3 points that stand clear of the noise.
    is_max = (mag == maximum_filter1d(mag, size=7)) & allowed & (mag > min_snr * sigma)
    cand = np.flatnonzero(is_max)
    if cand.size == 0:
        return []
    cand = cand[np.argsort(mag[cand])[::-1]]
    hz_per_pt = spectrum.hz_per_point
    taken: list[PeakPhase] = []
    used = np.zeros(n, bool)
    for i in cand:
        if len(taken) >= max_peaks:
            break
        if used[i]:
            continue
        half = mag[i] / 2.0
        lo = i
        while lo > 0 and mag[lo] > half and i - lo < 2000:
            lo -= 1
        hi = i
        while hi < n - 1 and mag[hi] > half and hi - i < 2000:
            hi += 1
        hwhm = max(2, (hi - lo) // 2)
        w = hwhm if core_hz is None else max(2, int(round(core_hz / hz_per_pt)))
        if CORE_POINTS is not None:
            w = CORE_POINTS
        a, b = i - w, i + w
        if a < 1 or b >= n - 1:
            continue
        seg = data[a : b + 1]
        # Remove a complex linear background through the window's ends so that broad
        # neighbours and baseline roll do not bias the angle.
        if CORE_POINTS == 0:
            core = data[i:i+1]
        else:
            ramp = np.linspace(0.0, 1.0, seg.size)
            bg = data[a] + (data[b] - data[a]) * ramp
            core = seg - bg
        angle = float(np.degrees(np.angle(np.sum(core))))
        taken.append(PeakPhase(index=int(i), x=i / n, phase_deg=angle, height=float(mag[i])))
        used[max(0, i - 3 * w) : i + 3 * w + 1] = True
    return taken


def region_phases(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    min_snr: float = 8.0,
    margin_hz: float = 3.0,
    max_regions: int = 60,
) -> list[PeakPhase]:
    """Residual phase of every signal group of a roughly phased spectrum.

    Groups are runs where the (nearly absorptive) real part stands above
    ``min_snr`` times the noise, widened by ``margin_hz``; the angle of the
    complex sum over a whole group is its phase, because the dispersion of a
    complete multiplet integrates to about zero while overlap inside the group
    no longer matters.
    """
    data = spectrum.data
    n = data.size
    re_ = data.real
    sigma = _noise_sigma(re_)
    ppm = spectrum.ppm
    allowed = np.ones(n, bool)
    for lo, hi in exclude_ppm:
        allowed &= ~((ppm >= min(lo, hi)) & (ppm <= max(lo, hi)))
    smooth = uniform_filter1d(re_, size=3)
    above = (smooth > min_snr * sigma) & allowed
    if not above.any():
        return []
    margin = max(2, int(round(margin_hz / spectrum.hz_per_point)))
    grown = maximum_filter1d(above.astype(np.uint8), size=2 * margin + 1).astype(bool) & allowed
    edges = np.flatnonzero(np.diff(np.concatenate(([0], grown.astype(np.int8), [0]))))
    starts, stops = edges[::2], edges[1::2] - 1
    out: list[PeakPhase] = []
    for a, b in zip(starts, stops):
        if b - a < 4 or a < 1 or b >= n - 1:
            continue
        seg = data[a : b + 1]
        ramp = np.linspace(0.0, 1.0, seg.size)
        core = seg - (data[a] + (data[b] - data[a]) * ramp)
        total = np.sum(core)
        weight = float(np.abs(total))
        centre = a + float(np.sum(np.abs(core) * np.arange(seg.size)) / max(np.sum(np.abs(core)), 1e-300))
        out.append(PeakPhase(index=int(round(centre)), x=centre / n, phase_deg=float(np.degrees(np.angle(total))), height=weight))
    out.sort(key=lambda p: -p.height)
    return out[:max_regions]


def region_phases_positive(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    min_snr: float = 20.0,
    margin_hz: float = 8.0,
    max_regions: int = 60,
    search_deg: float = 45.0,
) -> list[PeakPhase]:
    """Residual phase of each signal group of a roughly phased spectrum, from positivity.

    An absorption spectrum has no negative lobes; a phase error ``d`` mixes in
    dispersion, which dips below the baseline beside every line. For each group
    the rotation that minimises the energy below a straight baseline (drawn
    through the group's end points) is taken as its residual phase.
    """
    data = spectrum.data
    n = data.size
    mag = np.abs(data)
    sigma = _noise_sigma(data.real)
    ppm = spectrum.ppm
    allowed = np.ones(n, bool)
    for lo, hi in exclude_ppm:
        allowed &= ~((ppm >= min(lo, hi)) & (ppm <= max(lo, hi)))
    # Groups: windows of +-margin_hz about every clear peak of the magnitude, merged
    # where they touch. (A magnitude threshold alone would swallow the whole
    # spectrum: dispersion tails fall off only as 1/offset.)
    floor = max(min_snr * sigma, 1e-3 * float(mag[allowed].max() if allowed.any() else mag.max()))
    is_max = (mag == maximum_filter1d(mag, size=7)) & allowed & (mag > floor)
    peaks = np.flatnonzero(is_max)
    if peaks.size == 0:
        return []
    margin = max(3, int(round(margin_hz / spectrum.hz_per_point)))
    grown = np.zeros(n, bool)
    for i in peaks:
        grown[max(0, i - margin) : i + margin + 1] = True
    grown &= allowed
    edges = np.flatnonzero(np.diff(np.concatenate(([0], grown.astype(np.int8), [0]))))
    starts, stops = edges[::2], edges[1::2] - 1
    trial = np.radians(np.arange(-search_deg, search_deg + 0.001, 0.25))
    cos_t, sin_t = np.cos(trial)[:, None], np.sin(trial)[:, None]
    edge_pts = max(2, margin // 3)
    out: list[PeakPhase] = []
    for a, b in zip(starts, stops):
        if b - a < 8 or a < 1 or b >= n - 1:
            continue
        seg = data[a : b + 1]
        # Real part after rotating by -t: cos(t)*Re + sin(t)*Im.
        rot = cos_t * seg.real[None, :] + sin_t * seg.imag[None, :]
        left = rot[:, :edge_pts].mean(axis=1, keepdims=True)
        right = rot[:, -edge_pts:].mean(axis=1, keepdims=True)
        ramp = np.linspace(0.0, 1.0, seg.size)[None, :]
        rot = rot - (left + (right - left) * ramp)
        neg = np.minimum(rot, 0.0)
        energy = np.sum(neg * neg, axis=1)
        k = int(np.argmin(energy))
        if k == 0 or k == trial.size - 1:
            continue
        # Parabolic refinement of the minimum.
        e0, e1, e2 = energy[k - 1], energy[k], energy[k + 1]
        denom = e0 - 2 * e1 + e2
        frac = 0.5 * (e0 - e2) / denom if denom > 0 else 0.0
        t = float(np.degrees(trial[k])) + 0.25 * float(np.clip(frac, -1, 1))
        weight = float(np.sum(mag[a : b + 1]))
        centre = a + float(np.sum(mag[a : b + 1] * np.arange(seg.size)) / max(weight, 1e-300))
        out.append(PeakPhase(index=int(round(centre)), x=centre / n, phase_deg=t, height=weight))
    out.sort(key=lambda p: -p.height)
    return out[:max_regions]


def _wrap(deg: np.ndarray | float) -> np.ndarray | float:
    return (np.asarray(deg) + 180.0) % 360.0 - 180.0


def _fit_line(peaks: list[PeakPhase], p1_range_deg: float) -> tuple[float, float, float]:
    """(p0, p1, robust spread) of the circular line through the peak phases."""
    x = np.array([p.x for p in peaks])
    phi = np.radians([p.phase_deg for p in peaks])
    w = np.array([p.height for p in peaks]) ** WEIGHT_POWER
    w = w / w.max()
    z = w * np.exp(1j * phi)
    if len(peaks) == 1 or np.ptp(x) < 1e-3:
        return float(np.degrees(np.angle(z.sum()))), 0.0, 0.0
    # Coarse search on the circle: maximise the weighted resultant over p1.
    grid = np.radians(np.arange(-p1_range_deg, p1_range_deg + 0.5, 0.5))
    resultant = np.abs(np.exp(-1j * np.outer(grid, x)) @ z)
    p1 = float(grid[int(np.argmax(resultant))])
    p0 = float(np.angle(np.sum(z * np.exp(-1j * p1 * x))))
    # Tukey-biweight refinement of the straight line on unwrapped residuals.
    c = np.radians(TUKEY_C_DEG)
    for _ in range(30):
        r = np.angle(np.exp(1j * (phi - p0 - p1 * x)))
        u = r / c
        wt = w * np.where(np.abs(u) < 1.0, (1 - u**2) ** 2, 0.0)
        if wt.sum() <= 0:
            break
        A = np.vstack([np.ones_like(x), x]).T * np.sqrt(wt)[:, None]
        y = (r + p0 + p1 * x) * np.sqrt(wt)
        if np.linalg.matrix_rank(A) < 2:
            p0 = float(p0 + np.sum(wt * r) / wt.sum())
            break
        sol, *_ = np.linalg.lstsq(A, y, rcond=None)
        new_p0, new_p1 = float(sol[0]), float(sol[1])
        done = abs(new_p0 - p0) < 1e-6 and abs(new_p1 - p1) < 1e-6
        p0, p1 = new_p0, new_p1
        if done:
            break
    r = np.angle(np.exp(1j * (phi - p0 - p1 * x)))
    spread = float(np.degrees(1.4826 * np.median(np.abs(r))))
    return float(np.degrees(p0)), float(np.degrees(p1)), spread


def auto_phase(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    p1_range_deg: float = 180.0,
    max_peaks: int = 40,
) -> tuple[Spectrum, PhaseCorrection]:
    """Find and remove the zero- and first-order phase error of ``spectrum``.

    Parameters
    ----------
    exclude_ppm
        Ranges left out of the phase reading (e.g. a presaturated water line).
    p1_range_deg
        Largest first-order error searched, degrees across the spectral width.

    Returns
    -------
    (phased spectrum, the correction applied). With no usable peak the spectrum
    is returned unchanged and the correction's method says so.
    """
    peaks = peak_phases(spectrum, exclude_ppm=exclude_ppm, max_peaks=max_peaks)
    if not peaks:
        peaks = peak_phases(spectrum, exclude_ppm=exclude_ppm, max_peaks=max_peaks, min_snr=5.0)
    if not peaks:
        corr = PhaseCorrection(0.0, 0.0, spectrum.first_ppm, "none (no peak above noise)", 0, None)
        return spectrum, corr
    p0, p1, spread = _fit_line(peaks, p1_range_deg)
    used = len(peaks)
    if REFINE:
        for _ in range(3):
            rough = apply_phase(spectrum, p0_deg=p0, p1_deg=p1)
            groups = region_phases_positive(rough, exclude_ppm=exclude_ppm)
            if not groups:
                break
            d0, d1, spread = _fit_line(groups, 30.0)
            p0, p1, used = p0 + d0, p1 + d1, len(groups)
            if abs(d0) < 0.05 and abs(d1) < 0.05:
                break
    p0 = float(_wrap(p0))
    phased = apply_phase(spectrum, p0_deg=p0, p1_deg=p1)
    corr = PhaseCorrection(p0, p1, spectrum.first_ppm, "peak-phase regression", used, spread)
    return phased, corr
