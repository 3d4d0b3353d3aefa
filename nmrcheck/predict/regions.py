"""Shift regions for counting protons (aliphatic, heteroatom-substituted sp3, olefinic/anomeric, ...).

The regions come from ``shift_regions.csv``. They bin predicted shifts and observed integrals alike,
so that a structure's expected proton count per region can be set beside a spectrum's.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from nmrcheck.data import load_table
from nmrcheck.errors import ParameterError, TableError

__all__ = ["SHIFT_REGIONS", "ShiftRegion", "bin_by_region", "region_of"]


@dataclass(frozen=True)
class ShiftRegion:
    """A region of the 1H shift axis, [low_ppm, high_ppm)."""

    name: str
    low_ppm: float
    high_ppm: float
    typical_content: str
    source: str


def _load() -> tuple[ShiftRegion, ...]:
    regions = []
    for row in load_table("shift_regions"):
        try:
            low, high = float(row["low_ppm"]), float(row["high_ppm"])
        except ValueError:
            raise TableError(f"shift_regions.csv: region {row['region']!r} has a non-numeric bound") from None
        regions.append(ShiftRegion(row["region"], low, high, row["typical_content"], row["source"]))
    regions.sort(key=lambda r: r.low_ppm)
    for prev, nxt in zip(regions, regions[1:]):
        if prev.high_ppm != nxt.low_ppm:
            raise TableError(f"shift_regions.csv: {prev.name!r} and {nxt.name!r} leave a gap or overlap")
    if any(r.low_ppm >= r.high_ppm for r in regions):
        raise TableError("shift_regions.csv: a region has low_ppm >= high_ppm")
    return tuple(regions)


SHIFT_REGIONS: tuple[ShiftRegion, ...] = _load()
"""The regions, in order of increasing shift; contiguous from the first low bound to the last high bound."""


def region_of(ppm: float) -> str:
    """Name of the region that contains ``ppm``.

    Raises
    ------
    ParameterError
        If ``ppm`` is not a finite number or lies outside every region.
    """
    try:
        value = float(ppm)
    except (TypeError, ValueError):
        raise ParameterError(f"shift {ppm!r} is not a number") from None
    if not math.isfinite(value):
        raise ParameterError(f"shift {ppm!r} is not finite")
    last = SHIFT_REGIONS[-1]
    for region in SHIFT_REGIONS:
        if region.low_ppm <= value < region.high_ppm or (region is last and value == last.high_ppm):
            return region.name
    raise ParameterError(
        f"shift {value:g} ppm lies outside the counting regions ({SHIFT_REGIONS[0].low_ppm:g} to {last.high_ppm:g} ppm)"
    )


def _pairs(shifts_and_counts: object) -> Iterable[tuple[object, object]]:
    if isinstance(shifts_and_counts, Mapping):
        return shifts_and_counts.items()
    out = []
    for item in shifts_and_counts:  # type: ignore[attr-defined]
        if hasattr(item, "ppm") and hasattr(item, "n_h"):
            out.append((item.ppm, item.n_h))
        else:
            try:
                ppm, count = item
            except (TypeError, ValueError):
                raise ParameterError(
                    f"shifts_and_counts item {item!r} is neither a (ppm, count) pair nor a prediction with ppm and n_h"
                ) from None
            out.append((ppm, count))
    return out


def bin_by_region(shifts_and_counts: Iterable | Mapping) -> dict[str, float]:
    """Sum proton counts by shift region.

    Parameters
    ----------
    shifts_and_counts : iterable of (ppm, count), mapping ppm -> count, or iterable of predictions
        Predictions are anything with ``ppm`` and ``n_h`` (PredictedShift, Environment); counts may be
        fractional (observed integrals).

    Returns
    -------
    dict
        Region name -> summed count, for every region in :data:`SHIFT_REGIONS` (0.0 where empty).

    Raises
    ------
    ParameterError
        For a shift outside every region, a non-numeric value, or a negative or non-finite count.

    Examples
    --------
    >>> bins = bin_by_region([(1.2, 3), (7.26, 5)])
    >>> bins["aliphatic"], bins["aromatic"]
    (3.0, 5.0)
    """
    bins = {r.name: 0.0 for r in SHIFT_REGIONS}
    for ppm, count in _pairs(shifts_and_counts):
        try:
            c = float(count)  # type: ignore[arg-type]
        except (TypeError, ValueError):
            raise ParameterError(f"count {count!r} at {ppm!r} ppm is not a number") from None
        if not math.isfinite(c) or c < 0:
            raise ParameterError(f"count {count!r} at {ppm!r} ppm must be a finite number >= 0")
        bins[region_of(ppm)] += c  # type: ignore[arg-type]
    return bins
