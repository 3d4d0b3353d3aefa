"""Records that processing hands to quantification, validation, plates and reports."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from nmrcheck.processing.spectrum import Spectrum

__all__ = ["Region", "ProtonCount", "Reference", "PhaseCorrection", "Processed"]

#: Flags a region can carry; a flagged region is reported but not counted as analyte.
REGION_FLAGS = frozenset({"solvent", "water", "impurity", "reference", "satellite", "noise"})


@dataclass(frozen=True)
class Region:
    """One integration region, high ppm first: ``start_ppm > end_ppm``."""

    start_ppm: float
    end_ppm: float
    integral: float
    """Area in spectrum units (sum of real points times the point spacing in ppm)."""
    h: float | None = None
    """Protons this region holds, on the unit of :class:`ProtonCount` (None for flagged regions)."""
    flag: str | None = None
    """None for analyte signal, else one of ``REGION_FLAGS``; ``label`` names what was matched."""
    label: str | None = None
    peak_ppm: float | None = None
    """Shift of the tallest point in the region."""

    @property
    def counted(self) -> bool:
        return self.flag is None

    def as_dict(self) -> dict[str, Any]:
        return {
            "start_ppm": round(self.start_ppm, 4),
            "end_ppm": round(self.end_ppm, 4),
            "integral": self.integral,
            "h": None if self.h is None else round(self.h, 3),
            "flag": self.flag,
            "label": self.label,
            "peak_ppm": None if self.peak_ppm is None else round(self.peak_ppm, 4),
        }


@dataclass(frozen=True)
class ProtonCount:
    """How many protons the analyte shows, from the integrals alone or anchored to a given count."""

    unit_integral: float
    """Integral of one proton."""
    total_h: float
    total_h_low: float
    total_h_high: float
    integer_h: int
    """Sum of the per-region integer proton counts."""
    method: str
    """'self-consistent' (unit found from the data), 'anchored' (unit from a given H count) or
    'bounded by candidate formulas' (unit chosen among the totals the candidates allow)."""
    anchored_to: int | None = None
    residuals: tuple[float, ...] = ()
    """Per counted region, h minus its nearest integer."""
    ambiguous: bool = False
    """True when the integrals fit clearly different counts about equally well (typically n and
    2n protons); ``alternative_totals`` then lists them and the range spans them all."""
    alternative_totals: tuple[float, ...] = ()
    """Totals (H) of the units that fit about equally well, the reported one included; empty
    unless ``ambiguous``."""
    bounded_by: tuple[int, ...] | None = None
    """Whole-proton totals the caller allowed (candidate formulas' visible H), when given."""
    lower_bound: bool = False
    """True when a one-proton multiplet would stay under the detection limit at this unit: any
    number of such signals may be missing, so the total is a lower bound and the range's high
    end reaches at least twice it."""


@dataclass(frozen=True)
class Reference:
    """What set the ppm axis: an internal standard or the residual solvent signal."""

    kind: str
    """'TMS', 'DSS', 'solvent' or 'none' (axis left as acquired)."""
    name: str
    ppm: float
    """Shift the signal was set to."""
    found_ppm: float | None
    """Where the signal was found before referencing (None when nothing was found)."""
    source: str = ""
    line: str | None = None
    """Name of the table line used (e.g. 'CHCl3', 'TMS'), None when none was."""


@dataclass(frozen=True)
class PhaseCorrection:
    """Zero- and first-order phase applied: phase(ppm) = p0_deg + p1_deg * (pivot_ppm - ppm) / width_ppm."""

    p0_deg: float
    p1_deg: float
    pivot_ppm: float
    method: str
    peaks_used: int = 0
    spread_deg: float | None = None
    """Robust spread of the per-peak phases about the fitted line (a quality figure)."""


@dataclass(frozen=True, eq=False)
class Processed:
    """Everything processing learned from one recording."""

    spectrum: Spectrum
    phase: PhaseCorrection
    reference: Reference
    regions: tuple[Region, ...]
    count: ProtonCount | None
    snr: float
    noise: float
    """Standard deviation of the real spectrum in signal-free regions (spectrum units)."""
    warnings: tuple[str, ...] = field(default_factory=tuple)

    @property
    def counted_regions(self) -> tuple[Region, ...]:
        return tuple(r for r in self.regions if r.counted)
