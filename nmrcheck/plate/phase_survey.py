"""Before a plate is screened: the first-order phase its strong wells share.

Each complete recording of the plate is transformed and phased on its own
(:func:`nmrcheck.processing.pipeline.phase_reading`); where at least three strong wells of one
acquisition set agree, their value becomes the centre of a tight prior for every well of that
set (:mod:`nmrcheck.processing.shared_phase`). Weak wells gain most: their own first-order
phase wanders when only a few signal groups stand above the noise.

A batch run surveys in the plate's own process before any worker starts; a watch run reads each
recording once it is complete, before its well is screened, so the wells screened after the first
strong ones agree use the shared value, and the wells of that acquisition set screened earlier in
the run are screened again with it. A recording
that cannot be read or phased is skipped here (its well reports the problem when it is screened),
and the survey stops once ``ENOUGH_STRONG`` strong wells are read, or after ``budget_s``, so that a very
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

__all__ = ["PhaseSurvey", "survey_shared_phase", "SURVEY_BUDGET_S", "ENOUGH_STRONG"]

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


class PhaseSurvey:
    """Readings collected well by well, and the shared first-order phases they support so far.

    A batch run reads every well at once (:func:`survey_shared_phase`); a watch run reads each
    well as its recording becomes complete, until the survey is done.
    """

    def __init__(self, directory: str, options: ProcessingOptions, *, budget_s: float = SURVEY_BUDGET_S) -> None:
        self._directory = directory
        self._options = dataclasses.replace(options, shared_p1=None)
        self._manual = options.phase is not None
        self._budget_s = budget_s
        self._spent_s = 0.0
        self._read: set[str] = set()
        self._readings: list[PhaseReading] = []
        self.shared: tuple[SharedPhase, ...] = ()

    @property
    def done(self) -> bool:
        """Nothing more to learn: the phase is set by hand, enough strong wells were read, or the time is spent."""
        strong = sum(r.is_strong() for r in self._readings)
        return self._manual or strong >= ENOUGH_STRONG or self._spent_s > self._budget_s

    def wells_of(self, shared: SharedPhase) -> frozenset[str]:
        """The wells read so far whose recordings belong to ``shared``'s acquisition set."""
        return frozenset(r.source for r in self._readings if r.key == shared.key and r.source)

    def read(self, wells: Iterable[WellSpec]) -> tuple[SharedPhase, ...]:
        """Read the wells not read before (until done) and return the shared phases found so far."""
        if self._manual:
            return ()
        for spec in wells:
            if self.done:
                if self._spent_s > self._budget_s:
                    log.info("phase survey stopped after %.0f s with %d readings", self._budget_s, len(self._readings))
                break
            if spec.well in self._read:
                continue
            self._read.add(spec.well)
            started = time.monotonic()
            reading = _reading(spec, self._directory, self._options)
            self._spent_s += time.monotonic() - started
            if reading is not None:
                self._readings.append(reading)
        shared = tuple(shared_first_order(self._readings).values())
        if shared != self.shared:
            for s in shared:
                log.info("phase survey: %s", s.describe())
            self.shared = shared
        return shared


def survey_shared_phase(
    wells: Iterable[WellSpec], directory: str, options: ProcessingOptions, *, budget_s: float = SURVEY_BUDGET_S
) -> tuple[SharedPhase, ...]:
    """The shared first-order phase of each acquisition set among ``wells`` (empty when none qualifies).

    Nothing is surveyed when ``options`` fix the phase by hand.
    """
    return PhaseSurvey(directory, options, budget_s=budget_s).read(wells)
