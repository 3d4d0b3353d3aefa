"""PULCON transfer on synthetic pairs whose scans, receiver gain, pulse length and temperature differ.

The synthetic signal is made proportional to c * NS * RG / p90 / T, which is the
reciprocity relation of Wider & Dreier (J. Am. Chem. Soc. 2006, 128, 2571; from
memory); the transfer must undo it.
"""

from __future__ import annotations

import math

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.quant import ExternalCalibration, flip_angle_deg, pulcon_factor, quantify
from nmrcheck.synth import Line

UNIT = 0.2


def _recording(synthetic, conc_mM, ppm, h, *, scans, gain, pulse_us, temperature_k=298.0, program="zg", seed=0):
    angle = flip_angle_deg_of(program)
    scale = conc_mM * scans * gain / pulse_us / temperature_k * 298.0 * math.sin(math.radians(angle)) * UNIT
    return synthetic(
        # A second, unquantified line keeps automatic phasing away from a single-line sign ambiguity.
        [Line(ppm, h, 1.0), Line(1.5, 3, 1.0)],
        noise=0.002 * math.sqrt(scans) * gain / 64.0,
        scale=scale,
        seed=seed,
        scans=scans,
        receiver_gain=gain,
        pulse_us=pulse_us,
        temperature_k=temperature_k,
        pulse_program=program,
    )


def flip_angle_deg_of(program: str) -> float:
    return 30.0 if program == "zg30" else 90.0


@pytest.mark.parametrize(
    "scans, gain, pulse_us, temperature_k, program",
    [
        (16, 64.0, 10.0, 298.0, "zg"),  # same as the calibration
        (256, 64.0, 10.0, 298.0, "zg"),  # more scans
        (16, 203.0, 10.0, 298.0, "zg"),  # other receiver gain
        (16, 64.0, 12.5, 298.0, "zg"),  # lossier sample: longer 90-degree pulse
        (64, 32.0, 11.6, 310.0, "zg30"),  # everything at once, 30-degree pulse, warmer
    ],
)
def test_transfer_recovers_concentration(synthetic, scans, gain, pulse_us, temperature_k, program):
    calibration = _recording(synthetic, 2.0, 3.0, 6, scans=16, gain=64.0, pulse_us=10.0, seed=1)
    sample = _recording(synthetic, 0.35, 4.2, 3, scans=scans, gain=gain, pulse_us=pulse_us, temperature_k=temperature_k, program=program, seed=2)
    method = ExternalCalibration(calibration, conc_mM=2.0, range_ppm=(3.03, 2.97), n_h=6, volume_ul=180.0)
    a = quantify(sample, method=method, analyte_range_ppm=(4.23, 4.17), analyte_h=3)
    assert a.conc_mM_per_proton == pytest.approx(0.35, rel=0.01)
    assert a.nmol_per_proton == pytest.approx(0.35 * 180.0, rel=0.01)
    assert a.method == "external calibration (PULCON)"


def test_factors_follow_the_acquisition(synthetic):
    """Each factor is the ratio the reciprocity relation names (Wider & Dreier 2006, from memory)."""
    cal = synthetic([Line(3.0, 6, 1.0)], scans=16, receiver_gain=64.0, pulse_us=10.0, temperature_k=298.0, pulse_program="zg").spectrum.acquisition
    sam = synthetic([Line(3.0, 6, 1.0)], scans=64, receiver_gain=128.0, pulse_us=12.0, temperature_k=310.0, pulse_program="zg30").spectrum.acquisition
    f = pulcon_factor(sam, cal)
    assert f.scans == pytest.approx(16 / 64)
    assert f.receiver_gain == pytest.approx(64 / 128)
    assert f.pulse == pytest.approx(12 / 10)
    assert f.temperature == pytest.approx(310 / 298)
    assert f.flip_angle == pytest.approx(1 / math.sin(math.radians(30)))


def test_flip_angle_from_program_name(synthetic):
    """zg30 means 30 degrees, zgpr the 90-degree pulse (common practice names); unknown names give None."""
    acq = synthetic([Line(3.0, 1, 1.0)]).spectrum.acquisition
    from dataclasses import replace

    assert flip_angle_deg(replace(acq, pulse_program="zg30")) == 30.0
    assert flip_angle_deg(replace(acq, pulse_program="zgpr")) == 90.0
    assert flip_angle_deg(replace(acq, pulse_program="homemade")) is None


def test_missing_pulse_length_is_refused(synthetic):
    cal = synthetic([Line(3.0, 6, 1.0)]).spectrum.acquisition
    from dataclasses import replace

    with pytest.raises(ParameterError, match="pulse_us"):
        pulcon_factor(replace(cal, pulse_us=None), cal)
