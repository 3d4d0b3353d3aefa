"""Fourier transform: point-for-point agreement with the instrument's own processed spectra."""

from __future__ import annotations

import numpy as np
import pytest

from nmrcheck.io import read_fid, read_spectrum_file
from nmrcheck.processing.transform import fourier_transform, next_size
from nmrcheck.synth import Line, simulate_fid

JCAMP = ["1047626-52-7", "141-32-2", "16485-10-2", "2216-51-5", "2591-86-8", "2759-55-9", "403-40-7",
         "492-62-6", "50-78-2", "517920-70-6", "620-71-3", "623-47-2", "623-70-1", "91-64-5"]
BRUKER = ["aminoacid-mix-d2o-600", "aminoacid-mix-undried-1", "culture-medium-d2o", "glucose-d2o-600"]


def _pair(refdata, name):
    if name in BRUKER:
        rec = refdata / "bruker-raw" / name
        inst = read_spectrum_file(rec / "pdata" / "1")
        fid = read_fid(rec)
    else:
        rec = refdata / "jcamp-fid" / name
        inst = read_spectrum_file(rec / "1h.dx")
        fid = read_fid(rec / "1h.fid.dx")
    return fid, inst


@pytest.mark.parametrize("name", JCAMP + BRUKER)
def test_matches_instrument_up_to_linear_phase(refdata, name):
    """Our transform at the instrument's size and LB equals the instrument's 1r + i*1i times
    exp(i*(a + b*x)) at every strong point: the instrument's processed spectrum is the reference."""
    fid, inst = _pair(refdata, name)
    spec = fourier_transform(fid, lb_hz=inst.processing["lb_hz"], size=inst.data.size)
    v = inst.data
    mag = np.abs(v)
    # Same grid: magnitudes line up with no offset.
    a, b = np.abs(spec.data), mag
    corr = np.corrcoef(a, b)[0, 1]
    assert corr > 0.9999
    strong = mag > np.percentile(mag, 99.7)
    x = np.flatnonzero(strong) / v.size
    z = np.unwrap(np.angle(spec.data[strong] * np.conj(v[strong])))
    coef = np.polyfit(x, z, 1)
    resid = np.degrees(np.abs(np.angle(np.exp(1j * (z - np.polyval(coef, x))))))
    assert resid.max() < 0.5
    assert abs(np.degrees(coef[0])) < 60.0  # small first-order phase: the filter delay was removed


def test_synthetic_line_position_and_area():
    """A 1 H line at 7.26 ppm comes out at 7.26 ppm with area 1 (area definition of nmrcheck.synth)."""
    fid = simulate_fid([Line(7.26, 1.0, 1.0)], points=32768, carrier_ppm=4.7, spectrometer_mhz=600.0)
    spec = fourier_transform(fid, lb_hz=0.0)
    i = int(np.argmax(spec.data.real))
    assert spec.ppm[i] == pytest.approx(7.26, abs=spec.step_ppm)
    area = spec.data.real.sum() * spec.step_ppm
    assert area == pytest.approx(1.0, rel=1e-3)


def test_next_size():
    assert next_size(1000) == 1024 and next_size(1024) == 1024 and next_size(1025) == 2048
