"""Plate screening: a manifest of wells, a resumable parallel run into SQLite, and an overnight watch."""

from nmrcheck.plate.manifest import Manifest, PlateLayout, WellSpec, layout_named, read_manifest
from nmrcheck.plate.progress import Progress, progress_for
from nmrcheck.plate.results import STATUSES, VERDICTS, SpectrumTrace, WellResult
from nmrcheck.plate.runner import RunSummary, run_plate
from nmrcheck.plate.screen import ScreenOptions, screen_well
from nmrcheck.plate.store import ResultsStore

__all__ = [
    "Manifest",
    "PlateLayout",
    "Progress",
    "ResultsStore",
    "RunSummary",
    "STATUSES",
    "ScreenOptions",
    "SpectrumTrace",
    "VERDICTS",
    "WellResult",
    "WellSpec",
    "layout_named",
    "progress_for",
    "read_manifest",
    "run_plate",
    "screen_well",
]
