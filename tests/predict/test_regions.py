"""Shift regions and binning of shifts or integrals by region."""

from __future__ import annotations

import math

import pytest

from nmrcheck.errors import ParameterError
from nmrcheck.predict import SHIFT_REGIONS, bin_by_region, region_of


def test_regions_are_contiguous_and_named():
    """Common practice regions: aliphatic, heteroatom-substituted sp3, olefinic/anomeric, aromatic,
    aldehyde, acidic/chelated, in order."""
    names = [r.name for r in SHIFT_REGIONS]
    assert names == [
        "aliphatic",
        "heteroatom-substituted sp3",
        "olefinic/anomeric",
        "aromatic",
        "aldehyde",
        "acidic/chelated",
    ]
    for prev, nxt in zip(SHIFT_REGIONS, SHIFT_REGIONS[1:]):
        assert prev.high_ppm == nxt.low_ppm
    assert all(r.source for r in SHIFT_REGIONS)


@pytest.mark.parametrize(
    ("ppm", "region"),
    [
        (0.9, "aliphatic"),  # CH3 of an alkyl chain
        (2.999, "aliphatic"),
        (3.0, "heteroatom-substituted sp3"),  # regions are half-open
        (3.8, "heteroatom-substituted sp3"),  # OCH3
        (5.3, "olefinic/anomeric"),
        (7.26, "aromatic"),
        (9.8, "aldehyde"),
        (12.0, "acidic/chelated"),
        (SHIFT_REGIONS[-1].high_ppm, "acidic/chelated"),  # the top bound is closed
    ],
)
def test_region_of(ppm, region):
    assert region_of(ppm) == region


@pytest.mark.parametrize("bad", [17.5, -3.0, math.nan, "x"])
def test_region_of_rejects_out_of_range(bad):
    with pytest.raises(ParameterError):
        region_of(bad)


def test_bin_pairs_and_mapping():
    bins = bin_by_region([(1.2, 3), (0.9, 3), (7.26, 5), (3.4, 1.96)])
    assert bins["aliphatic"] == 6 and bins["aromatic"] == 5
    assert bins["heteroatom-substituted sp3"] == pytest.approx(1.96)
    assert set(bins) == {r.name for r in SHIFT_REGIONS}
    expected = {**{r.name: 0.0 for r in SHIFT_REGIONS}, "aliphatic": 3.0, "aldehyde": 1.0}
    assert bin_by_region({2.1: 3.0, 9.7: 1.0}) == expected


def test_bin_empty_input():
    assert set(bin_by_region([]).values()) == {0.0}


@pytest.mark.parametrize("bad", [[(1.0, -1)], [(1.0, math.inf)], [(1.0, "three")], [(20.0, 1)], [1.0]])
def test_bin_rejects_bad_items(bad):
    with pytest.raises(ParameterError):
        bin_by_region(bad)
