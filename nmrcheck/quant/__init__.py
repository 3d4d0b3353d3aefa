"""Quantification: amount of compound in the tube against a standard, the solvent or an external calibration, and go/no-go."""

from nmrcheck.quant.amount import Amount, CandidateAmount, amount_for, quantify
from nmrcheck.quant.options import DEFAULT_EXPERIMENT, QuantOptions, QuantResult, parse_ppm_range
from nmrcheck.quant.pulcon import PulconFactors, flip_angle_deg, pulcon_factor
from nmrcheck.quant.recommend import Recommendation, Threshold, load_thresholds, recommend, scans_for_snr
from nmrcheck.quant.references import (
    ExternalCalibration,
    SolventReference,
    StandardReference,
    known_standards,
    solvent_info,
    standard_info,
)

__all__ = [
    "DEFAULT_EXPERIMENT",
    "Amount",
    "CandidateAmount",
    "ExternalCalibration",
    "PulconFactors",
    "QuantOptions",
    "QuantResult",
    "Recommendation",
    "SolventReference",
    "StandardReference",
    "Threshold",
    "amount_for",
    "flip_angle_deg",
    "known_standards",
    "load_thresholds",
    "parse_ppm_range",
    "pulcon_factor",
    "quantify",
    "recommend",
    "scans_for_snr",
    "solvent_info",
    "standard_info",
]
