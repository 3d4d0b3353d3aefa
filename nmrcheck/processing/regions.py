"""Automatic integration regions: signal above noise, multiplets merged, solvent/water/standard/satellites flagged."""

from __future__ import annotations

import warnings
from typing import Sequence

import numpy as np
from scipy.ndimage import maximum_filter1d, uniform_filter1d

from nmrcheck.processing.reference import WATER_WINDOW_PPM, find_water_singlet
from nmrcheck.processing.results import Region
from nmrcheck.processing.solvents import AQUEOUS, SolventSignal, normalise_solvent, solvent_signals
from nmrcheck.processing.spectrum import Spectrum

__all__ = ["find_regions", "integrate"]

#: One-bond 13C-1H couplings span about 115-250 Hz; satellites sit at half that from the parent
#: line and each holds 0.55 % of it (natural 13C abundance 1.1 %) (common practice).
SATELLITE_OFFSET_HZ = (55.0, 125.0)
SATELLITE_FRACTION = (0.002, 0.012)
#: Line patterns of residual solvent signals that are modelled and taken out before
#: integration: relative heights of equally spaced lines (a CHD2 group: 1:2:3:2:1; a CHD
#: group next to one D: 1:1:1) (common practice).
RESIDUAL_PATTERNS = {"s": (1.0,), "t": (1.0, 1.0, 1.0), "quint": (1.0, 2.0, 3.0, 2.0, 1.0)}
#: Starting value of the H-D coupling of a residual multiplet, Hz (1.7-2.5 Hz for the
#: usual solvents; common practice); the fit refines it.
TYPICAL_HD_COUPLING_HZ = 2.0
#: Beside a modelled solvent/standard line, regions within this distance and under this share
#: of its area are taken as its residue (truncation wiggles, shim foot), not analyte.
LINE_FOOT_HZ = 60.0
LINE_FOOT_FRACTION = 0.002


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
    wings beyond its ends (``wing_correction``). The singlet ``reference_line`` (the
    solvent or standard line that set the axis) is modelled as a Lorentzian and taken
    out first; it comes back as one flagged region of its model's area. Regions that contain the solvent residual, the
    water line, the reference standard, a listed impurity (narrow regions only),
    13C satellites of a much stronger line, or fall in ``exclude_ppm``, are
    flagged and not counted.
    """
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    name = normalise_solvent(solvent or spectrum.solvent)
    signals: tuple[SolventSignal, ...] = solvent_signals(name) if name else ()
    # Only the line that set the axis is known to be a singlet at its table position;
    # elsewhere a line there may be the analyte's. Its Lorentzian model (wings included)
    # is taken out before the analyte is integrated: a solvent line hundreds of times an
    # analyte proton would otherwise swallow every signal within tenths of a ppm.
    # When a standard set the axis, the solvent's residual singlet sits at its table
    # position too and is modelled the same way.
    modelled = [sig for sig in signals if sig.multiplicity in RESIDUAL_PATTERNS and (
        (sig.kind in ("residual", "reference") and sig.name == reference_line)
        or (sig.kind == "residual" and reference_line is not None and reference_name == reference_line))]
    line_regions: list[Region] = []
    for singlet in modelled:
        model = _singlet_model(spectrum, singlet.ppm, pattern=RESIDUAL_PATTERNS[singlet.multiplicity])
        if model is None:
            continue
        curve, area, peak_ppm, half_ppm = model
        if curve.max() < 20 * noise:
            continue
        y = y - curve
        flag = "solvent" if singlet.kind == "residual" else "reference"
        line_regions.append(Region(peak_ppm + 3 * half_ppm, peak_ppm - 3 * half_ppm, area, None, flag,
                                   f"{singlet.name} (modelled line)", peak_ppm))
    water_modelled = False
    if name not in AQUEOUS:
        for water in (sig for sig in signals if sig.kind == "water" and sig.multiplicity == "s"):
            at = find_water_singlet(spectrum, water.ppm)
            model = None if at is None else _singlet_model(spectrum, at, tol_ppm=0.003)
            if model is None:
                continue
            curve, area, peak_ppm, half_ppm = model
            y = y - curve
            water_modelled = True
            line_regions.append(Region(peak_ppm + 3 * half_ppm, peak_ppm - 3 * half_ppm, area, None, "water",
                                       f"{water.name} (modelled line)", peak_ppm))
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
    raw = []
    for a, b in runs:
        seg = y[a : b + 1]
        integral = float(np.sum(seg) * step) + (_wing_area(y, a, b, step) if wing_correction else 0.0)
        k = a + int(np.argmax(seg))
        raw.append([ppm0 - a * step, ppm0 - b * step, integral, ppm0 - k * step, float(y[k])])
    measured = len(raw)
    # The modelled lines join the list so that their 13C satellites are recognised.
    raw.extend([r.start_ppm, r.end_ppm, r.integral, r.peak_ppm, 0.0] for r in line_regions)
    regions: list[Region] = []
    for start, end, integral, peak, height in raw[:measured]:
        flag, label = _flag(start, end, peak, signals, reference_name, exclude_ppm, flag_tolerance_ppm, hz / step,
                            water_modelled=water_modelled)
        for line in line_regions:
            near_centre = abs(peak - line.peak_ppm) <= 2 * (line.start_ppm - line.peak_ppm)
            # Truncation wiggles and the shim foot of a line far above the analyte: small
            # signals close beside it cannot be told from what its model leaves.
            in_foot = abs(peak - line.peak_ppm) * spectrum.spectrometer_mhz <= LINE_FOOT_HZ and abs(integral) < LINE_FOOT_FRACTION * line.integral
            if near_centre or in_foot:
                flag, label = line.flag, f"{line.label}: residue of the model"
        if flag is None:
            flag, label = _satellite(start, end, peak, integral, raw, spectrum.spectrometer_mhz)
        regions.append(Region(start, end, integral, None, flag, label, peak))
    regions = _flag_dss_methylenes(regions, line_regions, reference_name)
    regions.extend(line_regions)
    regions.sort(key=lambda r: -r.start_ppm)
    return tuple(regions)


#: DSS's trimethylene protons: 2 H each at 2.91, 1.75 and 0.63 ppm beside its 9 H methyl
#: singlet at 0 ppm (common practice; Wishart et al. J. Biomol. NMR 1995 6 135, from memory).
DSS_METHYLENES_PPM = (2.91, 1.75, 0.63)


def _flag_dss_methylenes(regions: list[Region], line_regions: list[Region], reference_name: str | None) -> list[Region]:
    """Flag DSS's three methylene multiplets by their pattern: position and 2/9 of the singlet's area.

    A region at a methylene's shift holding up to 1.5 times the expected area is the
    methylene; a larger one is an analyte signal on top of it, kept with the expected
    DSS area taken out.
    """
    if reference_name != "DSS":
        return regions
    singlet = next((r for r in line_regions if r.flag == "reference"), None)
    if singlet is None or singlet.integral <= 0:
        return regions
    expected = singlet.integral * 2.0 / 9.0
    out = []
    for r in regions:
        if r.counted and r.peak_ppm is not None and any(abs(r.peak_ppm - m) <= 0.03 for m in DSS_METHYLENES_PPM):
            if r.integral <= 1.5 * expected:
                r = Region(r.start_ppm, r.end_ppm, r.integral, None, "reference", "DSS CH2 (2/9 of the DSS singlet)", r.peak_ppm)
            else:
                r = Region(r.start_ppm, r.end_ppm, r.integral - expected, None, None, "DSS CH2 area taken out", r.peak_ppm)
        out.append(r)
    return out


def _singlet_model(spectrum: Spectrum, ppm: float, *, tol_ppm: float = 0.01, pattern: tuple[float, ...] = (1.0,)):
    """Lorentzian model of the solvent line at ``ppm``: (curve over the whole axis, area, centre ppm, half width ppm).

    ``pattern`` gives the relative heights of equally spaced lines (a CHD2 group's
    1:2:3:2:1 quintet from two deuterons); their spacing is fitted. Height and half
    width are first read at the line (half-height crossings interpolated between
    points, the floor being the lower of the minima just beyond its core), then
    refined by least squares; None when no line stands there.
    """
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    i = spectrum.index_of(ppm)
    w = max(2, int(round(tol_ppm / spectrum.step_ppm)))
    lo, hi = max(1, i - w), min(y.size - 2, i + w)
    k = lo + int(np.argmax(y[lo : hi + 1]))
    if not (y[k] >= y[k - 1] and y[k] >= y[k + 1]):
        return None
    core = max(3, int(round(4.0 / hz)))
    left = y[max(0, k - 2 * core) : max(1, k - core)]
    right = y[k + core : k + 2 * core]
    if left.size == 0 or right.size == 0:
        return None
    floor = max(0.0, min(float(left.min()), float(right.min())))
    top = float(y[k]) - floor
    if top <= 0:
        return None
    half = floor + top / 2.0

    def crossing(direction: int) -> float | None:
        j = k
        while 0 < j < y.size - 1 and y[j] > half and abs(j - k) < core:
            j += direction
        if y[j] > half:
            return None
        # Linear interpolation between j (below half) and j - direction (above).
        y0, y1 = y[j], y[j - direction]
        return abs((j - direction) - k) + (y1 - half) / (y1 - y0) if y1 != y0 else float(abs(j - k))

    a_pts, b_pts = crossing(-1), crossing(+1)
    if a_pts is None or b_pts is None:
        return None
    # Vertex of a parabola through the top three points: the centre between grid points.
    y_l, y_c, y_r = y[k - 1], y[k], y[k + 1]
    den = y_l - 2 * y_c + y_r
    frac = 0.5 * (y_l - y_r) / den if den < 0 else 0.0
    gamma_pts = max(0.5, (a_pts + b_pts) / 2.0)
    # Least-squares refinement of height, centre and width (with a local sloping floor)
    # over the line's core: the sampled maximum of a narrow line sits below its true top.
    from scipy.optimize import OptimizeWarning, curve_fit

    reach = int(max(6, round(6 * gamma_pts)))
    idx = np.arange(max(0, k - reach), min(y.size, k + reach + 1))

    # A small dispersive part is allowed for: a residual phase error of a degree or two
    # leaves, beside a line hundreds of times the analyte, an antisymmetric remainder
    # larger than the analyte's own signals.
    weights = np.asarray(pattern, float) / max(pattern)
    offsets = np.arange(weights.size) - (weights.size - 1) / 2.0

    def lines(xx, height, centre, gamma, disp, spacing):
        total = np.zeros_like(xx, dtype=float)
        for wgt, off in zip(weights, offsets):
            u = (xx - centre - off * spacing) / gamma
            total += wgt * (height + disp * u) / (1.0 + u * u)
        return total

    def lorentz(xx, height, centre, gamma, disp, spacing, c0, c1):
        return lines(xx, height, centre, gamma, disp, spacing) + c0 + c1 * (xx - k)

    disp = 0.0
    spacing = (TYPICAL_HD_COUPLING_HZ / hz) if weights.size > 1 else 0.0
    if weights.size > 1:
        gamma_pts = max(0.5, min(gamma_pts, 0.4 * spacing))
        reach = int(max(reach, round(6 * gamma_pts + spacing * weights.size)))
        idx = np.arange(max(0, k - reach), min(y.size, k + reach + 1))
    try:
        with warnings.catch_warnings():
            # An exact fit leaves no residual to estimate a covariance from; only the values are used.
            warnings.simplefilter("ignore", OptimizeWarning)
            if weights.size > 1:
                (top, centre, gamma_pts, disp, spacing, _, _), _ = curve_fit(
                    lorentz, idx.astype(float), y[idx], p0=(top, k + frac, gamma_pts, 0.0, spacing, floor, 0.0), maxfev=1500)
            else:
                (top, centre, gamma_pts, disp, _, _), _ = curve_fit(
                    lambda xx, a, c, g, d, c0, c1: lorentz(xx, a, c, g, d, 0.0, c0, c1),
                    idx.astype(float), y[idx], p0=(top, k + frac, gamma_pts, 0.0, floor, 0.0), maxfev=600)
    except (RuntimeError, ValueError):
        centre = k + frac
    if not (top > 0 and 0.3 < gamma_pts < 4 * core and abs(centre - k) < 3 and abs(disp) < 0.5 * top):
        return None
    curve = lines(np.arange(y.size, dtype=float), top, centre, gamma_pts, disp, spacing)
    area = float(np.pi * top * gamma_pts * spectrum.step_ppm * weights.sum())
    centre_ppm = float(spectrum.first_ppm - centre * spectrum.step_ppm)
    return curve, area, centre_ppm, gamma_pts * spectrum.step_ppm


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


def _flag(start, end, peak, signals, reference_name, exclude_ppm, tol, mhz, *, water_modelled=False):
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
        # Unmodelled water: only a narrow region at the water position is taken for it; a
        # broad one there is an analyte multiplet (water was modelled when it was a singlet).
        if sig.kind == "water" and not water_modelled and abs(peak - sig.ppm) <= WATER_WINDOW_PPM and (
                sig.solvent in AQUEOUS or width_ppm * mhz <= 25.0):
            return "water", sig.name
        if sig.kind == "reference" and reference_name and sig.name == reference_name and abs(peak - sig.ppm) <= tol:
            return "reference", sig.name
        if sig.kind == "impurity" and width_ppm * mhz <= 25.0 and abs(peak - sig.ppm) <= 0.01:
            return "impurity", sig.name
    return None, None


def _satellite(start, end, peak, integral, raw, mhz):
    """Flag a region as a 13C satellite: the right size and distance from a strong line,
    with its twin on the mirror side of that line (satellites come in equal pairs)."""
    for other in raw:
        o_start, o_end, o_int, o_peak, _ = other
        if o_int <= 0 or o_peak == peak:
            continue
        offset_hz = abs(peak - o_peak) * mhz
        ratio = integral / o_int
        if not (SATELLITE_OFFSET_HZ[0] <= offset_hz <= SATELLITE_OFFSET_HZ[1] and SATELLITE_FRACTION[0] <= ratio <= SATELLITE_FRACTION[1]):
            continue
        mirror = 2 * o_peak - peak
        for twin in raw:
            t_start, t_end, t_int, t_peak, _ = twin
            if t_end - 3.0 / mhz <= mirror <= t_start + 3.0 / mhz and 0.5 <= t_int / integral <= 2.0:
                return "satellite", f"13C satellite of {o_peak:.2f} ppm"
    return None, None
