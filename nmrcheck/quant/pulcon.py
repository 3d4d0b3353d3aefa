"""Reciprocity transfer of a concentration from a calibration spectrum to another spectrum on the same probe (PULCON).

Wider & Dreier (J. Am. Chem. Soc. 2006, 128, 2571; from memory): on one probe
the signal per proton is inversely proportional to the 90-degree pulse length
(reciprocity), proportional to the number of scans and the receiver gain, and to
1/T (Curie law). So

    c_u = c_cal * (I_u / n_u) / (I_cal / n_cal) * (p90_u / p90_cal)
              * (NS_cal / NS_u) * (RG_cal / RG_u) * (T_u / T_cal) * (sin a_cal / sin a_u)

with ``a`` the excitation flip angle. Both spectra must be processed the same
way (same integral units) and acquired with full relaxation.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from nmrcheck.errors import ParameterError
from nmrcheck.io.records import Acquisition

__all__ = ["flip_angle_deg", "PulconFactors", "pulcon_factor"]

#: Pulse programs known to excite with the calibrated 90-degree pulse (common practice names of
#: single-pulse, presaturation and 1D-NOESY presaturation sequences).
_NINETY_DEGREE = re.compile(r"^(zg|zgpr|zgcppr|zgesgp|zggpw5|noesypr1d|noesygppr1d|noesyphpr|s2pul|presat|zgzrpr)$")
_TRAILING_ANGLE = re.compile(r"^zg[a-z]*?(\d{2})$")


def flip_angle_deg(acquisition: Acquisition) -> float | None:
    """Excitation flip angle implied by the pulse program's name, or None when it cannot be told.

    A name ``zg30`` (digits at the end of a single-pulse program) means that
    angle; the presaturation and NOESY-presaturation programs listed in
    ``_NINETY_DEGREE`` use the 90-degree pulse (common practice).
    """
    name = (acquisition.pulse_program or "").strip().lower()
    if not name:
        return None
    if _NINETY_DEGREE.match(name):
        return 90.0
    m = _TRAILING_ANGLE.match(name)
    if m:
        return float(m.group(1))
    return None


@dataclass(frozen=True)
class PulconFactors:
    """The correction factors of one transfer; ``total`` multiplies c_cal * (I_u/n_u)/(I_cal/n_cal)."""

    pulse: float
    scans: float
    receiver_gain: float
    temperature: float
    flip_angle: float
    warnings: tuple[str, ...] = ()

    @property
    def total(self) -> float:
        return self.pulse * self.scans * self.receiver_gain * self.temperature * self.flip_angle

    def as_dict(self) -> dict:
        return {
            "pulse": self.pulse,
            "scans": self.scans,
            "receiver_gain": self.receiver_gain,
            "temperature": self.temperature,
            "flip_angle": self.flip_angle,
            "total": self.total,
        }


def _need(value, what: str, which: str):
    if value is None or not (value > 0):
        raise ParameterError(f"{what}: the {which} recording lacks a usable value ({value!r}); PULCON needs it")
    return float(value)


def pulcon_factor(analyte: Acquisition, calibration: Acquisition, *, flip_angle_analyte_deg: float | None = None, flip_angle_calibration_deg: float | None = None) -> PulconFactors:
    """Correction factors for transferring a calibration to ``analyte`` (see module docstring)."""
    warnings: list[str] = []
    pulse = _need(analyte.pulse_us, "pulse_us", "analyte") / _need(calibration.pulse_us, "pulse_us", "calibration")
    scans = _need(calibration.scans, "scans", "calibration") / _need(analyte.scans, "scans", "analyte")
    gain = _need(calibration.receiver_gain, "receiver_gain", "calibration") / _need(analyte.receiver_gain, "receiver_gain", "analyte")
    if analyte.temperature_k and calibration.temperature_k:
        temperature = analyte.temperature_k / calibration.temperature_k
    else:
        temperature = 1.0
        warnings.append("temperature missing from a recording: no Curie-law correction applied")
    fa_u = flip_angle_analyte_deg if flip_angle_analyte_deg is not None else flip_angle_deg(analyte)
    fa_c = flip_angle_calibration_deg if flip_angle_calibration_deg is not None else flip_angle_deg(calibration)
    if fa_u is None or fa_c is None:
        flip = 1.0
        warnings.append("pulse angle unknown for the analyte or calibration recording: assumed equal")
    else:
        for v, who in ((fa_u, "analyte"), (fa_c, "calibration")):
            if not (0 < v <= 180):
                raise ParameterError(f"flip angle of the {who}: {v} degrees is outside (0, 180]")
        flip = math.sin(math.radians(fa_c)) / math.sin(math.radians(fa_u))
    if abs(analyte.spectrometer_mhz - calibration.spectrometer_mhz) > 0.01 * calibration.spectrometer_mhz:
        warnings.append(f"calibration recorded at {calibration.spectrometer_mhz:.1f} MHz, analyte at {analyte.spectrometer_mhz:.1f} MHz: PULCON holds on one probe only")
    return PulconFactors(pulse, scans, gain, temperature, flip, tuple(warnings))
