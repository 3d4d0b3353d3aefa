"""Automatic zero- and first-order phase correction of 1H spectra.

Two stages. (1) A first estimate from the phases of the strongest peaks: at the
centre of an absorptive line the complex spectrum is real, so the angle read at
each peak is the phase error there; these angles, weighted by peak height, are
fitted with a line ``p0 + p1*x`` on the circle. (2) A refinement by positivity
(nmrcheck's own formulation): an absorption line never dips below its baseline,
while a phase error ``t`` mixes in dispersion, whose tail goes negative on one
side of every line. The spectrum is cut into signal groups (every clear peak
widened by a multiple of its line width, overlapping windows merged); for each
group the energy of the real part below a straight baseline through the group's
ends is computed as a function of an extra rotation, and (p0, p1) are chosen to
minimise the weighted sum over groups of the cube root of these energies. The
cube root turns each group's valley (energy growing about as ``|t|**3``) into a
V-shaped, L1-like penalty, so that a few groups that disagree (overlap, a curved
background, an artefact) cannot drag the solution, while groups whose valley is
one-sided still constrain it. (Penalising negative intensity is an old idea;
ACME adds it to an entropy measure: Chen et al., J. Magn. Reson. 2002, 158,
164, from memory.) Regions that carry no absorptive information (presaturated
water, the carrier spike) are left out by the caller through ``exclude_ppm``.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Sequence

import numpy as np
from scipy.ndimage import label, maximum_filter1d, uniform_filter1d
from scipy.signal import find_peaks

from nmrcheck.errors import ParameterError
from nmrcheck.processing.noise import channel_noise
from nmrcheck.processing.results import PhaseCorrection
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = ["apply_phase", "auto_phase", "channel_noise", "peak_phases", "PeakPhase", "SignalGroup", "signal_groups"]

logger = logging.getLogger("nmrcheck")

# Resolution of the trial rotations of the positivity refinement (0.25 deg); the
# energy curves are computed for the whole circle by one FFT per group.
_BINS = 1440


@dataclass(frozen=True)
class PeakPhase:
    """Phase read at one peak: ``x`` runs 0 (first point) to 1 (last point)."""

    index: int
    x: float
    phase_deg: float
    height: float


@dataclass(frozen=True)
class SignalGroup:
    """A stretch of the spectrum holding one or more lines and the quiet flanks around them.

    ``start`` and ``stop`` are point indices (inclusive); ``height`` is the
    largest magnitude inside; ``x`` the magnitude-weighted centre, 0 (first
    point) to 1 (last point).
    """

    start: int
    stop: int
    height: float
    x: float


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


def _check_ranges(exclude_ppm: Sequence[tuple[float, float]]) -> list[tuple[float, float]]:
    out = []
    for item in exclude_ppm:
        try:
            lo, hi = (float(v) for v in item)
        except (TypeError, ValueError):
            raise ParameterError(f"exclude_ppm: each entry must be a (start_ppm, end_ppm) pair, got {item!r}") from None
        if not (np.isfinite(lo) and np.isfinite(hi)):
            raise ParameterError(f"exclude_ppm: range ends must be finite numbers, got {item!r}")
        out.append((lo, hi))
    return out


def _allowed_mask(spectrum: Spectrum, exclude_ppm: Sequence[tuple[float, float]]) -> np.ndarray:
    ppm = spectrum.ppm
    allowed = np.ones(spectrum.size, bool)
    for lo, hi in _check_ranges(exclude_ppm):
        allowed &= ~((ppm >= min(lo, hi)) & (ppm <= max(lo, hi)))
    return allowed


def _half_height_widths(mag: np.ndarray, idx: np.ndarray, limit: int = 4000) -> np.ndarray:
    """Full width (points) of each peak of ``mag`` at half its height, searched at most ``limit`` points each way."""
    n = mag.size
    widths = np.empty(idx.size)
    for q, i in enumerate(idx):
        half = mag[i] / 2.0
        left = mag[max(0, i - limit) : i + 1][::-1] <= half
        right = mag[i : min(n, i + limit + 1)] <= half
        widths[q] = (np.argmax(left) if left.any() else left.size - 1) + (np.argmax(right) if right.any() else right.size - 1)
    return widths


def peak_phases(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    max_peaks: int = 40,
    min_snr: float = 20.0,
    core_hz: float | None = None,
) -> list[PeakPhase]:
    """Phase and height of the strongest resolved peaks of the magnitude spectrum.

    The phase is the angle of the complex spectrum summed over the peak core,
    +-``core_hz`` about the maximum (default: the half-height half-width
    measured on the magnitude, at least two points), after removing a complex
    straight background through the core's ends.
    """
    data = spectrum.data
    mag = np.abs(data)
    n = mag.size
    sigma = spectrum.channel_noise
    allowed = _allowed_mask(spectrum, exclude_ppm)
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
        hwhm = max(2, int(_half_height_widths(mag, np.array([i]), limit=2000)[0]) // 2)
        w = hwhm if core_hz is None else max(2, int(round(core_hz / hz_per_pt)))
        a, b = i - w, i + w
        if a < 1 or b >= n - 1:
            continue
        seg = data[a : b + 1]
        # A complex straight background through the window's ends keeps broad
        # neighbours and baseline roll from biasing the angle.
        ramp = np.linspace(0.0, 1.0, seg.size)
        core = seg - (data[a] + (data[b] - data[a]) * ramp)
        angle = float(np.degrees(np.angle(np.sum(core))))
        taken.append(PeakPhase(index=int(i), x=i / n, phase_deg=angle, height=float(mag[i])))
        used[max(0, i - 3 * w) : i + 3 * w + 1] = True
    return taken


def _wrap(deg: float) -> float:
    return float((deg + 180.0) % 360.0 - 180.0)


def _fit_line(peaks: list[PeakPhase], p1_range_deg: float, tukey_deg: float = 20.0) -> tuple[float, float]:
    """(p0, p1) of the circular line through the peak phases, p0 at x = 0."""
    x = np.array([p.x for p in peaks])
    phi = np.radians([p.phase_deg for p in peaks])
    w = np.array([p.height for p in peaks])
    w = w / w.max()
    z = w * np.exp(1j * phi)
    if len(peaks) == 1 or np.ptp(x) < 1e-3:
        return float(np.degrees(np.angle(z.sum()))), 0.0
    # Coarse search on the circle: the p1 that maximises the weighted resultant.
    grid = np.radians(np.arange(-p1_range_deg, p1_range_deg + 0.25, 0.5))
    resultant = np.abs(np.exp(-1j * np.outer(grid, x)) @ z)
    p1 = float(grid[int(np.argmax(resultant))])
    p0 = float(np.angle(np.sum(z * np.exp(-1j * p1 * x))))
    # Tukey-biweight least squares on the wrapped residuals discounts peaks whose
    # phase is spoiled by overlap.
    c = np.radians(tukey_deg)
    for _ in range(30):
        r = np.angle(np.exp(1j * (phi - p0 - p1 * x)))
        u = r / c
        wt = w * np.where(np.abs(u) < 1.0, (1 - u**2) ** 2, 0.0)
        if np.count_nonzero(wt) < 2:
            break
        design = np.vstack([np.ones_like(x), x]).T * np.sqrt(wt)[:, None]
        y = (r + p0 + p1 * x) * np.sqrt(wt)
        if np.linalg.matrix_rank(design) < 2:
            p0 = float(p0 + np.sum(wt * r) / wt.sum())
            break
        sol, *_ = np.linalg.lstsq(design, y, rcond=None)
        done = abs(sol[0] - p0) < 1e-7 and abs(sol[1] - p1) < 1e-7
        p0, p1 = float(sol[0]), float(sol[1])
        if done:
            break
    return float(np.degrees(p0)), float(np.degrees(p1))


def signal_groups(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    min_snr: float = 20.0,
    reach_linewidths: float = 40.0,
    min_reach_hz: float = 5.0,
    max_reach_hz: float = 80.0,
) -> list[SignalGroup]:
    """Signal groups for the positivity criterion, found on the magnitude (so independent of phase).

    Every peak of the magnitude with a prominence of at least ``min_snr`` times
    the noise is widened to +-``reach_linewidths`` half-widths (kept between
    ``min_reach_hz`` and ``max_reach_hz``), and overlapping windows are merged.
    The reach matters: a phase error of ``t`` radians makes a Lorentzian's
    dispersion tail outweigh its absorption tail only beyond about ``1/t``
    half-widths, so a group must extend tens of half-widths past its lines to
    sense errors of a few degrees. Peaks whose window would run into an
    excluded range or off the spectrum are dropped, so that no group ends on
    the flank of an excluded line.
    """
    if not reach_linewidths > 0:
        raise ParameterError(f"reach_linewidths: must be positive, got {reach_linewidths!r}")
    if not 0 < min_reach_hz <= max_reach_hz:
        raise ParameterError(
            f"min_reach_hz, max_reach_hz: need 0 < min_reach_hz <= max_reach_hz, got {min_reach_hz!r}, {max_reach_hz!r}"
        )
    data = spectrum.data
    n = data.size
    mag = np.abs(data)
    allowed = _allowed_mask(spectrum, exclude_ppm)
    floor = min_snr * spectrum.channel_noise
    idx = find_peaks(mag, height=floor, prominence=floor)[0]
    if idx.size == 0:
        return []
    # Magnitude of a Lorentzian: half height at sqrt(3) absorption half-widths.
    hwhm_pts = _half_height_widths(mag, idx) / (2.0 * np.sqrt(3.0))
    hz = spectrum.hz_per_point
    reach = np.clip(reach_linewidths * hwhm_pts, min_reach_hz / hz, max_reach_hz / hz).astype(int)
    lo = idx - reach
    hi = idx + reach
    inside = (lo >= 1) & (hi <= n - 2)
    lo, hi = lo[inside], hi[inside]
    blocked = np.concatenate(([0], np.cumsum(~allowed)))
    clear = blocked[hi + 1] - blocked[lo] == 0
    lo, hi = lo[clear], hi[clear]
    if lo.size == 0:
        return []
    cover = np.zeros(n + 1, int)
    np.add.at(cover, lo, 1)
    np.add.at(cover, hi + 1, -1)
    covered = np.cumsum(cover[:n]) > 0
    edges = np.flatnonzero(np.diff(np.concatenate(([0], covered.astype(np.int8), [0]))))
    groups = []
    for a, b in zip(edges[::2], edges[1::2] - 1):
        if b - a < 8:
            continue
        m = mag[a : b + 1]
        centre = a + float(np.dot(m, np.arange(m.size)) / m.sum())
        groups.append(SignalGroup(start=int(a), stop=int(b), height=float(m.max()), x=centre / n))
    return groups


def _negative_energy_curves(data: np.ndarray, groups: list[SignalGroup], edge_points: int, window_deg: float, *,
                            signal_floor: float = 0.0, smooth_points: int = 1) -> np.ndarray:
    """For each group, the energy below its baseline as a function of an extra rotation ``t``.

    Row ``g`` holds the curve at ``t = k * 360/_BINS`` degrees, k = 0.._BINS-1,
    scaled to its largest value for ``|t| <= window_deg`` so that every group
    spans the same range over the search window whatever its size. With the
    baseline a complex straight line through the group's end windows, the
    rotated real part is ``Re(z_i exp(-i t)) = |z_i| cos(arg z_i - t)``, so the
    energy below the baseline is the circular convolution of the
    ``|z_i|**2``-weighted histogram of ``arg z_i`` with ``cos(u)**2 [cos u < 0]``:
    one FFT gives every rotation at once.

    Points where the group's magnitude, averaged over ``smooth_points``, stays under
    ``signal_floor`` hold noise alone: their energy below the baseline changes with the
    rotation only by chance, so they are left out (the magnitude does not depend on the
    phase, so neither does the choice).
    """
    step = 2.0 * np.pi / _BINS
    u = np.arange(_BINS) * step
    kernel_ft = np.fft.rfft(np.where(np.cos(u) < 0.0, np.cos(u) ** 2, 0.0))
    half = int(round(window_deg * _BINS / 360.0))
    window = np.r_[0 : half + 1, _BINS - half : _BINS]
    curves = np.ones((len(groups), _BINS))
    for g, grp in enumerate(groups):
        seg = data[grp.start : grp.stop + 1]
        left = seg[:edge_points].mean()
        right = seg[-edge_points:].mean()
        z = seg - (left + (right - left) * np.linspace(0.0, 1.0, seg.size))
        weight = z.real**2 + z.imag**2
        if signal_floor > 0:
            weight = weight * (uniform_filter1d(np.abs(z), max(1, smooth_points)) > signal_floor)
        pos = (np.angle(z) % (2.0 * np.pi)) / step
        k0 = np.floor(pos).astype(int)
        frac = pos - k0
        hist = np.bincount(k0 % _BINS, weight * (1.0 - frac), _BINS) + np.bincount((k0 + 1) % _BINS, weight * frac, _BINS)
        # The kernel is even, so correlation and convolution coincide.
        energy = np.clip(np.fft.irfft(np.fft.rfft(hist) * kernel_ft, _BINS), 0.0, None)
        top = energy[window].max()
        if top > 0:
            curves[g] = energy / top
    return curves


def _best_rotation(
    curves: np.ndarray,
    groups: list[SignalGroup],
    *,
    pivot_x: float,
    p0_range_deg: float,
    p1_range_deg: float,
    weight_power: float,
    tolerance: float = 2e-3,
    p1_now_deg: float = 0.0,
    max_p1_deg: float = np.inf,
    p1_scale_deg: float | None = None,
    prior_weight: float = 0.0,
    p1_centre_deg: float = 0.0,
) -> tuple[float, float]:
    """(d0 at the pivot, d1) minimising the weighted sum of the cube-rooted group energies.

    The first-order change ``d1`` is kept so that ``|p1_now_deg + d1| <= max_p1_deg``;
    with ``p1_scale_deg`` a quadratic prior ``prior_weight * ((p1 - p1_centre_deg) / p1_scale_deg)**2``
    (per unit of group weight) pulls the total first-order phase toward ``p1_centre_deg``.
    """
    heights = np.array([g.height for g in groups])
    weights = (heights / heights.max()) ** weight_power
    rooted = np.cbrt(curves)
    d0 = np.arange(-p0_range_deg, p0_range_deg + 1e-9, 0.25)
    d1 = np.arange(-p1_range_deg, p1_range_deg + 1e-9, 0.5)
    d1 = d1[np.abs(p1_now_deg + d1) <= max_p1_deg + 1e-9]
    if d1.size == 0:
        d1 = np.array([float(np.clip(-p1_now_deg, -p1_range_deg, p1_range_deg))])
    total = np.zeros((d0.size, d1.size))
    bins_per_deg = _BINS / 360.0
    for g, grp in enumerate(groups):
        t = (d0[:, None] + d1[None, :] * (grp.x - pivot_x)) * bins_per_deg
        k = np.floor(t).astype(int)
        f = t - k
        row = rooted[g]
        total += weights[g] * (row[k % _BINS] * (1.0 - f) + row[(k + 1) % _BINS] * f)
    # Where the groups leave p1 undetermined (all in a narrow stretch), prefer the
    # smallest change; the tie-breaker is far below any real curvature.
    total += 1e-5 * weights.sum() * np.abs(d1)[None, :]
    if p1_scale_deg:
        total += prior_weight * weights.sum() * ((p1_now_deg + d1 - p1_centre_deg) / p1_scale_deg)[None, :] ** 2
    i, j = np.unravel_index(int(np.argmin(total)), total.shape)
    # Close to the optimum the groups stop sensing the error (a phase error t
    # shows only beyond ~1/t half-widths from a line), so the objective has a
    # flat bottom; its centre, not an arbitrary point of it, is the estimate.
    labels, _ = label(total <= total[i, j] + tolerance * weights.sum())
    rows, cols = np.nonzero(labels == labels[i, j])
    return float(d0[rows].mean()), float(d1[cols].mean())


def _spread(curves: np.ndarray) -> float:
    """Robust spread (deg) of the groups' own best rotations about the fitted phase (curves taken there)."""
    best = np.argmin(curves, axis=1) * 360.0 / _BINS
    resid = (best + 180.0) % 360.0 - 180.0
    return float(1.4826 * np.median(np.abs(resid)))


@dataclass(frozen=True)
class GroupPhase:
    """Phase of a signal group read from its integral: ``x`` runs 0 (first point) to 1 (last point)."""

    x: float
    phase_deg: float
    sd_deg: float
    """Standard deviation of ``phase_deg`` from the noise, plus a floor for line-shape bias."""


#: Floor of each group's phase uncertainty: overlap with the tails of neighbouring groups and
#: line-shape imperfections leave a degree or two even in noise-free spectra (measured on the
#: shared recordings' clean spectra: group phases scatter by 1-2 deg about the fitted line).
GROUP_PHASE_FLOOR_DEG = 1.5


def group_phases(spectrum: Spectrum, groups: Sequence[SignalGroup], *, edge_fraction: float = 0.15) -> list[GroupPhase]:
    """Phase of each signal group from the angle of its baseline-corrected complex integral.

    The integral of an absorptive line is real and positive, whatever its shape;
    the integral of its dispersion over a window symmetric about the line is zero
    (the dispersion is odd about the line). So over a window centred on a group's
    magnitude-weighted centre and many line widths wide, the complex integral's
    angle is the phase error there, free of the multiplet's own structure, and
    without a 180 deg ambiguity. A complex straight baseline through the means of
    the window's two end stretches (``edge_fraction`` of it each) takes out the
    background and the far tails of other groups; the variance of the angle
    follows from the noise of the integral and of that baseline.
    """
    data = spectrum.data
    n = data.size
    sigma = spectrum.channel_noise
    mag = np.abs(data)
    out: list[GroupPhase] = []
    for g in groups:
        seg_mag = mag[g.start : g.stop + 1]
        weight = np.clip(seg_mag - 3.0 * sigma, 0.0, None)
        if weight.sum() <= 0:
            continue
        centre = g.start + float(np.dot(weight, np.arange(seg_mag.size)) / weight.sum())
        half = int(min(centre - g.start, g.stop - centre))
        if half < 8:
            continue
        c = int(round(centre))
        lo, hi = c - half, c + half
        seg = data[lo : hi + 1]
        m = seg.size
        edge = max(2, int(edge_fraction * m))
        left, right = seg[:edge].mean(), seg[-edge:].mean()
        # Integral of the straight baseline through the two end means: their average times m.
        z = seg.sum() - m * 0.5 * (left + right)
        if abs(z) <= 0:
            continue
        var = sigma**2 * (m + m * m / (2.0 * edge))
        sd = np.degrees(np.sqrt(var) / abs(z))
        if sd > 30.0:
            continue
        out.append(GroupPhase(x=centre / n, phase_deg=float(np.degrees(np.angle(z))),
                              sd_deg=float(np.hypot(sd, GROUP_PHASE_FLOOR_DEG))))
    return out


def _fit_group_line(phases: Sequence[GroupPhase], *, fit_p1: bool, max_p1_deg: float, p1_sd_deg: float,
                    p1_centre_deg: float = 0.0, tukey_c: float = 4.685) -> tuple[float, float, float]:
    """(p0 at x = 0, p1, robust spread) of the weighted circular line through the group phases.

    Inverse-variance weights, a Gaussian prior of ``p1_sd_deg`` on ``p1`` about
    ``p1_centre_deg`` within ``|p1| <= max_p1_deg``, and Tukey's biweight on the
    standardised residuals so that a group biased by overlap cannot drag the line.
    Without ``fit_p1``, ``p1`` is held at the prior's centre.
    """
    x = np.array([p.x for p in phases])
    phi = np.radians([p.phase_deg for p in phases])
    w = 1.0 / np.radians([p.sd_deg for p in phases]) ** 2
    prior = 1.0 / np.radians(p1_sd_deg) ** 2
    centre = np.radians(p1_centre_deg)
    if not fit_p1 or np.ptp(x) < 1e-3:
        p1 = float(centre)
        z = np.sum(w * np.exp(1j * (phi - p1 * x)))
        p0 = float(np.angle(z))
        grid = None
    else:
        grid = np.radians(np.arange(-max_p1_deg, max_p1_deg + 0.25, 0.5))
        # Coarse search: the p1 whose rotation best lines the phases up (weighted resultant),
        # the prior's log-density added in the same units.
        resultant = np.abs(np.exp(-1j * np.outer(grid, x)) @ (w * np.exp(1j * phi)))
        p1 = float(grid[int(np.argmax(resultant - 0.5 * prior * (grid - centre) ** 2))])
        p0 = float(np.angle(np.sum(w * np.exp(1j * (phi - p1 * x)))))
    sd = 1.0 / np.sqrt(w)
    for _ in range(30):
        r = np.angle(np.exp(1j * (phi - p0 - p1 * x)))
        u = r / (tukey_c * sd)
        wt = w * np.where(np.abs(u) < 1.0, (1 - u**2) ** 2, 0.0)
        if np.count_nonzero(wt) == 0:
            break
        if grid is None:
            new0, new1 = p0 + float(np.sum(wt * r) / wt.sum()), p1
        else:
            # Normal equations of the weighted fit plus the prior on p1.
            a = np.array([[wt.sum(), np.dot(wt, x)], [np.dot(wt, x), np.dot(wt, x * x) + prior]])
            b = np.array([np.dot(wt, r + p0 + p1 * x), np.dot(wt, x * (r + p0 + p1 * x)) + prior * centre])
            try:
                new0, new1 = np.linalg.solve(a, b)
            except np.linalg.LinAlgError:
                break
            new1 = float(np.clip(new1, -np.radians(max_p1_deg), np.radians(max_p1_deg)))
        done = abs(new0 - p0) < 1e-7 and abs(new1 - p1) < 1e-7
        p0, p1 = float(new0), float(new1)
        if done:
            break
    r = np.degrees(np.angle(np.exp(1j * (phi - p0 - p1 * x))))
    spread = float(1.4826 * np.median(np.abs(r))) if r.size else 0.0
    return float(np.degrees(p0)), float(np.degrees(p1)), spread


def auto_phase(
    spectrum: Spectrum,
    *,
    exclude_ppm: Sequence[tuple[float, float]] = (),
    p1_range_deg: float = 180.0,
    max_p1_deg: float = 120.0,
    p1_scale_deg: float = 60.0,
    p1_prior_weight: float = 0.002,
    p1_centre_deg: float = 0.0,
    prior_full_snr: float | None = None,
    p1_centre_name: str = "the shared",
    min_groups_for_p1: int = 3,
    use_group_integrals: bool = True,
    max_peaks: int = 40,
    min_snr: float = 14.0,
    reach_linewidths: float = 40.0,
    max_reach_hz: float = 80.0,
    refine_p0_deg: float = 30.0,
    refine_p1_deg: float = 40.0,
    baseline_edge_hz: float = 6.0,
    signal_floor_snr: float = 4.0,
    signal_smoothing_hz: float = 2.0,
    iterations: int = 4,
) -> tuple[Spectrum, PhaseCorrection]:
    """Find and remove the zero- and first-order phase error of ``spectrum``.

    The first-order error that remains once the digital filter's delay has been
    removed comes from the few microseconds between the effective start of
    evolution and the first sampled point: tens of degrees across the width, not
    hundreds (the shared recordings' instrument corrections lie within 60 deg).
    So ``p1`` is bounded by ``max_p1_deg`` and gently pulled toward zero by a
    quadratic prior of scale ``p1_scale_deg``; and when fewer than
    ``min_groups_for_p1`` independent signal groups survive (a weak spectrum with
    one or two lines) only the zero-order phase is fitted, because two groups
    fix a line exactly but leave every noise error in its slope.

    Parameters
    ----------
    spectrum : Spectrum
        Complex spectrum straight from the Fourier transform.
    exclude_ppm : sequence of (float, float)
        Ranges left out of the phase reading (e.g. a presaturated water line and
        the lines it distorts).
    p1_range_deg : float
        Largest first-order error searched by the first (peak-phase) estimate,
        degrees across the spectral width (capped by ``max_p1_deg``).
    max_p1_deg : float
        Largest first-order correction accepted, degrees across the spectral width.
    p1_scale_deg, p1_prior_weight : float
        Scale (deg) and weight (per unit of group weight) of the prior on ``p1``.
    p1_centre_deg : float
        Centre of that prior, and the first-order phase used when too few groups
        survive to fit one. 0 by default; :func:`nmrcheck.processing.process` passes what the
        acquisition's timing leaves when the file tells (:mod:`nmrcheck.processing.timing`, with a
        tighter prior); recordings acquired with the same parameters share their first-order phase (it is a matter of timing, not
        of the sample), so a plate passes the value its strong wells agree on
        (:mod:`nmrcheck.processing.shared_phase`) with a tighter prior.
    p1_centre_name : str
        How the method string names the prior's centre ("the shared" for a plate's value).
    prior_full_snr : float, optional
        With it, the prior keeps its weight while the tallest signal group stands at most this many
        noise standard deviations high, and fades as ``(prior_full_snr / height)**2`` above: the
        positivity objective is scaled the same at every SNR, while the data's own precision on ``p1``
        grows with the signal, so a strong spectrum is left to its data (None: always the full weight).
    min_groups_for_p1 : int
        Fewest signal groups with which ``p1`` is fitted at all.
    max_peaks : int
        Peaks read by the first estimate.
    min_snr : float
        Smallest peak height (and, for signal groups, prominence) of the
        magnitude, in noise standard deviations of one quadrature channel. At
        microgram signal it decides how many groups pin the first-order phase: with
        20, spectra at SNR 30 kept one to three groups, and their p1 either wandered
        or was held at zero. Measured on the shared recordings' noisy copies
        (bench/bench_microgram.py): at SNR 30, 40, 41, 45, 46 and 43-45 of 54 within
        5 deg for 20, 16, 14, 12 and 10; at SNR 100, 42-44 of 51 within 3 deg for all
        of them; clean spectra 18/18 within 3 deg down to 12 (one lost at 10, where
        artefacts of very strong lines start to count as groups). 14 is the middle of
        the good stretch.
    reach_linewidths, max_reach_hz : float
        Extent of a signal group beyond each line (see :func:`signal_groups`).
    refine_p0_deg, refine_p1_deg : float
        Largest change per refinement pass of the phase at the strongest group
        and of the first-order phase, degrees.
    baseline_edge_hz : float
        Width of the window at each end of a signal group whose mean sets the
        group's straight baseline, Hz. The baseline's noise shifts every trial
        rotation's energy alike, so at microgram signal it is what moves the
        optimum: 6 Hz (measured against 3, 8 and 10 Hz on the shared recordings'
        noisy copies, bench/bench_microgram.py) halves that noise against 3 Hz
        and leaves clean spectra as they were.
    signal_floor_snr, signal_smoothing_hz : float
        Points of a signal group whose magnitude, averaged over ``signal_smoothing_hz``,
        stays under ``signal_floor_snr`` noise standard deviations are left out of the
        positivity refinement: in real spectra the far tails there carry more baseline
        imperfection and noise than phase information. Measured on the shared recordings'
        noisy copies (bench/bench_microgram.py): at SNR 30, 35 of 54 within 5 deg without,
        40-45 with a floor of 4-6 sigma over 1-4 Hz; at SNR 100, 40 of 51 within 3 deg
        without, 40-42 with; clean spectra unchanged. On synthetic pure-Lorentzian spectra,
        whose far tails are exact, the floor costs precision instead (median error at SNR
        100 1.4 deg without, 2.0 with 4 sigma, 2.2 with 5), hence the lower end. 0 keeps
        every point.
    iterations : int
        Largest number of refinement passes (they stop once the change is below
        0.1 deg); 0 keeps the peak-phase estimate.

    Returns
    -------
    (Spectrum, PhaseCorrection)
        The phased spectrum and the correction applied (p0 at the first point).
        With no usable peak the spectrum is returned unchanged and the
        correction's method says so.
    """
    if not p1_range_deg > 0:
        raise ParameterError(f"p1_range_deg: must be positive, got {p1_range_deg!r}")
    if not (0 <= max_p1_deg <= 720):
        raise ParameterError(f"max_p1_deg: must be between 0 and 720 deg, got {max_p1_deg!r}")
    if not (p1_scale_deg > 0 and p1_prior_weight >= 0):
        raise ParameterError(f"p1_scale_deg, p1_prior_weight: need a positive scale and a weight >= 0, got {p1_scale_deg!r}, {p1_prior_weight!r}")
    if not (np.isfinite(p1_centre_deg) and abs(p1_centre_deg) <= max_p1_deg):
        raise ParameterError(f"p1_centre_deg: must be a finite angle within max_p1_deg ({max_p1_deg:g} deg), got {p1_centre_deg!r}")
    if prior_full_snr is not None and not prior_full_snr > 0:
        raise ParameterError(f"prior_full_snr: must be positive, got {prior_full_snr!r}")
    if not (isinstance(min_groups_for_p1, (int, np.integer)) and min_groups_for_p1 >= 2):
        raise ParameterError(f"min_groups_for_p1: must be a whole number >= 2, got {min_groups_for_p1!r}")
    if not (isinstance(max_peaks, (int, np.integer)) and max_peaks >= 1):
        raise ParameterError(f"max_peaks: must be a whole number >= 1, got {max_peaks!r}")
    if not min_snr > 0:
        raise ParameterError(f"min_snr: must be positive, got {min_snr!r}")
    if not (0 < refine_p0_deg <= 90 and 0 < refine_p1_deg <= 180):
        raise ParameterError(
            f"refine_p0_deg, refine_p1_deg: need 0 < refine_p0_deg <= 90 and 0 < refine_p1_deg <= 180, "
            f"got {refine_p0_deg!r}, {refine_p1_deg!r}"
        )
    if not baseline_edge_hz > 0:
        raise ParameterError(f"baseline_edge_hz: must be positive, got {baseline_edge_hz!r}")
    if not (signal_floor_snr >= 0 and signal_smoothing_hz > 0):
        raise ParameterError(f"signal_floor_snr, signal_smoothing_hz: need a floor >= 0 and a positive width, "
                             f"got {signal_floor_snr!r}, {signal_smoothing_hz!r}")
    if not (isinstance(iterations, (int, np.integer)) and iterations >= 0):
        raise ParameterError(f"iterations: must be a whole number >= 0, got {iterations!r}")
    exclude = _check_ranges(exclude_ppm)
    peaks = peak_phases(spectrum, exclude_ppm=exclude, max_peaks=max_peaks, min_snr=min_snr)
    if not peaks:
        # Weak spectra: accept peaks down to 6 sigma (complex Gaussian noise exceeds
        # that at about one point in 10**8).
        peaks = peak_phases(spectrum, exclude_ppm=exclude, max_peaks=max_peaks, min_snr=min(6.0, min_snr))
    if not peaks:
        return spectrum, PhaseCorrection(0.0, 0.0, spectrum.first_ppm, "none (no peak above noise)", 0, None)
    groups = signal_groups(
        spectrum, exclude_ppm=exclude, min_snr=min_snr, reach_linewidths=reach_linewidths, max_reach_hz=max_reach_hz
    )
    if not groups and min_snr > 6.0:
        groups = signal_groups(
            spectrum, exclude_ppm=exclude, min_snr=6.0, reach_linewidths=reach_linewidths, max_reach_hz=max_reach_hz
        )
    phases = group_phases(spectrum, groups) if use_group_integrals else []
    fit_p1 = len(phases) >= min_groups_for_p1
    spread = None
    if phases:
        p0, p1, spread = _fit_group_line(phases, fit_p1=fit_p1, max_p1_deg=max_p1_deg, p1_sd_deg=p1_scale_deg,
                                         p1_centre_deg=p1_centre_deg)
        method = "group integrals" if fit_p1 else "group integrals, zero order only (too few signal groups for a first-order term)"
        if p1_centre_deg:
            method += f"; first order {'drawn toward' if fit_p1 else 'held at'} {p1_centre_name} {p1_centre_deg:.1f} deg"
        used = len(phases)
    else:
        fit_p1 = len(peaks) >= min_groups_for_p1
        if fit_p1:
            p0, p1 = _fit_line(peaks, min(p1_range_deg, max_p1_deg) if max_p1_deg > 0 else 0.5)
            p1 = float(np.clip(p1, -max_p1_deg, max_p1_deg))
        else:
            z = np.array([pk.height * np.exp(1j * np.radians(pk.phase_deg - p1_centre_deg * pk.x)) for pk in peaks])
            p0, p1 = float(np.degrees(np.angle(z.sum()))), float(p1_centre_deg)
        method, used = "peak-phase regression" if fit_p1 else "peak phase (zero order only)", len(peaks)
    if groups and prior_full_snr is not None:
        tallest = max(g.height for g in groups) / spectrum.channel_noise
        p1_prior_weight = p1_prior_weight * min(1.0, (prior_full_snr / tallest) ** 2)
    if groups and iterations:
        # Pivot at the strongest group, where p0 and p1 are least correlated.
        pivot_x = max(groups, key=lambda g: g.height).x
        edge = max(2, int(round(baseline_edge_hz / spectrum.hz_per_point)))
        floor = signal_floor_snr * spectrum.channel_noise
        smooth = max(1, int(round(signal_smoothing_hz / spectrum.hz_per_point)))
        x = np.arange(spectrum.size) / spectrum.size
        for _ in range(iterations):
            rotated = spectrum.data * np.exp(-1j * np.radians(p0 + p1 * x))
            curves = _negative_energy_curves(rotated, groups, edge, refine_p0_deg, signal_floor=floor, smooth_points=smooth)
            # Square-root height weights: the strong groups lead (as an operator
            # phases on the big peaks), the weak ones still vote.
            d0, d1 = _best_rotation(
                curves, groups, pivot_x=pivot_x, p0_range_deg=refine_p0_deg,
                p1_range_deg=refine_p1_deg if fit_p1 else 0.0, weight_power=0.5,
                p1_now_deg=p1, max_p1_deg=max_p1_deg, p1_scale_deg=p1_scale_deg, prior_weight=p1_prior_weight,
                p1_centre_deg=p1_centre_deg,
            )
            p0, p1 = p0 + d0 - d1 * pivot_x, p1 + d1
            if abs(d0) < 0.1 and abs(d1) < 0.2:
                break
        rotated = spectrum.data * np.exp(-1j * np.radians(p0 + p1 * x))
        spread = _spread(_negative_energy_curves(rotated, groups, edge, refine_p0_deg, signal_floor=floor, smooth_points=smooth))
        method += ", refined by group positivity"
    p0 = _wrap(p0)
    logger.debug("auto_phase: p0=%.2f p1=%.2f deg from %d signal groups or peaks (%s)", p0, p1, used, method)
    return apply_phase(spectrum, p0_deg=p0, p1_deg=p1), PhaseCorrection(p0, p1, spectrum.first_ppm, method, used, spread)
