"""Signal integrals for quantification: a local straight baseline across each range, with the integral's noise.

The baseline is the line through the mean level of two short windows just
outside the range ends. Near a presaturated water line the global baseline
correction leaves slopes and offsets of the order of the signal; a local line
removes them and is what a practitioner does by hand.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.processing.spectrum import Spectrum

__all__ = ["LocalIntegral", "integrate_local", "integral_noise", "find_signal"]

#: Width of each baseline window beside a range, Hz.
BASELINE_WINDOW_HZ = 3.0


@dataclass(frozen=True)
class LocalIntegral:
    """Integral of one range above a local straight baseline (spectrum units: intensity x ppm)."""

    start_ppm: float
    end_ppm: float
    integral: float
    sigma: float
    """Standard deviation of ``integral`` from noise (same units)."""
    peak_ppm: float
    peak_height: float
    """Tallest point above the local baseline."""
    edge_level: float
    """How far the baseline windows stand above windows one window further out (mean of both sides; a
    straight slope cancels): a neighbouring signal's tail reaching into the range ends raises it."""
    points: int
    captured_fraction: float = 1.0
    """Share of the lines' full Lorentzian area this integral holds (range truncation and baseline windows)."""
    linewidth_hz: float | None = None

    @property
    def relative_sigma(self) -> float:
        return abs(self.sigma / self.integral) if self.integral else float("inf")

    @property
    def corrected(self) -> float:
        """Integral divided by ``captured_fraction``: the full area of Lorentzian lines."""
        return self.integral / self.captured_fraction


def _check_range(start_ppm: float, end_ppm: float) -> tuple[float, float]:
    if not (np.isfinite(start_ppm) and np.isfinite(end_ppm)) or start_ppm == end_ppm:
        raise ParameterError(f"range_ppm: ({start_ppm}, {end_ppm}) must be two different finite shifts")
    return max(start_ppm, end_ppm), min(start_ppm, end_ppm)


def _baseline_integral(y: np.ndarray, a: int, b: int, w: int) -> tuple[float, np.ndarray, float]:
    """Sum of ``y[a:b+1]`` above the line through the windows ``y[a-w:a]`` and ``y[b+1:b+1+w]``."""
    left = y[max(0, a - w) : a]
    right = y[b + 1 : b + 1 + w]
    idx = np.arange(a, b + 1)
    if left.size and right.size:
        xl = a - (left.size + 1) / 2.0
        xr = b + (right.size + 1) / 2.0
        yl, yr = float(left.mean()), float(right.mean())
        base = yl + (idx - xl) * (yr - yl) / (xr - xl)
        edge = 0.5 * (yl + yr)
    else:
        level = float((left if left.size else right).mean()) if (left.size or right.size) else 0.0
        base = np.full(idx.size, level)
        edge = level
    above = y[a : b + 1] - base
    return float(above.sum()), above, edge


def _edge_excess(y: np.ndarray, a: int, b: int, w: int) -> float:
    inner_left, outer_left = y[max(0, a - w) : a], y[max(0, a - 2 * w) : max(0, a - w)]
    inner_right, outer_right = y[b + 1 : b + 1 + w], y[b + 1 + w : b + 1 + 2 * w]
    parts = [i.mean() - o.mean() for i, o in ((inner_left, outer_left), (inner_right, outer_right)) if i.size and o.size]
    return float(np.mean(parts)) if parts else 0.0


def integral_noise(spectrum: Spectrum, points: int, *, noise: float, exclude: list[tuple[int, int]] = (), window_points: int | None = None) -> float:
    """Standard deviation of a local-baseline integral of ``points`` points over pure noise (spectrum units).

    Found empirically: the same integral is taken over every signal-free stretch
    of that width (away from the ``exclude`` index ranges and from any point above
    five times ``noise``), and the robust spread (1.4826 x median absolute
    deviation) of those integrals is returned. This takes in the correlation that
    line broadening gives the noise and the noise of the baseline windows. With
    fewer than eight free stretches, the white-noise value
    ``noise * sqrt(points) * step`` (times 1.2 for the baseline windows) is used.
    """
    y = spectrum.data.real
    w = window_points or max(2, int(round(BASELINE_WINDOW_HZ / spectrum.hz_per_point)))
    span = points + 2 * w
    busy = np.abs(y) > 5.0 * noise
    for lo, hi in exclude:
        busy[max(0, lo) : hi + 1] = True
    # A stretch is free when nothing busy lies inside it.
    csum = np.concatenate(([0], np.cumsum(busy)))
    starts = np.arange(0, y.size - span + 1, max(span // 2, 1))
    free = starts[csum[starts + span] - csum[starts] == 0]
    # The same local-baseline integral as _baseline_integral, for all free stretches at once
    # (running sums: window means, the stretch's sum, and the line's sum over the stretch).
    ys = np.concatenate(([0.0], np.cumsum(y)))
    a = free + w
    b = a + points - 1
    yl = (ys[a] - ys[a - w]) / w
    yr = (ys[b + 1 + w] - ys[b + 1]) / w
    xl = a - (w + 1) / 2.0
    xr = b + (w + 1) / 2.0
    mean_idx = (a + b) / 2.0
    line_sum = points * (yl + (mean_idx - xl) * (yr - yl) / (xr - xl))
    values = (ys[b + 1] - ys[a]) - line_sum
    if len(values) >= 8:
        v = np.asarray(values)
        sd = 1.4826 * float(np.median(np.abs(v - np.median(v))))
        return sd * spectrum.step_ppm
    return 1.2 * noise * np.sqrt(points) * spectrum.step_ppm


def integrate_local(
    spectrum: Spectrum,
    start_ppm: float,
    end_ppm: float,
    *,
    noise: float,
    exclude_ppm: tuple[tuple[float, float], ...] = (),
) -> LocalIntegral:
    """Integral of the real spectrum between two shifts above a local straight baseline.

    Parameters
    ----------
    spectrum
        Phased, referenced spectrum.
    start_ppm, end_ppm
        Range ends (either order).
    noise
        Noise standard deviation of the real spectrum (``Processed.noise``).
    exclude_ppm
        Other signal ranges to keep out of the empirical noise estimate.
    """
    hi, lo = _check_range(start_ppm, end_ppm)
    sl = spectrum.slice_of(hi, lo)
    a, b = sl.start, sl.stop - 1
    if b - a < 2:
        raise ParameterError(f"range_ppm: ({hi}, {lo}) holds fewer than three points of the spectrum")
    w = max(2, int(round(BASELINE_WINDOW_HZ / spectrum.hz_per_point)))
    y = spectrum.data.real
    total, above, edge = _baseline_integral(y, a, b, w)
    k = int(np.argmax(above))
    edge = _edge_excess(y, a, b, w)
    exclude = [(a - w, b + w)]
    for r_hi, r_lo in exclude_ppm:
        s = spectrum.slice_of(r_hi, r_lo)
        exclude.append((s.start - w, s.stop - 1 + w))
    sigma = integral_noise(spectrum, b - a + 1, noise=noise, exclude=exclude, window_points=w)
    width_hz = _half_height_width_hz(spectrum, above, k)
    captured = _captured_fraction(spectrum, above, a, b, w, width_hz) if width_hz else 1.0
    return LocalIntegral(
        captured_fraction=captured,
        linewidth_hz=width_hz,
        start_ppm=hi,
        end_ppm=lo,
        integral=total * spectrum.step_ppm,
        sigma=sigma,
        peak_ppm=float(spectrum.first_ppm - (a + k) * spectrum.step_ppm),
        peak_height=float(above[k]),
        edge_level=edge,
        points=b - a + 1,
    )


def _half_height_width_hz(spectrum: Spectrum, above: np.ndarray, k: int) -> float | None:
    """Full width at half height of the tallest line (linear interpolation), Hz; None if it runs off the range."""
    half = above[k] / 2.0
    if half <= 0:
        return None
    i = k
    while i > 0 and above[i] > half:
        i -= 1
    j = k
    while j < above.size - 1 and above[j] > half:
        j += 1
    if above[i] > half or above[j] > half:
        return None
    left = i + (half - above[i]) / (above[i + 1] - above[i])
    right = j - (half - above[j]) / (above[j - 1] - above[j])
    return float((right - left) * spectrum.hz_per_point)


def _captured_fraction(spectrum: Spectrum, above: np.ndarray, a: int, b: int, w: int, width_hz: float) -> float:
    """Share of full Lorentzian area a local-baseline integral of ``[a, b]`` keeps.

    The lines are modelled as Lorentzians of the measured ``width_hz`` at the
    range's local maxima above a tenth of the tallest, weighted by height. For
    each: the area inside the range, less the baseline drawn through its wing
    level in the two windows. Lines wider than the range's margins lose several
    percent; analyte and reference ranges of different widths would otherwise
    bias the ratio.
    """
    g = width_hz / 2.0 / spectrum.hz_per_point  # half width at half height, points
    top = above.max()
    peaks = [k for k in range(1, above.size - 1) if above[k] >= above[k - 1] and above[k] >= above[k + 1] and above[k] > 0.1 * top]
    if not peaks:
        return 1.0

    def cdf(x, x0):
        return np.arctan((x - x0) / g) / np.pi

    lo, hi = a - 0.5, b + 0.5
    weights, fractions = [], []
    for k in peaks:
        x0 = a + k
        inside = cdf(hi, x0) - cdf(lo, x0)
        left = (cdf(lo, x0) - cdf(lo - w, x0)) / w
        right = (cdf(hi + w, x0) - cdf(hi, x0)) / w
        fractions.append(inside - (hi - lo) * 0.5 * (left + right))
        weights.append(above[k])
    f = float(np.average(fractions, weights=weights))
    return min(1.0, max(f, 0.5))


def find_signal(spectrum: Spectrum, centre_ppm: float, search_ppm: float) -> tuple[float, float] | None:
    """(shift, height) of the tallest point within ``centre +- search`` of the real spectrum, or None if empty."""
    sl = spectrum.slice_of(centre_ppm + search_ppm, centre_ppm - search_ppm)
    y = spectrum.data.real[sl]
    if y.size == 0:
        return None
    k = int(np.argmax(y))
    return float(spectrum.first_ppm - (sl.start + k) * spectrum.step_ppm), float(y[k])
