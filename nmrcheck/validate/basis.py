"""Which candidate an amount may be computed for, and on which signals and protons.

An amount is only as sound as the protons it is divided by: it is taken from the best-ranked
candidate that is not ``inconsistent``, on the signals its assignment (or, for a bare formula,
its proton count) gave whole numbers of its own protons, divided by those protons. Signals that
also hold an impurity (more than half a proton beyond what they were given) are left out.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from nmrcheck.chem.formula import Formula
from nmrcheck.validate.assign import MINOR_H, Assignment
from nmrcheck.validate.records import CandidateVerdict, Evidence

__all__ = ["AmountBasis", "amount_basis"]


@dataclass(frozen=True)
class AmountBasis:
    """The candidate an amount is for, the signals (ppm ranges) and the protons they hold."""

    label: str
    formula: Formula
    n_h: int
    """Protons of the candidate in ``ranges_ppm``."""
    visible_h: int
    """All the protons the candidate shows in this spectrum (its full visible count)."""
    ranges_ppm: tuple[tuple[float, float], ...]
    verdict: str

    def as_dict(self) -> dict:
        return {"candidate": self.label, "formula": self.formula.hill, "n_h": self.n_h, "visible_h": self.visible_h,
                "ranges_ppm": [list(r) for r in self.ranges_ppm], "verdict": self.verdict}


def _clean(h: float, given: int) -> bool:
    return given > 0 and abs(h - given) <= max(0.35, 0.1 * given) and h - given < MINOR_H


def amount_basis(verdicts: Iterable[CandidateVerdict], evidence: Evidence) -> AmountBasis | str:
    """The basis for an amount, or a one-line reason why there is none.

    ``verdicts`` are ranked (:func:`nmrcheck.validate.check_candidates`); the first that is not
    ``inconsistent`` and has an assignment or a proton count is used.
    """
    # a structure is the more specific claim: among equals it comes first
    ranked = sorted(verdicts, key=lambda v: (v.rank, v.candidate.mol is None))
    if not ranked:
        return "no candidate was checked"
    for v in ranked:
        if v.verdict == "inconsistent":
            continue
        check = v.check("assignment")
        a = check.details.get("assignment") if check is not None else None
        if isinstance(a, Assignment):
            picked = [j for j, (h, n) in enumerate(zip(a.region_h, a.region_assigned)) if _clean(h, n)]
            if not picked:
                continue
            return AmountBasis(
                v.candidate.label, v.candidate.formula, int(sum(a.region_assigned[j] for j in picked)), a.visible_h,
                tuple((evidence.regions[j].start_ppm, evidence.regions[j].end_ppm) for j in picked), v.verdict,
            )
        count = v.check("proton count")
        whole = count.details.get("whole") if count is not None else None
        h = count.details.get("h") if count is not None else None
        if whole and h and count.status != "fail":
            picked = [j for j, (x, n) in enumerate(zip(h, whole)) if _clean(x, n)]
            if picked:
                return AmountBasis(
                    v.candidate.label, v.candidate.formula, int(sum(whole[j] for j in picked)), int(count.details.get("fit_n", sum(whole))),
                    tuple((evidence.regions[j].start_ppm, evidence.regions[j].end_ppm) for j in picked), v.verdict,
                )
    if all(v.verdict == "inconsistent" for v in ranked):
        return "every candidate is inconsistent with the spectrum, so no proton count to divide by"
    return "no candidate gives the signals whole numbers of its protons"
