"""FID to spectrum to regions to proton count: pure steps on frozen records, each logged in the history."""

from nmrcheck.processing.pipeline import ProcessingOptions, process
from nmrcheck.processing.results import PhaseCorrection, Processed, ProtonCount, Reference, Region
from nmrcheck.processing.spectrum import ProcessingStep, Spectrum

__all__ = [
    "PhaseCorrection",
    "Processed",
    "ProcessingOptions",
    "ProcessingStep",
    "ProtonCount",
    "Reference",
    "Region",
    "Spectrum",
    "process",
]
