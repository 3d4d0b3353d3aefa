"""One call from a recording to a processed, referenced, integrated spectrum with a proton count."""

from __future__ import annotations

import os
from dataclasses import asdict, dataclass, replace
from typing import Any

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.io import Fid, SpectrumFile, read_any
from nmrcheck.io.records import Acquisition
from nmrcheck.processing.baseline import correct_baseline
from nmrcheck.processing.count import count_protons, threshold_loss
from nmrcheck.processing.phase import apply_phase, auto_phase, channel_noise, signal_groups
from nmrcheck.processing.reference import half_height_width_hz, reference_axis, solvent_from_spectrum
from nmrcheck.processing.regions import find_regions
from nmrcheck.processing.results import PhaseCorrection, Processed, Reference
from nmrcheck.processing.shared_phase import SHARED_P1_PRIOR_WEIGHT, PhaseReading, acquisition_key
from nmrcheck.processing.solvents import AQUEOUS, normalise_solvent
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum
from nmrcheck.processing.suppression import suppression_foot, suppression_zone
from nmrcheck.processing.timing import TIMING_P1_FULL_SNR, TIMING_P1_PRIOR_WEIGHT, expected_first_order
from nmrcheck.processing.transform import fourier_transform, spectrum_from_file

__all__ = ["ProcessingOptions", "process", "phase_reading", "snr_of", "MAX_SIZE"]


#: Largest spectrum (points) an option may ask for: 1 M points resolve 0.01 Hz over 20 ppm at 600 MHz.
MAX_SIZE = 1 << 20
#: Manual phase bounds, degrees: any zero-order angle is reached within one turn either way; a
#: first-order correction beyond 100 turns is not a phase error but an uncorrected delay.
MAX_P0_DEG = 720.0
MAX_P1_DEG = 36000.0
#: Largest proton count an anchor may name (the largest natural products hold under 300 H).
MAX_ANCHOR_H = 5000


def _finite_within(value: Any, lo: float, hi: float) -> bool:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return False
    return bool(np.isfinite(v)) and lo <= v <= hi


@dataclass(frozen=True)
class ProcessingOptions:
    """Every choice processing makes, in physical units; stored with each result so it can be replayed."""

    lb_hz: float = 0.3
    size: int | None = None
    solvent: str | None = None
    """Overrides the solvent recorded in the file."""
    phase: tuple[float, float] | None = None
    """Manual (p0_deg, p1_deg) instead of automatic phasing."""
    rephase_processed: bool = False
    """Re-phase a spectrum read already processed (normally kept as the instrument left it)."""
    baseline: str = "fabc"
    baseline_smoothness_hz: float = 200.0
    """Shortest baseline undulation the baseline correction follows, Hz."""
    reference: str = "auto"
    threshold_snr: float = 6.0
    margin_hz: float = 8.0
    min_integral_sigma: float = 5.0
    """Smallest integral, in standard deviations of its own noise, that is counted."""
    merge_hz: float = 6.0
    anchor_h: int | None = None
    candidate_h_counts: tuple[int, ...] | None = None
    """Whole-proton totals the candidate formulas allow (visible H): the proton unit is then
    chosen among them (the plate manifest and ``check`` pass them)."""
    suppression_halfwidth_ppm: float = 0.6
    """Largest half-width left out around the carrier when the pulse program presaturates
    (the zone actually left out is measured on the spectrum)."""
    shared_p1: tuple[float, float] | None = None
    """(p1_deg, scale_deg): first-order phase shared by recordings acquired with the same
    parameters (a plate's strong wells, :mod:`nmrcheck.processing.shared_phase`), and how far
    automatic phasing may move from it. None: each spectrum is phased on its own."""

    def __post_init__(self) -> None:
        if not _finite_within(self.lb_hz, -5, 50):
            raise ParameterError(f"lb_hz: {self.lb_hz} Hz is not a number within -5..50 Hz")
        if self.size is not None and (
            not isinstance(self.size, (int, np.integer)) or isinstance(self.size, bool)
            or self.size < 256 or self.size > MAX_SIZE or self.size & (self.size - 1)
        ):
            raise ParameterError(f"size: {self.size} must be a power of two from 256 to {MAX_SIZE} points")
        if self.phase is not None:
            if len(self.phase) != 2 or not _finite_within(self.phase[0], -MAX_P0_DEG, MAX_P0_DEG) or not _finite_within(self.phase[1], -MAX_P1_DEG, MAX_P1_DEG):
                raise ParameterError(f"phase: {self.phase} must be two finite angles, p0 within +-{MAX_P0_DEG:g} deg and p1 within +-{MAX_P1_DEG:g} deg")
        if self.shared_p1 is not None and (
            len(self.shared_p1) != 2 or not _finite_within(self.shared_p1[0], -120.0, 120.0) or not _finite_within(self.shared_p1[1], 0.5, 180.0)
        ):
            raise ParameterError(f"shared_p1: {self.shared_p1} must be (p1 within +-120 deg, scale of 0.5-180 deg)")
        if self.anchor_h is not None and (
            not isinstance(self.anchor_h, (int, np.integer)) or isinstance(self.anchor_h, bool) or not 1 <= self.anchor_h <= MAX_ANCHOR_H
        ):
            raise ParameterError(f"anchor_h: {self.anchor_h} must be a whole number of protons from 1 to {MAX_ANCHOR_H}")
        for name in ("baseline_smoothness_hz", "threshold_snr", "margin_hz", "min_integral_sigma", "merge_hz", "suppression_halfwidth_ppm"):
            if not _finite_within(getattr(self, name), -1e6, 1e6):
                raise ParameterError(f"{name}: {getattr(self, name)} is not a finite number")
        if self.solvent is not None and normalise_solvent(self.solvent) is None:
            raise ParameterError(f"solvent: {self.solvent!r} is not in the solvent table")
        if self.threshold_snr <= 0:
            raise ParameterError(f"threshold_snr: must be positive, got {self.threshold_snr}")

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


def _suppression_ranges(spectrum: Spectrum, options: ProcessingOptions) -> list[tuple[float, float, float]]:
    """(low ppm, high ppm, centre ppm) of each zone spoiled by solvent suppression: around the carrier
    when the pulse program presaturates.

    The zone's width is measured on the spectrum (:func:`suppression_zone`), so that
    lines beside a well-suppressed line are counted; ``suppression_halfwidth_ppm``
    caps it.
    """
    acq = spectrum.acquisition
    prog = (acq.pulse_program or "").lower()
    solvent = normalise_solvent(options.solvent or acq.solvent)
    presat = "pr" in prog or "wg" in prog or "es" in prog.replace("noes", "")
    if not presat and solvent not in AQUEOUS:
        return []
    if presat:
        # The carrier sits on the suppressed line; its ppm on this axis:
        centre = spectrum.first_ppm - spectrum.step_ppm * spectrum.size / 2.0
    else:
        centre = 4.79
    cap = options.suppression_halfwidth_ppm
    lo, hi = suppression_zone(spectrum, centre, min_half_ppm=min(0.04, cap), max_half_ppm=cap)
    return [(lo, hi, centre)]


#: Half-width of the part of a suppression zone that is left out of integration, ppm:
#: presaturation bleaches some tens of hertz about the solvent line (common practice).
SUPPRESSION_CORE_PPM = 0.1


def _on_the_foot(spectrum: Spectrum, regions, feet: list[tuple[float, float]]):
    """Regions on the foot of a suppressed line, integrated above a straight line through their ends.

    The foot varies slowly over a region's width, so a local straight baseline takes it out
    while the lines standing on it keep their area (a region that holds nothing above that
    line is left with about zero and falls under the noise test).
    """
    if not feet:
        return regions
    y = spectrum.data.real
    out = []
    for r in regions:
        on_foot = any(min(f) <= r.peak_ppm <= max(f) for f in feet) if r.peak_ppm is not None else False
        if r.counted and on_foot:
            sl = spectrum.slice_of(r.start_ppm, r.end_ppm)
            seg = y[sl]
            if seg.size >= 8:
                edge = max(2, seg.size // 16)
                base = np.linspace(seg[:edge].mean(), seg[-edge:].mean(), seg.size)
                r = replace(r, integral=float(np.sum(seg - base) * spectrum.step_ppm),
                            label="on the foot of the suppressed line: local straight baseline")
        out.append(r)
    return tuple(out)


def phasing_exclusion(spectrum: Spectrum, options: ProcessingOptions | None = None) -> list[tuple[float, float]]:
    """Ranges automatic phasing leaves out: the suppression zones measured on the spectrum.

    (A wider guard band was tried and lost: lines just outside the measured zone, such as a
    sugar's anomeric doublet, are what pins the first-order phase at the high-ppm end.)
    """
    return [(lo, hi) for lo, hi, _ in _suppression_ranges(spectrum, options or ProcessingOptions())]


#: Lines of the weakest common one-proton signal: a double doublet (common practice: a methine
#: or an olefinic proton coupled to two others), four lines of a quarter of its area each.
ONE_PROTON_LINES = 4


def _tallest_counted_point(spectrum: Spectrum, regions) -> int | None:
    """Index of the tallest point of the real spectrum inside a counted region (None without one)."""
    y = spectrum.data.real
    best = None
    for r in regions:
        if r.counted:
            sl = spectrum.slice_of(r.start_ppm, r.end_ppm)
            if sl.stop > sl.start:
                i = sl.start + int(np.argmax(y[sl]))
                if best is None or y[i] > y[best]:
                    best = i
    return best


def one_proton_detection_limit(spectrum: Spectrum, regions, *, noise: float, threshold_snr: float) -> float | None:
    """Smallest integral with which a one-proton double doublet stands above the detection threshold.

    Its four lines are taken as wide as the tallest counted line at half height
    (Lorentzian: area = pi/2 x height x width), each holding a quarter of the area;
    the lines must reach ``threshold_snr`` x ``noise``. None without a counted region.
    """
    best = _tallest_counted_point(spectrum, regions)
    if best is None:
        return None
    width_ppm = half_height_width_hz(spectrum, best) * spectrum.step_ppm / spectrum.hz_per_point
    return ONE_PROTON_LINES * threshold_snr * noise * np.pi / 2.0 * width_ppm


def _threshold_losses(spectrum: Spectrum, regions, *, level: float) -> list[float]:
    """Per region, the share of its area that may lie under the detection threshold ``level`` (:func:`threshold_loss`)."""
    y = spectrum.data.real
    out = []
    for r in regions:
        sl = spectrum.slice_of(r.start_ppm, r.end_ppm)
        peak = float(y[sl].max()) if sl.stop > sl.start else 0.0
        out.append(threshold_loss(peak / level) if level > 0 else 0.0)
    return out


def snr_of(spectrum: Spectrum, regions, noise: float) -> float:
    """Signal-to-noise ratio: tallest counted analyte point over twice the noise standard deviation.

    (Height over 2 sigma is a common convention for 1H SNR figures; from memory.)
    """
    i = _tallest_counted_point(spectrum, regions)
    best = max(0.0, float(spectrum.data.real[i])) if i is not None else 0.0
    return best / (2.0 * noise) if noise > 0 else 0.0


def _with_solvent(spectrum: Spectrum, options: ProcessingOptions) -> Spectrum:
    """``spectrum`` with the solvent the options name in place of the file's (unchanged without one)."""
    if not options.solvent:
        return spectrum
    return replace(spectrum, acquisition=replace(spectrum.acquisition, solvent=normalise_solvent(options.solvent)))


def _solvent_the_spectrum_shows(spec: Spectrum, ref: Reference, opts: ProcessingOptions) -> tuple[Spectrum, Reference, str | None]:
    """When the file's solvent left no residual line, the organic solvent whose residual pattern is there.

    Returns the spectrum carrying that solvent and referenced to it, its reference and a note;
    or the spectrum and its (empty) reference ``ref`` unchanged and no note. A water-suppressed aqueous sample
    is never re-labelled: its HDO line is bleached by design.
    """
    file_solvent = normalise_solvent(spec.solvent)
    unchanged = spec, ref, None
    if file_solvent in AQUEOUS:
        return unchanged
    seen = solvent_from_spectrum(spec, besides=file_solvent)
    if seen is None:
        return unchanged
    relabelled = replace(spec, acquisition=replace(spec.acquisition, solvent=seen.solvent))
    moved, found = reference_axis(relabelled, prefer=opts.reference)
    if found.kind == "none":
        return unchanged
    said = f"the file says {spec.solvent}" if spec.solvent else "the file names no solvent"
    note = (f"solvent read from the spectrum: {said}, but {seen.line} shows at {seen.found_ppm:.2f} ppm "
            f"({seen.pattern}); processed as {seen.solvent}")
    return moved, found, note


def phase_prior(options: ProcessingOptions, acquisition: Acquisition | None) -> dict[str, float | str]:
    """auto_phase's first-order prior: the plate's shared value when given, else what the acquisition's timing
    leaves (:func:`nmrcheck.processing.timing.expected_first_order`; only for an FID transformed here, whose
    delay is known), else auto_phase's defaults."""
    if options.shared_p1 is not None:
        centre, scale = options.shared_p1
        return {"p1_centre_deg": float(centre), "p1_scale_deg": float(scale), "p1_prior_weight": SHARED_P1_PRIOR_WEIGHT}
    timing = expected_first_order(acquisition) if acquisition is not None else None
    if timing is None:
        return {}
    return {"p1_centre_deg": timing.p1_deg, "p1_scale_deg": timing.scale_deg, "p1_prior_weight": TIMING_P1_PRIOR_WEIGHT,
            "prior_full_snr": TIMING_P1_FULL_SNR, "p1_centre_name": "the acquisition timing's"}


def phase_reading(fid: Fid, options: ProcessingOptions | None = None, *, skip_below_snr: float = 0.0) -> PhaseReading:
    """Transform ``fid`` and phase it on its own (no shared prior), as :func:`process` would.

    The reading a plate's survey collects from each well to find the shared first-order
    phase. A spectrum whose third-tallest signal group stays under ``skip_below_snr`` noise
    standard deviations is not phased (it could not count as strong): its reading says so.
    """
    opts = options or ProcessingOptions()
    spec = _with_solvent(fourier_transform(fid, lb_hz=opts.lb_hz, size=opts.size), opts)
    exclude = phasing_exclusion(spec, opts)
    heights = sorted((g.height for g in signal_groups(spec, exclude_ppm=exclude)), reverse=True)
    noise = channel_noise(spec.data)
    third = heights[2] / noise if len(heights) >= 3 and noise > 0 else 0.0
    if third < skip_below_snr:
        return PhaseReading(source=fid.source, key=acquisition_key(fid), p1_deg=float("nan"), groups=len(heights),
                            first_order_fitted=False, third_group_snr=float(third))
    _, phase = auto_phase(spec, exclude_ppm=exclude)
    fitted = phase.peaks_used > 0 and "zero order only" not in phase.method
    return PhaseReading(source=fid.source, key=acquisition_key(fid), p1_deg=float(phase.p1_deg),
                        groups=int(phase.peaks_used), first_order_fitted=fitted, third_group_snr=float(third))


def process(source: Fid | SpectrumFile | str | os.PathLike, options: ProcessingOptions | None = None, **overrides: Any) -> Processed:
    """Process one recording: transform, phase, baseline, reference, integrate and count protons.

    ``source`` is a path (any format :func:`nmrcheck.io.read_any` knows) or an
    already-read FID or spectrum file. Keyword ``overrides`` replace fields of
    ``options`` (e.g. ``process(path, lb_hz=1.0)``).
    """
    opts = options or ProcessingOptions()
    if overrides:
        unknown = set(overrides) - set(ProcessingOptions.__dataclass_fields__)
        if unknown:
            raise ParameterError(f"unknown processing option(s): {', '.join(sorted(unknown))}")
        opts = replace(opts, **overrides)
    record = read_any(source) if isinstance(source, (str, os.PathLike)) else source
    # What the reader decided (a compound file's block, a dropped header field) is said with the result.
    warnings: list[str] = list(getattr(record, "notes", ()))
    if isinstance(record, Fid):
        spec = fourier_transform(record, lb_hz=opts.lb_hz, size=opts.size)
        already_phased = False
    else:
        spec = spectrum_from_file(record)
        already_phased = not opts.rephase_processed
    spec = _with_solvent(spec, opts)
    exclude = _suppression_ranges(spec, opts)
    if opts.phase is not None:
        p0, p1 = opts.phase
        spec = apply_phase(spec, p0_deg=p0, p1_deg=p1)
        phase = PhaseCorrection(p0, p1, spec.first_ppm, "manual")
    elif already_phased:
        phase = PhaseCorrection(0.0, 0.0, spec.first_ppm, "as processed by the instrument software")
    else:
        # The timing estimate holds for an FID transformed here; a processed spectrum was phased already.
        prior = phase_prior(opts, spec.acquisition if isinstance(record, Fid) else None)
        spec, phase = auto_phase(spec, exclude_ppm=[(lo, hi) for lo, hi, _ in exclude], **prior)
        if phase.peaks_used == 0:
            warnings.append("no peak above noise to phase on; spectrum left unphased")
    spec = correct_baseline(spec, method=opts.baseline, smoothness_hz=opts.baseline_smoothness_hz)
    spec, ref = reference_axis(spec, solvent=opts.solvent, prefer=opts.reference)
    if ref.kind == "none" and opts.solvent is None and opts.reference in ("auto", "solvent"):
        spec, ref, note = _solvent_the_spectrum_shows(spec, ref, opts)
        if note:
            warnings.append(note)
    if ref.kind == "none":
        warnings.append(f"axis not referenced: {ref.name}")
    else:
        # Suppression ranges move with the axis.
        shift = ref.ppm - (ref.found_ppm if ref.found_ppm is not None else ref.ppm)
        exclude = [(a + shift, b + shift, c + shift) for a, b, c in exclude]
    noise = spec.real_noise
    # The suppressed line's foot that phasing and the baseline left behind is not analyte: lines
    # standing on it are integrated above a local straight baseline.
    # Only the saturation hole and the residual line's body are left out (presaturation
    # bleaches some tens of hertz; SUPPRESSION_CORE_PPM either side of the line's centre at most).
    feet = [suppression_foot(spec, (lo, hi), noise=noise, max_half_ppm=opts.suppression_halfwidth_ppm) for lo, hi, _ in exclude]
    exclude = [(max(lo, c - SUPPRESSION_CORE_PPM), min(hi, c + SUPPRESSION_CORE_PPM)) for lo, hi, c in exclude]
    ref_name = ref.name if ref.kind in ("TMS", "DSS") else None
    regions = find_regions(
        spec,
        noise=noise,
        threshold_snr=opts.threshold_snr,
        margin_hz=opts.margin_hz,
        merge_hz=opts.merge_hz,
        solvent=opts.solvent,
        reference_name=ref_name,
        exclude_ppm=exclude,
        reference_line=ref.line,
    )
    regions = _on_the_foot(spec, regions, feet)
    count = None
    sigmas = []
    for r in regions:
        sl = spec.slice_of(r.start_ppm, r.end_ppm)
        sigmas.append(noise * spec.step_ppm * np.sqrt(max(1, sl.stop - sl.start)))
    # A region whose integral does not stand clear of its own integration noise is not
    # counted (a few points above the threshold on a noise spike or a wiggle).
    regions = tuple(
        replace(r, flag="noise", label=f"integral under {opts.min_integral_sigma:g} sigma of its noise")
        if r.counted and r.integral < opts.min_integral_sigma * sg else r
        for r, sg in zip(regions, sigmas)
    )
    if any(r.counted for r in regions):
        limit = one_proton_detection_limit(spec, regions, noise=noise, threshold_snr=opts.threshold_snr)
        regions, count = count_protons(regions, integral_sigma=sigmas, anchor_h=opts.anchor_h,
                                       candidate_h_counts=opts.candidate_h_counts, one_proton_detection_limit=limit,
                                       threshold_losses=_threshold_losses(spec, regions, level=opts.threshold_snr * noise))
        if count.lower_bound:
            warnings.append(f"a one-proton multiplet would stay under the detection limit: {count.total_h:.1f} H is a lower "
                            f"bound (range up to {count.total_h_high:.0f} H)")
    else:
        warnings.append("no analyte signal above the noise threshold")
    snr = snr_of(spec, regions, noise)
    spec = spec.evolve(ProcessingStep("integrate", {"threshold_snr": opts.threshold_snr, "margin_hz": opts.margin_hz, "merge_hz": opts.merge_hz}))
    return Processed(
        spectrum=spec,
        phase=phase,
        reference=ref,
        regions=tuple(regions),
        count=count,
        snr=snr,
        noise=noise,
        warnings=tuple(warnings),
    )
