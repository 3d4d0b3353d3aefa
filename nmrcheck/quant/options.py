"""Quantification choices as a command line states them (names, numbers, 'START:END' ranges) turned into quant objects.

Every command that reports an amount (``process``, ``check``, ``quant``) builds its reference
and its go/no-go here, so the three agree and a wrong combination is one :class:`ParameterError`.
"""

from __future__ import annotations

import math

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

from nmrcheck.errors import NmrcheckError, ParameterError
from nmrcheck.processing import ProcessingOptions, process
from nmrcheck.processing.results import Processed
from nmrcheck.quant.amount import Amount, CandidateAmount, amount_for, quantify
from nmrcheck.quant.recommend import Recommendation, recommend
from nmrcheck.quant.references import ExternalCalibration, SolventReference, StandardReference

__all__ = ["MAX_UNCERTAINTY_PCT", "DEFAULT_EXPERIMENT", "QuantOptions", "QuantResult", "parse_ppm_range"]

#: An amount whose uncertainty exceeds this (%) is not reported: it would not tell go from no-go.
MAX_UNCERTAINTY_PCT = 50.0
#: Next experiment the go/no-go is for when none is named (a name in recommendation_defaults.csv).
DEFAULT_EXPERIMENT = "1H-13C HSQC"


def parse_ppm_range(text: str | tuple[float, float] | None, option: str) -> tuple[float, float] | None:
    """``'START:END'`` (or ``'START,END'``) in ppm as a pair of floats; None and pairs pass through unchanged.

    Raises
    ------
    ParameterError
        Naming ``option`` and the text when it is not two numbers.
    """
    if not isinstance(text, str):
        return text
    try:
        a, b = (float(v) for v in text.replace(",", ":").split(":"))
    except ValueError:
        raise ParameterError(f"{option}: expected START:END in ppm, got {text!r}") from None
    if not all(math.isfinite(v) and -1000.0 <= v <= 1000.0 for v in (a, b)):
        raise ParameterError(f"{option}: {text!r} must be two finite shifts within -1000..1000 ppm")
    return (a, b)


@dataclass(frozen=True)
class QuantResult:
    """The amount in the tube and the go/no-go, per proton unit and per candidate."""

    amount: Amount | None
    """None when the reference could not be measured at all (the refusal says why)."""
    recommendation: Recommendation | None
    """For the first candidate when there are candidates, else for the per-proton amount (nmol only);
    None when the amount is refused."""
    candidates: tuple[tuple[CandidateAmount, Recommendation], ...] = ()
    refused: str | None = None
    """One line saying why no amount is given (reference line suppressed, uncertainty too large, no sound candidate)."""

    def as_dict(self) -> dict[str, Any]:
        return {
            "amount": None if self.amount is None else self.amount.brief(),
            "recommendation": None if self.recommendation is None else self.recommendation.as_dict(),
            "candidates": [{"amount": a.as_dict(), "recommendation": r.as_dict()} for a, r in self.candidates],
            "refused": self.refused,
        }


@dataclass(frozen=True)
class QuantOptions:
    """What the user said about the reference, the volume and the next experiment.

    Exactly one reference is chosen: an internal standard (``standard`` with
    ``standard_nmol`` or ``standard_conc_mm``; ``standard_range`` and ``standard_h``
    for one not in the standards table), the residual solvent signal
    (``solvent_reference`` with ``deuteration_pct`` and ``volume_ul``), or an external
    calibration recording (``calibration``, a path, with ``calibration_conc_mm``,
    ``calibration_range`` and ``calibration_h``). With none, :attr:`requested` is
    False and the recommendation options must be left unset too.
    """

    standard: str | None = None
    standard_nmol: float | None = None
    standard_conc_mm: float | None = None
    standard_range: str | tuple[float, float] | None = None
    standard_h: int | None = None
    solvent_reference: bool = False
    deuteration_pct: float | None = None
    calibration: str | None = None
    calibration_conc_mm: float | None = None
    calibration_range: str | tuple[float, float] | None = None
    calibration_h: int | None = None
    volume_ul: float | None = None
    experiment: str | None = None
    """Next experiment for the go/no-go; None: :data:`DEFAULT_EXPERIMENT`."""
    thresholds: str | None = None
    """User thresholds file replacing the packaged defaults."""
    required_ug: float | None = None

    def __post_init__(self) -> None:
        chosen = [name for name, on in (("--standard", self.standard), ("--solvent-reference", self.solvent_reference), ("--calibration", self.calibration)) if on]
        if len(chosen) > 1:
            raise ParameterError(f"reference: give one of --standard, --solvent-reference or --calibration, not {' and '.join(chosen)}")
        needs = {
            "--standard": (("--standard-nmol", self.standard_nmol), ("--standard-conc-mm", self.standard_conc_mm), ("--standard-range", self.standard_range), ("--standard-h", self.standard_h)),
            "--solvent-reference": (("--deuteration-pct", self.deuteration_pct),),
            "--calibration": (("--calibration-conc-mm", self.calibration_conc_mm), ("--calibration-range", self.calibration_range), ("--calibration-h", self.calibration_h)),
        }
        for parent, children in needs.items():
            for name, value in children:
                if value is not None and parent not in chosen:
                    raise ParameterError(f"{name}: only goes with {parent}")
        if not chosen:
            for name, value in (("--volume-ul", self.volume_ul), ("--experiment", self.experiment), ("--thresholds", self.thresholds), ("--required-ug", self.required_ug)):
                if value is not None:
                    raise ParameterError(f"{name}: needs a reference for the amount (--standard, --solvent-reference or --calibration)")
            return
        if self.standard and (self.standard_nmol is None) == (self.standard_conc_mm is None):
            raise ParameterError("--standard: give exactly one of --standard-nmol or --standard-conc-mm")
        if self.solvent_reference and (self.deuteration_pct is None or self.volume_ul is None):
            raise ParameterError("--solvent-reference: needs --deuteration-pct (atom % D of the lot) and --volume-ul")
        if self.calibration and (self.calibration_conc_mm is None or self.calibration_range is None or self.calibration_h is None):
            raise ParameterError("--calibration: needs --calibration-conc-mm, --calibration-range and --calibration-h")
        # Parse ranges now so a bad one is reported before any processing.
        parse_ppm_range(self.standard_range, "--standard-range")
        parse_ppm_range(self.calibration_range, "--calibration-range")

    @property
    def requested(self) -> bool:
        """True when a reference was chosen (an amount is to be reported)."""
        return bool(self.standard or self.solvent_reference or self.calibration)

    def method(self, processed: Processed, *, processing: ProcessingOptions | None = None):
        """The reference object for ``processed``; a calibration recording is processed with ``processing``.

        Raises
        ------
        ParameterError
            When no reference was chosen, or the solvent reference meets a recording without a solvent.
        """
        if self.standard:
            return StandardReference(
                self.standard,
                nmol=self.standard_nmol,
                conc_mM=self.standard_conc_mm,
                volume_ul=self.volume_ul,
                range_ppm=parse_ppm_range(self.standard_range, "--standard-range"),
                n_h=self.standard_h,
            )
        if self.solvent_reference:
            solvent = processed.spectrum.solvent
            if not solvent:
                raise ParameterError("--solvent-reference: the recording names no solvent (give --solvent)")
            return SolventReference(solvent, deuteration_pct=self.deuteration_pct, volume_ul=self.volume_ul)
        if self.calibration:
            calibration = process(self.calibration, processing or ProcessingOptions())
            return ExternalCalibration(
                calibration,
                conc_mM=self.calibration_conc_mm,
                range_ppm=parse_ppm_range(self.calibration_range, "--calibration-range"),
                n_h=self.calibration_h,
                volume_ul=self.volume_ul,
            )
        raise ParameterError("reference: give one of --standard, --solvent-reference or --calibration")

    def recommend(self, amount: Amount | CandidateAmount, snr: float, processed: Processed) -> Recommendation:
        """Go/no-go for the next experiment from ``amount`` and the 1H SNR ``snr``."""
        return recommend(
            amount,
            snr,
            experiment=self.experiment or DEFAULT_EXPERIMENT,
            config=self.thresholds,
            required_ug=self.required_ug,
            acquisition=processed.spectrum.acquisition,
        )

    def amount(self, processed: Processed, *, processing: ProcessingOptions | None = None, **quantify_options: Any) -> Amount:
        """Amount of ``processed`` against the chosen reference, per proton unit.

        ``processing`` is used for a calibration recording; ``quantify_options`` go to
        :func:`nmrcheck.quant.quantify` (``analyte_range_ppm``, ``analyte_h``, ``longest_t1_s``, ...).
        """
        return quantify(processed, method=self.method(processed, processing=processing), **quantify_options)

    def suppressed_reference(self, processed: Processed) -> str | None:
        """With the solvent reference: why its residual line cannot serve (it lies in a suppression zone), or None."""
        if not self.solvent_reference or not processed.spectrum.solvent:
            return None
        from nmrcheck.quant.references import solvent_info

        try:
            info = solvent_info(processed.spectrum.solvent)
        except NmrcheckError:
            return None
        lo, hi = info.residual_ppm - info.half_width_ppm, info.residual_ppm + info.half_width_ppm
        for r in processed.regions:
            text = f"{r.label or ''} {r.flag or ''}"
            if "suppression" in text and min(r.start_ppm, r.end_ppm) < hi and max(r.start_ppm, r.end_ppm) > lo:
                return (f"no amount: the solvent line the amount would be measured against ({info.residual_ppm:.2f} ppm) lies in the "
                        f"solvent-suppression zone {min(r.start_ppm, r.end_ppm):.2f}-{max(r.start_ppm, r.end_ppm):.2f} ppm, so its integral does not measure the solvent")
        return None

    def refusal(self, amount: Amount, processed: Processed) -> str | None:
        """Why ``amount`` must not be reported (one line), or None.

        Refused when the reference line lies in a solvent-suppression zone (its integral then
        measures the suppression, not the solvent) or when the uncertainty exceeds
        :data:`MAX_UNCERTAINTY_PCT`.
        """
        ref = amount.reference_range_ppm
        if ref is not None:
            lo, hi = min(ref), max(ref)
            for r in processed.regions:
                text = f"{r.label or ''} {r.flag or ''}"
                if "suppression" in text and min(r.start_ppm, r.end_ppm) < hi and max(r.start_ppm, r.end_ppm) > lo:
                    return (f"no amount: the reference line ({amount.reference}) lies in the solvent-suppression zone "
                            f"{min(r.start_ppm, r.end_ppm):.2f}-{max(r.start_ppm, r.end_ppm):.2f} ppm, so its integral does not measure the solvent")
        if amount.uncertainty_pct is not None and amount.uncertainty_pct > MAX_UNCERTAINTY_PCT:
            return f"no amount: its uncertainty ({amount.uncertainty_pct:.0f} %) exceeds {MAX_UNCERTAINTY_PCT:g} %"
        return None

    def for_candidate(self, processed: Processed, basis: Any, *, processing: ProcessingOptions | None = None) -> QuantResult:
        """Amount of one candidate on its own signals: ``basis`` has ``label``, ``formula``, ``n_h`` and
        ``ranges_ppm`` (see :class:`nmrcheck.validate.basis.AmountBasis`), or is a string saying why there is no
        sound candidate (then only the per-proton amount is measured, and the amount is refused)."""
        suppressed = self.suppressed_reference(processed)
        if suppressed:
            return QuantResult(None, None, (), suppressed)
        if isinstance(basis, str):
            amount = self.amount(processed, processing=processing)
            return QuantResult(amount, None, (), f"no amount: {basis}")
        amount = self.amount(processed, processing=processing, analyte_range_ppm=list(basis.ranges_ppm), analyte_h=float(basis.n_h))
        refused = self.refusal(amount, processed)
        if refused:
            return QuantResult(amount, None, (), refused)
        a = amount_for(amount, basis.formula, n_h=float(basis.n_h))
        a = replace(a, label=f"{basis.label} ({basis.formula.hill})" if basis.label != basis.formula.hill else a.label)
        rec = self.recommend(a, amount.snr, processed)
        return QuantResult(amount, rec, ((a, rec),))

    def assess(self, amount: Amount, processed: Processed, *, candidates: Sequence[tuple[Any, float | None]] = ()) -> QuantResult:
        """The go/no-go for ``amount``, and the amount and go/no-go of each candidate.

        Parameters
        ----------
        candidates
            (candidate, protons) pairs in report order: a formula, SMILES or molar mass, and the
            protons it holds in the quantified ranges (None: the amount's own proton count).
        """
        per = []
        for candidate, n_h in candidates:
            a = amount_for(amount, candidate, n_h=n_h)
            per.append((a, self.recommend(a, amount.snr, processed)))
        rec = per[0][1] if per else self.recommend(amount, amount.snr, processed)
        return QuantResult(amount, rec, tuple(per))
