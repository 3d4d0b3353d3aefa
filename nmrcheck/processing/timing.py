"""The first-order phase an acquisition's timing leaves, known before the spectrum is looked at.

Free precession starts during the excitation pulse, but the first point is sampled later: a
delay ``dt`` between the two turns every line of offset ``nu`` by ``360 * nu * dt`` degrees, a
first-order phase of ``360 * SW * dt`` across the spectral width (common practice). Once the
digital filter's own delay is taken out, what remains of ``dt`` is

* when the file records the filter's delay (GRPDLY): the pre-scan delay (DE) plus the part of
  the pulse after the effective start of precession, ``tau * (1 - cos b) / (b * sin b)`` for a
  rectangular pulse of length ``tau`` and flip angle ``b`` (2 tau / pi for 90 deg, tau / 2 for
  small flips; from memory, a standard result of pulse analysis);
* when the delay comes from the firmware's table (older instruments): zero. The shared
  recordings of that kind sit within 10 deg of it, so those tabulated delays appear to take the
  pre-scan delay and the pulse in already (an observation on these files, not a documented rule).

This is what the phase correction's first-order prior is centred on (:func:`expected_first_order`).
Measured on the shared recordings (the instruments' own corrections, tools/phase_vs_instrument.py):
the recorded-delay files (DE 6-6.5 us, 30 and 90 deg pulses, 3-10 kHz widths, 8 of them) sit
-3 to +8 deg from this estimate, against 10-57 deg from zero; the table-delay files (9 measured)
sit within 10 deg of zero. Sequences whose FID does not start right after one excitation pulse
(echoes, shaped or composite excitation) get no estimate.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from nmrcheck.io.records import Acquisition

__all__ = ["TIMING_P1_FULL_SNR", "TIMING_P1_PRIOR_WEIGHT", "TIMING_P1_SCALE_DEG", "TimingPrior", "expected_first_order", "excitation_flip_deg"]

#: Spread of the timing estimate, degrees across the width: one and a half times the largest
#: residual seen on the shared recordings (9 deg).
TIMING_P1_SCALE_DEG = 15.0
#: Weight of the prior in the phase refinement, per unit of signal-group weight (see
#: :func:`nmrcheck.processing.phase.auto_phase`). Measured on the shared recordings' noisy copies
#: (bench/bench_microgram.py): against the prior at zero (scale 60 deg, weight 0.002), at SNR 30
#: 51 of 54 within 5 deg instead of 45, at SNR 100 45 of 51 within 3 deg instead of 43; clean
#: spectra 18 of 18 either way. Before the fading below, a weight of 0.05 lost a clean spectrum;
#: with it, 0.03 and 0.1 each lose one SNR-300 copy within 5 deg and one SNR-30 copy.
TIMING_P1_PRIOR_WEIGHT = 0.01
#: The prior keeps that weight while the tallest signal group stands up to this many noise standard
#: deviations (a spectrum of SNR 300 in the noisy copies' definition, the top of the microgram range)
#: and fades as the square of the ratio above, where the data pin p1 on their own. Measured on the
#: same copies: the noisy figures do not change between 300 and 600, and 2759-55-9's clean count
#: (ambiguous, its offered totals on either side of 12-13 H) is the one it was without the prior.
TIMING_P1_FULL_SNR = 600.0

#: One-pulse sequences, with or without presaturation, and the presaturated 1D NOESY, as
#: the usual pulse-program names spell them (common practice); a number after the one-pulse
#: name is its flip angle in degrees.
_ONE_PULSE = re.compile(r"^(?:zg(?P<flip>\d{2})?(?:pr)?|noesy(?:gp)?pr1d)$", re.IGNORECASE)


@dataclass(frozen=True)
class TimingPrior:
    """Expected first-order phase (degrees across the width, pivot at the first point) and its spread."""

    p1_deg: float
    scale_deg: float
    basis: str


def excitation_flip_deg(pulse_program: str | None) -> float | None:
    """Flip angle of the excitation of a recognised one-pulse sequence (90 unless its name says), else None."""
    if not pulse_program:
        return None
    m = _ONE_PULSE.match(pulse_program.strip())
    if m is None:
        return None
    flip = float(m.group("flip")) if m.group("flip") else 90.0
    return flip if 0.0 < flip <= 90.0 else None


def expected_first_order(acq: Acquisition) -> TimingPrior | None:
    """The first-order phase the acquisition's timing leaves, or None when the file does not tell."""
    if acq.filter_delay == "table":
        return TimingPrior(0.0, TIMING_P1_SCALE_DEG, "digital-filter delay from the firmware table (the shared recordings of that kind sit near zero)")
    if acq.filter_delay != "recorded" or acq.prescan_delay_us is None or acq.pulse_us is None:
        return None
    flip = excitation_flip_deg(acq.pulse_program)
    if flip is None:
        return None
    tau = acq.pulse_us * flip / 90.0
    b = math.radians(flip)
    effective = tau * (1.0 - math.cos(b)) / (b * math.sin(b))
    p1 = 360.0 * acq.sweep_width_hz * (acq.prescan_delay_us + effective) * 1e-6
    if not math.isfinite(p1) or abs(p1) > 120.0:
        return None
    return TimingPrior(p1, TIMING_P1_SCALE_DEG,
                       f"pre-scan delay {acq.prescan_delay_us:g} us and a {flip:g} deg pulse of {tau:.3g} us")
