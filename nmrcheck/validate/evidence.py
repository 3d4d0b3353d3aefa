"""Gather the evidence a candidate is checked against from a processed spectrum and an MS feature."""

from __future__ import annotations

from nmrcheck.processing.results import Processed
from nmrcheck.processing.solvents import normalise_solvent
from nmrcheck.validate.records import Evidence, MsFeature, ObservedRegion

__all__ = ["evidence_from"]


def evidence_from(processed: Processed, ms_feature: MsFeature | None = None) -> Evidence:
    """Evidence from a :class:`~nmrcheck.processing.Processed` result and an optional MS feature."""
    regions = []
    flagged = []
    for r in processed.regions:
        if r.counted:
            if r.integral > 0:
                peak = r.peak_ppm if r.peak_ppm is not None else 0.5 * (r.start_ppm + r.end_ppm)
                regions.append(ObservedRegion(r.start_ppm, r.end_ppm, float(r.integral), float(peak)))
        else:
            flagged.append((r.start_ppm, r.end_ppm, r.label or r.flag or "flagged"))
    c = processed.count
    return Evidence(
        source=str(processed.spectrum.source),
        solvent=normalise_solvent(processed.spectrum.solvent),
        regions=tuple(regions),
        flagged=tuple(flagged),
        total_h=None if c is None else c.total_h,
        total_h_low=None if c is None else c.total_h_low,
        total_h_high=None if c is None else c.total_h_high,
        snr=float(processed.snr),
        ms=ms_feature,
        warnings=tuple(processed.warnings),
    )
