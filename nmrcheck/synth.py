"""Synthetic 1H FIDs with known answers: Lorentzian lines at given shifts, areas and phases, plus noise.

Used by the tests (known areas and phases to recover) and by the demo plate.
Multiplets are built from first-order coupling trees.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from nmrcheck.io.records import Acquisition, Fid

__all__ = ["Line", "simulate_fid"]


@dataclass(frozen=True)
class Line:
    """One signal: ``h`` protons at ``ppm``, split by first-order couplings ``j_hz`` (one entry per coupled proton)."""

    ppm: float
    h: float
    width_hz: float = 1.0
    j_hz: Sequence[float] = field(default_factory=tuple)


def _components(line: Line) -> list[tuple[float, float]]:
    """(offset_hz, weight) of the lines of a first-order multiplet; weights sum to 1."""
    comps = [(0.0, 1.0)]
    for j in line.j_hz:
        comps = [(f + s * j / 2.0, w / 2.0) for f, w in comps for s in (-1.0, 1.0)]
    return comps


def simulate_fid(
    lines: Sequence[Line],
    *,
    spectrometer_mhz: float = 600.0,
    sweep_width_hz: float = 7200.0,
    points: int = 16384,
    carrier_ppm: float = 4.7,
    noise: float = 0.0,
    p0_deg: float = 0.0,
    p1_deg: float = 0.0,
    group_delay_points: float = 0.0,
    seed: int | None = 0,
    scale: float = 1.0,
    acquisition: Acquisition | None = None,
    solvent: str | None = "CDCl3",
    source: str = "synthetic",
) -> Fid:
    """An FID whose spectrum (after :func:`nmrcheck.processing.transform.fourier_transform`) has the given lines.

    Parameters
    ----------
    lines
        Signals; the area of a line of ``h`` protons is ``h * scale`` in the
        processing's integral units (ppm x intensity) before line broadening.
    noise
        Standard deviation of complex white noise added to each FID point.
    p0_deg, p1_deg
        Phase error built in: the spectrum comes out as the absorptive one times
        ``exp(i*(p0 + p1*x))``, with ``x`` running 0 (high-ppm edge) to 1.
    group_delay_points
        Digital-filter delay to simulate (the FID starts this many points late).
    """
    rng = np.random.default_rng(seed)
    sw = float(sweep_width_hz)
    t = (np.arange(points) - group_delay_points) / sw
    fid = np.zeros(points, dtype=np.complex128)
    for line in lines:
        for off_hz, weight in _components(line):
            f_hz = (line.ppm - carrier_ppm) * spectrometer_mhz + off_hz
            # Phase error at this frequency, x=0 at +SW/2, x=1 at -SW/2.
            x = 0.5 - f_hz / sw
            phi = np.radians(p0_deg + p1_deg * x)
            # The spectrum sums to N*fid[0]/2 with the first point halved, so a line's
            # area (sum of points times the ppm step) is amp*SW/(2*MHz).
            amp = 2.0 * line.h * weight * scale * spectrometer_mhz / sw
            decay = np.exp(-np.pi * line.width_hz * np.clip(t, 0, None))
            # The transform conjugates, so the FID carries -phi for a spectrum rotated by +phi.
            sig = amp * np.exp(2j * np.pi * f_hz * t - 1j * phi) * decay
            if group_delay_points:
                sig = np.where(t < 0, 0.0, sig)
            fid += sig
    if noise:
        fid += noise * (rng.standard_normal(points) + 1j * rng.standard_normal(points)) / np.sqrt(2.0)
    if acquisition is None:
        acquisition = Acquisition(
            nucleus="1H",
            spectrometer_mhz=spectrometer_mhz,
            sweep_width_hz=sw,
            carrier_ppm=carrier_ppm,
            base_mhz=spectrometer_mhz / (1.0 + carrier_ppm * 1e-6),
            solvent=solvent,
            scans=16,
            receiver_gain=64.0,
            pulse_us=10.0,
            pulse_program="zg30",
            temperature_k=298.0,
            relaxation_delay_s=10.0,
            acquisition_time_s=points / sw,
            title=None,
            filter_delay="recorded" if group_delay_points else None,
        )
    return Fid(
        data=fid,
        acquisition=acquisition,
        source=source,
        format="synthetic",
        group_delay_points=group_delay_points,
        conjugate=False,
    )
