"""Before a plate is screened: the first-order phase its strong wells share.

Each complete recording of the plate is transformed and phased on its own
(:func:`nmrcheck.processing.pipeline.phase_reading`); where at least three strong wells of one
acquisition set agree, their value becomes the centre of a tight prior for every well of that
set (:mod:`nmrcheck.processing.shared_phase`). Weak wells gain most: their own first-order
phase wanders when only a few signal groups stand above the noise.

The survey runs in the plate's own process before any worker starts; a recording that cannot
be read or phased is skipped here (its well reports the problem when it is screened), and the
survey stops once ``ENOUGH_STRONG`` strong wells are read, or after ``budget_s``, so that a very
large plate is never held up by it. Weak wells are only transformed, not phased.
"""

from __future__ import annotations

import dataclasses
import logging
import time
from typing import Iterable

from nmrcheck.io import Fid, read_any
from nmrcheck.io.completeness import expected_size_reached
from nmrcheck.plate.manifest import WellSpec, resolve_spectrum
from nmrcheck.processing import ProcessingOptions
from nmrcheck.processing.pipeline import phase_reading
from nmrcheck.processing.shared_phase import STRONG_THIRD_GROUP_SNR, PhaseReading, SharedPhase, shared_first_order
from nmrcheck.processing.solvents import normalise_solvent

__all__ = ["survey_shared_phase", "SURVEY_BUDGET_S"]

log = logging.getLogger("nmrcheck")

#: Longest the survey may take, seconds (a 96-well plate of weak 64k-point FIDs takes about 5 s).
SURVEY_BUDGET_S = 120.0
#: Strong wells after which the survey stops: their weighted median is settled well before.
ENOUGH_STRONG = 12


def _reading(spec: WellSpec, directory: str, options: ProcessingOptions) -> PhaseReading | None:
    try:
        matches = resolve_spectrum(spec, directory)
        if len(matches) != 1 or not expected_size_reached(matches[0]):
            return None
        record = read_any(matches[0])
        if not isinstance(record, Fid):
            return None
        if spec.solvent and normalise_solvent(record.acquisition.solvent) is None:
            options = dataclasses.replace(options, solvent=spec.solvent)
        return dataclasses.replace(phase_reading(record, options, skip_below_snr=STRONG_THIRD_GROUP_SNR), source=spec.well)
    except Exception as exc:  # noqa: BLE001 - a well the survey cannot read is reported when it is screened
        log.debug("phase survey: %s skipped (%s)", spec.well, exc)
        return None


def survey_shared_phase(
    wells: Iterable[WellSpec], directory: str, options: ProcessingOptions, *, budget_s: float = SURVEY_BUDGET_S
) -> tuple[SharedPhase, ...]:
    """The shared first-order phase of each acquisition set among ``wells`` (empty when none qualifies).

    Nothing is surveyed when ``options`` fix the phase by hand.
    """
    if options.phase is not None:
        return ()
    options = dataclasses.replace(options, shared_p1=None)
    started = time.monotonic()
    readings = []
    strong = 0
    for spec in wells:
        if time.monotonic() - started > budget_s:
            log.info("phase survey stopped after %.0f s with %d readings", budget_s, len(readings))
            break
        reading = _reading(spec, directory, options)
        if reading is not None:
            readings.append(reading)
            strong += reading.first_order_fitted and reading.third_group_snr >= STRONG_THIRD_GROUP_SNR
            if strong >= ENOUGH_STRONG:
                break
    shared = tuple(shared_first_order(readings).values())
    for s in shared:
        log.info("phase survey: %s", s.describe())
    return shared
