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
from nmrcheck.errors import InputFileError, NmrcheckError, ParameterError, human_message
from nmrcheck.io import Fid
from nmrcheck.plate.manifest import WellSpec, resolve_spectrum
from nmrcheck.plate.results import Dereplication, KnownMatch, SpectrumTrace, WellResult, options_hash
from nmrcheck.processing import ProcessingOptions
from nmrcheck.processing.results import Processed
from nmrcheck.processing.shared_phase import SharedPhase, acquisition_key
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM

__all__ = ["ScreenOptions", "failure_result", "screen_well", "well_options_hash", "plain"]

log = logging.getLogger("nmrcheck")

# Best first: a well is called by the best verdict among the candidates it was asked about.
_VERDICT_ORDER = ("consistent", "doubtful", "undecided", "inconsistent")


@dataclass(frozen=True)
class ScreenOptions:
    """Every choice of a plate screen beyond the manifest; stored with each result and hashed to key it."""

    processing: ProcessingOptions = field(default_factory=ProcessingOptions)
    mass_tolerance_ppm: float = DEFAULT_TOLERANCE_PPM
    elements: str | None = None
    """Element ranges for the formula search (``'C0-60 H0-120 N0-6 O0-20'``); None: the engine's default."""
    rules: str = "common"
    max_formulas: int = 10
    trace_bins: int = 2048
    """Bins of the display copy of each spectrum kept for the report."""
    solvent_volume_ul: float = 35.0
    """Solvent in each tube, uL (the residual solvent signal is the amount reference)."""
    deuteration_pct: float = 99.8
    """Atom % D of the solvent lot."""
    next_experiment: str = "1H-13C HSQC"
    """Experiment the go/no-go recommendation is for (a name in the quantification thresholds)."""
    standard: str | None = None
    """Internal standard in every tube (a name in the standards table); None: the residual solvent line is the reference."""
    standard_nmol: float | None = None
    """Amount of the internal standard in each tube, nmol."""
    library: str | None = None
    """Indexed known-compound library (:func:`nmrcheck.ms.library.open_library`); its matches join the candidates."""
    genus: str | None = None
    """The extract's organism: genus and family, for ranking known compounds."""
    family: str | None = None
    retention_calibration: str | None = None
    """Retention calibration file (reference compounds' rt_min and logP or SMILES); None: fit on the plate."""
    shared_phase: tuple[SharedPhase, ...] = ()
    """First-order phases the plate's strong wells share, one per acquisition set (found by the
    runner's survey, :mod:`nmrcheck.plate.phase_survey`). Measured on the plate rather than chosen,
    so left out of the results' key: a result screened before a later survey stays valid, and the
    value a well used is stored with its processing options."""

    def __post_init__(self) -> None:
        if not 0 < self.mass_tolerance_ppm <= 100:
            raise ParameterError(f"mass_tolerance_ppm: {self.mass_tolerance_ppm} ppm is outside 0..100 ppm")
        if self.max_formulas < 1:
            raise ParameterError(f"max_formulas: must be >= 1, got {self.max_formulas}")
        if self.trace_bins < 16:
            raise ParameterError(f"trace_bins: must be >= 16, got {self.trace_bins}")
        if (self.standard is None) != (self.standard_nmol is None):
            raise ParameterError("standard, standard_nmol: give both (the standard and its amount in each tube) or neither")
        if not 0 < self.solvent_volume_ul <= 2000:
            raise ParameterError(f"solvent_volume_ul: {self.solvent_volume_ul} uL is outside 0..2000")
        if not 90 <= self.deuteration_pct <= 100:
            raise ParameterError(f"deuteration_pct: {self.deuteration_pct} is outside 90..100 atom % D")

    def as_dict(self) -> dict[str, Any]:
        d = dataclasses.asdict(self)
        d["processing"] = self.processing.as_dict()
        d["shared_phase"] = [plain(s) for s in self.shared_phase]
        return d


def well_options_hash(spec: WellSpec, options: ScreenOptions) -> str:
    """Key of a result: the options and what of the manifest row changes the result (not the shared phase)."""
    chosen = options.as_dict()
    del chosen["shared_phase"]
    return options_hash(chosen, spec.fingerprint())


def failure_result(spec: WellSpec, options: "ScreenOptions", message: str, *, status: str = "error") -> WellResult:
    """The record of a well the run could not screen (stopped on a limit, worker lost): status and reason only."""
    return WellResult(
        well=spec.well,
        status=status,
        verdict=status,
        error=message,
        software_version=__version__,
        options_hash=well_options_hash(spec, options),
        spec=spec.as_dict(),
    )


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


def _candidate_list(
    spec: WellSpec, options: ScreenOptions, notes: list[str], *, h_low: float | None = None
) -> tuple[list[Any], list[dict[str, Any]], Dereplication | None]:
    """(validation candidates, their records, the known-compound search): the manifest's formulas and
    structures, then the library's known compounds at the well's mass, then the HRMS search's.

    ``h_low``, the low end of the spectrum's own proton count, bounds the formulas' H from
    below: the count's self-found unit may be a whole fraction of the true one (it prefers
    fewer protons), so the true visible count is at least that, never surely at most.

    Records and candidates share an index and a ``key`` the checks refer back to. A
    validation candidate is None when the validation stage is not installed or the entry
    could not become a candidate (the problem is then in the record).
    """
    from nmrcheck.chem import formula_search, parse_formula

    try:
        from nmrcheck.validate import Candidate, candidates_from_strings
    except ImportError:
        Candidate = candidates_from_strings = None  # noqa: N806 - the stage is optional
        notes.append("validation stage not installed: candidates were not checked against the spectrum")

    objects: list[Any] = []
    records: list[dict[str, Any]] = []

    def add(record: dict[str, Any], make) -> None:
        record["key"] = f"c{len(records) + 1}"
        obj = None
        if candidates_from_strings is not None:
            good, bad = make()
            obj = good[0] if good else None
            if bad:
                record["problem"] = bad[0].problem
        objects.append(obj)
        records.append(record)

    for text in spec.formulas:
        f = parse_formula(text)
        add({"kind": "formula", "source": "manifest", "formula": f.hill, "neutral_mass": f.monoisotopic_mass},
            lambda t=text: candidates_from_strings(formulas=[t]))
    for name, smiles in spec.structures:
        add({"kind": "structure", "source": "manifest", "name": name, "smiles": smiles},
            lambda s=smiles, n=name: candidates_from_strings(smiles=[f"{s} {n}"]))
        if objects[-1] is not None:
            records[-1]["formula"] = objects[-1].formula.hill
            records[-1]["neutral_mass"] = objects[-1].formula.monoisotopic_mass
    if not spec.ms_features:
        return objects, records, None
    known = _known_compounds(spec, options, add, records, candidates_from_strings) if options.library else None
    try:
        search = formula_search(
            list(spec.ms_features),
            ppm=options.mass_tolerance_ppm,
            isotopes=spec.isotopes,
            elements=options.elements,
            rules=options.rules,
            max_candidates=options.max_formulas,
            h_range=None if h_low is None else (h_low, None),
        )
    except NmrcheckError as exc:
        notes.append(f"formula search: {exc}")
        return objects, records, known
    named = {r["formula"]: r for r in records if r["kind"] == "formula"}
    for cand in search.candidates:
        rec = plain(cand)
        rec["kind"] = "formula"
        if rec["formula"] in named:
            # The chemist's formula is also what the MS feature gives: one record, with the MS evidence.
            target = named[rec["formula"]]
            target.update({k: v for k, v in rec.items() if k not in ("kind",)})
            target["source"] = "manifest+hrms"
            continue
        rec["source"] = "hrms"
        add(rec, lambda c=cand: ((Candidate(c.formula.hill, c.formula, None, f"formula engine #{c.rank}"),), ()))
    notes.extend(f"formula search: {n}" for n in search.notes)
    if not search.candidates:
        notes.append(f"formula search: no formula within {options.mass_tolerance_ppm:g} ppm passes the {options.rules} rules")
    return objects, records, known


def _known_compounds(spec: WellSpec, options: ScreenOptions, add, records, candidates_from_strings) -> Dereplication:
    """Known compounds of the library at the well's mass: the well's record of the search; they become structure candidates."""
    from nmrcheck.ms.library import library_at, library_structures

    try:
        lookup = library_at(options.library).lookup(
            list(spec.ms_features), ppm=options.mass_tolerance_ppm, genus=options.genus, family=options.family
        )
    except NmrcheckError as exc:
        return Dereplication(count=None, ppm=options.mass_tolerance_ppm, genus=options.genus, family=options.family, error=str(exc))
    known = Dereplication(
        count=len(lookup.matches),
        matches=tuple(
            KnownMatch(rank=k, name=m.name, formula=m.formula, taxon_match=m.taxon_match, error_ppm=round(m.error_ppm, 3),
                       inchikey_block=m.inchikey_block, smiles=m.smiles)
            for k, m in enumerate(lookup.matches, start=1)
        ),
        ions=lookup.ions, ppm=lookup.ppm, genus=options.genus, family=options.family,
    )
    named = {r.get("smiles") for r in records if r["kind"] == "structure"}
    for (label, smiles), match in zip(library_structures(lookup), lookup.matches):
        if smiles in named:
            continue
        add({"kind": "structure", "source": "library", "name": label, "smiles": smiles, "formula": match.formula,
             "neutral_mass": match.monoisotopic_mass, "known": match.as_dict()},
            lambda s=smiles, n=label: candidates_from_strings(smiles=[f"{s} {n}"]) if candidates_from_strings else ((), ()))
    return known


def _check_record(key: str, verdict, evidence) -> dict[str, Any]:
    return {
        "key": key,
        "counted_h": verdict.counted_h(evidence),
        "label": verdict.candidate.label,
        "formula": verdict.candidate.formula.hill,
        "verdict": verdict.verdict,
        "score": round(float(verdict.score), 4),
        "rank": int(verdict.rank),
        "reasons": list(verdict.reasons),
        "checks": [
            {"name": c.name, "status": c.status, "observed": c.observed, "expected": c.expected, "explanation": c.explanation}
            for c in verdict.checks
        ],
    }


def _validate(processed, spec: WellSpec, options: ScreenOptions, objects: list[Any], records: list[dict[str, Any]], notes: list[str], found: dict[str, Any] | None = None) -> list[dict[str, Any]] | None:
    """One check record per candidate from the validation stage; None when the stage is not installed.

    ``found`` receives the well's ``purity`` record and the amount ``basis`` (the manifest's own
    claims first, then the search's; never an inconsistent candidate).
    """
    try:
        from nmrcheck.validate import MsFeature, amount_basis, check_candidates, evidence_from, purity_of
    except ImportError:
        return None
    found = {} if found is None else found
    ms = None
    if spec.ms_features:
        try:
            ms = MsFeature(ions=tuple(spec.ms_features), ppm=options.mass_tolerance_ppm, isotopes=spec.isotopes)
        except NmrcheckError as exc:
            notes.append(f"MS feature not used in the checks: {exc}")
    from nmrcheck.validate.purity import well_features_from

    evidence = evidence_from(processed, ms, ms_features=well_features_from(spec.lcms) if spec.lcms else ())
    pairs = [(rec["key"], obj) for rec, obj in zip(records, objects) if obj is not None]
    if not pairs:
        return []
    by_id = {id(obj): key for key, obj in pairs}
    verdicts = check_candidates([obj for _, obj in pairs], evidence)
    named = {r["key"] for r in records if str(r.get("source", "")).startswith("manifest")}
    own = [v for v in verdicts if by_id[id(v.candidate)] in named and v.verdict != "inconsistent"]
    basis = amount_basis(own, evidence) if own else amount_basis(verdicts, evidence)
    found["basis"] = basis
    found["purity"] = purity_of(own or verdicts, evidence).as_dict()
    return [_check_record(by_id[id(v.candidate)], v, evidence) for v in verdicts]


def _fragment_checks(spec: WellSpec, lcms: dict[str, Any], records: list[dict[str, Any]], checks: list[dict[str, Any]] | None, notes: list[str], *,
                     mass_tolerance_ppm: float) -> None:
    """MS/MS against each candidate formula: results into ``lcms['fragment_checks']``; a candidate
    whose precursor ion cannot hold a clearly observed fragment becomes inconsistent, with the reason."""
    from nmrcheck.chem.adducts import neutral_mass
    from nmrcheck.plate.lcms import fragment_checks

    formulas = [r["formula"] for r in records if r.get("formula")]
    if not formulas:
        return
    mass = None
    if spec.ms_features:
        try:
            mass = neutral_mass(*spec.ms_features[0])
        except NmrcheckError:
            mass = None
    try:
        results = fragment_checks(lcms, formulas, neutral_mass=mass, mass_tolerance_ppm=mass_tolerance_ppm)
    except NmrcheckError as exc:
        notes.append(f"MS/MS not checked: {exc}")
        return
    lcms["fragment_checks"] = results
    by_formula = {r["formula"]: r for r in results}
    for c in checks or ():
        r = by_formula.get(c.get("formula"))
        if r is None or r["status"] == "no fragments":
            continue
        contradicted = r["status"] == "contradicted"
        chimeric = contradicted and bool(r.get("co_isolated_mz"))
        explanation = "; ".join(r["reasons"]) if contradicted else (
            f"every clear fragment of m/z {r['precursor_mz']:.4f} ({r['species']}) is a sub-formula of {r['precursor_formula']}")
        if chimeric:
            explanation += f" (but m/z {', '.join(f'{m:.4f}' for m in r['co_isolated_mz'])} co-elutes within the isolation window: the fragment may be its)"
        c.setdefault("checks", []).append({"name": "fragments", "status": "warn" if chimeric else "fail" if contradicted else "pass",
                                           "observed": len(r["assignments"]), "expected": r["precursor_formula"], "explanation": explanation})
        if contradicted and not chimeric:
            c["verdict"] = "inconsistent"
            c.setdefault("reasons", []).extend(r["reasons"])


def _verdict_of(checks: list[dict[str, Any]] | None, records: list[dict[str, Any]]) -> str:
    """The well's call: the best verdict among the manifest's structures, else its formulas, else the HRMS formulas.

    A named structure is the most specific claim; a formula that fits while the structure
    does not must not hide the contradiction.
    """
    if not checks:
        return "undecided"
    kinds = {r["key"]: (r["kind"], str(r.get("source", "")).startswith("manifest")) for r in records}
    by_claim = (
        [c["verdict"] for c in checks if kinds.get(c["key"]) == ("structure", True)],
        [c["verdict"] for c in checks if kinds.get(c["key"]) == ("formula", True)],
        [c["verdict"] for c in checks],
    )
    verdicts = next(v for v in by_claim if v) if any(by_claim) else []
    for v in _VERDICT_ORDER:
        if v in verdicts:
            return v
    return "undecided"


def _amount_settings(spec: WellSpec, options: ScreenOptions) -> dict[str, Any]:
    """The well's amount settings: its manifest columns over the plate's options."""
    own = dict(spec.amount_settings)
    return {
        "volume_ul": float(own.get("volume_ul", options.solvent_volume_ul)),
        "deuteration_pct": float(own.get("deuteration_pct", options.deuteration_pct)),
        "standard": own.get("standard", options.standard),
        "standard_nmol": own.get("standard_nmol", options.standard_nmol if "standard" not in own else None),
        "next_experiment": str(own.get("next_experiment", options.next_experiment)),
    }


def _quantify(processed, spec: WellSpec, options: ScreenOptions, basis: Any, notes: list[str]) -> tuple[dict[str, Any] | None, dict[str, Any] | None]:
    """Amount of the well's sound lead candidate and the go/no-go for the next experiment.

    The reference is the internal standard when one is set (plate or well), else the residual
    solvent line. The amount is that of ``basis`` (:func:`nmrcheck.validate.amount_basis`: the
    best candidate that is not inconsistent, on its own signals and protons); when there is none,
    or the amount is refused, the well gets no amount and a note saying why.
    """
    try:
        from nmrcheck.quant import QuantOptions
    except ImportError:
        notes.append("quantification stage not installed: no amount or go/no-go recommendation")
        return None, None
    settings = _amount_settings(spec, options)
    if settings["standard"]:
        quant = QuantOptions(standard=settings["standard"], standard_nmol=settings["standard_nmol"], volume_ul=settings["volume_ul"], experiment=settings["next_experiment"])
    else:
        if not processed.spectrum.solvent:
            notes.append("no amount: the solvent is unknown, so its residual signal cannot serve as the reference")
            return None, None
        quant = QuantOptions(solvent_reference=True, deuteration_pct=settings["deuteration_pct"], volume_ul=settings["volume_ul"], experiment=settings["next_experiment"])
    if basis is None or basis == "no candidate was checked":
        # no hypothesis at all: the protons integrated, per proton (no mass, no candidate)
        suppressed = quant.suppressed_reference(processed)
        if suppressed:
            notes.append(suppressed)
            return None, None
        amount = quant.amount(processed)
        refused = quant.refusal(amount, processed)
        if refused:
            notes.append(refused)
            return None, None
        result = quant.assess(amount, processed)
        head = amount.brief()
        out = {k: head[k] for k in ("nmol", "ug", "conc_mM", "uncertainty_pct", "method")}
        out.update(basis=f"per {head['per']}", candidate=None, settings=settings, per_proton=head, details=plain(amount))
        return out, result.recommendation.as_dict()
    result = quant.for_candidate(processed, basis)
    if result.refused:
        notes.append(result.refused)
        return None, None
    a, rec = result.candidates[0]
    head = a.as_dict()
    out: dict[str, Any] = {k: head[k] for k in ("nmol", "ug", "conc_mM", "uncertainty_pct", "method")}
    out.update(basis=f"{head['candidate']} ({head['n_h']:g} H)", candidate=head, settings=settings,
               per_proton=result.amount.brief(), details=plain(result.amount))
    return out, rec.as_dict()


def _claimed_h_counts(spec: WellSpec, solvent: str | None) -> tuple[int, ...] | None:
    """Visible H totals the manifest's formulas and structures allow in ``solvent`` (for the processing's count)."""
    try:
        from nmrcheck.predict import SOLVENTS, expected_visible_h
        from nmrcheck.validate import candidates_from_strings
    except ImportError:
        return None
    cands, _ = candidates_from_strings(spec.formulas, [f"{smi} {name}" for name, smi in spec.structures])
    totals: set[int] = set()
    for c in cands:
        try:
            lo, hi, _, _ = expected_visible_h(c.mol if c.mol is not None else dict(c.formula.counts), solvent if solvent in SOLVENTS else None)
        except NmrcheckError:
            continue
        totals.update(range(max(1, lo), hi + 1))
    return tuple(sorted(totals)) or None


def _process_bounded(record: Any, popts: ProcessingOptions, counts: tuple[int, ...] | None, notes: list[str]) -> Processed:
    """``process`` with the unit bounded by the claimed H totals, or free when the claims allow none that fits."""
    from nmrcheck.processing import process

    if not counts:
        return process(record, popts)
    try:
        return process(record, dataclasses.replace(popts, candidate_h_counts=counts))
    except ParameterError as exc:
        # the claims allow no total the integrals fit: count freely, the checks will say why
        notes.append(f"proton count not bounded by the claimed formulas: {exc}")
        return process(record, popts)


def _shared_phase_of(record: Any, options: ScreenOptions) -> SharedPhase | None:
    """The plate's shared first-order phase for ``record``'s acquisition set (None for a processed spectrum or no match)."""
    if not options.shared_phase or not isinstance(record, Fid):
        return None
    key = acquisition_key(record)
    return next((s for s in options.shared_phase if s.key == key), None)


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

    clock = _Clock()
    notes: list[str] = []
    base = {
        "well": spec.well,
        "software_version": __version__,
        "options_hash": well_options_hash(spec, options),
        "spec": spec.as_dict(),
        "ms_feature": {"ions": [list(f) for f in spec.ms_features], "isotopes": spec.isotopes and list(spec.isotopes), "rt_min": spec.rt_min} if spec.ms_features else None,
        "lcms": dict(spec.lcms) if spec.lcms is not None else None,
    }
    if base["lcms"] and base["lcms"].get("major_features", 0) > 1:
        shares = ", ".join(f"{f['share']:.0%}" for f in base["lcms"]["features"] if f["share"] >= base["lcms"]["major_share"])
        notes.append(f"LC-MS: {base['lcms']['major_features']} major features in this well's window ({shares} of the ion current): it may hold a mixture")
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
        shared = _shared_phase_of(record, options)
        if shared is not None and popts.phase is None:
            popts = dataclasses.replace(popts, shared_p1=(shared.p1_deg, shared.scale_deg))
            notes.append(f"phased with the plate's {shared.describe()}")
        claimed_in = file_solvent or spec.solvent
        counts = _claimed_h_counts(spec, claimed_in)
        processed = _process_bounded(record, popts, counts, notes)
        seen = normalise_solvent(processed.spectrum.solvent)
        if counts and seen and seen != claimed_in:
            # The spectrum shows another solvent than the file says: its exchange decides which H the claims allow.
            again = _claimed_h_counts(spec, seen)
            if again != counts:
                processed = _process_bounded(record, popts, again, [])
        if spec.solvent and file_solvent not in (None, spec.solvent):
            if seen == spec.solvent:
                notes.append(f"manifest solvent {spec.solvent} is what the spectrum shows; the recording says {file_solvent}")
            else:
                notes.append(f"manifest solvent {spec.solvent} differs from the recording's {file_solvent}; the recording's is used")
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
        h_low = processed.count.total_h_low if processed.count is not None else None
        objects, candidates, known = _candidate_list(spec, options, notes, h_low=h_low)
        clock.lap("formulas")
        if processed.count is None:
            notes.append("no analyte signal above the noise threshold: the well looks empty")
            return WellResult(status="empty", verdict="empty", candidates=tuple(candidates), known=known, timings=clock.timings, notes=tuple(notes), **common, **base)
        found: dict[str, Any] = {}
        try:
            checks = _validate(processed, spec, options, objects, candidates, notes, found)
        except NmrcheckError as exc:
            checks = None
            notes.append(f"candidates not checked: {exc}")
        clock.lap("validate")
        if base["lcms"] is not None:
            _fragment_checks(spec, base["lcms"], candidates, checks, notes, mass_tolerance_ppm=options.mass_tolerance_ppm)
            clock.lap("msms")
        try:
            amount, recommendation = _quantify(processed, spec, options, found.get("basis"), notes)
        except NmrcheckError as exc:
            amount, recommendation = None, None
            notes.append(f"no amount estimated: {exc}")
        clock.lap("quantify")
        return WellResult(
            status="done",
            verdict=_verdict_of(checks, candidates),
            candidates=tuple(candidates),
            known=known,
            checks=tuple(checks or ()),
            amount=amount,
            recommendation=recommendation,
            purity=found.get("purity"),
            timings=clock.timings,
            notes=tuple(notes),
            **common,
            **base,
        )
    except Exception as exc:  # noqa: BLE001 - errors are data in a plate run
        return _error_result(base, path, exc, clock, notes)


def _error_result(base: dict[str, Any], path: Path | None, exc: BaseException, clock: _Clock, notes: list[str]) -> WellResult:
    text = human_message(exc)
    if not isinstance(exc, NmrcheckError):
        # An unexpected failure: the traceback goes to the log (debug level), the well gets words.
        log.debug("well %s: %s", base["well"], "".join(traceback.format_exception(type(exc), exc, exc.__traceback__)))
    log.warning("well %s: %s", base["well"], str(exc).splitlines()[0] if str(exc) else type(exc).__name__)
    return WellResult(status="error", verdict="error", spectrum_path=str(path) if path else None, error=text, timings=clock.timings, notes=tuple(notes), **base)
