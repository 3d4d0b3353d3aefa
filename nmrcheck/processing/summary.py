"""Plain-data (JSON-ready) summary of a processed recording, shared by the CLI, the plate store and reports."""

from __future__ import annotations

from typing import Any

from nmrcheck.processing.results import Processed

__all__ = ["processed_summary"]


def _r(x: float | None, nd: int = 4) -> float | None:
    return None if x is None else round(float(x), nd)


def processed_summary(p: Processed) -> dict[str, Any]:
    """Everything a reader of one processed spectrum needs, as JSON-ready built-ins."""
    c = p.count
    acq = p.spectrum.acquisition
    return {
        "source": p.spectrum.source,
        "solvent": p.spectrum.solvent,
        "spectrometer_mhz": _r(acq.spectrometer_mhz, 6),
        "acquisition": {
            "scans": acq.scans,
            "receiver_gain": acq.receiver_gain,
            "pulse_us": acq.pulse_us,
            "pulse_program": acq.pulse_program,
            "temperature_k": acq.temperature_k,
            "relaxation_delay_s": acq.relaxation_delay_s,
            "sweep_width_hz": _r(acq.sweep_width_hz, 3),
        },
        "reference": {
            "kind": p.reference.kind,
            "name": p.reference.name,
            "ppm": _r(p.reference.ppm),
            "found_ppm": _r(p.reference.found_ppm),
            "source": p.reference.source,
        },
        "phase": {
            "p0_deg": _r(p.phase.p0_deg, 2),
            "p1_deg": _r(p.phase.p1_deg, 2),
            "pivot_ppm": _r(p.phase.pivot_ppm),
            "method": p.phase.method,
            "peaks_used": p.phase.peaks_used,
        },
        "snr": _r(p.snr, 1),
        "noise": p.noise,
        "regions": [r.as_dict() for r in p.regions],
        "total_h": _r(c.total_h, 2) if c else None,
        "total_h_range": [_r(c.total_h_low, 2), _r(c.total_h_high, 2)] if c else None,
        "integer_h": c.integer_h if c else None,
        "unit_integral": c.unit_integral if c else None,
        "count_method": c.method if c else None,
        "ambiguous": bool(c.ambiguous) if c else None,
        "alternative_totals": [_r(t, 2) for t in c.alternative_totals] if c else None,
        "lower_bound": bool(c.lower_bound) if c else None,
        "warnings": list(p.warnings),
        "history": [s.as_dict() for s in p.spectrum.history],
    }
