"""Set the ppm axis: TMS or DSS at 0 ppm when present, otherwise the solvent's residual signal."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from nmrcheck.processing.results import Reference
from nmrcheck.processing.solvents import AQUEOUS, SolventSignal, known_solvents, normalise_solvent, solvent_signals
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = ["SolventSeen", "find_peak", "find_water_singlet", "reference_axis", "solvent_from_spectrum"]

#: A singlet reference line has no partner of comparable height within the range of
#: common 1H-1H couplings (up to about 18 Hz geminal/trans; common practice).
SINGLET_ISOLATION_HZ = 18.0
#: Extra half-height width allowed for the centre line of a residual multiplet (H-D couplings
#: of about 2 Hz), Hz.
MULTIPLET_EXTRA_WIDTH_HZ = 8.0
#: How close to its table value a residual line that is not isolated is accepted, ppm.
CLOSE_PPM = 0.03


def half_height_width_hz(spectrum: Spectrum, i: int) -> float:
    """Full width at half height of the line whose top is point ``i``, Hz (searched up to 30 Hz each way)."""
    y = spectrum.data.real
    half = y[i] / 2.0
    limit = int(30.0 / spectrum.hz_per_point) + 2
    # Points from the top outward on each side; each side stops at its first point at or under half
    # height, at the end of the spectrum, or ``limit`` points out.
    left = y[max(0, i - limit) : i + 1][::-1] <= half
    right = y[i : min(y.size, i + limit + 1)] <= half
    out_left = int(np.argmax(left)) if left.any() else left.size - 1
    out_right = int(np.argmax(right)) if right.any() else right.size - 1
    return (out_left + out_right) * spectrum.hz_per_point


def _is_isolated(spectrum: Spectrum, i: int, distance_hz: float) -> bool:
    """No local maximum above a quarter of line ``i``'s height within ``distance_hz`` (beyond its own core)."""
    y = spectrum.data.real
    reach = int(round(distance_hz / spectrum.hz_per_point))
    core = max(2, int(round(1.5 / spectrum.hz_per_point)))
    lo, hi = max(1, i - reach), min(y.size - 1, i + reach + 1)
    seg = y[lo - 1 : hi + 1]
    peaks = np.flatnonzero((seg[1:-1] >= seg[:-2]) & (seg[1:-1] > seg[2:])) + lo
    others = peaks[np.abs(peaks - i) > core]
    # Noise maxima are not partners: only neighbours clear of the noise count.
    return not np.any(y[others] > max(0.25 * y[i], 5.0 * spectrum.real_noise))


#: Couplings between lines of one analyte multiplet that a residual singlet is told from, Hz
#: (3J(H,H) and 4J(H,H) of common practice: about 1-18 Hz).
MULTIPLET_SPACING_HZ = (1.0, 18.0)


def is_multiplet_line(spectrum: Spectrum, i: int, *, ratio: float = 0.25) -> bool:
    """True when line ``i`` is the centre or an outer line of an evenly spaced multiplet.

    The centre of a multiplet has partners at the same distance either side, of about
    equal height to each other; an outer line has partners at d and 2d on one side, the
    one at d at least about as tall as itself.
    Partners are local maxima above ``ratio`` of line ``i`` (and clear of the noise),
    1-18 Hz away, positions agreeing within 15 % (at least a point or 0.4 Hz). A residual singlet
    that happens to sit among an analyte's lines shows neither pattern unless it
    coincides with one; then its line cannot be told from the analyte's anyway.
    """
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    lo_hz, hi_hz = MULTIPLET_SPACING_HZ
    reach = int(round(2 * hi_hz / hz)) + 2
    a, b = max(1, i - reach), min(y.size - 1, i + reach + 1)
    seg = y[a - 1 : b + 1]
    peaks = np.flatnonzero((seg[1:-1] >= seg[:-2]) & (seg[1:-1] > seg[2:])) + a
    floor = max(ratio * y[i], 5.0 * spectrum.real_noise)
    peaks = peaks[(y[peaks] > floor) & (np.abs(peaks - i) * hz >= lo_hz)]
    if peaks.size < 2:
        return False
    d = (peaks - i) * hz
    for k, dk in enumerate(d):
        if abs(dk) > hi_hz:
            continue
        # Small further couplings split lines by a hertz or so: positions agree within 15 %.
        tol = max(hz, 0.4, 0.15 * abs(dk))
        # Centre: a partner at -dk of similar height.
        mirror = np.flatnonzero(np.abs(d + dk) <= tol)
        if any(0.5 <= y[peaks[m]] / y[peaks[k]] <= 2.0 for m in mirror):
            return True
        # Outer line: the next line inward (at dk) no lower than this one, as in any binomial
        # pattern, and another at 2*dk on the same side.
        if y[peaks[k]] >= 0.8 * y[i] and np.any(np.abs(d - 2 * dk) <= tol):
            return True
    return False


def _vertex(spectrum: Spectrum, i: int) -> float:
    frac = 0.0
    if 0 < i < spectrum.size - 1:
        a, b, c = spectrum.data.real[i - 1 : i + 2]
        den = a - 2 * b + c
        frac = 0.5 * (a - c) / den if den < 0 else 0.0
    return float(spectrum.first_ppm - (i + frac) * spectrum.step_ppm)

#: One-bond 13C-1H couplings of reference and solvent lines, Hz: 118 (TMS, DSS methyl) to 209
#: (CHCl3); satellites sit at half of that either side, 0.55 % of the line each (common practice).
SATELLITE_HALF_J_HZ = (50.0, 115.0)
#: H-D couplings of CHD2 groups in the usual deuterated solvents, Hz (1.6-2.6; common practice).
HD_COUPLING_HZ = (1.6, 2.7)


def is_carbon_satellite(spectrum: Spectrum, i: int, *, ratio: float = 30.0) -> bool:
    """True when a line ``ratio`` or more times taller stands at a 13C-satellite distance from line ``i``.

    A reference line's own satellites are the nearest lines to its table position
    once the axis is off by about half a one-bond coupling; they must never be taken
    for the line itself.
    """
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    lo_pts, hi_pts = int(SATELLITE_HALF_J_HZ[0] / hz), int(SATELLITE_HALF_J_HZ[1] / hz) + 1
    for sign in (-1, 1):
        a, b = sorted((i + sign * lo_pts, i + sign * hi_pts))
        a, b = max(0, a), min(y.size, b + 1)
        if b > a and y[a:b].max() >= ratio * y[i]:
            return True
    return False


def has_carbon_satellites(spectrum: Spectrum, i: int) -> bool:
    """True when line ``i`` shows its 13C satellite pair: two lines symmetric about it at half a
    one-bond coupling (50-115 Hz), each 0.2-1.2 % of it and clear of the noise (common practice)."""
    y = spectrum.data.real
    hz = spectrum.hz_per_point
    floor = 3.0 * spectrum.real_noise
    core = max(1, int(round(1.5 / hz)))
    for d_hz in np.arange(SATELLITE_HALF_J_HZ[0], SATELLITE_HALF_J_HZ[1] + 1e-9, 0.5):
        d = int(round(d_hz / hz))
        lo, hi = i - d - core, i + d + core + 1
        if lo < 0 or hi > y.size:
            continue
        left = float(y[i - d - core : i - d + core + 1].max())
        right = float(y[i + d - core : i + d + core + 1].max())
        if min(left, right) <= floor:
            continue
        a, b = left / y[i], right / y[i]
        if 0.002 <= a <= 0.012 and 0.002 <= b <= 0.012 and 0.5 <= a / b <= 2.0:
            return True
    return False


def _quintet_sides(spectrum: Spectrum, i: int, j_hz: float) -> np.ndarray:
    """Heights at -2J, -1.5J, -J, -J/2, +J/2, +J, +1.5J, +2J from line ``i``, over its own height."""
    y = spectrum.data.real
    d = j_hz / spectrum.hz_per_point
    pts = i + d * np.array([-2.0, -1.5, -1.0, -0.5, 0.5, 1.0, 1.5, 2.0])
    return np.interp(pts, np.arange(y.size, dtype=float), y) / y[i]


def quintet_ratios(spectrum: Spectrum, i: int) -> tuple[float, float, float]:
    """(H-D coupling Hz, mean height at +-J over the centre, at +-2J over the centre), best J.

    The J searched is the one whose four outer positions hold the most intensity.
    """
    y = spectrum.data.real
    grid = np.arange(HD_COUPLING_HZ[0], HD_COUPLING_HZ[1] + 1e-9, 0.05)
    best = (float(grid[0]), 0.0, 0.0)
    if y[i] <= 0:
        return best
    score_best = -np.inf
    for j in grid:
        d = 2 * j / spectrum.hz_per_point
        if i - d < 0 or i + d > y.size - 1:
            continue
        far_l, _, near_l, _, _, near_r, _, far_r = _quintet_sides(spectrum, i, j)
        score = far_l + near_l + near_r + far_r
        if score > score_best:
            score_best = score
            best = (float(j), float((near_l + near_r) / 2), float((far_l + far_r) / 2))
    return best


def looks_like_quintet(spectrum: Spectrum, i: int, *, resolved_only: bool = False) -> bool:
    """True when line ``i`` is the centre of a 1:2:3:2:1 CHD2 quintet (or of a quintet too broad to resolve).

    A resolved quintet has its first pair of lines at about 2/3 of the centre and its
    second pair at about 1/3; a singlet at a coupling's distance has almost nothing.
    Unresolved quintets (broad lines) pass when both pairs stay high: the width test
    of the caller then decides. With ``resolved_only`` (a line tenths of a ppm from its
    table value, where position says little) only a resolved quintet whose lines pair
    up symmetrically about the centre passes, with a dip between neighbouring lines: a
    broad line falls off like 1:2:3:2:1 too (a Lorentzian 6 Hz wide stands at 0.65 and
    0.32 of its top 2.2 and 4.4 Hz out), and the top of an analyte multiplet is flat.
    """
    j, first, second = quintet_ratios(spectrum, i)
    far_l, dip2_l, near_l, dip1_l, dip1_r, near_r, dip2_r, far_r = _quintet_sides(spectrum, i, j)
    # The centre line is the quintet's tallest: an outer or inner line has a taller partner a
    # coupling away on one side (and passes the mean-height tests below on that side alone).
    if max(near_l, near_r, far_l, far_r) > 1.05:
        return False
    resolved = 0.4 <= first <= 0.9 and 0.12 <= second <= 0.6 and second < first
    if resolved_only:
        if not resolved:
            return False
        symmetric = (min(near_l, near_r, far_l, far_r) > 0
                     and max(near_l, near_r) <= 1.5 * min(near_l, near_r)
                     and max(far_l, far_r) <= 1.5 * min(far_l, far_r))
        separated = max(dip1_l, dip1_r) < min(near_l, near_r) and max(dip2_l, dip2_r) < min(far_l, far_r)
        return bool(symmetric and separated)
    unresolved = first > 0.9 and second > 0.5
    return resolved or unresolved



def find_peak(
    spectrum: Spectrum,
    centre_ppm: float,
    *,
    window_ppm: float,
    min_snr: float = 10.0,
    max_width_hz: float | None = None,
    isolated_hz: float | None = None,
    pattern: str = "s",
    unique: bool = False,
    far: bool = False,
    not_in_multiplet: bool = False,
) -> float | None:
    """Shift of the reference line near ``centre_ppm``, or None.

    Windows of 0.03, 0.1 and then ``window_ppm`` are searched in turn; in each,
    local maxima above ``min_snr`` x noise and, when ``max_width_hz`` is given,
    no wider than that at half height, are candidates, and the one nearest to
    ``centre_ppm`` (ties to the taller) wins. Searching narrow first keeps an
    analyte multiplet beside the solvent line from being taken for it. With
    ``isolated_hz``, a candidate must also be a singlet: no other line of over a
    quarter of its height within that distance (a line of a multiplet has partners
    at the coupling constant). Candidates that look like a 13C satellite of a much
    taller line are never taken (:func:`is_carbon_satellite`), and with
    ``pattern='quint'`` a candidate must show the 1:2:3:2:1 lines of a CHD2 group
    (:func:`quintet_ratios`). With ``unique``, a window holding more than one
    candidate gives None (the choice between them would be a guess). With ``far``
    (a search tenths of a ppm from the table value, where position says little) a
    singlet must show its 13C satellites and a quintet must be resolved and symmetric.
    With ``not_in_multiplet`` a candidate that is the centre or an outer line of an evenly
    spaced multiplet (:func:`is_multiplet_line`) is not taken.
    """
    y = spectrum.data.real
    floor = min_snr * spectrum.real_noise
    for w in sorted({min(0.03, window_ppm), min(0.1, window_ppm), window_ppm}):
        sl = spectrum.slice_of(centre_ppm + w, centre_ppm - w)
        seg = y[sl]
        if seg.size < 3:
            continue
        idx = [sl.start + k for k in range(1, seg.size - 1) if seg[k] >= seg[k - 1] and seg[k] > seg[k + 1] and seg[k] > floor]
        if max_width_hz is not None:
            idx = [i for i in idx if half_height_width_hz(spectrum, i) <= max_width_hz]
        if isolated_hz is not None:
            idx = [i for i in idx if _is_isolated(spectrum, i, isolated_hz)]
        idx = [i for i in idx if not is_carbon_satellite(spectrum, i)]
        if not_in_multiplet:
            idx = [i for i in idx if not is_multiplet_line(spectrum, i)]
        if pattern == "quint":
            idx = [i for i in idx if looks_like_quintet(spectrum, i, resolved_only=far)]
        elif far:
            idx = [i for i in idx if has_carbon_satellites(spectrum, i)]
        if not idx:
            continue
        tallest = max(y[i] for i in idx)
        # Lines under a tenth of the tallest candidate are noise spikes or satellites.
        idx = [i for i in idx if y[i] >= 0.1 * tallest]
        if unique and len(idx) > 1:
            return None
        best = min(idx, key=lambda i: (abs(_vertex(spectrum, i) - centre_ppm), -y[i]))
        return _vertex(spectrum, best)
    return None


def _sharp_hz(spectrum: Spectrum) -> float:
    """Widest half-height width of a sharp singlet after the transform's line broadening, Hz."""
    lb = float(next((st.params.get("lb_hz", 0.0) for st in spectrum.history if st.name == "fourier_transform"), 0.0))
    return 2.5 + 2.0 * max(lb, 0.0)


@dataclass(frozen=True)
class SolventSeen:
    """A solvent recognised in the spectrum by the pattern of its residual lines."""

    solvent: str
    line: str
    """The residual line that was seen (e.g. 'DMSO-d5')."""
    found_ppm: float
    pattern: str
    """How it was recognised, in words."""


#: Residual patterns that name their solvent without help from the file: a resolved CHD2
#: quintet (1:2:3:2:1, J(H,D) about 2 Hz), a singlet carrying its 13C satellites, or a CHD2
#: line broadened past resolving whose solvent's water line stands beside it.
_SELF_EVIDENT = {"quint": "resolved 1:2:3:2:1 quintet", "s": "singlet with its 13C satellites"}
_BROAD_QUINTET = "broadened quintet, with the solvent's water line"
#: Water in organic solvents: a singlet (exchange-broadened, up to about 10 Hz wide) that moves
#: with temperature and concentration by about 0.15 ppm about its table position (Gottlieb 1997,
#: from memory; common practice). A line of a multiplet has partners at the coupling constant
#: (within 8 Hz for the common vicinal couplings); water has none.
WATER_WINDOW_PPM = 0.15
WATER_MAX_WIDTH_HZ = 10.0
WATER_ISOLATION_HZ = 8.0


def find_water_singlet(spectrum: Spectrum, ppm: float, *, min_snr: float = 10.0) -> float | None:
    """Shift of a water singlet within :data:`WATER_WINDOW_PPM` of ``ppm``, or None when no singlet stands there."""
    return find_peak(spectrum, ppm, window_ppm=WATER_WINDOW_PPM, min_snr=min_snr,
                     max_width_hz=WATER_MAX_WIDTH_HZ, isolated_hz=WATER_ISOLATION_HZ)


def _any_line(spectrum: Spectrum, ppm: float, *, window_ppm: float, min_snr: float) -> bool:
    """Some local maximum over ``min_snr`` x noise within ``window_ppm`` of ``ppm``."""
    y = spectrum.data.real
    sl = spectrum.slice_of(ppm + window_ppm, ppm - window_ppm)
    seg = y[sl]
    floor = min_snr * spectrum.real_noise
    return bool(seg.size >= 3 and np.any((seg[1:-1] >= seg[:-2]) & (seg[1:-1] > seg[2:]) & (seg[1:-1] > floor)))


def _residual_seen(spectrum: Spectrum, name: str, sig: SolventSignal, *, min_snr: float, sharp: float) -> tuple[float, str] | None:
    """(where, how) the residual line ``sig`` of solvent ``name`` shows its own pattern, or None."""
    singlet = sig.multiplicity == "s"
    width = sharp if singlet else sharp + MULTIPLET_EXTRA_WIDTH_HZ
    at = find_peak(spectrum, sig.ppm, window_ppm=CLOSE_PPM, min_snr=min_snr, max_width_hz=width,
                   isolated_hz=SINGLET_ISOLATION_HZ if singlet else None, pattern=sig.multiplicity, far=True)
    if at is not None:
        return at, _SELF_EVIDENT[sig.multiplicity]
    if singlet:
        return None
    at = find_peak(spectrum, sig.ppm, window_ppm=CLOSE_PPM, min_snr=min_snr, max_width_hz=width, pattern="quint")
    water = solvent_signals(name, kind="water")
    if at is None or not water:
        return None
    # The water singlet sits near where the table puts it on the axis the residual sets.
    if find_water_singlet(spectrum, water[0].ppm + (at - sig.ppm), min_snr=min_snr) is not None:
        return at, _BROAD_QUINTET
    return None


def solvent_from_spectrum(spectrum: Spectrum, *, besides: str | None = None, min_snr: float = 10.0) -> SolventSeen | None:
    """The one organic solvent whose residual lines the spectrum shows by their pattern, or None.

    For a file whose own solvent (``besides``) left no residual line (a solvent field left at
    the last sample's value is common). Nothing is guessed while any line stands where the
    file's residual should be: the file may be right. A solvent counts as seen when every
    residual line of its table shows its pattern within :data:`CLOSE_PPM` of the table value:
    a resolved, symmetric CHD2 quintet; a CHD2 line too broad to resolve together with the
    solvent's water line (hygroscopic solvents always hold some); a singlet with its 13C
    satellites. Solvents whose residual is a triplet or an unresolved multiplet are never
    guessed. When no solvent or more than one is seen, the answer is None: the caller keeps
    the spectrometer's axis.
    """
    if besides is not None and any(_any_line(spectrum, sig.ppm, window_ppm=CLOSE_PPM, min_snr=min_snr)
                                   for sig in solvent_signals(besides, kind="residual")):
        return None
    sharp = _sharp_hz(spectrum)
    seen: list[SolventSeen] = []
    for name in known_solvents():
        if name == besides or name in AQUEOUS:
            continue
        rows = solvent_signals(name, kind="residual")
        if not rows or any(sig.multiplicity not in _SELF_EVIDENT for sig in rows):
            continue
        found = [(sig, _residual_seen(spectrum, name, sig, min_snr=min_snr, sharp=sharp)) for sig in rows]
        if all(hit is not None for _, hit in found):
            sig, (at, how) = max(found, key=lambda f: f[0].protons)
            seen.append(SolventSeen(name, sig.name, at, how))
    return seen[0] if len(seen) == 1 else None


def reference_axis(
    spectrum: Spectrum,
    *,
    solvent: str | None = None,
    search_ppm: float = 0.3,
    prefer: str = "auto",
) -> tuple[Spectrum, Reference]:
    """Shift the axis so that the reference signal sits at its table position.

    Parameters
    ----------
    solvent
        Solvent name; defaults to the one recorded in the file.
    search_ppm
        How far from its table value the reference signal is looked for.
    prefer
        'auto' (TMS/DSS when a sharp singlet is found near 0 ppm, else the solvent
        residual), 'standard', 'solvent' or 'none'.
    """
    name = normalise_solvent(solvent or spectrum.solvent)
    if prefer == "none" or name is None:
        why = "none" if prefer == "none" else f"none (solvent {solvent or spectrum.solvent!r} unknown)"
        return spectrum, Reference("none", why, spectrum.first_ppm, None, "")
    sharp = _sharp_hz(spectrum)
    standard = None
    if prefer in ("auto", "standard"):
        for sig in solvent_signals(name, kind="reference"):
            at = find_peak(spectrum, sig.ppm, window_ppm=search_ppm, min_snr=20.0, max_width_hz=sharp,
                           isolated_hz=SINGLET_ISOLATION_HZ)
            if at is not None:
                standard = (sig.name, sig.name, sig.ppm, at, sig.source, sig.name)
                break
    residual = None
    if prefer in ("auto", "solvent"):
        for sig in sorted(solvent_signals(name, kind="residual"), key=lambda s: -s.ppm):
            singlet = sig.multiplicity == "s"
            label = f"{sig.name} in {name}"
            at = None
            # Nearest first: an isolated singlet very close to the table value, then any sharp
            # line that close (the residual inside an analyte multiplet is not isolated), then
            # isolated singlets further out (the spectrometer's own axis may be a few tenths off).
            # (window, isolated, smallest SNR, only candidate in the window)
            passes = ((CLOSE_PPM, True, 5.0, False), (CLOSE_PPM, False, 20.0, False),
                      (CLOSE_PPM, False, 5.0, True), (search_ppm, True, 5.0, False))
            for window, isolated, snr, unique in passes:
                if not singlet and not isolated:
                    continue
                # The centre line of a CHD2 quintet merges with its neighbours at half height.
                width = sharp if singlet else sharp + MULTIPLET_EXTRA_WIDTH_HZ
                # A line that is not isolated is taken when it stands well clear of the noise, or
                # when it is the only line that close: at low SNR an analyte line beside it is as
                # likely, and a weak residual (highly deuterated solvent) may be all there is.
                at = find_peak(spectrum, sig.ppm, window_ppm=window, min_snr=snr, max_width_hz=width,
                               isolated_hz=SINGLET_ISOLATION_HZ if (singlet and isolated) else None,
                               pattern=sig.multiplicity, unique=unique,
                               # Tenths of a ppm from its table value a singlet is the residual only
                               # when its 13C satellites say it is a C-H line of that size, and a
                               # CHD2 residual only when its quintet is resolved.
                               far=window > CLOSE_PPM,
                               # Beside analyte lines, a line of an analyte multiplet is not the residual.
                               not_in_multiplet=singlet and not isolated)
                if at is not None:
                    if singlet and not isolated:
                        label += " (beside analyte lines)"
                    break
            if at is not None:
                residual = ("solvent", label, sig.ppm, at, sig.source, sig.name)
                break
    found = standard or residual
    if standard and residual:
        # Both seen: they must agree on the axis. When they do not, a line near 0 ppm
        # was not the standard (grease, an analyte methyl); keep the one needing the
        # smaller correction of the spectrometer's own axis.
        # HDO moves with temperature and is distorted by presaturation: never let it
        # overrule DSS.
        # In an organic solvent the residual line is always there while a line near 0 ppm
        # may be grease or an analyte methyl: when the two disagree by more than the
        # tolerance of a reference (0.02 ppm), the residual sets the axis if it was found
        # close to its table value (where the spectrometer's own axis put it); one found
        # tenths of a ppm away is less certain than the standard.
        s_std, s_res = standard[2] - standard[3], residual[2] - residual[3]
        if name not in AQUEOUS and abs(s_std - s_res) > 0.02 and abs(s_res) <= CLOSE_PPM + 0.005:
            found = residual
    if found is None:
        return spectrum, Reference("none", f"none (no reference signal found for {name})", spectrum.first_ppm, None, "")
    kind, label, target, at, source, line = found
    shift = target - at
    step = ProcessingStep("reference", {"kind": kind, "ppm": target, "found_ppm": at})
    moved = spectrum.evolve(step, first_ppm=spectrum.first_ppm + shift)
    return moved, Reference(kind, label, target, at, source, line)
