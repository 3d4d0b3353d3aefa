"""The report's SVG spectrum: refuses unusable axes in one line, keeps every signal the report names in view."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from nmrcheck.report.plate_svg import spectrum_svg


@pytest.mark.parametrize("first, last", [(math.nan, -2.0), (14.0, math.inf), (1e9, -1e9), (3.0, 3.0)])
def test_unusable_axis_draws_nothing_and_says_why(first, last):
    out = spectrum_svg(first, last, np.zeros(512), [])
    assert out.startswith('<p class="muted">no spectrum drawn') and "<svg" not in out


def test_trace_without_finite_values():
    assert "no finite values" in spectrum_svg(14.0, -2.0, np.full(512, np.nan), [])


def test_reference_solvent_and_labels_in_view():
    ppm = np.linspace(14.0, -2.0, 4096)
    y = np.exp(-(((ppm - 7.26) / 0.004) ** 2)) * 50 + np.exp(-(((ppm - 3.85) / 0.004) ** 2)) + np.exp(-((ppm / 0.004) ** 2))
    regions = [{"start_ppm": 7.28, "end_ppm": 7.24, "flag": "solvent", "label": "CHCl3", "h": None},
               {"start_ppm": 3.87, "end_ppm": 3.83, "h": 3.02, "flag": None},
               {"start_ppm": 5.0, "end_ppm": 4.98, "h": 0.01, "flag": None},
               {"start_ppm": 0.02, "end_ppm": -0.02, "flag": "reference", "label": "TMS", "h": None}]
    svg = spectrum_svg(14.0, -2.0, y, regions, reference={"name": "TMS", "ppm": 0.0})
    hi, lo = (float(v) for v in re.search(r'data-hi="([^"]+)" data-lo="([^"]+)"', svg).groups())
    assert hi >= 10.5 and lo <= -0.3
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    # One label for the counted region, none for the 0.01 H one, no text for flagged regions.
    assert [t for t in texts if t.endswith(" H")] == ["3.0 H"]
    assert "CHCl3" not in texts and "TMS" not in texts
    # The noise-sized region is shaded with the ones left out, like them without text.
    assert 'class="refline"' in svg and svg.count('class="region-out"') == 3
