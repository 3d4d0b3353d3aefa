"""Records the validator passes between its steps: candidates, evidence, check results and verdicts."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from nmrcheck.chem.adducts import neutral_mass, parse_ion
from nmrcheck.tolerances import DEFAULT_TOLERANCE_PPM
from nmrcheck.chem.formula import Formula
from nmrcheck.errors import ParameterError

__all__ = ["WellFeature", "Candidate", "CandidateProblem", "MsFeature", "ObservedRegion", "Evidence", "CheckResult", "CandidateVerdict", "STATUSES", "VERDICTS"]

#: Status of one check, from supporting to contradicting.
STATUSES = ("pass", "warn", "fail", "not-applicable")
#: Verdicts, best first (the ranking order).
VERDICTS = ("consistent", "doubtful", "undecided", "inconsistent")


@dataclass(frozen=True, eq=False)
class Candidate:
    """One hypothesis: a formula, optionally with a structure (RDKit Mol with implicit H)."""

    label: str
    formula: Formula
    mol: Any = None
    origin: str = ""
    """Where it came from: 'formula', 'smiles', a file and record, or 'formula engine'."""


@dataclass(frozen=True)
class CandidateProblem:
    """An entry that could not become a candidate, with the reason (reported, then skipped)."""

    label: str
    origin: str
    problem: str


@dataclass(frozen=True)
class MsFeature:
    """One MS feature: observed ions ``((mz, ion), ...)``, mass tolerance and optional isotope intensities."""

    ions: tuple[tuple[float, str], ...]
    ppm: float = DEFAULT_TOLERANCE_PPM
    isotopes: tuple[float, ...] | None = None
    """Relative intensities M+0, M+1, ... of the first ion."""
    neutral_mass: float = field(init=False)

    def __post_init__(self) -> None:
        if not self.ions:
            raise ParameterError("ms feature: give at least one (m/z, ion) pair")
        if not 0 < self.ppm <= 100:
            raise ParameterError(f"ppm: mass tolerance must be in (0, 100] ppm, got {self.ppm}")
        masses = [neutral_mass(float(mz), parse_ion(ion)) for mz, ion in self.ions]
        mean = sum(masses) / len(masses)
        for (mz, ion), m in zip(self.ions, masses):
            if abs(m - mean) / mean * 1e6 > 2 * self.ppm:
                raise ParameterError(
                    f"ms feature: m/z {mz} as {ion} gives M = {m:.5f}, which disagrees with the other ions (mean {mean:.5f})"
                )
        object.__setattr__(self, "neutral_mass", mean)


@dataclass(frozen=True)
class ObservedRegion:
    """A counted analyte region of the spectrum (high ppm first) with its integral."""

    start_ppm: float
    end_ppm: float
    integral: float
    peak_ppm: float
    lines: int | None = None
    """Resolved lines (local maxima above a tenth of the tallest and above the noise); None when not measured."""
    spread_hz: float | None = None
    """Distance between the outermost of those lines, Hz (0 for one line)."""
    linewidth_hz: float | None = None
    """Full width at half height of the tallest line, Hz."""

    @property
    def centre_ppm(self) -> float:
        return self.peak_ppm


@dataclass(frozen=True)
class Evidence:
    """What the spectrum and the MS feature say, independent of any candidate."""

    source: str
    solvent: str | None
    regions: tuple[ObservedRegion, ...]
    """Counted analyte regions with positive integral."""
    flagged: tuple[tuple[float, float, str], ...]
    """(start_ppm, end_ppm, label) of solvent, water, standard and impurity regions (hydrogens may hide there)."""
    total_h: float | None
    total_h_low: float | None
    total_h_high: float | None
    """The processor's self-consistent count (its unit may be off by a whole factor)."""
    snr: float
    ms: MsFeature | None = None
    warnings: tuple[str, ...] = ()
    spectrometer_mhz: float | None = None
    flagged_integrals: tuple[float, ...] = ()
    """Integral of each ``flagged`` region (same order); empty when not measured."""
    ms_features: tuple["WellFeature", ...] = ()
    """Other MS features of the same well with their share of the ion current (purity evidence); may be empty."""


@dataclass(frozen=True)
class WellFeature:
    """One MS feature seen in a well, as purity evidence: its m/z and its share of the well's ion current (%)."""

    mz: float
    share_pct: float
    label: str = ""


@dataclass(frozen=True)
class CheckResult:
    """Outcome of one check on one candidate."""

    name: str
    status: str
    observed: str
    expected: str
    explanation: str
    weight: float = 1.0
    """How much the check counts in the score and in ordering the reasons."""
    details: dict = field(default_factory=dict, compare=False)

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "status": self.status, "observed": self.observed, "expected": self.expected, "explanation": self.explanation}


@dataclass(frozen=True, eq=False)
class CandidateVerdict:
    """The verdict on one candidate, its score, its rank among the others and the reasons, strongest first."""

    candidate: Candidate
    verdict: str
    score: float
    rank: int
    checks: tuple[CheckResult, ...]
    reasons: tuple[str, ...]

    def check(self, name: str) -> CheckResult | None:
        return next((c for c in self.checks if c.name == name), None)

    def counted_h(self, evidence: Evidence, *, exclude_ppm: tuple[float, float] | None = None) -> int | None:
        """Whole protons the candidate's anchored count gives the evidence's regions, leaving out those
        overlapping ``exclude_ppm`` (e.g. an internal standard's range); None without a count."""
        check = self.check("proton count")
        whole = check.details.get("whole") if check is not None else None
        assigned = self.check("assignment")
        if assigned is not None and assigned.details.get("assignment") is not None:
            # a structure: the protons its assignment gave each region
            whole = assigned.details["assignment"].region_assigned
        if not whole:
            return None
        hi, lo = (max(exclude_ppm), min(exclude_ppm)) if exclude_ppm else (None, None)
        n = sum(w for r, w in zip(evidence.regions, whole) if hi is None or not (r.end_ppm < hi and r.start_ppm > lo))
        return n or None

    def as_dict(self) -> dict[str, Any]:
        c = self.candidate
        from rdkit import Chem

        return {
            "label": c.label,
            "formula": c.formula.hill,
            "smiles": Chem.MolToSmiles(c.mol) if c.mol is not None else None,
            "origin": c.origin,
            "verdict": self.verdict,
            "score": round(self.score, 3),
            "rank": self.rank,
            "reasons": list(self.reasons),
            "checks": [x.as_dict() for x in self.checks],
        }
