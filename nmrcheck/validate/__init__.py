"""Validator: do candidate formulas and structures agree with a processed 1H spectrum and an MS feature?"""

from nmrcheck.validate.candidates import (
    candidates_from_entries,
    candidates_from_file,
    candidates_from_ms,
    candidates_from_strings,
    formula_of_mol,
)
from nmrcheck.validate.checks import (
    check_isotopes,
    check_mass,
    check_proton_count,
    check_shift_regions,
    check_signal_count,
    check_unsaturation,
    fit_count,
)
from nmrcheck.validate.evidence import evidence_from
from nmrcheck.validate.records import (
    STATUSES,
    VERDICTS,
    Candidate,
    CandidateProblem,
    CandidateVerdict,
    CheckResult,
    Evidence,
    MsFeature,
    ObservedRegion,
    WellFeature,
)
from nmrcheck.validate.verdict import check_candidate, check_candidates, rank_verdicts
from nmrcheck.validate.purity import Purity, purity_of
from nmrcheck.validate.basis import AmountBasis, amount_basis

__all__ = [
    "STATUSES",
    "VERDICTS",
    "Candidate",
    "CandidateProblem",
    "CandidateVerdict",
    "CheckResult",
    "Evidence",
    "MsFeature",
    "ObservedRegion",
    "WellFeature",
    "Purity",
    "AmountBasis",
    "amount_basis",
    "purity_of",
    "candidates_from_entries",
    "candidates_from_file",
    "candidates_from_ms",
    "candidates_from_strings",
    "check_candidate",
    "check_candidates",
    "check_isotopes",
    "check_mass",
    "check_proton_count",
    "check_shift_regions",
    "check_signal_count",
    "check_unsaturation",
    "evidence_from",
    "fit_count",
    "formula_of_mol",
    "rank_verdicts",
]
