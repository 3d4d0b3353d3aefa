"""Verdicts: combine the checks of each candidate into consistent / doubtful / undecided / inconsistent, a score and a rank."""

from __future__ import annotations

from collections.abc import Iterable

from nmrcheck.validate.checks import all_checks, nmr_usable
from nmrcheck.validate.records import VERDICTS, Candidate, CandidateVerdict, CheckResult, Evidence

__all__ = ["check_candidate", "check_candidates", "verdict_of", "rank_verdicts"]

_STATUS_SCORE = {"pass": 1.0, "warn": 0.5, "fail": 0.0}
_STATUS_ORDER = {"fail": 0, "warn": 1, "pass": 2, "not-applicable": 3}


def verdict_of(checks: Iterable[CheckResult], evidence: Evidence) -> tuple[str, float, tuple[str, ...]]:
    """(verdict, score in 0..1, reasons strongest first) from a candidate's checks."""
    checks = tuple(checks)
    applicable = [c for c in checks if c.status in _STATUS_SCORE]
    weight = sum(c.weight for c in applicable)
    # a check that measures how well (the assignment's support) counts with that measure, capped by its status
    score = sum(c.weight * min(_STATUS_SCORE[c.status], c.details.get("support", 1.0)) for c in applicable) / weight if weight else 0.0
    ordered = sorted(checks, key=lambda c: (_STATUS_ORDER[c.status], -c.weight))
    reasons = [c.explanation for c in ordered if c.status != "not-applicable"]
    missing = []
    if evidence.ms is None:
        missing.append("no MS feature: the formula's mass is unchecked")
    why_nmr = nmr_usable(evidence)
    if why_nmr:
        missing.append(f"spectrum unusable: {why_nmr}")
    fails = [c for c in checks if c.status == "fail"]
    warns = [c for c in checks if c.status == "warn"]
    if fails:
        verdict = "inconsistent"
    elif missing:
        verdict = "undecided"
    elif any(c.weight >= 2 for c in warns) or len(warns) >= 2:
        verdict = "doubtful"
    else:
        verdict = "consistent"
    if verdict != "inconsistent":
        reasons = missing + reasons
    return verdict, score, tuple(reasons)


def check_candidate(candidate: Candidate, evidence: Evidence) -> CandidateVerdict:
    """Run every check on one candidate; its rank is 1 until ranked with others."""
    checks = all_checks(candidate, evidence)
    verdict, score, reasons = verdict_of(checks, evidence)
    return CandidateVerdict(candidate, verdict, score, 1, checks, reasons)


def rank_verdicts(verdicts: Iterable[CandidateVerdict]) -> tuple[CandidateVerdict, ...]:
    """Order by verdict then score; equal verdict and score (to 3 decimals) share a rank (1, 1, 3, ...)."""
    items = sorted(verdicts, key=lambda v: (VERDICTS.index(v.verdict), -round(v.score, 3)))
    out: list[CandidateVerdict] = []
    for i, v in enumerate(items):
        key = (v.verdict, round(v.score, 3))
        if out and (out[-1].verdict, round(out[-1].score, 3)) == key:
            rank = out[-1].rank
        else:
            rank = i + 1
        out.append(CandidateVerdict(v.candidate, v.verdict, v.score, rank, v.checks, v.reasons))
    return tuple(out)


def check_candidates(candidates: Iterable[Candidate], evidence: Evidence) -> tuple[CandidateVerdict, ...]:
    """Check and rank several candidates against the same evidence (ties share a rank)."""
    return rank_verdicts(check_candidate(c, evidence) for c in candidates)
