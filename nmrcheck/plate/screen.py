"""Screen one well: read, process, find formula candidates, check them, estimate the amount.

:func:`screen_well` never raises: every failure becomes the well's status and error text,
so one bad well never stops a plate. Stages written elsewhere (validation, quantification)
are used when installed; when one is missing the well records a note saying so.
"""

from __future__ import annotations

import dataclasses
import enum
import logging
import time
import traceback
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from nmrcheck import __version__
from nmrcheck.errors import InputFileError, NmrcheckError, ParameterError
from nmrcheck.plate.manifest import WellSpec, resolve_spectrum
from nmrcheck.plate.results import SpectrumTrace, WellResult, options_hash
from nmrcheck.processing import ProcessingOptions

__all__ = ["ScreenOptions", "screen_well", "well_options_hash", "plain"]

log = logging.getLogger("nmrcheck")

# Best first: a well is called by the best verdict among the candidates it was asked about.
_VERDICT_ORDER = ("consistent", "doubtful", "undecided", "inconsistent")


@dataclass(frozen=True)
class ScreenOptions:
    """Every choice of a plate screen beyond the manifest; stored with each result and hashed to key it."""

    processing: ProcessingOptions = field(default_factory=ProcessingOptions)
    mass_tolerance_ppm: float = 3.0
    elements: str | None = None
    """Element ranges for the formula search (``'C0-60 H0-120 N0-6 O0-20'``); None: the engine's default."""
    rules: str = "common"
    max_formulas: int = 10
    trace_bins: int = 2048
    """Bins of the display copy of each spectrum kept for the report."""

    def __post_init__(self) -> None:
        if not 0 < self.mass_tolerance_ppm <= 100:
            raise ParameterError(f"mass_tolerance_ppm: {self.mass_tolerance_ppm} ppm is outside 0..100 ppm")
        if self.max_formulas < 1:
            raise ParameterError(f"max_formulas: must be >= 1, got {self.max_formulas}")
        if self.trace_bins < 16:
            raise ParameterError(f"trace_bins: must be >= 16, got {self.trace_bins}")

    def as_dict(self) -> dict[str, Any]:
        d = dataclasses.asdict(self)
        d["processing"] = self.processing.as_dict()
        return d


def well_options_hash(spec: WellSpec, options: ScreenOptions) -> str:
    """Key of a result: the options and what of the manifest row changes the result."""
    return options_hash(options.as_dict(), spec.fingerprint())


def plain(value: Any) -> Any:
    """A JSON-ready copy of a stage's record: dataclasses to dicts, formulas to Hill text, arrays to lists."""
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, float):
        return value if np.isfinite(value) else None
    if isinstance(value, np.generic):
        return plain(value.item())
    if isinstance(value, np.ndarray):
        return [plain(v) for v in value.tolist()]
    if isinstance(value, enum.Enum):
        return plain(value.value)
    if hasattr(value, "hill") and hasattr(value, "counts"):
        return value.hill
    if hasattr(value, "as_dict") and callable(value.as_dict):
        return plain(value.as_dict())
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: plain(getattr(value, f.name)) for f in dataclasses.fields(value) if f.name not in ("spectrum", "data")}
    if isinstance(value, Mapping):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        return [plain(v) for v in value]
    return str(value)


class _Clock:
    def __init__(self) -> None:
        self.timings: dict[str, float] = {}
        self._t = time.perf_counter()

    def lap(self, stage: str) -> None:
        now = time.perf_counter()
        self.timings[stage] = round(now - self._t, 4)
        self._t = now


def _processing_record(processed, options: ProcessingOptions) -> dict[str, Any]:
    spec = processed.spectrum
    return {
        "options": options.as_dict(),
        "phase": plain(processed.phase),
        "reference": plain(processed.reference),
        "snr": float(processed.snr),
        "noise": float(processed.noise),
        "solvent": spec.solvent,
        "spectrometer_mhz": float(spec.spectrometer_mhz),
        "points": int(spec.size),
        "history": [step.as_dict() for step in spec.history],
        "warnings": list(processed.warnings),
    }


def _formula_candidates(spec: WellSpec, options: ScreenOptions, notes: list[str]) -> tuple[list[Any], list[dict[str, Any]]]:
    """(engine objects, dict records) of the formula candidates: the manifest's, then the HRMS search's."""
    from nmrcheck.chem import formula_search, parse_formula

    objects: list[Any] = []
    records: list[dict[str, Any]] = []
    for text in spec.formulas:
        f = parse_formula(text)
        objects.append(f)
        records.append({"kind": "formula", "source": "manifest", "formula": f.hill, "neutral_mass": f.monoisotopic_mass})
    for name, smiles in spec.structures:
        records.append({"kind": "structure", "source": "manifest", "name": name, "smiles": smiles})
    if spec.ms_features:
        try:
            search = formula_search(
                list(spec.ms_features),
                ppm=options.mass_tolerance_ppm,
                isotopes=spec.isotopes,
                elements=options.elements,
                rules=options.rules,
                max_candidates=options.max_formulas,
            )
        except NmrcheckError as exc:
            notes.append(f"formula search: {exc}")
            return objects, records
        given = {r["formula"] for r in records if r["kind"] == "formula"}
        for cand in search.candidates:
            rec = plain(cand)
            rec.update({"kind": "formula", "source": "hrms"})
            if rec["formula"] in given:
                # The manifest's formula is also found from the MS feature: keep one record, with the MS evidence.
                for r in records:
                    if r.get("formula") == rec["formula"] and r["source"] == "manifest":
                        r.update({k: v for k, v in rec.items() if k not in ("source",)})
                        r["source"] = "manifest+hrms"
                continue
            objects.append(cand)
            records.append(rec)
        if not search.candidates:
            notes.append(f"formula search: no formula within {options.mass_tolerance_ppm:g} ppm passes the {options.rules} rules")
    return objects, records


def _validate(processed, spec: WellSpec, formula_objects: list[Any], notes: list[str]) -> list[dict[str, Any]] | None:
    """Checks from the validation stage, or None (with a note) when it is not installed."""
    try:
        from nmrcheck import validate
    except ImportError:
        notes.append("validation stage not installed: candidates were not checked against the spectrum")
        return None
    check = getattr(validate, "check_candidates", None)
    if check is None:
        notes.append("validation stage has no check_candidates(): candidates were not checked")
        return None
    structures = list(spec.structures)
    candidates: list[Any] = list(formula_objects)
    if structures:
        candidates += [smiles for _, smiles in structures]
    if not candidates:
        return []
    feature = list(spec.ms_features) or None
    results = check(processed, candidates, ms_feature=feature)
    return [plain(r) for r in results]


def _verdict_of(checks: list[dict[str, Any]] | None, candidates: list[dict[str, Any]]) -> str:
    if not checks:
        return "undecided"
    verdicts = [str(c.get("verdict", "undecided")) for c in checks]
    manifest_keys = {c.get("formula") or c.get("smiles") for c in candidates if str(c.get("source", "")).startswith("manifest")}
    if manifest_keys:
        # The chemist named candidates: the call is about them, not about every formula the mass allows.
        named = [str(c.get("verdict", "undecided")) for c in checks if _check_key(c) in manifest_keys]
        if named:
            verdicts = named
    for v in _VERDICT_ORDER:
        if v in verdicts:
            return v
    return "undecided"


def _check_key(check: dict[str, Any]) -> str | None:
    cand = check.get("candidate")
    if isinstance(cand, dict):
        return cand.get("formula") or cand.get("smiles")
    if isinstance(cand, str):
        return cand
    return check.get("formula") or check.get("smiles")


def _quantify(processed, spec: WellSpec, candidates: list[dict[str, Any]], notes: list[str]) -> tuple[dict[str, Any] | None, str | None]:
    try:
        from nmrcheck import quant
    except ImportError:
        notes.append("quantification stage not installed: no amount or go/no-go recommendation")
        return None, None
    estimate = getattr(quant, "estimate_amount", None)
    if estimate is None:
        notes.append("quantification stage has no estimate_amount(): no amount estimated")
        return None, None
    masses = [c["neutral_mass"] for c in candidates if c.get("neutral_mass")]
    result = estimate(processed, molar_mass=masses[0] if masses else None)
    rec = plain(result)
    recommendation = rec.get("recommendation") if isinstance(rec, dict) else None
    return rec, recommendation


def screen_well(spec: WellSpec, directory: str, options: ScreenOptions) -> WellResult:
    """Screen one well; every failure is returned as the result's status and error, never raised.

    Parameters
    ----------
    spec
        The well's manifest row.
    directory
        Folder the manifest's relative paths start from.
    options
        Processing and search options (the same for every well of a run).
    """
    from nmrcheck.io import read_any
    from nmrcheck.processing import process

    clock = _Clock()
    notes: list[str] = []
    base = {
        "well": spec.well,
        "software_version": __version__,
        "options_hash": well_options_hash(spec, options),
        "spec": spec.as_dict(),
        "ms_feature": {"ions": [list(f) for f in spec.ms_features], "isotopes": spec.isotopes and list(spec.isotopes), "rt_min": spec.rt_min} if spec.ms_features else None,
    }
    path: Path | None = None
    try:
        matches = resolve_spectrum(spec, directory)
        if not matches:
            raise InputFileError(spec.spectrum, "no recording matches this path or pattern")
        if len(matches) > 1:
            raise InputFileError(spec.spectrum, f"the pattern matches {len(matches)} recordings ({matches[0].name}, {matches[1].name}, ...); make it name one")
        path = matches[0]
        record = read_any(path)
        clock.lap("read")
    except InputFileError as exc:
        clock.lap("read")
        return WellResult(status="unreadable", verdict="unreadable", spectrum_path=str(path) if path else None, error=str(exc), timings=clock.timings, notes=tuple(notes), **base)
    except Exception as exc:  # noqa: BLE001 - a plate run records every failure as the well's result
        return _error_result(base, path, exc, clock, notes)

    try:
        popts = options.processing
        from nmrcheck.processing.solvents import normalise_solvent

        file_solvent = normalise_solvent(record.acquisition.solvent)
        if spec.solvent and file_solvent is None:
            popts = dataclasses.replace(popts, solvent=spec.solvent)
        elif spec.solvent and file_solvent != spec.solvent:
            notes.append(f"manifest solvent {spec.solvent} differs from the recording's {file_solvent}; the recording's is used")
        processed = process(record, popts)
        clock.lap("process")
        real = processed.spectrum.data.real
        trace = SpectrumTrace.from_spectrum(processed.spectrum.ppm, real, bins=options.trace_bins)
        common = dict(
            spectrum_path=str(path),
            processing=_processing_record(processed, popts),
            regions=tuple(r.as_dict() for r in processed.regions),
            count=plain(processed.count),
            trace=trace,
        )
        formula_objects, candidates = _formula_candidates(spec, options, notes)
        clock.lap("formulas")
        if processed.count is None:
            notes.append("no analyte signal above the noise threshold: the well looks empty")
            return WellResult(status="empty", verdict="empty", candidates=tuple(candidates), timings=clock.timings, notes=tuple(notes), **common, **base)
        checks = _validate(processed, spec, formula_objects, notes)
        clock.lap("validate")
        amount, recommendation = _quantify(processed, spec, candidates, notes)
        clock.lap("quantify")
        return WellResult(
            status="done",
            verdict=_verdict_of(checks, candidates),
            candidates=tuple(candidates),
            checks=tuple(checks or ()),
            amount=amount,
            recommendation=recommendation,
            timings=clock.timings,
            notes=tuple(notes),
            **common,
            **base,
        )
    except Exception as exc:  # noqa: BLE001 - errors are data in a plate run
        return _error_result(base, path, exc, clock, notes)


def _error_result(base: dict[str, Any], path: Path | None, exc: BaseException, clock: _Clock, notes: list[str]) -> WellResult:
    if isinstance(exc, NmrcheckError):
        text = f"{type(exc).__name__}: {exc}"
    else:
        # An unexpected failure: keep the last frames so the report shows where it happened.
        tb = traceback.format_exception(type(exc), exc, exc.__traceback__)
        text = f"{type(exc).__name__}: {exc}\n" + "".join(tb[-3:])
    log.warning("well %s: %s", base["well"], str(exc).splitlines()[0] if str(exc) else type(exc).__name__)
    return WellResult(status="error", verdict="error", spectrum_path=str(path) if path else None, error=text, timings=clock.timings, notes=tuple(notes), **base)
