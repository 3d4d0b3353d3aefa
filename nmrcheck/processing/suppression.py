"""How far the remains of a presaturated solvent line reach: the zone left out of phasing and counting."""

from __future__ import annotations

import numpy as np
from scipy.ndimage import median_filter

from nmrcheck.errors import ParameterError
from nmrcheck.processing.spectrum import Spectrum

__all__ = ["suppression_zone", "suppression_foot"]


def suppression_zone(
    spectrum: Spectrum,
    centre_ppm: float,
    *,
    min_half_ppm: float = 0.04,
    max_half_ppm: float = 0.6,
    median_window_ppm: float = 0.04,
    excess: float = 2.0,
) -> tuple[float, float]:
    """(low ppm, high ppm) around a presaturated line where its remains dominate the spectrum.

    Presaturation leaves a residual line whose shape is neither absorptive nor
    stable, with a broad foot whose reach depends on how much solvent there was
    and how well it was saturated: tens of hertz in a dried sample, tenths of a ppm
    in an undried one. The magnitude spectrum is median-filtered over
    ``median_window_ppm`` (narrow analyte lines vanish in a running median, the
    broad foot does not) and followed outward from ``centre_ppm`` on each side
    until it falls below ``excess`` times its level 0.6-1.5 ppm away on that side.
    The magnitude makes this independent of the phase; each side is kept between
    ``min_half_ppm`` (the saturation hole itself) and ``max_half_ppm``.
    """
    if not (0 < min_half_ppm <= max_half_ppm):
        raise ParameterError(f"min_half_ppm, max_half_ppm: need 0 < min <= max, got {min_half_ppm!r}, {max_half_ppm!r}")
    if not excess > 1:
        raise ParameterError(f"excess: must be above 1, got {excess!r}")
    mag = np.abs(spectrum.data)
    step = spectrum.step_ppm
    window = max(3, int(round(median_window_ppm / step)) | 1)
    centre = spectrum.index_of(centre_ppm)
    reach = int(round(1.5 / step))
    lo_i, hi_i = max(0, centre - reach), min(mag.size, centre + reach + 1)
    med = median_filter(mag[lo_i:hi_i], size=window, mode="nearest")
    c = centre - lo_i
    sides = []
    for direction in (-1, 1):  # -1: toward higher ppm (lower index)
        far = [c + direction * k for k in range(int(0.6 / step), int(1.5 / step))]
        far = [k for k in far if 0 <= k < med.size]
        if not far:
            sides.append(max_half_ppm)
            continue
        level = float(np.median(med[far]))
        k = c
        limit = int(max_half_ppm / step)
        while 0 <= k + direction < med.size and abs(k - c) < limit and med[k] > excess * level:
            k += direction
        sides.append(float(np.clip(abs(k - c) * step, min_half_ppm, max_half_ppm)))
    high_side, low_side = sides
    return centre_ppm - low_side, centre_ppm + high_side


def suppression_foot(
    spectrum: Spectrum,
    zone: tuple[float, float],
    *,
    noise: float,
    floor_sigma: float = 3.0,
    median_window_ppm: float = 0.04,
    max_half_ppm: float = 0.6,
) -> tuple[float, float]:
    """``zone`` widened over the foot of the suppressed line left in a phased, baseline-corrected spectrum.

    After phasing and baseline correction a well-behaved spectrum is flat between its
    lines; the remains of a presaturated line are not, and their foot (often
    dispersive, seldom followed by the baseline) would be integrated as analyte. The
    running median (narrow lines vanish in it) of the real part is followed outward
    from each end of ``zone`` while it stays beyond ``floor_sigma`` noise standard
    deviations, up to ``max_half_ppm`` from the zone's centre.
    """
    y = spectrum.data.real
    step = spectrum.step_ppm
    lo_ppm, hi_ppm = min(zone), max(zone)
    centre_ppm = 0.5 * (lo_ppm + hi_ppm)
    window = max(3, int(round(median_window_ppm / step)) | 1)
    reach = int(round((max_half_ppm + median_window_ppm) / step))
    c = spectrum.index_of(centre_ppm)
    a, b = max(0, c - reach), min(y.size, c + reach + 1)
    med = np.abs(median_filter(y[a:b], size=window, mode="nearest"))
    floor = floor_sigma * noise
    out = []
    for edge_ppm, direction in ((hi_ppm, -1), (lo_ppm, 1)):  # higher ppm lies at lower index
        k = spectrum.index_of(edge_ppm) - a
        limit = int(round(max_half_ppm / step))
        while 0 <= k + direction < med.size and abs(k + a - c) < limit and med[k] > floor:
            k += direction
        out.append(spectrum.first_ppm - (k + a) * step)
    new_hi, new_lo = out
    return min(lo_ppm, new_lo), max(hi_ppm, new_hi)
