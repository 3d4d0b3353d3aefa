"""The first-order phase an acquisition's timing leaves: the model, its use as the phase prior, and the instruments.

Check values: a delay dt before the first point is a first-order phase of 360 * SW * dt across the
width (common practice); a rectangular pulse of length tau starts free precession 2 tau / pi
before its end for a 90 deg flip and tau / 2 in the small-flip limit (from memory, a standard
result of pulse analysis). Real checks: the instrument software's own phasing of the shared
recordings, measured with the shared tool tools/phase_vs_instrument.py.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from nmrcheck.io import read_fid
from nmrcheck.processing import process
from nmrcheck.processing.phase import apply_phase
from nmrcheck.processing.pipeline import ProcessingOptions, phase_prior
from nmrcheck.processing.timing import TIMING_P1_SCALE_DEG, excitation_flip_deg, expected_first_order
from nmrcheck.processing.transform import fourier_transform
from nmrcheck.synth import Line, simulate_fid


def _acquisition(**changes):
    acq = simulate_fid([Line(1.0, 3, 1.0)], points=256).acquisition
    base = {"sweep_width_hz": 10000.0, "pulse_us": 10.0, "pulse_program": "zg", "prescan_delay_us": 6.5,
            "filter_delay": "recorded"}
    return replace(acq, **{**base, **changes})


def test_ninety_degree_pulse_and_prescan_delay():
    """DE 6.5 us + 2 tau / pi of a 10 us 90 deg pulse, over 10 kHz: 360 * 1e4 * 12.87e-6 = 46.3 deg."""
    prior = expected_first_order(_acquisition())
    assert prior is not None
    assert prior.p1_deg == pytest.approx(360.0 * 1e4 * (6.5 + 20.0 / math.pi) * 1e-6, rel=1e-9)
    assert prior.scale_deg == TIMING_P1_SCALE_DEG


def test_small_flip_starts_precession_near_the_pulse_centre():
    """A 30 deg pulse is a third of the 90 deg length (the number after the one-pulse name is the flip,
    common practice); its effective start lies close to its centre (tau / 2 in the small-flip limit)."""
    assert excitation_flip_deg("zg30") == 30.0 and excitation_flip_deg("zgpr") == 90.0
    prior = expected_first_order(_acquisition(pulse_program="zg30", prescan_delay_us=0.0))
    tau = 10.0 / 3.0
    dt = prior.p1_deg / (360.0 * 1e4) * 1e6
    assert 0.5 * tau < dt < 0.53 * tau


def test_table_delay_leaves_no_first_order_phase_and_unknown_sequences_get_none():
    assert expected_first_order(_acquisition(filter_delay="table")).p1_deg == 0.0
    # An echo sequence does not start precession at one pulse; no filter information, no estimate.
    assert expected_first_order(_acquisition(pulse_program="zgesgp")) is None
    assert expected_first_order(_acquisition(filter_delay=None)) is None
    assert expected_first_order(_acquisition(prescan_delay_us=None)) is None


def test_prior_is_the_plate_value_first_and_only_for_fids():
    acq = _acquisition()
    assert phase_prior(ProcessingOptions(), acq)["p1_centre_deg"] == pytest.approx(expected_first_order(acq).p1_deg)
    assert phase_prior(ProcessingOptions(shared_p1=(12.0, 5.0)), acq)["p1_centre_deg"] == 12.0
    assert phase_prior(ProcessingOptions(), None) == {}
    assert phase_prior(ProcessingOptions(), acq)["p1_centre_name"] == "the acquisition timing's"


def test_weak_spectrum_takes_the_first_order_phase_its_timing_leaves():
    """Two lines a few tens of noise deviations tall: too few groups to fit a first-order term, which is
    held at the timing estimate (built into the FID as the dead time's phase) instead of at zero."""
    acq = _acquisition(sweep_width_hz=7200.0)
    p1 = expected_first_order(acq).p1_deg
    lines = [Line(7.26, 1, 1.0), Line(1.20, 3, 0.9)]
    fid = simulate_fid(lines, sweep_width_hz=7200.0, p0_deg=25.0, p1_deg=p1, noise=4e-3, seed=2, acquisition=acq)
    done = process(fid)
    assert done.phase.p1_deg == pytest.approx(p1, abs=0.5)
    spec = fourier_transform(fid)
    width = spec.step_ppm * spec.size
    worst = max(abs((done.phase.p0_deg - 25.0) + (done.phase.p1_deg - p1) * (spec.first_ppm - ln.ppm) / width) for ln in lines)
    assert worst <= 3.0
    # Without the acquisition's timing, p1 stays at zero and the lines far from the pivot are off.
    bare = process(replace(fid, acquisition=replace(acq, filter_delay=None)))
    assert bare.phase.p1_deg == 0.0


RECORDED = ["2216-51-5", "2591-86-8", "492-62-6", "623-47-2"]
BRUKER = ["aminoacid-mix-d2o-600", "aminoacid-mix-undried-1", "culture-medium-d2o", "glucose-d2o-600"]
TABLE = ["1047626-52-7", "141-32-2", "16485-10-2", "2759-55-9", "403-40-7", "50-78-2", "517920-70-6", "620-71-3", "623-70-1"]


@pytest.mark.refdata
@pytest.mark.parametrize("name", RECORDED + BRUKER + TABLE)
def test_estimate_lies_within_its_spread_of_the_instruments_phasing(refdata, phase_tool, name):
    """The instrument's first-order phase (the slope of the phase errors at its 12 strongest peaks when our
    spectrum carries only the timing estimate) lies within the prior's spread of the estimate."""
    folder = refdata / ("bruker-raw" if name in BRUKER else "jcamp-fid") / name
    if not folder.is_dir():
        pytest.skip(f"{folder} is absent")
    instrument, si, lb = phase_tool.instrument_spectrum(str(folder))
    fid = read_fid(folder if name in BRUKER else folder / "1h.fid.dx")
    prior = expected_first_order(fid.acquisition)
    assert prior is not None
    assert (name in TABLE) == (prior.p1_deg == 0.0)
    spec = fourier_transform(fid, lb_hz=lb, size=si)
    # The zero order that brings the instrument's peaks closest (a coarse scan, then two refinements, so
    # that the tool compares the spectra the right way round); the slope of what is left at the 12 peaks
    # is the instrument's first-order phase minus the estimate.
    def errors(p0):
        trial = apply_phase(spec, p0_deg=p0, p1_deg=prior.p1_deg)
        return (trial, *phase_tool.phase_errors(trial.data, instrument, ppm=trial.ppm))

    p0 = min(np.arange(0.0, 360.0, 20.0), key=lambda a: float(np.median(np.abs(errors(a)[2]))))
    for _ in range(2):
        p0 += float(np.median(errors(p0)[2]))
    trial, idx, angles, shift = errors(p0)
    x = (np.asarray(idx) + shift) / trial.size
    slope = np.polyfit(x, angles, 1)[0] if np.ptp(x) > 0.05 else 0.0
    assert abs(slope) <= TIMING_P1_SCALE_DEG
