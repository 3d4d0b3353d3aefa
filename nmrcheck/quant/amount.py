"""How much analyte is in the tube: integrals against a reference, with the uncertainty and acquisition warnings.

Signals are integrated above a local straight baseline across each range (see
:mod:`nmrcheck.quant.integrate`). Analyte and reference lose the same fraction
of their Lorentzian wings and 13C satellites when their ranges are equally wide
in Hz around their lines, so those losses cancel in the ratio.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence, Union

import numpy as np

from nmrcheck.errors import FormulaError, ParameterError, QuantificationError
from nmrcheck.processing.results import Processed
from nmrcheck.processing.solvents import normalise_solvent
from nmrcheck.quant.integrate import LocalIntegral, find_signal, integrate_local
from nmrcheck.quant.pulcon import flip_angle_deg, pulcon_factor
from nmrcheck.quant.references import (
    ExternalCalibration,
    SolventReference,
    StandardReference,
    checked_range,
    molar_mass_of,
    solvent_info,
    standard_info,
)

__all__ = ["Amount", "CandidateAmount", "quantify", "amount_for", "QNMR_MIN_SNR", "T1_FACTOR"]

Method = Union[StandardReference, SolventReference, ExternalCalibration]

#: Signal-to-noise a quantitative 1H measurement should reach: S/N >= 100 in the Japanese
#: Pharmacopoeia's qNMR general information (from memory); Malz & Jancke (J. Pharm. Biomed. Anal.
#: 2005, 38, 813; from memory) ask 150 for a 1 % integration uncertainty.
QNMR_MIN_SNR = 100.0

#: Repetition time (relaxation delay + acquisition time) of at least 5 x the longest T1 after a
#: 90-degree pulse recovers 99.3 % of the magnetisation (common practice; 7 x T1 for 99.9 %).
T1_FACTOR = 5.0

#: Longest T1 assumed for an analyte's signals when the user gives none: small molecules in
#: non-degassed solution at 400-600 MHz mostly relax in 0.5-3 s (common practice estimate).
DEFAULT_LONGEST_T1_S = 3.0

#: Reference peak must stand this many noise standard deviations tall to be used.
MIN_REFERENCE_HEIGHT = 20.0


def _sig(v: float | None, n: int = 4) -> float | None:
    """``v`` to ``n`` significant digits (None stays None)."""
    return None if v is None else float(f"{v:.{n}g}")


@dataclass(frozen=True)
class Amount:
    """Analyte amount in one tube, per proton of the quantified signals.

    ``nmol_per_proton`` is the amount of the analyte's one-proton unit: the
    amount of molecules when ``analyte_h`` (protons the ranges hold per molecule)
    is right. ``nmol_h`` is the amount of protons integrated.
    """

    nmol_per_proton: float | None
    conc_mM_per_proton: float | None
    nmol_h: float | None
    analyte_h: float
    analyte_h_source: str
    """'given', 'proton count' (from the processed spectrum's count) or 'assumed 1'."""
    volume_ul: float | None
    uncertainty_pct: float
    """Combined relative standard uncertainty (k = 1), percent."""
    integration_uncertainty_pct: float
    reference_uncertainty_pct: float
    snr: float
    """Tallest analyte point over twice the noise standard deviation (the processing's convention)."""
    method: str
    """'internal standard', 'solvent residual' or 'external calibration (PULCON)'."""
    reference: str
    """What was measured against, in words (name, signal, amount)."""
    analyte_ranges_ppm: tuple[tuple[float, float], ...]
    reference_range_ppm: tuple[float, float] | None
    analyte_integral: float
    reference_integral: float
    warnings: tuple[str, ...] = field(default_factory=tuple)
    details: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        r = _sig
        return {
            "nmol_per_proton": r(self.nmol_per_proton),
            "conc_mM_per_proton": r(self.conc_mM_per_proton),
            "nmol_h": r(self.nmol_h),
            "analyte_h": self.analyte_h,
            "analyte_h_source": self.analyte_h_source,
            "volume_ul": self.volume_ul,
            "uncertainty_pct": r(self.uncertainty_pct, 3),
            "integration_uncertainty_pct": r(self.integration_uncertainty_pct, 3),
            "reference_uncertainty_pct": r(self.reference_uncertainty_pct, 3),
            "snr": r(self.snr, 4),
            "method": self.method,
            "reference": self.reference,
            "analyte_ranges_ppm": [list(x) for x in self.analyte_ranges_ppm],
            "reference_range_ppm": None if self.reference_range_ppm is None else list(self.reference_range_ppm),
            "warnings": list(self.warnings),
            "details": dict(self.details),
        }

    def brief(self) -> dict[str, Any]:
        """The amount of the one-proton unit as commands and reports show it (no molar mass, so no ug)."""
        return {
            "nmol": _sig(self.nmol_per_proton),
            "ug": None,
            "conc_mM": _sig(self.conc_mM_per_proton),
            "uncertainty_pct": _sig(self.uncertainty_pct, 3),
            "method": self.method,
            "per": f"{self.analyte_h:g} H ({self.analyte_h_source})",
            "reference": self.reference,
            "warnings": list(self.warnings),
        }


@dataclass(frozen=True)
class CandidateAmount:
    """The amount for one candidate formula or structure."""

    label: str
    molar_mass: float
    n_h: float
    nmol: float | None
    ug: float | None
    conc_mM: float | None
    uncertainty_pct: float
    method: str

    def as_dict(self) -> dict[str, Any]:
        r = _sig
        return {
            "candidate": self.label,
            "molar_mass": round(self.molar_mass, 3),
            "n_h": self.n_h,
            "nmol": r(self.nmol),
            "ug": r(self.ug),
            "conc_mM": r(self.conc_mM),
            "uncertainty_pct": r(self.uncertainty_pct, 3),
            "method": self.method,
        }


# --------------------------------------------------------------------------- reference signals


def _edge_problem(li: LocalIntegral, noise: float) -> bool:
    return li.edge_level > max(5.0 * noise, 0.05 * li.peak_height)


def _extra_peaks(processed: Processed, li: LocalIntegral, *, min_separation_hz: float = 2.5, fraction: float = 0.1) -> list[float]:
    """Local maxima in a singlet's range taller than ``fraction`` of it and away from its top (an overlap)."""
    spec = processed.spectrum
    sl = spec.slice_of(li.start_ppm, li.end_ppm)
    y = spec.data.real[sl]
    if y.size < 5:
        return []
    top = li.peak_height
    base = y.min()
    peaks = np.flatnonzero((y[1:-1] > y[:-2]) & (y[1:-1] >= y[2:])) + 1
    out = []
    for k in peaks:
        ppm = spec.first_ppm - (sl.start + k) * spec.step_ppm
        if abs(ppm - li.peak_ppm) * spec.spectrometer_mhz < min_separation_hz:
            continue
        if y[k] - base > fraction * top and y[k] - base > 5.0 * processed.noise:
            out.append(float(ppm))
    return out


def _overlapping_regions(processed: Processed, hi: float, lo: float, margin_ppm: float) -> list[str]:
    """Counted regions that run across a reference range's ends (a signal partly inside)."""
    out = []
    for r in processed.regions:
        if not r.counted:
            continue
        if r.end_ppm < hi and r.start_ppm > lo and (r.start_ppm > hi + margin_ppm or r.end_ppm < lo - margin_ppm):
            out.append(f"{r.start_ppm:.3f}-{r.end_ppm:.3f} ppm")
    return out


def _standard_signal(processed: Processed, std: StandardReference, warnings: list[str]) -> tuple[LocalIntegral, int, float | None, str]:
    """Integral, proton count, T1 and description of a standard's signal; raises when none is usable."""
    spec, noise = processed.spectrum, processed.noise
    if std.range_ppm is not None:
        candidates = [(std.range_ppm, std.n_h, std.t1_s, "user range", None)]
    else:
        rows = standard_info(std.name, spec.solvent)
        if rows and rows[0].solvent != normalise_solvent(spec.solvent):
            warnings.append(f"standard {rows[0].name}: no table shift for solvent {spec.solvent!r}; searched at the {rows[0].solvent} shift")
        candidates = []
        for row in rows:
            found = find_signal(spec, row.signal_ppm, row.search_ppm)
            centre = found[0] if found else row.signal_ppm
            rng = (centre + row.half_width_ppm, centre - row.half_width_ppm)
            candidates.append((rng, std.n_h or row.n_h, std.t1_s or row.t1_s, f"{row.signal_ppm:.2f} ppm table signal", row))
    problems = []
    for rng, n_h, t1, what, row in candidates:
        li = integrate_local(spec, *rng, noise=noise)
        where = f"{std.name} signal at {li.peak_ppm:.3f} ppm ({rng[0]:.3f} to {rng[1]:.3f} ppm, {n_h} H)"
        if li.peak_height < MIN_REFERENCE_HEIGHT * noise or li.integral <= 0:
            problems.append(f"{where}: missing (peak {li.peak_height / noise:.1f} x noise, below {MIN_REFERENCE_HEIGHT:g})")
            continue
        # Processing widens every region by its margin beyond the last point above noise;
        # a region reaching only that far past the range is the standard's own.
        region_margin_hz = next((float(st.params.get("margin_hz", 0.0)) for st in spec.history if st.name == "integrate"), 0.0)
        margin = (3.0 + region_margin_hz) / spec.spectrometer_mhz
        overlaps = _overlapping_regions(processed, li.start_ppm, li.end_ppm, margin)
        extra = _extra_peaks(processed, li)
        if _edge_problem(li, noise):
            problems.append(f"{where}: overlapped (signal at the range ends, {li.edge_level / li.peak_height:.0%} of the peak)")
            continue
        if overlaps:
            problems.append(f"{where}: overlapped by the signal at {', '.join(overlaps)}")
            continue
        if extra and row is not None:  # tabulated standards are singlets
            problems.append(f"{where}: overlapped (further peaks at {', '.join(f'{p:.3f}' for p in extra)} ppm)")
            continue
        return li, int(n_h), t1, where
    raise QuantificationError(f"standard {std.name}: no usable signal; " + "; ".join(problems))


def _std_molar_mass(std: StandardReference) -> float | None:
    if std.molar_mass:
        return std.molar_mass
    if std.smiles:
        return molar_mass_of(std.smiles)
    try:
        return standard_info(std.name)[0].molar_mass
    except ParameterError:
        return None


# --------------------------------------------------------------------------- quantify


def _analyte_ranges(processed: Processed, analyte_range_ppm, exclude: tuple[float, float] | None):
    if analyte_range_ppm is None:
        regions = [r for r in processed.counted_regions if r.h is not None and r.integral > 0]
        if exclude is not None:
            regions = [r for r in regions if r.end_ppm > exclude[0] or r.start_ppm < exclude[1]]
        if not regions:
            raise QuantificationError(f"{processed.spectrum.source}: no counted analyte region to quantify")
        return [(r.start_ppm, r.end_ppm) for r in regions], regions
    ranges = analyte_range_ppm
    if len(ranges) == 2 and all(isinstance(v, (int, float, np.floating)) for v in ranges):
        ranges = [ranges]
    return [checked_range("analyte_range_ppm", rng) for rng in ranges], None


def _relaxation_warnings(processed: Processed, t1_values: Sequence[float], flip_deg: float | None) -> tuple[list[str], dict[str, Any]]:
    acq = processed.spectrum.acquisition
    warnings: list[str] = []
    info: dict[str, Any] = {"flip_angle_deg": flip_deg}
    if flip_deg is None:
        warnings.append(f"pulse angle unknown (pulse program {acq.pulse_program!r}): the acquisition may not be quantitative")
    d1, aq = acq.relaxation_delay_s, acq.acquisition_time_s
    if d1 is None:
        warnings.append("relaxation delay not recorded: cannot tell whether the acquisition was quantitative")
        return warnings, info
    tr = d1 + (aq or 0.0)
    t1 = max(t1_values)
    info.update(repetition_s=round(tr, 3), longest_t1_s=t1)
    angle = math.radians(flip_deg if flip_deg is not None else 90.0)
    e = math.exp(-tr / t1)
    # Steady-state longitudinal recovery after many scans (transverse magnetisation spoiled).
    recovered = (1.0 - e) / (1.0 - e * math.cos(angle))
    info["recovered_fraction"] = round(recovered, 4)
    if tr < T1_FACTOR * t1 and recovered < 0.99:
        warnings.append(
            f"not quantitative: relaxation delay + acquisition time {tr:.1f} s is below {T1_FACTOR:g} x the longest expected T1 "
            f"({t1:.1f} s; rule of thumb, common practice); about {100 * (1 - recovered):.0f} % of the slowest signal's "
            f"magnetisation is lost at a {math.degrees(angle):.0f} degree pulse"
        )
    return warnings, info


def quantify(
    processed: Processed,
    *,
    method: Method,
    analyte_range_ppm: tuple[float, float] | Sequence[tuple[float, float]] | None = None,
    analyte_h: float | None = None,
    longest_t1_s: float | None = None,
    flip_angle_deg_override: float | None = None,
    wing_correction: bool = True,
) -> Amount:
    """Amount of analyte in the tube of ``processed``, measured against ``method``.

    Parameters
    ----------
    processed
        Processed recording of the analyte (with the internal standard or solvent
        signal for those methods).
    method
        A :class:`StandardReference`, :class:`SolventReference` or
        :class:`ExternalCalibration`.
    analyte_range_ppm
        One (start, end) range or a list of them; default: every counted
        analyte region of the processed spectrum.
    analyte_h
        Protons the ranges hold per analyte molecule. Default: the processed
        proton count for the default ranges, else 1 (with a warning).
    longest_t1_s
        Longest T1 expected among the analyte's signals, for the relaxation
        warning (default 3 s, a common practice estimate).
    flip_angle_deg_override
        Excitation angle when the pulse program does not tell it.
    wing_correction
        Divide each integral by the share of Lorentzian area its range keeps
        (from the measured line width), so ranges of different widths compare.

    Raises
    ------
    QuantificationError
        When the reference signal is missing or overlapped, or the analyte
        integral is not positive.
    """
    if not isinstance(processed, Processed):
        raise ParameterError("processed: expected the result of nmrcheck.processing.process")
    if analyte_h is not None and not analyte_h > 0:
        raise ParameterError(f"analyte_h: must be positive, got {analyte_h}")
    if longest_t1_s is not None and not longest_t1_s > 0:
        raise ParameterError(f"longest_t1_s: must be positive, got {longest_t1_s}")
    spec, noise = processed.spectrum, processed.noise
    warnings: list[str] = []
    details: dict[str, Any] = {}
    t1s = [longest_t1_s or DEFAULT_LONGEST_T1_S]
    acq = spec.acquisition
    flip = flip_angle_deg_override if flip_angle_deg_override is not None else flip_angle_deg(acq)

    # Reference: protons (nmol, mM) per unit integral.
    volume = None
    if isinstance(method, StandardReference):
        ref, n_ref, t1_std, where = _standard_signal(processed, method, warnings)
        if t1_std:
            t1s.append(t1_std)
        volume = method.volume_ul
        nmol_std = method.nmol if method.nmol is not None else (method.conc_mM * volume if volume else None)
        conc_std = method.conc_mM if method.conc_mM is not None else (method.nmol / volume if volume else None)
        ref_nmol_h = None if nmol_std is None else nmol_std * n_ref
        ref_conc_h = None if conc_std is None else conc_std * n_ref
        ref_rel_pct = method.uncertainty_pct
        method_name = "internal standard"
        amount_text = f"{nmol_std:.4g} nmol" if nmol_std is not None else f"{conc_std:.4g} mM"
        description = f"{where}, {amount_text}"
        mm = _std_molar_mass(method)
        if mm:
            details["standard_molar_mass"] = round(mm, 3)
    elif isinstance(method, SolventReference):
        info = solvent_info(method.solvent)
        if not info.reliable:
            warnings.append(f"{info.solvent} residual ({info.residual_name}) is an unreliable reference: {info.source}")
        if spec.solvent and normalise_solvent(spec.solvent) != info.solvent:
            warnings.append(f"the recording names solvent {spec.solvent!r}, the reference {info.solvent!r}")
        rng = method.range_ppm
        if rng is None:
            found = find_signal(spec, info.residual_ppm, 0.05)
            c = found[0] if found else info.residual_ppm
            rng = (c + info.half_width_ppm, c - info.half_width_ppm)
        ref = integrate_local(spec, *rng, noise=noise)
        if ref.peak_height < MIN_REFERENCE_HEIGHT * noise or ref.integral <= 0:
            raise QuantificationError(f"solvent residual {info.residual_name} ({rng[0]:.3f}-{rng[1]:.3f} ppm): missing (peak {ref.peak_height / noise:.1f} x noise)")
        if _edge_problem(ref, noise) or _overlapping_regions(processed, ref.start_ppm, ref.end_ppm, 3.0 / spec.spectrometer_mhz):
            raise QuantificationError(f"solvent residual {info.residual_name} ({rng[0]:.3f}-{rng[1]:.3f} ppm): overlapped by another signal")
        n_res = method.residual_nmol_h()
        volume = method.volume_ul
        ref_nmol_h = n_res
        ref_conc_h = n_res / volume
        ref_rel_pct = method.uncertainty_pct
        method_name = "solvent residual"
        description = (
            f"{info.residual_name} residual at {ref.peak_ppm:.3f} ppm, {n_res:.4g} nmol H from {method.deuteration_pct} atom % D "
            f"and {volume:g} uL (depends on the solvent lot)"
        )
        warnings.append("solvent-residual reference: the amount scales with the lot's true deuteration grade and water uptake")
        n_ref = 1
    elif isinstance(method, ExternalCalibration):
        cal = method.calibration
        ref = integrate_local(cal.spectrum, *method.range_ppm, noise=cal.noise)
        if ref.peak_height < MIN_REFERENCE_HEIGHT * cal.noise or ref.integral <= 0:
            raise QuantificationError(f"calibration signal {method.range_ppm[0]:.3f}-{method.range_ppm[1]:.3f} ppm: missing (peak {ref.peak_height / cal.noise:.1f} x noise)")
        factors = pulcon_factor(acq, cal.spectrum.acquisition, flip_angle_analyte_deg=flip_angle_deg_override)
        warnings.extend(factors.warnings)
        if spec.history[:1] and cal.spectrum.history[:1] and spec.history[0].name != cal.spectrum.history[0].name:
            warnings.append("calibration and analyte spectra were processed differently (their integral units may differ)")
        ref_conc_h = method.conc_mM * method.n_h * factors.total
        volume = method.volume_ul
        ref_nmol_h = ref_conc_h * volume if volume else None
        ref_rel_pct = math.hypot(method.uncertainty_pct, method.transfer_pct)
        method_name = "external calibration (PULCON)"
        description = f"calibration {cal.spectrum.source} at {method.conc_mM:g} mM ({method.n_h} H, {ref.peak_ppm:.3f} ppm)"
        details["pulcon"] = factors.as_dict()
        n_ref = method.n_h
    else:
        raise ParameterError(f"method: expected StandardReference, SolventReference or ExternalCalibration, got {type(method).__name__}")

    # Analyte.
    ref_range = (ref.start_ppm, ref.end_ppm)
    ranges, regions = _analyte_ranges(processed, analyte_range_ppm, ref_range if not isinstance(method, ExternalCalibration) else None)
    integrals = [integrate_local(spec, a, b, noise=noise, exclude_ppm=(ref_range,)) for a, b in ranges]
    if wing_correction:
        total = sum(li.corrected for li in integrals)
        sigma = math.sqrt(sum((li.sigma / li.captured_fraction) ** 2 for li in integrals))
        ref_integral = ref.corrected
    else:
        total = sum(li.integral for li in integrals)
        sigma = math.sqrt(sum(li.sigma**2 for li in integrals))
        ref_integral = ref.integral
    if total <= 0:
        raise QuantificationError(f"analyte integral over {ranges} is not positive ({total:.3g})")
    for li in integrals:
        if _edge_problem(li, noise):
            warnings.append(f"analyte range {li.start_ppm:.3f}-{li.end_ppm:.3f} ppm: signal at the range ends (overlap or range too narrow)")
    if analyte_h is not None:
        h, h_source = float(analyte_h), "given"
    elif regions is not None and processed.count is not None:
        h, h_source = float(sum(round(r.h) for r in regions)), "proton count"
        h = h or float(processed.count.integer_h)
    else:
        h, h_source = 1.0, "assumed 1"
        warnings.append("analyte_h not given: amounts are per proton of the range (one-proton unit)")

    nmol_per_integral = None if ref_nmol_h is None else ref_nmol_h / ref_integral
    conc_per_integral = None if ref_conc_h is None else ref_conc_h / ref_integral
    details["captured_fraction"] = {"reference": round(ref.captured_fraction, 4), "analyte": [round(li.captured_fraction, 4) for li in integrals]}
    details["linewidth_hz"] = {"reference": ref.linewidth_hz and round(ref.linewidth_hz, 2), "analyte": [li.linewidth_hz and round(li.linewidth_hz, 2) for li in integrals]}
    ref_noise_pct = 100.0 * ref.relative_sigma
    analyte_noise_pct = 100.0 * sigma / total
    integration_pct = math.hypot(ref_noise_pct, analyte_noise_pct)
    uncertainty = math.hypot(integration_pct, ref_rel_pct)
    snr = max(li.peak_height for li in integrals) / (2.0 * noise) if noise > 0 else float("inf")
    if snr < QNMR_MIN_SNR:
        warnings.append(f"analyte SNR {snr:.0f} is below {QNMR_MIN_SNR:g}, the level the Japanese Pharmacopoeia's qNMR guidance asks (from memory)")
    relax, relax_info = _relaxation_warnings(processed, t1s, flip)
    warnings.extend(relax)
    details.update(relax_info)
    details["reference_integral_noise_pct"] = round(ref_noise_pct, 3)
    details["analyte_integral_noise_pct"] = round(analyte_noise_pct, 3)
    details["integration"] = "local straight baseline across each range's ends"

    nmol_h = total * nmol_per_integral if nmol_per_integral is not None else None
    conc_h = total * conc_per_integral if conc_per_integral is not None else None
    return Amount(
        nmol_per_proton=None if nmol_h is None else nmol_h / h,
        conc_mM_per_proton=None if conc_h is None else conc_h / h,
        nmol_h=nmol_h,
        analyte_h=h,
        analyte_h_source=h_source,
        volume_ul=volume,
        uncertainty_pct=uncertainty,
        integration_uncertainty_pct=integration_pct,
        reference_uncertainty_pct=ref_rel_pct,
        snr=snr,
        method=method_name,
        reference=description,
        analyte_ranges_ppm=tuple((round(a, 4), round(b, 4)) for a, b in ranges),
        reference_range_ppm=(round(ref_range[0], 4), round(ref_range[1], 4)) if not isinstance(method, ExternalCalibration) else None,
        analyte_integral=total,
        reference_integral=ref_integral,
        warnings=tuple(warnings),
        details=details,
    )


# --------------------------------------------------------------------------- candidates


def _average_mass_of_formula(text_or_formula) -> tuple[float, int, str]:
    """(molar mass, H count, label) of a formula, with RDKit's average atomic weights."""
    from rdkit import Chem

    from nmrcheck.chem.formula import Formula, parse_formula

    formula = text_or_formula if isinstance(text_or_formula, Formula) else parse_formula(text_or_formula)
    table = Chem.GetPeriodicTable()
    mass = sum(table.GetAtomicWeight(sym) * n for sym, n in formula.counts.items())
    return float(mass), formula.count("H"), formula.hill


def _candidate_mass(formula_or_mw) -> tuple[float, int | None, str]:
    if isinstance(formula_or_mw, (int, float, np.floating)) and not isinstance(formula_or_mw, bool):
        mw = float(formula_or_mw)
        if not mw > 0:
            raise ParameterError(f"molar mass: must be positive, got {mw}")
        return mw, None, f"M = {mw:g} g/mol"
    if isinstance(formula_or_mw, str):
        text = formula_or_mw.strip()
        try:
            return _average_mass_of_formula(text)
        except FormulaError:
            pass
        from rdkit import Chem, RDLogger

        RDLogger.DisableLog("rdApp.*")
        from nmrcheck.io.structures import smiles_size_problem

        too_large = smiles_size_problem(text)
        if too_large:
            raise ParameterError(f"candidate: {too_large}")
        mol = Chem.MolFromSmiles(text)
        if mol is None:
            raise ParameterError(f"candidate: {text!r} is neither a molecular formula nor a SMILES RDKit can read")
        n_h = sum(a.GetTotalNumHs() for a in mol.GetAtoms())
        return molar_mass_of(text), int(n_h), text
    return _average_mass_of_formula(formula_or_mw)


def amount_for(amount: Amount, formula_or_mw, n_h: float | None = None) -> CandidateAmount:
    """The amount of one candidate (formula, SMILES or molar mass in g/mol).

    Parameters
    ----------
    n_h
        Protons of the candidate inside the quantified ranges. Default: the
        amount's ``analyte_h``. For the default whole-spectrum ranges give the
        candidate's non-exchangeable H count in the solvent.
    """
    mw, _, label = _candidate_mass(formula_or_mw)
    if n_h is not None and not n_h > 0:
        raise ParameterError(f"n_h: must be positive, got {n_h}")
    h = float(n_h) if n_h is not None else amount.analyte_h
    nmol = amount.nmol_h / h if amount.nmol_h is not None else None
    conc = amount.conc_mM_per_proton * amount.analyte_h / h if amount.conc_mM_per_proton is not None else None
    return CandidateAmount(
        label=label,
        molar_mass=mw,
        n_h=h,
        nmol=nmol,
        ug=None if nmol is None else nmol * mw * 1e-3,
        conc_mM=conc,
        uncertainty_pct=amount.uncertainty_pct,
        method=amount.method,
    )
