"""What the readers hand to processing: an FID or an already-processed spectrum, with its acquisition.

Vendor parameter names stop here; everything downstream sees these fields only.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Acquisition", "Fid", "SpectrumFile"]


@dataclass(frozen=True)
class Acquisition:
    """Acquisition parameters later stages need, in physical units; ``None`` when the file lacks them."""

    nucleus: str
    spectrometer_mhz: float
    """Transmitter (observe) frequency, MHz."""
    sweep_width_hz: float
    carrier_ppm: float
    """Transmitter offset from the base frequency, ppm (a first guess of the axis before referencing)."""
    base_mhz: float | None = None
    solvent: str | None = None
    scans: int | None = None
    receiver_gain: float | None = None
    pulse_us: float | None = None
    """Length of the excitation pulse as recorded (P1 or pw), microseconds."""
    pulse_program: str | None = None
    temperature_k: float | None = None
    relaxation_delay_s: float | None = None
    acquisition_time_s: float | None = None
    title: str | None = None
    reference_mhz: float | None = None
    """Frequency of 0 ppm as the instrument set it (Bruker SF), MHz, when known."""
    prescan_delay_us: float | None = None
    """Delay between the end of the excitation pulse and the opening of the receiver (DE), microseconds."""
    filter_delay: str | None = None
    """How the digital filter's delay is known: ``"recorded"`` (the file states it), ``"table"`` (looked up
    from the decimation and firmware), or None (no digital filter, or unknown)."""


@dataclass(frozen=True, eq=False)
class Fid:
    """A complex free-induction decay, digital filter not yet removed."""

    data: np.ndarray
    acquisition: Acquisition
    source: str
    format: str
    group_delay_points: float = 0.0
    """Points of digital-filter delay at the start of ``data`` (0 for analogue or pre-corrected data)."""
    conjugate: bool = False
    """True when the vendor stores the quadrature channel with the opposite sign to nmrcheck's convention."""
    notes: tuple[str, ...] = ()
    """What the reader had to decide or ignore (a compound file's block chosen, an implausible field dropped)."""

    @property
    def size(self) -> int:
        return int(self.data.shape[-1])

    @property
    def dwell_s(self) -> float:
        return 1.0 / self.acquisition.sweep_width_hz


@dataclass(frozen=True, eq=False)
class SpectrumFile:
    """A spectrum as the instrument software processed it: real, or complex when the imaginary part was stored."""

    data: np.ndarray
    first_ppm: float
    """Shift of ``data[0]`` (the high-ppm end)."""
    last_ppm: float
    acquisition: Acquisition
    source: str
    format: str
    processing: dict[str, float] = field(default_factory=dict)
    """What the instrument software recorded of its processing (e.g. ``lb_hz``, ``size``)."""
    notes: tuple[str, ...] = ()
    """What the reader had to decide or ignore (a compound file's block chosen, an implausible field dropped)."""
