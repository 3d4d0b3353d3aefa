"""Proton counting: the integral of one proton found from the data, per-region H and the total with a range."""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

import numpy as np

from nmrcheck.errors import ParameterError
from nmrcheck.processing.results import ProtonCount, Region

__all__ = ["count_protons", "find_unit"]

#: Cost per proton when choosing the unit (see find_unit); uniformly random fractions give a
#: misfit of 1/12 = 0.083, so a unit that doubles a 10 H count must fit 0.04 better to win.
PARSIMONY = 0.004
#: Relative integration error added to the range of the total, for baseline and
#: relaxation losses (common practice for routine, not fully quantitative, spectra).
SYSTEMATIC_FRACTION = 0.03


def _misfit(integrals: np.ndarray, unit: float) -> float:
    h = integrals / unit
    big = h >= 0.5
    if not big.any():
        return 1.0
    d = h[big] - np.round(h[big])
    w = integrals[big]
    small_share = integrals[~big].sum() / integrals.sum()
    # A region sitting near half a proton off its integer is a sign of the wrong
    # unit (a 1 H doublet read as 0.5 H), unless it is a minor share of the signal.
    off_share = w[np.abs(d) > 0.3].sum() / integrals.sum()
    # Regions that would hold under half a proton count against the unit: a real
    # compound's signals each hold at least one.
    return float(np.sum(w * d * d) / w.sum() + 0.25 * small_share + 2.0 * max(0.0, off_share - 0.03))


def find_unit(integrals: Sequence[float], *, max_h_per_region: int = 12) -> tuple[float, float]:
    """(integral of one proton, its misfit) from a set of region integrals.

    Candidate units are each region's integral divided by 1..``max_h_per_region``;
    the one minimising misfit + ``PARSIMONY`` x total protons is taken: a smaller
    unit that also fits (half of it, say) doubles every count without better
    agreement and loses.
    """
    arr = np.asarray([x for x in integrals if x > 0], float)
    if arr.size == 0:
        raise ParameterError("integrals: no positive region to count protons from")
    top = np.sort(arr)[::-1][:12]
    cands = np.unique(np.concatenate([top / m for m in range(1, max_h_per_region + 1)]))
    cands = cands[cands >= arr.max() / (3 * max_h_per_region)]
    # Parsimony: every extra proton must buy a better integer fit. PARSIMONY per proton
    # is about what a random (no-fit) misfit of 1/12 costs over 20 protons.
    scored = [(u, _misfit(arr, u)) for u in cands[::-1]]
    u, m = min(scored, key=lambda t: t[1] + PARSIMONY * arr.sum() / t[0])
    return _polish(arr, u), m


def _polish(arr: np.ndarray, unit: float) -> float:
    """Least-squares unit given the integer assignment found with ``unit``."""
    h = np.maximum(np.round(arr / unit), 0)
    keep = h >= 1
    if not keep.any():
        return unit
    return float(np.sum(arr[keep] * h[keep]) / np.sum(h[keep] ** 2))


def count_protons(
    regions: Sequence[Region],
    *,
    integral_sigma: Sequence[float] | None = None,
    anchor_h: int | None = None,
) -> tuple[tuple[Region, ...], ProtonCount]:
    """Protons per counted region and in total.

    Parameters
    ----------
    regions
        From :func:`nmrcheck.processing.regions.find_regions`; flagged regions are
        passed through uncounted.
    integral_sigma
        Noise standard deviation of each region's integral (same order), for the range.
    anchor_h
        A known number of observable protons: the unit becomes the counted total over
        this number, and the residuals say how well the regions fit integers.
    """
    counted_idx = [i for i, r in enumerate(regions) if r.counted and r.integral > 0]
    if not counted_idx:
        raise ParameterError("regions: no analyte signal to count")
    integrals = np.array([regions[i].integral for i in counted_idx])
    sig = np.zeros(len(regions)) if integral_sigma is None else np.asarray(integral_sigma, float)
    if anchor_h is not None:
        if anchor_h <= 0:
            raise ParameterError(f"anchor_h: must be a positive number of protons, got {anchor_h}")
        unit = float(integrals.sum() / anchor_h)
        method = "anchored"
    else:
        unit, _ = find_unit(integrals)
        method = "self-consistent"
    out = list(regions)
    hs = integrals / unit
    for i, h in zip(counted_idx, hs):
        out[i] = replace(regions[i], h=float(h))
    total = float(hs.sum())
    integer = int(np.sum(np.round(hs[hs >= 0.5])))
    noise_h = float(np.sqrt(np.sum((sig[counted_idx] / unit) ** 2))) if sig.size else 0.0
    half = 2.0 * noise_h + SYSTEMATIC_FRACTION * total + 0.3
    # Minor regions (under half a proton each) may be impurities rather than the analyte:
    # the low end of the range is what the major regions alone hold.
    low = min(total - half, integer - 2.0 * noise_h - 0.3)
    residuals = tuple(float(h - np.round(h)) for h in hs)
    count = ProtonCount(
        unit_integral=unit,
        total_h=total,
        total_h_low=max(0.0, low),
        total_h_high=total + half,
        integer_h=integer,
        method=method,
        anchored_to=anchor_h,
        residuals=residuals,
    )
    return tuple(out), count
