"""A first-order phase shared by recordings acquired with the same parameters.

Once the digital filter's delay is removed, the first-order phase that remains comes from
timing: the part of the excitation pulse and the dead time before the first sampled point.
It belongs to the instrument and the acquisition parameters, not to the sample, so the
wells of one plate, recorded back to back with one parameter set, share it. A strong well
fixes it to within a degree or two; a weak one, with three to five signal groups left above
the noise, lets it wander by tens of degrees, and with one or two groups cannot fit it at
all. The wells therefore take the value their strong members agree on as the centre of a
tight prior (:func:`shared_first_order`), and each weak well still fits its own zero order
and a small first-order departure.

Pure functions on :class:`PhaseReading` records; one reading comes from
:func:`nmrcheck.processing.pipeline.phase_reading`, and reading a plate's files is the plate
runner's job (:mod:`nmrcheck.plate.phase_survey`).
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from typing import Iterable

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.io import Fid

__all__ = ["AcquisitionKey", "PhaseReading", "SharedPhase", "acquisition_key", "shared_first_order",
           "SHARED_P1_SCALE_DEG", "SHARED_P1_PRIOR_WEIGHT", "STRONG_THIRD_GROUP_SNR"]

#: A recording is strong when its third-tallest signal group stands this many noise standard deviations
#: high (about SNR 75 by the height-over-two-sigma convention). Measured on the same copies: 100, 150 and
#: 200 give the same figures within one or two spectra.
STRONG_THIRD_GROUP_SNR = 150.0

#: Scale (deg) and weight of the prior a weak well's first-order phase gets about the shared value.
#: Measured on the shared recordings' noisy copies, each recording's copies at SNR 300, 100 and 30
#: standing in for the wells of one plate (bench/bench_microgram.py, column "plate p1"); the weight is per unit
#: of signal-group weight, ten times the lone spectrum's prior, the scale a sixth of it.
SHARED_P1_SCALE_DEG = 10.0
SHARED_P1_PRIOR_WEIGHT = 0.02


@dataclass(frozen=True, order=True)
class AcquisitionKey:
    """What sets a recording's residual first-order phase: frequency, spectral width, filter delay."""

    nucleus: str
    spectrometer_mhz: float
    sweep_width_hz: float
    group_delay_points: float

    def describe(self) -> str:
        return f"{self.nucleus} {self.spectrometer_mhz:.1f} MHz, {self.sweep_width_hz:.0f} Hz wide, filter delay {self.group_delay_points:.2f} points"


@dataclass(frozen=True)
class PhaseReading:
    """One recording's own automatic phase and how many signal groups fixed it."""

    source: str
    key: AcquisitionKey
    p1_deg: float
    groups: int
    first_order_fitted: bool
    third_group_snr: float
    """Height of the third-tallest signal group over the noise standard deviation: a first-order
    phase is fixed by groups spread over the width, and only well clear of the noise."""

    def is_strong(self, min_third_group_snr: float = STRONG_THIRD_GROUP_SNR) -> bool:
        """Fitted its own first-order phase from groups well clear of the noise."""
        return self.first_order_fitted and self.third_group_snr >= min_third_group_snr and bool(np.isfinite(self.p1_deg))


@dataclass(frozen=True)
class SharedPhase:
    """The first-order phase the strong recordings of one acquisition set agree on."""

    key: AcquisitionKey
    p1_deg: float
    spread_deg: float
    """Robust spread (1.4826 x median absolute deviation) of the strong recordings' values."""
    sources: tuple[str, ...]
    scale_deg: float = SHARED_P1_SCALE_DEG

    def describe(self) -> str:
        return (f"first-order phase {self.p1_deg:.1f} deg shared by {len(self.sources)} strong recordings "
                f"(spread {self.spread_deg:.1f} deg; {self.key.describe()})")


def acquisition_key(fid: Fid) -> AcquisitionKey:
    acq = fid.acquisition
    return AcquisitionKey(
        nucleus=str(acq.nucleus or "").upper(),
        spectrometer_mhz=round(float(acq.spectrometer_mhz), 1),
        sweep_width_hz=round(float(acq.sweep_width_hz), 0),
        group_delay_points=round(float(fid.group_delay_points), 2),
    )


def _weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    """The value at which the cumulative weight reaches half (the mean of the two middle values at a tie)."""
    order = np.argsort(values)
    v, c = values[order], np.cumsum(weights[order])
    half = 0.5 * c[-1]
    i = int(np.searchsorted(c, half))
    if np.isclose(c[i], half) and i + 1 < v.size:
        return float(0.5 * (v[i] + v[i + 1]))
    return float(v[i])


def shared_first_order(
    readings: Iterable[PhaseReading],
    *,
    min_third_group_snr: float = STRONG_THIRD_GROUP_SNR,
    min_recordings: int = 3,
    max_spread_deg: float = 4.0,
) -> dict[AcquisitionKey, SharedPhase]:
    """The shared first-order phase of each acquisition set, where its strong recordings agree.

    A recording is strong when it fitted its own first-order phase and its third-tallest
    signal group stands ``min_third_group_snr`` noise standard deviations high. A set needs
    ``min_recordings`` strong recordings whose values have a robust spread of at most
    ``max_spread_deg``; the shared value is their median. Sets that fail either test get
    no entry (their wells are phased on their own).
    """
    if not min_third_group_snr > 0:
        raise ParameterError(f"min_third_group_snr: must be positive, got {min_third_group_snr!r}")
    if not (isinstance(min_recordings, int) and min_recordings >= 2):
        raise ParameterError(f"min_recordings: must be a whole number >= 2, got {min_recordings!r}")
    if not max_spread_deg > 0:
        raise ParameterError(f"max_spread_deg: must be positive, got {max_spread_deg!r}")
    strong: dict[AcquisitionKey, list[PhaseReading]] = defaultdict(list)
    for r in readings:
        if r.is_strong(min_third_group_snr):
            strong[r.key].append(r)
    out = {}
    for key, rs in sorted(strong.items()):
        if len(rs) < min_recordings:
            continue
        values = np.array([r.p1_deg for r in rs])
        # A reading's variance falls with the square of its signal: the weighted median and
        # spread let the strongest wells lead without one of them deciding alone.
        weights = np.array([r.third_group_snr for r in rs]) ** 2
        centre = _weighted_median(values, weights)
        spread = 1.4826 * _weighted_median(np.abs(values - centre), weights)
        if spread <= max_spread_deg:
            out[key] = SharedPhase(key=key, p1_deg=centre, spread_deg=spread, sources=tuple(sorted(r.source for r in rs)))
    return out
