"""The frequency-domain spectrum that every processing step takes and returns, with its history."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Any, Mapping

import numpy as np

from nmrcheck.io.records import Acquisition
from nmrcheck.processing.noise import channel_noise, noise_level

__all__ = ["ProcessingStep", "Spectrum"]


@dataclass(frozen=True)
class ProcessingStep:
    """One step applied to a spectrum, with the parameters needed to replay it."""

    name: str
    params: Mapping[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "params": dict(self.params)}


@dataclass(frozen=True, eq=False)
class Spectrum:
    """A complex 1H spectrum, high ppm first, on a uniform axis.

    ``data[i]`` lies at ``first_ppm - i * step_ppm``.
    """

    data: np.ndarray
    first_ppm: float
    step_ppm: float
    acquisition: Acquisition
    source: str
    history: tuple[ProcessingStep, ...] = ()

    @property
    def size(self) -> int:
        return int(self.data.shape[-1])

    @property
    def spectrometer_mhz(self) -> float:
        return self.acquisition.reference_mhz or self.acquisition.spectrometer_mhz

    @property
    def solvent(self) -> str | None:
        return self.acquisition.solvent

    @property
    def ppm(self) -> np.ndarray:
        return self.first_ppm - self.step_ppm * np.arange(self.size)

    @property
    def real(self) -> np.ndarray:
        return self.data.real

    @cached_property
    def real_noise(self) -> float:
        """Noise standard deviation of the real part (:func:`nmrcheck.processing.noise.noise_level`), found once."""
        return noise_level(self.data.real)

    @cached_property
    def channel_noise(self) -> float:
        """Noise standard deviation of one quadrature channel (:func:`nmrcheck.processing.noise.channel_noise`), found once."""
        return channel_noise(self.data)

    @property
    def hz_per_point(self) -> float:
        return self.step_ppm * self.spectrometer_mhz

    def index_of(self, ppm: float) -> int:
        """Nearest point to ``ppm`` (clipped to the axis)."""
        i = int(round((self.first_ppm - ppm) / self.step_ppm))
        return min(max(i, 0), self.size - 1)

    def slice_of(self, start_ppm: float, end_ppm: float) -> slice:
        """Points between two shifts, in either order, inclusive of both ends."""
        hi, lo = max(start_ppm, end_ppm), min(start_ppm, end_ppm)
        return slice(self.index_of(hi), self.index_of(lo) + 1)

    def evolve(self, step: ProcessingStep, **changes: Any) -> "Spectrum":
        """A copy with ``changes`` applied and ``step`` appended to the history."""
        return replace(self, history=self.history + (step,), **changes)
