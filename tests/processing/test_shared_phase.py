"""A first-order phase shared by recordings of one acquisition set.

Check values: phase errors built into synthetic FIDs (nmrcheck.synth), so the right
correction is the built-in (p0, p1) itself; that the residual first-order phase is a matter
of timing (pulse, dead time, filter delay) and so shared by recordings with one parameter set
is common practice. The real-recording figures are in bench/bench_microgram.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.processing import ProcessingOptions, process
from nmrcheck.processing.pipeline import phase_reading
from nmrcheck.processing.shared_phase import (
    AcquisitionKey,
    PhaseReading,
    SharedPhase,
    _weighted_median,
    shared_first_order,
)
from nmrcheck.processing.transform import fourier_transform
from nmrcheck.synth import Line, simulate_fid

# An invented compound spread over the width (so that p1 is pinned), and a weak well's
# two surviving lines (too few to fit a first-order term of its own).
STRONG = [Line(9.5, 1, 1.0), Line(7.3, 5, 1.0), Line(5.1, 1, 1.0, (7.0,)), Line(3.7, 3, 1.0), Line(2.1, 3, 1.0),
          Line(0.9, 3, 1.0, (7.0,))]
WEAK = [Line(7.3, 5, 1.0), Line(2.1, 3, 1.0)]
P1 = 25.0
KEY = AcquisitionKey("1H", 600.0, 7200.0, 0.0)


def _reading(p1: float, snr: float = 500.0, key: AcquisitionKey = KEY, source: str = "w") -> PhaseReading:
    return PhaseReading(source=source, key=key, p1_deg=p1, groups=6, first_order_fitted=True, third_group_snr=snr)


def _worst_line_error(corr, p0: float, p1: float, fid, lines) -> float:
    """Largest phase error left at the lines, degrees (built-in minus applied)."""
    spec = fourier_transform(fid, lb_hz=0.3)
    x = np.array([(spec.first_ppm - ln.ppm) / (spec.step_ppm * spec.size) for ln in lines])
    applied = corr.p0_deg + corr.p1_deg * x
    return float(np.max(np.abs((p0 + p1 * x - applied + 180.0) % 360.0 - 180.0)))


def test_strong_recordings_agree_on_the_built_in_first_order_phase():
    """Five strong spectra with p1 = 25 deg built in and p0 varied: the shared value is within 1 deg
    (measured when written: 24.7 deg, spread 0.4 deg)."""
    readings = [phase_reading(simulate_fid(STRONG, p0_deg=30.0 * k - 60.0, p1_deg=P1, noise=2e-3, seed=k)) for k in range(5)]
    assert all(r.first_order_fitted and r.third_group_snr > 150 for r in readings)
    shared = shared_first_order(readings)
    assert len(shared) == 1
    (value,) = shared.values()
    assert abs(value.p1_deg - P1) <= 1.0
    assert value.spread_deg <= 1.0
    assert "25" in value.describe() or "24" in value.describe()


@pytest.mark.parametrize("p0", [-150.0, -70.0, 40.0, 150.0])
def test_weak_well_takes_the_shared_first_order_phase(p0):
    """A weak well with two lines cannot fit p1 (held at 0 on its own, its lines stay 6-8 deg off);
    held at the shared value, both lines come within 2 deg (measured when written: at most 0.6 deg)."""
    shared = shared_first_order(
        [phase_reading(simulate_fid(STRONG, p0_deg=10.0 * k, p1_deg=P1, noise=2e-3, seed=k)) for k in range(4)]
    )
    (value,) = shared.values()
    for seed in range(3):
        fid = simulate_fid(WEAK, p0_deg=p0, p1_deg=P1, noise=2e-2, seed=10 + seed)
        alone = process(fid)
        helped = process(fid, shared_p1=(value.p1_deg, value.scale_deg))
        assert "zero order only" in alone.phase.method
        assert "held at the shared" in helped.phase.method
        assert _worst_line_error(alone.phase, p0, P1, fid, WEAK) > 5.0
        assert _worst_line_error(helped.phase, p0, P1, fid, WEAK) <= 2.0


def test_disagreeing_strong_recordings_share_nothing():
    """Values 0, 20 and 40 deg are not one acquisition's phase: no shared value."""
    assert shared_first_order([_reading(0.0), _reading(20.0), _reading(40.0)]) == {}


def test_too_few_strong_recordings_share_nothing():
    weak = PhaseReading(source="x", key=KEY, p1_deg=10.0, groups=3, first_order_fitted=True, third_group_snr=40.0)
    assert shared_first_order([_reading(10.0), _reading(11.0), weak, weak]) == {}
    zero_order = PhaseReading(source="x", key=KEY, p1_deg=0.0, groups=2, first_order_fitted=False, third_group_snr=900.0)
    assert shared_first_order([_reading(10.0), _reading(11.0), zero_order]) == {}


def test_acquisition_sets_are_kept_apart():
    other = AcquisitionKey("1H", 500.1, 5000.0, 72.12)
    readings = [_reading(10.0), _reading(11.0), _reading(10.5)] + [_reading(-30.0, key=other)] * 3
    shared = shared_first_order(readings)
    assert set(shared) == {KEY, other}
    assert shared[KEY].p1_deg == pytest.approx(10.5)
    assert shared[other].p1_deg == pytest.approx(-30.0)


def test_stronger_readings_weigh_more():
    """Weights grow with the square of the signal: one reading ten times stronger than two others leads."""
    readings = [_reading(12.0, snr=2000.0), _reading(8.0, snr=200.0), _reading(9.0, snr=200.0)]
    assert shared_first_order(readings)[KEY].p1_deg == pytest.approx(12.0)


def test_weighted_median_worked_examples():
    """Worked by hand: equal weights give the ordinary median, a tie the mean of the middle pair."""
    assert _weighted_median(np.array([3.0, 1.0, 2.0]), np.ones(3)) == 2.0
    assert _weighted_median(np.array([1.0, 2.0, 3.0, 4.0]), np.ones(4)) == 2.5
    assert _weighted_median(np.array([1.0, 2.0, 3.0]), np.array([1.0, 1.0, 5.0])) == 3.0


@pytest.mark.parametrize("bad", [(200.0, 10.0), (10.0, 0.0), (float("nan"), 10.0), (10.0,)])
def test_shared_p1_option_is_checked(bad):
    with pytest.raises(ParameterError, match="shared_p1"):
        ProcessingOptions(shared_p1=bad)


def test_shared_phase_records_describe_themselves():
    value = SharedPhase(key=KEY, p1_deg=12.34, spread_deg=0.5, sources=("A1", "A2", "A3"))
    text = value.describe()
    assert "12.3 deg" in text and "3 strong recordings" in text and "600.0 MHz" in text
