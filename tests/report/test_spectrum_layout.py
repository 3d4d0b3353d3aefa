"""Layout of the report's spectra: range, scale, ticks and labels that never overlap."""

from __future__ import annotations

import math

import numpy as np
import pytest

from nmrcheck.report.spectrum_layout import AxisError, analyte_top, check_axis, counted_regions, nice_ticks, place_labels, view_range


@pytest.mark.parametrize("first, last", [(math.nan, 0.0), (12.0, math.inf), (5.0, 5.0), (1e6, -1e6)])
def test_absurd_axes_are_refused(first, last):
    with pytest.raises(AxisError):
        check_axis(first, last)
    with pytest.raises(AxisError):
        nice_ticks(first, last)


def test_ticks_follow_one_two_five_and_stay_bounded():
    # 1-2-5 steps: common practice for axis ticks.
    assert nice_ticks(10.5, -0.5) == [float(t) for t in range(10, -1, -1)]
    assert nice_ticks(2.0, 1.0) == pytest.approx([2.0, 1.9, 1.8, 1.7, 1.6, 1.5, 1.4, 1.3, 1.2, 1.1, 1.0])
    assert len(nice_ticks(399.0, 0.0)) <= 61


def test_view_keeps_reference_solvent_and_signals_within_the_data():
    regions = [{"start_ppm": 7.3, "end_ppm": 7.2, "flag": "solvent"}, {"start_ppm": 12.4, "end_ppm": 12.2, "h": 1.0}]
    hi, lo = view_range(16.0, -4.0, regions, reference_ppm=0.0)
    assert hi >= 12.4 and lo <= -0.3
    # Never beyond the recorded axis.
    assert view_range(8.0, 1.0, regions, reference_ppm=0.0) == (8.0, 1.0)


def test_vertical_scale_set_by_the_analyte_not_the_solvent():
    ppm = np.linspace(10, 0, 10001)
    y = np.zeros_like(ppm)
    y[np.argmin(abs(ppm - 7.26))] = 100.0  # towering CHCl3 residual
    y[np.argmin(abs(ppm - 3.85))] = 2.0
    regions = [{"start_ppm": 7.28, "end_ppm": 7.24, "flag": "solvent"}, {"start_ppm": 3.9, "end_ppm": 3.8, "h": 3.0}]
    assert analyte_top(ppm, y, regions) == pytest.approx(2.0)


def test_noise_and_zero_regions_get_no_label():
    regions = [{"h": 0.02, "start_ppm": 1, "end_ppm": 0.9}, {"h": None, "start_ppm": 2, "end_ppm": 1.9}, {"h": 2.0, "start_ppm": 3, "end_ppm": 2.9},
               {"h": 3.0, "flag": "water", "start_ppm": 4, "end_ppm": 3.9}]
    assert [r["h"] for r in counted_regions(regions)] == [2.0]


def test_labels_on_a_row_never_overlap():
    rng = np.random.default_rng(3)
    anchors = list(rng.uniform(0, 1000, 40)) + [500.0] * 6
    widths = [38.0] * len(anchors)
    slots = place_labels(anchors, widths, left=0, right=1000, gap=4)
    assert len(slots) >= 30
    for a in slots:
        assert a.x - a.width / 2 >= 0 and a.x + a.width / 2 <= 1000
        for b in slots:
            if a is not b and a.row == b.row:
                assert a.x + a.width / 2 + 4 <= b.x - b.width / 2 + 1e-9 or b.x + b.width / 2 + 4 <= a.x - a.width / 2 + 1e-9
